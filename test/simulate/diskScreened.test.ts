/**
 * The Dirichlet disk with c ≠ 0 (src/simulate/disk.ts, bessel.ts) against references made
 * outside the simulator: test/fixtures/sim_disk_make_fixtures.py (mpmath Fourier–Bessel mode sums
 * without the image split, scipy.special values, closed-form radial responses).
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import type { Mat } from '../../src/linalg/dense.js';
import { besselJSeq, besselK0, besselY0, besselY01, w0DiskMean } from '../../src/simulate/bessel.js';
import { diskResonance, diskScreened } from '../../src/simulate/disk.js';
import { pdeKernel, diskGreen } from '../../src/simulate/green2d.js';
import { greensKernel, parseOperator } from '../../src/simulate/index.js';
import { InputError } from '../../src/errors.js';

const ref = JSON.parse(readFileSync(new URL('../fixtures/sim_disk_reference.json', import.meta.url), 'utf8'));
const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

describe('Bessel routines vs scipy.special (sim_disk_make_fixtures.py)', () => {
  const xs: number[] = ref.bessel.x;
  it('K_0, Y_0, Y_1 to 1e-13 relative', () => {
    xs.forEach((x, i) => {
      expect(rel(besselK0(x), ref.bessel.k0[i])).toBeLessThan(1e-13);
      expect(rel(besselY0(x), ref.bessel.y0[i])).toBeLessThan(1e-13);
      expect(rel(besselY01(x)[1], ref.bessel.y1[i])).toBeLessThan(1e-13);
    });
  });
  it('J_n (Miller) to 1e-13 relative or 1e-300 absolute', () => {
    const J = new Float64Array(32);
    xs.forEach((x, i) => {
      besselJSeq(x, 30, J);
      for (const n of [0, 1, 4, 11, 30]) {
        const r = ref.bessel.j[String(n)][i] as number;
        expect(Math.abs(J[n]! - r)).toBeLessThanOrEqual(1e-13 * Math.abs(r) + 1e-300);
      }
    });
  });
  it('disk mean of K_0 equals (2/z²)(1 − z K_1(z)) — integral of A&S 9.6.27 (from memory)', () => {
    // K_1 from scipy: k1(0.5) = 1.656441120003301, k1(2) = 0.1398658818165224 (scipy.special.k1)
    for (const [z, k1] of [[0.5, 1.656441120003301], [2, 0.1398658818165224]] as const) {
      expect(rel(w0DiskMean(z, 1), (2 / (z * z)) * (1 - z * k1))).toBeLessThan(1e-13);
    }
  });
});

describe('disk Green function with c ≠ 0 vs mpmath mode sums (sim_disk_make_fixtures.py)', () => {
  for (const cs of ref.cases) {
    it(`${cs.name}: a=${cs.a}, c=${cs.c}, R=${cs.R}: pairs and cell means`, () => {
      const b = diskScreened({ center: cs.center, radius: cs.R, a: cs.a, c: cs.c });
      let gmax = 0;
      for (const p of cs.pairs) gmax = Math.max(gmax, Math.abs(p.G));
      for (const p of cs.pairs) {
        const g = b.pair(p.x[0], p.x[1], p.s[0], p.s[1]);
        // relative to the pair, or to the kernel's scale for pairs far down the screened decay
        expect(Math.abs(g - p.G)).toBeLessThan(1e-10 * Math.abs(p.G) + 1e-11 * gmax);
        expect(Math.abs(b.pair(p.s[0], p.s[1], p.x[0], p.x[1]) - g)).toBeLessThan(1e-12 * gmax);
      }
      for (const d of cs.diagonal) expect(rel(b.diagonal(d.x[0], d.x[1], d.w), d.G)).toBeLessThan(1e-10);
    });
  }
});

/** Gauss–Legendre nodes/weights on [0, 1] (Golub & Welsch via Newton on P_n; NR §4.5 gauleg). */
function gaussLegendre01(n: number): { x: Float64Array; w: Float64Array } {
  const x = new Float64Array(n), w = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let z = Math.cos((Math.PI * (i + 0.75)) / (n + 0.5)), dp = 1;
    for (let it = 0; it < 100; it++) {
      let p0 = 1, p1 = z;
      for (let k = 2; k <= n; k++) { const p2 = ((2 * k - 1) * z * p1 - (k - 1) * p0) / k; p0 = p1; p1 = p2; }
      dp = (n * (z * p1 - p0)) / (z * z - 1);
      const dz = p1 / dp;
      z -= dz;
      if (Math.abs(dz) < 1e-15) break;
    }
    x[i] = (1 - z) / 2; w[i] = 1 / ((1 - z * z) * dp * dp);
  }
  return { x, w };
}

