/**
 * Accuracy of the simulator's exact kernels against closed-form Green's functions
 * (shared/references/greens-functions.md; entry letters as there, book named beside each check).
 * Target (issue item 8): relative error ≤ 1e-4 at the default resolution, measured as
 * max |G_sim − G| / max |G| over the grid.
 */
import { describe, it, expect } from 'vitest';
import { parseOperator, greensKernel, simulateStudy } from '../../src/simulate/index.js';
import type { Mat } from '../../src/linalg/dense.js';
import { eigSym } from '../../src/linalg/decomp.js';
import * as cf from '../helpers/closedForms.js';
import { Rng } from '../../src/linalg/rng.js';

const col = (x: Float64Array): Mat => ({ rows: x.length, cols: 1, data: x });
const TOL = 1e-4;

function maxRel(G: Mat, g: cf.G1, xs: Float64Array, ss: Float64Array): number {
  let err = 0, mx = 0;
  for (let i = 0; i < xs.length; i++) for (let k = 0; k < ss.length; k++) {
    const ref = g(xs[i]!, ss[k]!);
    err = Math.max(err, Math.abs(G.data[i * ss.length + k]! - ref));
    mx = Math.max(mx, Math.abs(ref));
  }
  return err / mx;
}

function check1d(spec: string, g: cf.G1, n = 101): number {
  const x = cf.uniformGrid(n);
  const K = greensKernel(parseOperator(spec), col(x), col(x));
  return maxRel(K.G, g, x, x);
}

