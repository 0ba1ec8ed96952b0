import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import {
  covarianceFn, covarianceMatrix, gpDraws, gpSample, defaultLengthScale, medianSpacing, meanSpacing, hullMeasure, DENSE_LIMIT,
} from '../../src/design/gp.js';
import { pivotedCholesky, gramRows } from '../../src/design/lowrank.js';
import { symmetricEigenvalues } from '../../src/design/spectrum.js';
import { trapezoidWeights1d } from '../../src/quadrature.js';
import { eigSym } from '../../src/linalg/decomp.js';
import { Rng } from '../../src/linalg/rng.js';
import type { Mat } from '../../src/linalg/dense.js';

// numpy/scipy reference values: test/fixtures/design_make_fixtures.py
const ref = JSON.parse(readFileSync(fileURLToPath(new URL('../fixtures/design_reference.json', import.meta.url)), 'utf8'));

const grid1d = (n: number, a = 0, b = 1): Mat => ({ rows: n, cols: 1, data: Float64Array.from({ length: n }, (_, i) => a + ((b - a) * i) / (n - 1)) });
const scatter2d = (n: number, seed: number): Mat => {
  const r = new Rng(seed);
  return { rows: n, cols: 2, data: Float64Array.from({ length: 2 * n }, () => r.uniform()) };
};
const fromRows = (rows: number[][]): Mat => ({ rows: rows.length, cols: rows[0]!.length, data: Float64Array.from(rows.flat()) });

describe('covariance functions', () => {
  it('SE and Matérn-5/2 match the general forms evaluated by scipy (Rasmussen & Williams, GPML 2006, eqs. 4.9, 4.14)', () => {
    const { r, l, se, matern52 } = ref.covariance as { r: number[]; l: number; se: number[]; matern52: number[] };
    const kse = covarianceFn('se', l), km = covarianceFn('matern52', l);
    r.forEach((ri, i) => {
      expect(kse(ri)).toBeCloseTo(se[i]!, 14);
      expect(Math.abs(km(ri) - matern52[i]!)).toBeLessThan(1e-12);
    });
  });
});

describe('eigenvalues of symmetric matrices (Householder + Sturm bisection)', () => {
  it('agree with numpy.linalg.eigvalsh on a weighted SE covariance of a 1-D grid', () => {
    const g = ref.grid1d_se as { n: number; l: number; eigenvalues_weighted: number[] };
    const P = grid1d(g.n);
    const K = covarianceMatrix(P, 'se', g.l);
    const w = trapezoidWeights1d(P.data);
    const Kw = { rows: g.n, cols: g.n, data: K.data.map((v, idx) => v * Math.sqrt(w[Math.floor(idx / g.n)]! * w[idx % g.n]!)) };
    const ev = symmetricEigenvalues(Kw);
    const scale = g.eigenvalues_weighted[0]!;
    g.eigenvalues_weighted.forEach((v, i) => expect(Math.abs(ev[i]! - v)).toBeLessThan(1e-12 * scale));
  });
  it('agree with numpy on the Matérn covariance of scattered 2-D points, and with ml-matrix on a random matrix', () => {
    const s = ref.scatter2d_matern52 as { points: number[][]; l: number; eigenvalues: number[] };
    const ev = symmetricEigenvalues(covarianceMatrix(fromRows(s.points), 'matern52', s.l));
    s.eigenvalues.forEach((v, i) => expect(Math.abs(ev[i]! - v)).toBeLessThan(1e-11 * s.eigenvalues[0]!));
    const r = new Rng(3), n = 40;
    const A = { rows: n, cols: n, data: new Float64Array(n * n) };
    for (let i = 0; i < n; i++) for (let j = 0; j <= i; j++) { const v = r.normal(); A.data[i * n + j] = v; A.data[j * n + i] = v; }
    const mine = symmetricEigenvalues(A), theirs = eigSym(A).values;
    for (let i = 0; i < n; i++) expect(mine[i]!).toBeCloseTo(theirs[i]!, 11);
  });
});

describe('pivoted Cholesky (Harbrecht, Peters & Schneider 2012)', () => {
  const P = scatter2d(300, 11);
  const l = 0.15;
  const K = covarianceMatrix(P, 'matern52', l);
  const f = pivotedCholesky(P, covarianceFn('matern52', l), { tolerance: 1e-3 });
  const n = P.rows, r = f.factor.rows;
  // R = K − Fᵀ F, formed densely here as the independent check
  const R = new Float64Array(K.data);
  for (let m = 0; m < r; m++) for (let i = 0; i < n; i++) {
    const a = f.factor.data[m * n + i]!;
    for (let j = 0; j < n; j++) R[i * n + j] -= a * f.factor.data[m * n + j]!;
  }
  it('reports the exact residual trace and meets its tolerance', () => {
    let tr = 0;
    for (let i = 0; i < n; i++) tr += R[i * n + i]!;
    expect(Math.abs(tr - f.residualTrace)).toBeLessThan(1e-10 * n);
    expect(f.residualTrace).toBeLessThanOrEqual(1e-3 * f.trace);
    expect(f.capturedFraction).toBeCloseTo(1 - tr / n, 10);
    expect(f.converged).toBe(true);
    expect(r).toBeLessThan(n);
  });
  it('leaves a positive semi-definite residual (a Schur complement), interpolating the pivot rows', () => {
    const ev = symmetricEigenvalues({ rows: n, cols: n, data: R });
    expect(ev[n - 1]!).toBeGreaterThan(-1e-10);
    // spectral norm of the residual ≤ its trace
    expect(ev[0]!).toBeLessThanOrEqual(f.residualTrace + 1e-12);
    for (const p of f.pivots.subarray(0, 10)) for (let j = 0; j < n; j += 17) expect(Math.abs(R[p * n + j]!)).toBeLessThan(1e-10);
  });
  it('stops at maxRank and says it did not converge', () => {
    const g = pivotedCholesky(P, covarianceFn('matern52', l), { tolerance: 1e-9, maxRank: 20 });
    expect(g.factor.rows).toBe(20);
    expect(g.converged).toBe(false);
    expect(g.capturedFraction).toBeLessThan(1 - 1e-9);
  });
  it('gives factor eigenvalues within the residual trace of numpy\'s eigenvalues of K (Weyl\'s inequality)', () => {
    const s = ref.scatter2d_matern52 as { points: number[][]; l: number; eigenvalues: number[] };
    const Q = fromRows(s.points);
    const h = pivotedCholesky(Q, covarianceFn('matern52', s.l), { tolerance: 1e-4 });
    const mu = symmetricEigenvalues(gramRows(h.factor));
    for (let i = 0; i < mu.length; i++) {
      expect(mu[i]!).toBeLessThanOrEqual(s.eigenvalues[i]! + 1e-10);
      expect(mu[i]! + h.residualTrace).toBeGreaterThanOrEqual(s.eigenvalues[i]! - 1e-10);
    }
  });
});

