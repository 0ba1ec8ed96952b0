/**
 * The kept tridiagonal reduction (src/fit/spectral.ts `Tridiagonal`) against closed forms for the
 * second-difference matrix T = tridiag(−1, 2, −1) of size n, hidden by a seeded orthogonal similarity
 * A = U T Uᵀ: eigenvalues 2 − 2cos(kπ/(n+1)) and inverse (T⁻¹)_ij = min(i,j)(n+1−max(i,j))/(n+1)
 * (Strang, Introduction to Applied Mathematics, 1986, §1.5 — from memory; the eigenvalues also in
 * Golub & Van Loan, Matrix Computations, 4th ed., §4.8).
 */
import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { eigenCoordinates, semidefiniteCholesky, ridgeAt, ridgeSpectrum, gcvAt } from '../../src/fit/spectral.js';
import { unpenalisedResidual } from '../../src/fit/kink1d.js';
import { Rng } from '../../src/linalg/rng.js';

const n = 12;
function hidden(): { A: Float64Array; U: Float64Array } {
  // U: product of seeded Householder reflections (orthogonal)
  const rng = new Rng(3);
  const U = new Float64Array(n * n);
  for (let i = 0; i < n; i++) U[i * n + i] = 1;
  for (let r = 0; r < 4; r++) {
    const v = Float64Array.from({ length: n }, () => rng.normal());
    const vv = v.reduce((s, x) => s + x * x, 0);
    for (let i = 0; i < n; i++) { let t = 0; for (let k = 0; k < n; k++) t += U[i * n + k]! * v[k]!; for (let k = 0; k < n; k++) U[i * n + k] -= (2 * t * v[k]!) / vv; }
  }
  const T = (i: number, j: number) => (i === j ? 2 : Math.abs(i - j) === 1 ? -1 : 0);
  const A = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) { let s = 0; for (let a = 0; a < n; a++) for (let b = 0; b < n; b++) s += U[i * n + a]! * T(a, b) * U[j * n + b]!; A[i * n + j] = s; }
  return { A, U };
}

describe('Tridiagonal (kept Householder reduction)', () => {
  const { A, U } = hidden();
  const v0 = Float64Array.from({ length: n }, (_, i) => Math.sin(i + 1));
  const { tri, values } = eigenCoordinates({ rows: n, cols: n, data: A }, v0, true);
  it('eigenvalues of the batch sweep equal 2 − 2cos(kπ/(n+1)) (closed form)', () => {
    const exact = Array.from({ length: n }, (_, k) => 2 - 2 * Math.cos(((k + 1) * Math.PI) / (n + 1))).sort((a, b) => a - b);
    const batch = tri!.eigenBatch([tri!.toTridiagonal(v0)])!;
    const got = Array.from(batch.values).sort((a, b) => a - b);
    got.forEach((g, k) => expect(Math.abs(g - exact[k]!)).toBeLessThan(1e-12));
    // same sweep as the one-vector reduction: identical eigenvalues and coordinates
    expect(Array.from(batch.values)).toEqual(Array.from(values));
  });
  it('Q (T + 0·I)⁻¹ Qᵀ b equals A⁻¹ b = U T⁻¹ Uᵀ b with the closed-form inverse', () => {
    const b = Float64Array.from({ length: n }, (_, i) => Math.cos(0.3 * i));
    const x = tri!.fromTridiagonal(tri!.solveShifted(tri!.toTridiagonal(b), 0));
    const Tinv = (i: number, j: number) => (Math.min(i, j) + 1) * (n - Math.max(i, j)) / (n + 1);
    const utb = Float64Array.from({ length: n }, (_, a) => { let s = 0; for (let i = 0; i < n; i++) s += U[i * n + a]! * b[i]!; return s; });
    for (let i = 0; i < n; i++) {
      let s = 0;
      for (let a = 0; a < n; a++) for (let c = 0; c < n; c++) s += U[i * n + a]! * Tinv(a, c) * utb[c]!;
      expect(Math.abs(x[i]! - s)).toBeLessThan(1e-11);
    }
  });
});