describe('1-D kernels against closed forms', () => {
  // (a) Stakgold & Holst ch. 1; Courant–Hilbert I ch. V (from memory)
  it('(a) −u″, Dirichlet', () => { expect(check1d('a=1', cf.laplace())).toBeLessThan(TOL); });
  // (a) on [0, 2]: G = x<(L − x>)/L, check value G(0.4, 1.4) = 0.12 — Stakgold & Holst ch. 1
  it('(a) −u″ on [0, 2] at the reference check value', () => {
    const K = greensKernel(parseOperator('domain=0:2'), col(Float64Array.of(0.4)), col(Float64Array.of(1.4)));
    expect(Math.abs(K.G.data[0]! - 0.12) / 0.12).toBeLessThan(TOL);
  });
  // (h) −u″, u(0) = 0, u′(1) = 0: G = min(x, s) — Stakgold & Holst; Duffy (from memory)
  it('(h) −u″, mixed Dirichlet/Neumann', () => { expect(check1d('right=neumann(0)', cf.mixed)).toBeLessThan(TOL); });
  // (b) Helmholtz k = 15 — Duffy, ODE chapter; Butkovskiy (from memory)
  it('(b) −u″ − 225u (k = 15)', () => { expect(check1d('c=-225', cf.helmholtz(15))).toBeLessThan(TOL); });
  // (c) screened κ = 10 — Duffy; Butkovskiy (from memory)
  it('(c) −u″ + 100u (κ = 10)', () => { expect(check1d('c=100', cf.screened(10))).toBeLessThan(TOL); });
  // (d) advection–diffusion — derived in the reference from (i); construction rule Stakgold & Holst, Duffy
  it('(d) −0.05u″ + u′ and −0.05u″ − u′', () => {
    expect(check1d('a=0.05; b=1', cf.advdiff(0.05, 1))).toBeLessThan(TOL);
    expect(check1d('a=0.05; b=-1', cf.advdiff(0.05, -1))).toBeLessThan(TOL);
  });
  // (d) tabulated check value ε = 0.05, b = +1: G(0.9, 0.4) = 8.643746558469e-01
  it('(d) reference check value', () => {
    const K = greensKernel(parseOperator('a=0.05; b=1'), col(Float64Array.of(0.9)), col(Float64Array.of(0.4)));
    expect(Math.abs(K.G.data[0]! - 8.643746558469e-01) / 8.643746558469e-01).toBeLessThan(TOL);
  });
  // (e) piecewise-constant conductivity bar — derived in the reference from (i)
  it('(e) −(a u′)′ with a = 1 | 10 at 0.4 and a = 5 | 0.5 at 0.6', () => {
    expect(check1d('a=pw(1,0.4,10)', cf.piecewise(1, 10, 0.4))).toBeLessThan(TOL);
    expect(check1d('a=pw(5,0.6,0.5)', cf.piecewise(5, 0.5, 0.6))).toBeLessThan(TOL);
  });
  // (e)/(i) smooth a = 1 + x²: check values G(0.2,0.7) = 4.390068390826e-02, G(0.9,0.4) = 2.547521907169e-02
  it('(e) smooth a(x) = 1 + x² at the reference check values', () => {
    const op = parseOperator('a=1+x^2');
    for (const [x, s, ref] of [[0.2, 0.7, 4.390068390826e-02], [0.5, 0.5, 1.899404431956e-01], [0.9, 0.4, 2.547521907169e-02]] as const) {
      const K = greensKernel(op, col(Float64Array.of(x)), col(Float64Array.of(s)));
      expect(Math.abs(K.G.data[0]! - ref) / ref).toBeLessThan(TOL);
    }
  });
  // (i) −((1+x²)u′)′ + 10(1+x)u: G(0.2,0.7) = 1.305536620211e-02, G(0.9,0.4) = 8.171041649060e-03 (script: DOP853 shooting)
  it('(i) variable p and q at the reference check values', () => {
    const op = parseOperator('a=1+x^2; c=10*(1+x)');
    for (const [x, s, ref] of [[0.2, 0.7, 1.305536620211e-02], [0.5, 0.5, 1.067690829092e-01], [0.9, 0.4, 8.171041649060e-03]] as const) {
      const K = greensKernel(op, col(Float64Array.of(x)), col(Float64Array.of(s)));
      expect(Math.abs(K.G.data[0]! - ref) / ref).toBeLessThan(TOL);
    }
  });
  // (f1), (f2) beams — Butkovskiy; Roark (from memory)
  it('(f1) clamped beam u″″', () => { expect(check1d('e=1', cf.clampedBeam)).toBeLessThan(TOL); });
  it('(f2) simply supported beam u″″', () => { expect(check1d('e=1; left=supported; right=supported', cf.simplyBeam)).toBeLessThan(TOL); });
  // (g) Airy −u″ + θxu, θ = 100: G(0.2,0.7) = 2.496993666376e-03, G(0.5,0.5) = 7.129520582509e-02 — A&S §10.4 / DLMF §9.2 via (i)
  it('(g) Airy-type −u″ + 100x u at the reference check values', () => {
    const op = parseOperator('c=100*x');
    for (const [x, s, ref] of [[0.2, 0.7, 2.496993666376e-03], [0.5, 0.5, 7.129520582509e-02], [0.9, 0.4, 1.029714256477e-03]] as const) {
      const K = greensKernel(op, col(Float64Array.of(x)), col(Float64Array.of(s)));
      expect(Math.abs(K.G.data[0]! - ref) / ref).toBeLessThan(TOL);
    }
  });
  it('sensors different from actuators (random sensors, 120 uniform actuators), Helmholtz k = 15', () => {
    const rng = new Rng(3);
    const xs = Float64Array.from({ length: 150 }, () => rng.uniform());
    const ss = cf.uniformGrid(120);
    const K = greensKernel(parseOperator('c=-225'), col(xs), col(ss));
    expect(K.G.rows).toBe(150);
    expect(maxRel(K.G, cf.helmholtz(15), xs, ss)).toBeLessThan(TOL); // Duffy; Butkovskiy (from memory)
  });
});