describe('GP draws', () => {
  it('dense draws are exactly L z (same seed, same draws) and have the covariance K (sample covariance within 4 standard errors)', () => {
    const P = grid1d(40);
    const l = 0.1, N = 4000;
    const D = gpDraws(P, N, { lengthScale: l, seed: 5 });
    expect(Array.from(gpDraws(P, N, { lengthScale: l, seed: 5 }).data.subarray(0, 100))).toEqual(Array.from(D.data.subarray(0, 100)));
    const K = covarianceMatrix(P, 'se', l);
    // standard error of a sample covariance of two unit-variance normals: sqrt((1 + ρ²)/N) (Wishart moments)
    let worst = 0;
    for (let i = 0; i < 40; i += 3) for (let j = 0; j < 40; j += 3) {
      let s = 0;
      for (let t = 0; t < N; t++) s += D.data[t * 40 + i]! * D.data[t * 40 + j]!;
      const rho = K.data[i * 40 + j]!;
      worst = Math.max(worst, Math.abs(s / N - rho) / Math.sqrt((1 + rho * rho) / N));
    }
    expect(worst).toBeLessThan(4);
  });
  it('low-rank draws have the factor\'s covariance, and the record states rank and captured variance', () => {
    const P = scatter2d(200, 4);
    const N = 4000;
    const { draws, info } = gpSample(P, N, { covariance: 'matern52', lengthScale: 0.2, seed: 9, method: 'low-rank', tolerance: 1e-3 });
    expect(info.method).toBe('pivoted-cholesky');
    expect(info.capturedVariance).toBeGreaterThanOrEqual(0.999);
    const K = covarianceMatrix(P, 'matern52', 0.2);
    let worst = 0;
    for (let i = 0; i < 200; i += 13) for (let j = 0; j < 200; j += 11) {
      let s = 0;
      for (let t = 0; t < N; t++) s += draws.data[t * 200 + i]! * draws.data[t * 200 + j]!;
      const rho = K.data[i * 200 + j]!;
      worst = Math.max(worst, Math.abs(s / N - rho) / Math.sqrt((1 + rho * rho) / N));
    }
    // the factor misses ≤ 0.1 % of the variance, far below the 4-standard-error band (≈ 0.09)
    expect(worst).toBeLessThan(4);
  });
  it('switches to the low-rank factor above the dense limit and keeps ≥ 99.9 % of the variance', () => {
    const P = scatter2d(DENSE_LIMIT + 500, 2);
    const { draws, info } = gpSample(P, 5, { seed: 1 });
    expect(info.method).toBe('pivoted-cholesky');
    expect(info.capturedVariance).toBeGreaterThanOrEqual(0.999);
    expect(info.rank).toBeLessThan(P.rows / 2);
    expect(draws.rows).toBe(5);
    expect(draws.data.every(Number.isFinite)).toBe(true);
  });
});

describe('default length scale', () => {
  it('is 6 grid steps on a uniform grid, 1-D and 2-D', () => {
    expect(medianSpacing(grid1d(101))).toBeCloseTo(0.01, 14);
    expect(meanSpacing(grid1d(101))).toBeCloseTo(0.01, 14);
    expect(defaultLengthScale(grid1d(101))).toBeCloseTo(0.06, 12);
    const g: number[] = [];
    for (let j = 0; j < 21; j++) for (let i = 0; i < 21; i++) g.push(i * 0.05, j * 0.05);
    const G = { rows: 441, cols: 2, data: Float64Array.from(g) };
    expect(hullMeasure(G)).toBeCloseTo(1, 12);
    expect(defaultLengthScale(G)).toBeCloseTo(0.3, 12);
  });
  it('uses the mean spacing sqrt(area/n) for scattered points, ≈ twice the median NN distance (Poisson: 0.5/sqrt(density), Clark & Evans 1954)', () => {
    const P = scatter2d(4000, 8);
    // hull area of uniform points in the unit square → 1
    expect(hullMeasure(P)).toBeGreaterThan(0.98);
    expect(hullMeasure(P)).toBeLessThanOrEqual(1);
    const ratio = meanSpacing(P) / medianSpacing(P);
    // median NN distance of a Poisson process: sqrt(ln 2 / π) / sqrt(density) = 0.4697 / sqrt(density)
    expect(ratio).toBeGreaterThan(1 / 0.4697 * 0.93);
    expect(ratio).toBeLessThan(1 / 0.4697 * 1.07);
    expect(defaultLengthScale(P)).toBeCloseTo(6 * meanSpacing(P), 12);
  });
});
