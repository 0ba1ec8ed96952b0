/**
 * Gaussian-process forcing patterns on an arbitrary point set (1-D or 2-D).
 * Public API:
 *   gpDraws(points, count, opts) → count × n matrix, one draw per row;
 *   gpSample(points, count, opts) → { draws, info } with the method, rank and captured variance.
 * Up to DENSE_LIMIT points the draws are exact (dense Cholesky); beyond, a pivoted-Cholesky
 * low-rank factor keeps ≥ 1 − tolerance of the variance at O(n r²) cost.
 */
import type { Mat } from '../linalg/dense.js';
import { zeros, matmul } from '../linalg/dense.js';
import { cholesky } from '../linalg/decomp.js';
import { Rng } from '../linalg/rng.js';
import { pivotedCholesky } from './lowrank.js';

export type Covariance = 'se' | 'matern52';

export interface GpOptions {
  covariance?: Covariance;
  /** length scale in the points' units (default: derived from the spacing, see defaultLengthScale) */
  lengthScale?: number;
  seed?: number;
  /** marginal standard deviation (default 1) */
  amplitude?: number;
}

/** Covariance function k(r) for distance r and length scale l (Rasmussen & Williams, GPML 2006, §4.2). */
export function covarianceFn(kind: Covariance, l: number): (r: number) => number {
  if (kind === 'se') return (r) => Math.exp(-(r * r) / (2 * l * l));
  const c = Math.sqrt(5) / l;
  return (r) => { const t = c * r; return (1 + t + (t * t) / 3) * Math.exp(-t); };
}

/** Median nearest-neighbour spacing of a point set (n × d). */
export function medianSpacing(points: Mat): number {
  const n = points.rows, d = points.cols, P = points.data;
  if (n < 2) return 1;
  const nn = new Float64Array(n);
  if (d === 1) {
    const xs = Array.from(P).sort((a, b) => a - b);
    const gaps = xs.slice(1).map((x, i) => x - xs[i]!).sort((a, b) => a - b);
    return gaps[Math.floor(gaps.length / 2)]!;
  }
  for (let i = 0; i < n; i++) {
    let best = Infinity;
    for (let j = 0; j < n; j++) {
      if (j === i) continue;
      let s = 0;
      for (let k = 0; k < d; k++) { const t = P[i * d + k]! - P[j * d + k]!; s += t * t; }
      if (s < best) best = s;
    }
    nn[i] = Math.sqrt(best);
  }
  const sorted = Array.from(nn).sort((a, b) => a - b);
  return sorted[Math.floor(n / 2)]!;
}

/** Convex hull (Andrew's monotone chain) of 2-D points (n × 2), counter-clockwise, as point indices. */
// Monotone chain: Andrew, Inform. Process. Lett. 9 (1979) 216–219.
export function convexHull(points: Mat): number[] {
  const n = points.rows, P = points.data;
  const idx = Array.from({ length: n }, (_, i) => i).sort((a, b) => P[2 * a]! - P[2 * b]! || P[2 * a + 1]! - P[2 * b + 1]!);
  const cross = (o: number, a: number, b: number) =>
    (P[2 * a]! - P[2 * o]!) * (P[2 * b + 1]! - P[2 * o + 1]!) - (P[2 * a + 1]! - P[2 * o + 1]!) * (P[2 * b]! - P[2 * o]!);
  const lower: number[] = [], upper: number[] = [];
  for (const i of idx) {
    while (lower.length >= 2 && cross(lower[lower.length - 2]!, lower[lower.length - 1]!, i) <= 0) lower.pop();
    lower.push(i);
  }
  for (let k = idx.length - 1; k >= 0; k--) {
    const i = idx[k]!;
    while (upper.length >= 2 && cross(upper[upper.length - 2]!, upper[upper.length - 1]!, i) <= 0) upper.pop();
    upper.push(i);
  }
  lower.pop(); upper.pop();
  return lower.concat(upper);
}

/** Length (1-D) or convex-hull area (2-D) of the region the points span. */
export function hullMeasure(points: Mat): number {
  const n = points.rows, P = points.data;
  if (n < 2) return 0;
  if (points.cols === 1) {
    let lo = Infinity, hi = -Infinity;
    for (let i = 0; i < n; i++) { lo = Math.min(lo, P[i]!); hi = Math.max(hi, P[i]!); }
    return hi - lo;
  }
  const h = convexHull(points);
  let a = 0;
  for (let k = 0; k < h.length; k++) {
    const i = h[k]!, j = h[(k + 1) % h.length]!;
    a += P[2 * i]! * P[2 * j + 1]! - P[2 * j]! * P[2 * i + 1]!;
  }
  return Math.abs(a) / 2;
}

/**
 * Mean spacing of a point set: (measure / (n − 1)) in 1-D, sqrt(hull area / n) in 2-D.
 * On a uniform 1-D grid it equals the step; for scattered 2-D points it is about twice the
 * median nearest-neighbour distance (Poisson points: mean NN distance = 0.5/sqrt(density)).
 */
export function meanSpacing(points: Mat): number {
  const n = points.rows;
  if (n < 2) return 1;
  const m = hullMeasure(points);
  return points.cols === 1 ? m / (n - 1) : Math.sqrt(m / n);
}

/** Multiple of the spacing used as the default length scale (common practice: several points per correlation length). */
export const SPACINGS_PER_LENGTH_SCALE = 6;

/**
 * Default length scale: 6 × the larger of the median nearest-neighbour distance and the mean
 * spacing, so that a draw is resolved by the points. On a grid both equal the grid step; on
 * scattered points the mean spacing is larger, as clustered pairs shrink the median distance.
 */