describe('spectra of the Green operators (reference §4)', () => {
  // Nyström: eigenvalues of W^{1/2} G W^{1/2} on a fine trapezoid grid → eigenvalues of the Green operator.
  const spectrum = (spec: string, n: number) => {
    const x = cf.uniformGrid(n);
    const K = greensKernel(parseOperator(spec), col(x), col(x));
    const w = K.weightsIn.map(Math.sqrt);
    const S: Mat = { rows: n, cols: n, data: new Float64Array(n * n) };
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) S.data[i * n + j] = w[i]! * K.G.data[i * n + j]! * w[j]!;
    return eigSym(S).values;
  };
  it('−u″ Dirichlet: 1/(kπ)², k = 1..5 (Courant–Hilbert; Stakgold & Holst)', () => {
    const ev = spectrum('a=1', 400);
    // trapezoid Nyström is second order: relative eigenvalue error ~ (kπh)²/12; we allow (kπh)² (common practice)
    const h = 1 / 399;
    for (let k = 1; k <= 5; k++) expect(Math.abs(ev[k - 1]! - 1 / (k * Math.PI) ** 2) * (k * Math.PI) ** 2).toBeLessThan((k * Math.PI * h) ** 2);
  });
  it('simply supported beam: 1/(kπ)⁴, k = 1..5 (Courant–Hilbert; Stakgold & Holst)', () => {
    const ev = spectrum('e=1; left=supported; right=supported', 400);
    const h = 1 / 399;
    for (let k = 1; k <= 5; k++) expect(Math.abs(ev[k - 1]! - 1 / (k * Math.PI) ** 4) * (k * Math.PI) ** 4).toBeLessThan((k * Math.PI * h) ** 2);
  });
});

describe('2-D kernels against closed forms', () => {
  // (l) unit square, Dirichlet, source (0.3, 0.6) — Polyanin (2002) ch. 7; Duffy; Stakgold & Holst (from memory)
  it('(l) unit square check values', () => {
    const refs = [[0.5, 0.5, 1.402648482515e-01], [0.7, 0.2, 2.856682099026e-02], [0.25, 0.75, 1.560330388703e-01], [0.9, 0.9, 6.332936940229e-03], [0.3, 0.3, 8.650667732163e-02]];
    const out: Mat = { rows: refs.length, cols: 2, data: Float64Array.from(refs.flatMap((r) => [r[0]!, r[1]!])) };
    const src: Mat = { rows: 2, cols: 2, data: Float64Array.of(0.3, 0.6, 0.95, 0.05) };
    const K = greensKernel(parseOperator('domain=box(0,1,0,1)'), out, src);
    refs.forEach((r, i) => expect(Math.abs(K.G.data[i * 2]! - r[2]!) / r[2]!).toBeLessThan(TOL));
  });
  // (j) unit disk, Dirichlet, source (0.3, 0.35) — Evans §2.2.4; Polyanin (2002) ch. 7
  it('(j) unit disk check values', () => {
    const refs = [[-0.5, 0.2, 4.869478066319e-02], [0.1, -0.6, 3.365388217050e-02], [0.65, -0.1, 6.883753066367e-02], [-0.2, -0.3, 5.590237934901e-02]];
    const out: Mat = { rows: refs.length, cols: 2, data: Float64Array.from(refs.flatMap((r) => [r[0]!, r[1]!])) };
    const src: Mat = { rows: 2, cols: 2, data: Float64Array.of(0.3, 0.35, 0, 0) };
    const K = greensKernel(parseOperator('domain=disk(0,0,1)'), out, src);
    refs.forEach((r, i) => expect(Math.abs(K.G.data[i * 2]! - r[2]!) / r[2]!).toBeLessThan(TOL));
    // y = 0: G((0.5, 0), 0) = ln 2/(2π) — Evans §2.2.4
    const g0 = -Math.log(Math.hypot(-0.5, 0.2)) / (2 * Math.PI);
    expect(Math.abs(K.G.data[1]! - g0) / g0).toBeLessThan(1e-12);
  });
  it('tensor-grid fast path equals the direct series (screened, Neumann sides) and is symmetric', () => {
    const n = 12;
    const pts: number[] = [];
    for (let j = 0; j < n; j++) for (let i = 0; i < n; i++) pts.push(i / (n - 1), j / (n - 1));
    const P: Mat = { rows: n * n, cols: 2, data: Float64Array.from(pts) };
    const op = parseOperator('domain=box(0,1,0,1); c=20; left=neumann; top=neumann');
    const A = greensKernel(op, P, P).G; // tensor path
    const N = n * n;
    let diff = 0, asym = 0, mx = 0;
    for (const [i, k] of [[13, 40], [50, 51], [77, 3], [100, 143], [20, 120]] as const) {
      const one = (r: number): Mat => ({ rows: 1, cols: 2, data: Float64Array.of(pts[2 * r]!, pts[2 * r + 1]!) });
      const direct = greensKernel(op, one(i), one(k)).G.data[0]!; // single pair: direct series
      diff = Math.max(diff, Math.abs(A.data[i * N + k]! - direct));
      mx = Math.max(mx, Math.abs(direct));
    }
    for (let i = 0; i < N; i++) for (let k = 0; k < N; k++) if (i !== k) asym = Math.max(asym, Math.abs(A.data[i * N + k]! - A.data[k * N + i]!));
    expect(diff / mx).toBeLessThan(1e-9);
    expect(asym / mx).toBeLessThan(1e-12); // self-adjoint: G(x, s) = G(s, x) (reference §0)
  });
});