describe('Householder reduction with a step that has nothing to reflect', () => {
  it('the hidden matrix with a decoupled entry 5 inserted at index 2: eigenvalues 2 − 2cos(kπ/(n+1)) and 5 (closed form)', () => {
    const { A } = hidden();
    const m = n + 1, at = 2;
    const B = new Float64Array(m * m);
    const src = (i: number) => (i < at ? i : i - 1);
    for (let i = 0; i < m; i++) for (let j = 0; j < m; j++) {
      if (i === at || j === at) continue;
      B[i * m + j] = A[src(i) * n + src(j)]!;
    }
    B[at * m + at] = 5;
    // row and column `at` stay decoupled through the reduction: step `at` finds its column zero below the diagonal
    const { values } = eigenCoordinates({ rows: m, cols: m, data: B }, Float64Array.from({ length: m }, (_, i) => Math.sin(i + 1)));
    const exact = [5, ...Array.from({ length: n }, (_, k) => 2 - 2 * Math.cos(((k + 1) * Math.PI) / (n + 1)))].sort((a, b) => a - b);
    Array.from(values).sort((a, b) => a - b).forEach((g, k) => expect(Math.abs(g - exact[k]!)).toBeLessThan(1e-12));
  });
});

describe('ridge at one λ without a spectrum (ridgeAt)', () => {
  it('rss, dof and GCV equal the spectral formulas (gcvAt), the solution solves (M + λP) η = r', () => {
    const { A } = hidden();
    // M = A² (positive definite), a graded diagonal penalty, y with yᵀy above the fitted part
    const M = new Float64Array(n * n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) { let t = 0; for (let k = 0; k < n; k++) t += A[i * n + k]! * A[k * n + j]!; M[i * n + j] = t; }
    const P = Float64Array.from({ length: n }, (_, i) => 1 + i * i);
    const r = Float64Array.from({ length: n }, (_, i) => Math.cos(i));
    const sys = { M: { rows: n, cols: n, data: M }, r, yy: 50, nObs: 40 };
    for (const lambda of [1e-3, 0.1, 3]) {
      const a = ridgeAt(sys, P, lambda), b = gcvAt(ridgeSpectrum(sys, P), lambda);
      expect(Math.abs(a.point.rss - b.rss) / b.rss).toBeLessThan(1e-10);
      expect(Math.abs(a.point.dof - b.dof)).toBeLessThan(1e-10 * n);
      expect(Math.abs(a.point.gcv - b.gcv) / b.gcv).toBeLessThan(1e-10);
      for (let i = 0; i < n; i++) {
        let t = lambda * P[i]! * a.eta[i]!;
        for (let j = 0; j < n; j++) t += M[i * n + j]! * a.eta[j]!;
        expect(Math.abs(t - r[i]!)).toBeLessThan(1e-10);
      }
    }
  });
});

describe('symmetricEigen (coverage\'s eigen-decomposition)', () => {
  it('hidden second-difference matrix: eigenvalues 2 − 2cos(kπ/(n+1)) descending, eigenvectors U·sin(jkπ/(n+1))·√(2/(n+1)) up to sign', async () => {
    const { symmetricEigen } = await import('../../src/fit/spectral.js');
    const { A, U } = hidden();
    const e = symmetricEigen({ rows: n, cols: n, data: A })!;
    for (let c = 0; c < n; c++) {
      const k = n - c; // descending
      expect(Math.abs(e.values[c]! - (2 - 2 * Math.cos((k * Math.PI) / (n + 1))))).toBeLessThan(1e-12);
      // closed-form eigenvector of T (Strang 1986 §1.5, from memory), rotated by U
      const w = Float64Array.from({ length: n }, (_, j) => Math.sqrt(2 / (n + 1)) * Math.sin(((j + 1) * k * Math.PI) / (n + 1)));
      const v = Float64Array.from({ length: n }, (_, i) => { let s = 0; for (let a = 0; a < n; a++) s += U[i * n + a]! * w[a]!; return s; });
      let dot = 0;
      for (let i = 0; i < n; i++) dot += v[i]! * e.vectors.data[i * n + c]!;
      expect(Math.abs(Math.abs(dot) - 1)).toBeLessThan(1e-10);
    }
  });
});