export function defaultLengthScale(points: Mat): number {
  const s = Math.max(medianSpacing(points), meanSpacing(points));
  return SPACINGS_PER_LENGTH_SCALE * (s > 0 && Number.isFinite(s) ? s : 1);
}

export function covarianceMatrix(points: Mat, kind: Covariance, l: number): Mat {
  const n = points.rows, d = points.cols, P = points.data;
  const k = covarianceFn(kind, l);
  const K = zeros(n, n);
  for (let i = 0; i < n; i++) {
    K.data[i * n + i] = 1;
    for (let j = i + 1; j < n; j++) {
      let s = 0;
      for (let c = 0; c < d; c++) { const t = P[i * d + c]! - P[j * d + c]!; s += t * t; }
      const v = k(Math.sqrt(s));
      K.data[i * n + j] = v;
      K.data[j * n + i] = v;
    }
  }
  return K;
}

/** Above this many points the default sampler switches from dense Cholesky to a low-rank factor. */
export const DENSE_LIMIT = 1500;

export type SampleMethod = 'dense-cholesky' | 'pivoted-cholesky';

export interface SampleOptions extends GpOptions {
  /** 'auto' (default): dense Cholesky up to DENSE_LIMIT points, pivoted Cholesky beyond */
  method?: 'auto' | 'dense' | 'low-rank';
  /** low-rank only: stop when the factor misses at most this fraction of the variance (default 1e-3) */
  tolerance?: number;
  /** low-rank only: cap on the rank (default n) */
  maxRank?: number;
}

/** What the sampler did, for the design record. */
export interface SampleInfo {
  method: SampleMethod;
  covariance: Covariance;
  lengthScale: number;
  /** number of independent normals per draw (n for dense, the rank for low-rank) */
  rank: number;
  /** fraction of the total marginal variance Σ_i K_ii that the draws carry (1 for dense) */
  capturedVariance: number;
  /** dense: diagonal jitter that made the Cholesky succeed; low-rank: 0 */
  jitter: number;
  /** low-rank: whether the tolerance was met before maxRank */
  converged: boolean;
  /** r × n factor (rows = factor columns) when low-rank; null for dense */
  factor: Mat | null;
  /** low-rank: the variance each point misses (diagonal of K − F Fᵀ); null for dense */
  residualDiagonal: Float64Array | null;
}

function denseFactor(points: Mat, kind: Covariance, l: number): { L: Mat; jitter: number } {
  const n = points.rows;
  const K = covarianceMatrix(points, kind, l);
  let L: Mat | null = null;
  let jitter = 1e-10;
  for (; !L; jitter *= 10) {
    for (let i = 0; i < n; i++) K.data[i * n + i] = 1 + jitter;
    L = cholesky(K);
    if (!L && jitter > 1e-2) throw new Error('gpDraws: covariance not positive definite');
    if (L) break;
  }
  return { L, jitter };
}

/**
 * Draws from GP(0, k) at the points, one draw per row (count × n), and a record of how.
 * Dense Cholesky is exact up to a tiny jitter; the low-rank path draws from N(0, F Fᵀ) where
 * K − F Fᵀ ⪰ 0 has trace ≤ tolerance · trace K (Karhunen–Loève-type truncation).
 */
export function gpSample(points: Mat, count: number, opts: SampleOptions = {}): { draws: Mat; info: SampleInfo } {
  const kind = opts.covariance ?? 'se';
  const l = opts.lengthScale ?? defaultLengthScale(points);
  if (!(l > 0) || !Number.isFinite(l)) throw new Error(`gpSample: length scale must be a positive number, got ${l}`);
  if (!Number.isInteger(count) || count < 0) throw new Error(`gpSample: count must be an integer ≥ 0, got ${count}`);
  const amp = opts.amplitude ?? 1;
  const rng = new Rng(opts.seed ?? 0);
  const n = points.rows;
  const method = opts.method ?? 'auto';
  const dense = method === 'dense' || (method === 'auto' && n <= DENSE_LIMIT);
  const out = zeros(count, n);
  if (dense) {
    const { L, jitter } = denseFactor(points, kind, l);
    const z = new Float64Array(n);
    for (let r = 0; r < count; r++) {
      for (let i = 0; i < n; i++) z[i] = rng.normal();
      for (let i = 0; i < n; i++) {
        let s = 0;
        const li = i * n;
        for (let k = 0; k <= i; k++) s += L.data[li + k]! * z[k]!;
        out.data[r * n + i] = amp * s;
      }
    }
    return { draws: out, info: { method: 'dense-cholesky', covariance: kind, lengthScale: l, rank: n, capturedVariance: 1, jitter, converged: true, factor: null, residualDiagonal: null } };
  }
  const f = pivotedCholesky(points, covarianceFn(kind, l), { tolerance: opts.tolerance ?? 1e-3, maxRank: opts.maxRank });
  const r = f.factor.rows;
  // draws = amp · Z F, Z count × r standard normal
  const Z = zeros(count, r);
  for (let i = 0; i < Z.data.length; i++) Z.data[i] = amp * rng.normal();
  const D = matmul(Z, f.factor);
  out.data.set(D.data);
  return {
    draws: out,
    info: { method: 'pivoted-cholesky', covariance: kind, lengthScale: l, rank: r, capturedVariance: f.capturedFraction, jitter: 0, converged: f.converged, factor: f.factor, residualDiagonal: f.residualDiagonal },
  };
}

/** Draws from GP(0, k) at the points (count × n): see gpSample for the method. */
export function gpDraws(points: Mat, count: number, opts: GpOptions = {}): Mat {
  return gpSample(points, count, opts).draws;
}