describe('homogeneous parts (hand-solved boundary-value problems)', () => {
  const uh = (spec: string, xs: number[]) => {
    const x = Float64Array.from(xs);
    return greensKernel(parseOperator(spec), col(x), col(x)).homogeneous!;
  };
  it('−u″ = 0, u(0) = 1, u(1) = 2 is linear: u = 1 + x', () => {
    const v = uh('left=dirichlet(1); right=dirichlet(2)', [0, 0.3, 0.7, 1]);
    [1, 1.3, 1.7, 2].forEach((r, i) => expect(Math.abs(v[i]! - r)).toBeLessThan(1e-10));
  });
  it('−u″ = 0, u(0) = 1, u′(1) + u(1) = 0 (Robin): u = 1 − x/2', () => {
    const v = uh('left=dirichlet(1); right=robin(1,1,0)', [0, 0.5, 1]);
    [1, 0.75, 0.5].forEach((r, i) => expect(Math.abs(v[i]! - r)).toBeLessThan(1e-10));
  });
  it('−u″ + u = 0, u′(0) = −1, u(1) = 0: u = sinh(1 − x)/cosh(1)', () => {
    const v = uh('c=1; left=neumann(-1); right=dirichlet(0)', [0, 0.4, 0.8]);
    [0, 0.4, 0.8].forEach((x, i) => expect(Math.abs(v[i]! - Math.sinh(1 - x) / Math.cosh(1))).toBeLessThan(1e-10));
  });
  it('−(a u′)′ = 0 with a = 1 | 4 at 0.5, u(0) = 0, u(1) = 1: piecewise linear with flux continuity', () => {
    // flux q = a u′ constant: u(1) = q (0.5/1 + 0.5/4) = 1 → q = 1.6
    const v = uh('a=pw(1,0.5,4); left=dirichlet(0); right=dirichlet(1)', [0.25, 0.5, 0.75]);
    [0.4, 0.8, 0.9].forEach((r, i) => expect(Math.abs(v[i]! - r)).toBeLessThan(1e-10));
  });
  it('u″″ = 0 clamped with u(0) = 0, u′(0) = 0, u(1) = 1, u′(1) = 0: u = 3x² − 2x³', () => {
    const v = uh('e=1; left=clamped(0,0); right=clamped(1,0)', [0.2, 0.5, 0.9]);
    [0.2, 0.5, 0.9].forEach((x, i) => expect(Math.abs(v[i]! - (3 * x * x - 2 * x ** 3))).toBeLessThan(1e-9));
  });
});