describe('pivoted semidefinite Cholesky and the unpenalised least-squares residual', () => {
  // reference: numpy.linalg.lstsq on a 40 × 9 design of rank 6 (test/fixtures/unpenalised_residual.py)
  const ref = JSON.parse(readFileSync(new URL('../fixtures/unpenalised_residual.json', import.meta.url), 'utf8')) as { M: number[][]; r: number[]; yy: number; nObs: number; rank: number; residual: number };
  const p = ref.M.length;
  const M = { rows: p, cols: p, data: Float64Array.from(ref.M.flat()) };
  it('finds the rank and reproduces M = (ΠL)(ΠL)ᵀ (Higham 2002 §10.3)', () => {
    const { L, perm, rank } = semidefiniteCholesky(M);
    expect(rank).toBe(ref.rank);
    let err = 0, norm = 0;
    for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) {
      let s = 0;
      for (let v = 0; v < rank; v++) s += L[i * p + v]! * L[j * p + v]!;
      err = Math.max(err, Math.abs(s - M.data[perm[i]! * p + perm[j]!]!));
      norm = Math.max(norm, Math.abs(M.data[i * p + j]!));
    }
    expect(err).toBeLessThan(1e-10 * norm);
  });
  it('residual yᵀy − rᵀM⁺r equals numpy lstsq residual', () => {
    const res = unpenalisedResidual({ M, r: Float64Array.from(ref.r), yy: ref.yy, nObs: ref.nObs });
    expect(Math.abs(res - ref.residual)).toBeLessThan(1e-8 * ref.yy);
  });
});

describe('lower bound on the GCV of sizes not yet searched (kink1d remainingGcvBound)', () => {
  // GCV(λ) = n‖y − H_λ y‖² / (n − tr H_λ)², H_λ = X(XᵀX + λI)⁻¹Xᵀ (Golub, Heath & Wahba, Technometrics 1979),
  // evaluated here by brute force with dense solves, independently of spectral.ts. For pure noise the best λ
  // is large (tr H → 0), so a bound with (n − p)² in the denominator would exceed the true minimum.
  it('pure-noise least squares: min over λ of GCV ≥ unpenalised residual / n', async () => {
    const { startKinkSearch, remainingGcvBound } = await import('../../src/fit/kink1d.js');
    const { cholesky, choleskySolve } = await import('../../src/linalg/decomp.js');
    const nObs = 30, p = 20, rng = new Rng(11);
    const X = Float64Array.from({ length: nObs * p }, () => rng.normal());
    const y = Float64Array.from({ length: nObs }, () => rng.normal());
    const M = new Float64Array(p * p), r = new Float64Array(p);
    for (let a = 0; a < p; a++) for (let b = 0; b < p; b++) { let s = 0; for (let i = 0; i < nObs; i++) s += X[i * p + a]! * X[i * p + b]!; M[a * p + b] = s; }
    for (let a = 0; a < p; a++) { let s = 0; for (let i = 0; i < nObs; i++) s += X[i * p + a]! * y[i]!; r[a] = s; }
    const yy = y.reduce((s, v) => s + v * v, 0);
    const sys = { M: { rows: p, cols: p, data: M }, r, yy, nObs };
    let minGcv = Infinity;
    for (let t = -8; t <= 8; t += 0.05) {
      const lambda = Math.pow(10, t);
      const A = { rows: p, cols: p, data: Float64Array.from(M, (v, u) => v + (u % (p + 1) === 0 ? lambda : 0)) };
      // one solve for [r | XᵀX]: β = (XᵀX + λI)⁻¹Xᵀy and tr H = tr((XᵀX + λI)⁻¹ XᵀX)
      const rhs = { rows: p, cols: p + 1, data: new Float64Array(p * (p + 1)) };
      for (let a = 0; a < p; a++) { rhs.data[a * (p + 1)] = r[a]!; for (let c = 0; c < p; c++) rhs.data[a * (p + 1) + 1 + c] = M[a * p + c]!; }
      const sol = choleskySolve(cholesky(A)!, rhs).data;
      let rss = 0;
      for (let i = 0; i < nObs; i++) { let f = 0; for (let a = 0; a < p; a++) f += X[i * p + a]! * sol[a * (p + 1)]!; rss += (y[i]! - f) ** 2; }
      let dof = 0;
      for (let c = 0; c < p; c++) dof += sol[c * (p + 1) + 1 + c]!;
      minGcv = Math.min(minGcv, (nObs * rss) / (nObs - dof) ** 2);
    }
    const B = unpenalisedResidual(sys);
    const st = startKinkSearch(sys, 2, 1, 'none', 2, undefined, [2]);
    const bound = remainingGcvBound(st, B);
    expect(bound).toBeCloseTo(B / nObs, 12);
    expect(minGcv).toBeGreaterThanOrEqual(bound);
    // the form n·B/(n − p)² is not a lower bound here
    expect((nObs * B) / (nObs - p) ** 2).toBeGreaterThan(minGcv);
  });
});