describe('responses to smooth forcings vs closed-form solutions of the PDE (separation of variables)', () => {
  // ∫ G(x, s) f(s) ds by polar quadrature about x: s = x + t e_φ, t = t_max(φ) u², Gauss–Legendre in u,
  // trapezoid in φ (periodic) — independent of the simulator's own quadrature weights
  const gl = gaussLegendre01(40), nPhi = 96;
  for (const cs of ref.cases) {
    it(`${cs.name}: f = 1 and f = (x − cx)/R to 1e-6 relative`, () => {
      const op = parseOperator(`domain=disk(${cs.center[0]},${cs.center[1]},${cs.R}); a=${cs.a}; c=${cs.c}`);
      if (op.kind !== 'pde') throw new Error('expected a pde spec');
      for (const r of cs.responses) {
        const [x, y] = r.x as [number, number];
        const src: number[] = [], wq: number[] = [];
        for (let j = 0; j < nPhi; j++) {
          const phi = (2 * Math.PI * j) / nPhi, e1 = Math.cos(phi), e2 = Math.sin(phi);
          const bx = (x - cs.center[0]) * e1 + (y - cs.center[1]) * e2;
          const tmax = -bx + Math.sqrt(bx * bx + cs.R * cs.R - (x - cs.center[0]) ** 2 - (y - cs.center[1]) ** 2);
          for (let k = 0; k < gl.x.length; k++) {
            const u = gl.x[k]!, t = tmax * u * u;
            src.push(x + t * e1, y + t * e2);
            wq.push((2 * Math.PI / nPhi) * gl.w[k]! * 2 * tmax * tmax * u * u * u);
          }
        }
        const S: Mat = { rows: wq.length, cols: 2, data: Float64Array.from(src) };
        const X: Mat = { rows: 1, cols: 2, data: Float64Array.of(x, y) };
        const G = pdeKernel(op, X, S, new Float64Array(wq.length).fill(1));
        let u1 = 0, ux = 0;
        for (let k = 0; k < wq.length; k++) {
          u1 += G.data[k]! * wq[k]!;
          ux += G.data[k]! * wq[k]! * (S.data[2 * k]! - cs.center[0]) / cs.R;
        }
        const scale = Math.abs(1 / cs.c);
        expect(Math.abs(u1 - r.u_one)).toBeLessThan(1e-6 * Math.max(Math.abs(r.u_one), scale));
        expect(Math.abs(ux - r.u_x)).toBeLessThan(1e-6 * Math.max(Math.abs(r.u_x), scale));
      }
    });
  }
});

describe('limits, kernel assembly and spec checks', () => {
  const pts: Mat = { rows: 5, cols: 2, data: Float64Array.of(0.1, 0.2, -0.5, 0.3, 0.7, -0.6, 0, 0, -0.2, -0.9) };
  it('c → 0 reproduces the inversion closed form (Evans §2.2.4) to first order in c', () => {
    for (const c of [1e-6, -1e-6]) {
      const b = diskScreened({ center: [0, 0], radius: 1, a: 1, c });
      for (let i = 0; i < 5; i++) for (let k = i + 1; k < 5; k++) {
        const P = pts.data;
        const g0 = diskGreen([0, 0], 1, 1, P[2 * i]!, P[2 * i + 1]!, P[2 * k]!, P[2 * k + 1]!);
        // |G_c − G_0| ≤ |c| max G_0 · ∫ G_0 (≤ 1/(4·4)·…) — well below 1e-6·G_0 for |c| = 1e-6
        expect(rel(b.pair(P[2 * i]!, P[2 * i + 1]!, P[2 * k]!, P[2 * k + 1]!), g0)).toBeLessThan(1e-6);
      }
    }
  });
  it('greensKernel on a disk with c = 100: symmetric, zero on the boundary, matches pairwise values', () => {
    const op = parseOperator('domain=disk(0,0,1); c=100');
    const P: Mat = { rows: 6, cols: 2, data: Float64Array.of(0.1, 0.2, -0.5, 0.3, 0.7, -0.6, 0, 0, -0.2, -0.9, 0.6, 0.8) };
    const K = greensKernel(op, P, P);
    const b = diskScreened({ center: [0, 0], radius: 1, a: 1, c: 100 });
    for (let i = 0; i < 6; i++) for (let k = 0; k < 6; k++) {
      if (i === k) continue;
      expect(K.G.data[i * 6 + k]).toBe(b.pair(P.data[2 * i]!, P.data[2 * i + 1]!, P.data[2 * k]!, P.data[2 * k + 1]!));
    }
    for (let k = 0; k < 6; k++) expect(K.G.data[5 * 6 + k]).toBe(0); // (0.6, 0.8) is on the circle
  });
  it('resonance: −c/a at j_{0,1}² and j_{3,1}² is rejected (scipy.special.jn_zeros), nearby c accepted', () => {
    const { j01, j31 } = ref.zeros;
    expect(diskResonance(j01)!.gap).toBeLessThan(1e-12);
    expect(diskResonance(j31)!.n).toBe(3);
    expect(() => parseOperator(`domain=disk(0,0,1); c=${-j01 * j01}`)).toThrow(InputError);
    expect(() => parseOperator(`domain=disk(0,0,2); a=3; c=${(-3 * j31 * j31) / 4}`)).toThrow(/eigenvalue/);
    expect(() => parseOperator(`domain=disk(0,0,1); c=${-j01 * j01 * 1.01}`)).not.toThrow();
  });
  it('Neumann disk is rejected with a clear message', () => {
    expect(() => parseOperator('domain=disk(0,0,1); c=1; boundary=neumann')).toThrow(/Dirichlet boundary only/);
  });
});