describe('systems', () => {
  // symmetric coupling, a1 = a2 = 1: G = Q diag(G_κi) Qᵀ with C = Q Λ Qᵀ, each G_κ from entry (c) (Duffy; Butkovskiy)
  it('two-way coupled −u″ + C u with C = [[30, 10], [10, 30]] equals the diagonalised closed form', () => {
    const n = 41;
    const x = cf.uniformGrid(n);
    const K = greensKernel(parseOperator('a1=1; a2=1; c11=30; c12=10; c21=10; c22=30'), col(x), col(x));
    const g1 = cf.screened(Math.sqrt(40)), g2 = cf.screened(Math.sqrt(20));
    // eigenvectors (1, 1)/√2 → λ = 40, (1, −1)/√2 → λ = 20
    let err = 0, mx = 0;
    for (const [c, d] of [[0, 0], [0, 1], [1, 0], [1, 1]] as const) for (let i = 0; i < n; i++) for (let k = 0; k < n; k++) {
      const s1 = 0.5, s2 = c === d ? 0.5 : -0.5;
      const ref = s1 * g1(x[i]!, x[k]!) + s2 * g2(x[i]!, x[k]!);
      err = Math.max(err, Math.abs(K.G.data[(c * n + i) * 2 * n + d * n + k]! - ref));
      mx = Math.max(mx, Math.abs(ref));
    }
    expect(err / mx).toBeLessThan(TOL);
  });
  it('one-way coupling: G12 = 0 and G21 = −∫ G22(x,t) c21 G11(t,s) dt', () => {
    const n = 21;
    const x = cf.uniformGrid(n);
    const K = greensKernel(parseOperator('a1=1; c11=100; a2=1; c22=25; c21=5'), col(x), col(x));
    const g11 = cf.screened(10), g22 = cf.screened(5);
    // independent reference: composite Simpson with the kinks at x and s as nodes (fine grid)
    const ref21 = (xx: number, s: number) => {
      const pts = [0, Math.min(xx, s), Math.max(xx, s), 1];
      let tot = 0;
      for (let p = 0; p < 3; p++) {
        const a = pts[p]!, b = pts[p + 1]!, m = 400, h = (b - a) / m;
        if (h === 0) continue;
        for (let j = 0; j <= m; j++) { const t = a + j * h; tot += (j === 0 || j === m ? 1 : j % 2 ? 4 : 2) * g22(xx, t) * g11(t, s) * h / 3; }
      }
      return -5 * tot;
    };
    let err = 0, mx = 0, g12 = 0;
    for (let i = 0; i < n; i++) for (let k = 0; k < n; k++) {
      const r = ref21(x[i]!, x[k]!);
      err = Math.max(err, Math.abs(K.G.data[(n + i) * 2 * n + k]! - r));
      mx = Math.max(mx, Math.abs(r));
      g12 = Math.max(g12, Math.abs(K.G.data[i * 2 * n + n + k]!));
    }
    expect(err / mx).toBeLessThan(TOL);
    expect(g12).toBeLessThan(1e-12);
  });
});

describe('forward model of a simulated study', () => {
  it('responses = G W f + u_h exactly (noise 0), truth homogeneous as in the closed form', () => {
    const x = cf.uniformGrid(80);
    const r = simulateStudy(parseOperator('a=1; left=dirichlet(1); right=dirichlet(2)'), { pointsIn: col(x), count: 4, seed: 2 });
    const { G, weightsIn } = r.truth.kernel;
    const F = r.study.inputs.values, U = r.study.outputs.values;
    let err = 0;
    for (let j = 0; j < 4; j++) for (let i = 0; i < 80; i++) {
      let s = 1 + x[i]!; // u_h = 1 + x (hand-solved)
      for (let k = 0; k < 80; k++) s += cf.laplace()(x[i]!, x[k]!) * weightsIn[k]! * F.data[j * 80 + k]!; // (a) Stakgold & Holst ch. 1
      err = Math.max(err, Math.abs(U.data[j * 80 + i]! - s));
    }
    expect(err).toBeLessThan(1e-9);
    expect(G.rows).toBe(80);
  });
  it('noise has std LEVEL × mean|u| and is recorded but not stated as noise.sigma', () => {
    const x = cf.uniformGrid(100);
    const op = parseOperator('a=1');
    const clean = simulateStudy(op, { pointsIn: col(x), count: 60, seed: 5 });
    const noisy = simulateStudy(op, { pointsIn: col(x), count: 60, seed: 5, noise: 0.1 });
    const sim = noisy.study.extra!.simulation as { noise_sigma: number; mean_abs_response: number };
    let ma = 0, ss = 0;
    const a = clean.study.outputs.values.data, b = noisy.study.outputs.values.data;
    for (let i = 0; i < a.length; i++) { ma += Math.abs(a[i]!); ss += (b[i]! - a[i]!) ** 2; }
    ma /= a.length;
    expect(Math.abs(sim.noise_sigma - 0.1 * ma) / (0.1 * ma)).toBeLessThan(1e-12);
    const sd = Math.sqrt(ss / a.length);
    // 6000 samples: the sample std is within a few × 1/√(2N) ≈ 0.9 % of sigma (chi-square spread)
    expect(Math.abs(sd / sim.noise_sigma - 1)).toBeLessThan(4 / Math.sqrt(2 * a.length));
    expect(noisy.study.noise).toBeUndefined();
  });
});
