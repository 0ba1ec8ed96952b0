/**
 * Gaussian-process forcing patterns on an arbitrary point set (1-D or 2-D).
 * Public API (other modules call only this):
 *   gpDraws(points, count, opts) → count × n matrix, one draw per row.
 */
import type { Mat } from '../linalg/dense.js';
import { zeros } from '../linalg/dense.js';
import { cholesky } from '../linalg/decomp.js';
import { Rng } from '../linalg/rng.js';

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

/**
 * Default length scale: 6 median spacings, so that a draw is resolved by the points
 * (common practice: several samples per correlation length).
 */
export function defaultLengthScale(points: Mat): number {
  return 6 * medianSpacing(points);
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

/** Draws from GP(0, k) at the points: dense Cholesky with a growing jitter (for moderate n). */
export function gpDraws(points: Mat, count: number, opts: GpOptions = {}): Mat {
  const kind = opts.covariance ?? 'se';
  const l = opts.lengthScale ?? defaultLengthScale(points);
  const amp = opts.amplitude ?? 1;
  const rng = new Rng(opts.seed ?? 0);
  const n = points.rows;
  const K = covarianceMatrix(points, kind, l);
  let L: Mat | null = null;
  for (let jitter = 1e-10; !L; jitter *= 10) {
    for (let i = 0; i < n; i++) K.data[i * n + i] = 1 + jitter;
    L = cholesky(K);
    if (jitter > 1e-2) throw new Error('gpDraws: covariance not positive definite');
  }
  const out = zeros(count, n);
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
  return out;
}
