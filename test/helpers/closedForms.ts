/**
 * Closed-form Green's functions for tests, from shared/references/greens-functions.md
 * (entry letters as there). First argument = observation point x, second = source s.
 */
import type { Kernel } from '../../src/types.js';
import type { Mat } from '../../src/linalg/dense.js';
import { zeros } from '../../src/linalg/dense.js';
import { trapezoidWeights1d } from '../../src/quadrature.js';
import { Rng } from '../../src/linalg/rng.js';

export type G1 = (x: number, s: number) => number;

/** (a) −u'' on [0, L], Dirichlet — Stakgold & Holst ch. 1; Courant–Hilbert I ch. V (from memory) */
export const laplace = (L = 1): G1 => (x, s) => Math.min(x, s) * (L - Math.max(x, s)) / L;
/** (h) −u'', u(0)=0, u'(L)=0 — Stakgold & Holst; Duffy (from memory) */
export const mixed: G1 = (x, s) => Math.min(x, s);
/** (b) −u'' − k²u, Dirichlet on [0, 1] — Duffy; Butkovskiy (from memory) */
export const helmholtz = (k: number): G1 => (x, s) =>
  Math.sin(k * Math.min(x, s)) * Math.sin(k * (1 - Math.max(x, s))) / (k * Math.sin(k));
/** (c) −u'' + κ²u, Dirichlet on [0, 1], overflow-free form — Duffy; Butkovskiy (from memory) */
export const screened = (kap: number): G1 => (x, s) => {
  const lo = Math.min(x, s), hi = Math.max(x, s);
  const a = kap * lo, b = kap * (1 - hi), c = kap;
  return 0.5 * Math.exp(a + b - c) * (-Math.expm1(-2 * a)) * (-Math.expm1(-2 * b)) / (-Math.expm1(-2 * c)) / kap;
};
/** (d) −εu'' + bu', Dirichlet on [0, 1], overflow-free form — derived in the reference from (i) */
export const advdiff = (eps: number, b: number): G1 => (x, s) => {
  const lo = Math.min(x, s), hi = Math.max(x, s), L = 1;
  if (b === 0) return lo * (L - hi) / (eps * L);
  const r = b / eps;
  if (r > 0) {
    const first = r * lo < 50 ? Math.exp(-r * s) * Math.expm1(r * lo) : Math.exp(r * (lo - s)) - Math.exp(-r * s);
    return first * (-Math.expm1(r * (hi - L))) / (b * (-Math.expm1(-r * L)));
  }
  return Math.expm1(r * lo) * Math.exp(r * (hi - s)) * (-Math.expm1(r * (L - hi))) / (b * (-Math.expm1(r * L)));
};
/** (e) −(a u')', a = a1 on (0, c), a2 on (c, 1), Dirichlet — derived in the reference from (i) */
export const piecewise = (a1: number, a2: number, c: number): G1 => {
  const A = (x: number) => (x <= c ? x / a1 : c / a1 + (x - c) / a2);
  const A1 = A(1);
  return (x, s) => A(Math.min(x, s)) * (A1 - A(Math.max(x, s))) / A1;
};
/** (f1) u'''' clamped–clamped on [0, 1] — Butkovskiy; Roark (from memory) */
export const clampedBeam: G1 = (x, s) => {
  const lo = Math.min(x, s), hi = Math.max(x, s);
  return lo * lo * (1 - hi) ** 2 * (3 * hi - lo - 2 * lo * hi) / 6;
};
/** (f2) u'''' simply supported on [0, 1] — Butkovskiy; Roark (from memory) */
export const simplyBeam: G1 = (x, s) => {
  const lo = Math.min(x, s), hi = Math.max(x, s);
  return lo * (1 - hi) * (2 * hi - hi * hi - lo * lo) / 6;
};

export function uniformGrid(n: number, a = 0, b = 1): Float64Array {
  return Float64Array.from({ length: n }, (_, i) => a + ((b - a) * i) / (n - 1));
}

export function sampleKernel(g: G1, xs: ArrayLike<number>, ss: ArrayLike<number> = xs): Mat {
  const m = zeros(xs.length, ss.length);
  for (let i = 0; i < xs.length; i++) for (let j = 0; j < ss.length; j++) m.data[i * ss.length + j] = g(xs[i]!, ss[j]!);
  return m;
}

/** A Kernel of a closed-form G on uniform points of [0, 1] (trapezoid weights). */
export function kernel1d(g: G1, n = 200, homogeneous: Float64Array | null = null): Kernel {
  const x = uniformGrid(n);
  return {
    dimension: 1,
    pointsOut: { rows: n, cols: 1, data: x },
    pointsIn: { rows: n, cols: 1, data: new Float64Array(x) },
    weightsIn: trapezoidWeights1d(x),
    G: sampleKernel(g, x),
    homogeneous,
    components: { in: 1, out: 1 },
    domain: { kind: 'interval', bounds: [0, 1] },
  };
}

/**
 * Crude stand-in for a fit's resampled kernels in analysis unit tests: G plus iid Gaussian
 * perturbations of std `rel` × RMS(G). The real pipeline uses the fit's bootstrap replicates.
 */
export function perturbedReplicates(G: Mat, rel: number, count: number, seed: number): Mat[] {
  const rng = new Rng(seed);
  let ms = 0;
  for (const v of G.data) ms += v * v;
  const sd = rel * Math.sqrt(ms / G.data.length);
  return Array.from({ length: count }, () => {
    const d = new Float64Array(G.data.length);
    for (let i = 0; i < d.length; i++) d[i] = G.data[i]! + sd * rng.normal();
    return { rows: G.rows, cols: G.cols, data: d };
  });
}
