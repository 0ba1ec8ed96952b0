/**
 * Low-rank factor of a covariance matrix K ≈ F Fᵀ by pivoted Cholesky, computed from the
 * covariance function without ever forming K: O(n r) kernel evaluations and O(n r²) flops.
 * The residual K − F Fᵀ is positive semi-definite and its trace is known exactly at every step,
 * so the fraction of the field's variance the factor captures is exact, not estimated.
 */
// Pivoted Cholesky: Harbrecht, Peters & Schneider, Appl. Numer. Math. 62 (2012) 428–440.
import type { Mat } from '../linalg/dense.js';

export interface LowRankFactor {
  /** r × n row-major: row m is the m-th factor column, K ≈ Σ_m row_m row_mᵀ = Fᵀ F with F = factor */
  factor: Mat;
  /** pivot point index chosen at each step */
  pivots: Int32Array;
  /** trace(K) */
  trace: number;
  /** trace(K − F Fᵀ) ≥ 0 */
  residualTrace: number;
  /** diagonal of K − F Fᵀ (n), the variance each point misses */
  residualDiagonal: Float64Array;
  /** 1 − residualTrace / trace */
  capturedFraction: number;
  /** true if stopped because the tolerance was met (false: stopped at maxRank) */
  converged: boolean;
}

export interface LowRankOptions {
  /** stop when residualTrace ≤ tolerance · trace (default 1e-3, i.e. ≥ 99.9 % of the variance) */
  tolerance?: number;
  /** hard cap on the rank (default n) */
  maxRank?: number;
}

/**
 * Pivoted Cholesky of K_ij = k(|p_i − p_j|) for the points (n × d), greedy on the largest
 * remaining diagonal entry. `k(0)` gives the diagonal (stationary covariance).
 */
export function pivotedCholesky(points: Mat, k: (r: number) => number, opts: LowRankOptions = {}): LowRankFactor {
  const n = points.rows, d = points.cols, P = points.data;
  const tol = opts.tolerance ?? 1e-3;
  if (!(tol >= 0) || !Number.isFinite(tol)) throw new Error(`pivotedCholesky: tolerance must be ≥ 0, got ${tol}`);
  const maxRank = Math.min(n, opts.maxRank ?? n);
  const diag = new Float64Array(n).fill(k(0));
  const trace = n * k(0);
  let residual = trace;
  // grow storage in chunks: rows of length n
  let cap = Math.min(maxRank, 64);
  let store = new Float64Array(cap * n);
  const pivots: number[] = [];
  const krow = new Float64Array(n);
  let m = 0;
  while (m < maxRank && residual > tol * trace) {
    // pivot: largest remaining variance
    let p = 0, best = -Infinity;
    for (let i = 0; i < n; i++) if (diag[i]! > best) { best = diag[i]!; p = i; }
    if (!(best > 0)) break; // numerically exhausted (residual is round-off)
    if (m === cap) {
      cap = Math.min(maxRank, cap * 2);
      const bigger = new Float64Array(cap * n);
      bigger.set(store);
      store = bigger;
    }
    // covariance row of the pivot point
    for (let i = 0; i < n; i++) {
      let s = 0;
      for (let c = 0; c < d; c++) { const t = P[i * d + c]! - P[p * d + c]!; s += t * t; }
      krow[i] = k(Math.sqrt(s));
    }
    // subtract the part already explained: krow -= Σ_j L_j[p] L_j
    // (unrolled by 4 over factor rows: one pass over krow per 4 rows)
    let j = 0;
    for (; j + 3 < m; j += 4) {
      const o0 = j * n, o1 = o0 + n, o2 = o1 + n, o3 = o2 + n;
      const a0 = store[o0 + p]!, a1 = store[o1 + p]!, a2 = store[o2 + p]!, a3 = store[o3 + p]!;
      for (let i = 0; i < n; i++) {
        krow[i] -= a0 * store[o0 + i]! + a1 * store[o1 + i]! + a2 * store[o2 + i]! + a3 * store[o3 + i]!;
      }
    }
    for (; j < m; j++) {
      const o = j * n;
      const ljp = store[o + p]!;
      for (let i = 0; i < n; i++) krow[i] -= ljp * store[o + i]!;
    }
    const s = 1 / Math.sqrt(best);
    const o = m * n;
    residual = 0;
    for (let i = 0; i < n; i++) {
      const v = krow[i]! * s;
      store[o + i] = v;
      const r = diag[i]! - v * v;
      diag[i] = r > 0 ? r : 0;
      residual += diag[i]!;
    }
    diag[p] = 0;
    store[o + p] = Math.sqrt(best);
    pivots.push(p);
    m++;
  }
  // recompute the residual exactly from the diagonal (sum of non-negative terms)
  residual = 0;
  for (let i = 0; i < n; i++) residual += diag[i]!;
  return {
    factor: { rows: m, cols: n, data: store.slice(0, m * n) },
    pivots: Int32Array.from(pivots),
    trace,
    residualTrace: residual,
    residualDiagonal: diag,
    capturedFraction: 1 - residual / trace,
    converged: residual <= tol * trace,
  };
}

/** Symmetric Gram matrix A Aᵀ of an r × n row-major matrix, optionally weighted: A diag(w) Aᵀ. */
export function gramRows(a: Mat, w?: ArrayLike<number>): Mat {
  const r = a.rows, n = a.cols, A = a.data;
  const out = new Float64Array(r * r);
  let src = A;
  if (w) {
    src = new Float64Array(A.length);
    for (let i = 0; i < r; i++) for (let j = 0; j < n; j++) src[i * n + j] = A[i * n + j]! * w[j]!;
  }
  for (let i = 0; i < r; i++) {
    const oi = i * n;
    let j = 0;
    // four dot products per pass over row i of src
    for (; j + 3 <= i; j += 4) {
      const o0 = j * n, o1 = o0 + n, o2 = o1 + n, o3 = o2 + n;
      let s0 = 0, s1 = 0, s2 = 0, s3 = 0;
      for (let t = 0; t < n; t++) {
        const x = src[oi + t]!;
        s0 += x * A[o0 + t]!; s1 += x * A[o1 + t]!; s2 += x * A[o2 + t]!; s3 += x * A[o3 + t]!;
      }
      out[i * r + j] = s0; out[j * r + i] = s0;
      out[i * r + j + 1] = s1; out[(j + 1) * r + i] = s1;
      out[i * r + j + 2] = s2; out[(j + 2) * r + i] = s2;
      out[i * r + j + 3] = s3; out[(j + 3) * r + i] = s3;
    }
    for (; j <= i; j++) {
      const oj = j * n;
      let s = 0;
      for (let t = 0; t < n; t++) s += src[oi + t]! * A[oj + t]!;
      out[i * r + j] = s;
      out[j * r + i] = s;
    }
  }
  return { rows: r, cols: r, data: out };
}
