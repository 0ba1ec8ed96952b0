/**
 * Shared helpers of the structural analyses (self-adjointness, transport, translation
 * invariance, order, locality, oscillation/screening, coupling): weighted norms, the common
 * support of sensors and actuators, replicate-based floors, a three-way decision rule, and a
 * randomized SVD. Pure numerics: no file system, randomness only from a passed-in Rng.
 */
import type { Kernel } from '../../types.js';
import type { Context } from '../analysis.js';
import { normalCdf, clamp01 } from '../analysis.js';
import { type Mat, zeros, transpose, matmul } from '../../linalg/dense.js';
import { quadratureWeights } from '../../quadrature.js';
import { Rng } from '../../linalg/rng.js';

// ------------------------------------------------------------------ geometry and weights

/** Length (1-D) or diameter-like extent (2-D) of the domain, from its bounds or the points. */
export function domainLength(k: Kernel): number {
  const d = k.domain;
  if (d.kind === 'interval') return d.bounds[1] - d.bounds[0];
  if (d.kind === 'box') return Math.max(d.bounds[0][1] - d.bounds[0][0], d.bounds[1][1] - d.bounds[1][0]);
  if (d.kind === 'disk') return 2 * d.radius;
  const P = k.pointsIn;
  let L = 0;
  for (let c = 0; c < P.cols; c++) {
    let lo = Infinity, hi = -Infinity;
    for (let i = 0; i < P.rows; i++) { const v = P.data[i * P.cols + c]!; lo = Math.min(lo, v); hi = Math.max(hi, v); }
    L = Math.max(L, hi - lo);
  }
  return L || 1;
}

const outWeightCache = new WeakMap<Mat, Float64Array>();
/** Quadrature weights of the output points (the input weights when sensors = actuators). */
export function weightsOut(k: Kernel): Float64Array {
  if (colocated(k)) return k.weightsIn;
  let w = outWeightCache.get(k.pointsOut);
  if (!w) { w = quadratureWeights(k.pointsOut, k.domain); outWeightCache.set(k.pointsOut, w); }
  return w;
}

/** True when output points and input points are the same list (to 1e-9 of the domain length). */
export function colocated(k: Kernel): boolean {
  const a = k.pointsOut, b = k.pointsIn;
  if (a.rows !== b.rows || a.cols !== b.cols) return false;
  const tol = 1e-9 * (domainLength(k) || 1);
  for (let i = 0; i < a.data.length; i++) if (Math.abs(a.data[i]! - b.data[i]!) > tol) return false;
  return true;
}

/** w repeated once per component (component-major), for block kernels. */
export function tile(w: Float64Array, c: number): Float64Array {
  if (c === 1) return w;
  const out = new Float64Array(w.length * c);
  for (let k = 0; k < c; k++) out.set(w, k * w.length);
  return out;
}

/**
 * A square view of a kernel on one set of points, so that G(x, s) and G(s, x) can be compared.
 * Co-located: the kernel itself. 1-D with distinct sensors: each column G(·, s_j) is
 * interpolated linearly from the output points to the input points that lie inside the
 * outputs' range (the common support). 2-D with distinct point sets: null (not comparable
 * without a model). Returns a mapping that is applied identically to every replicate.
 */
export interface SquareView {
  /** indices into the input points that form the common support */
  idx: number[];
  /** coordinates of the common points (1-D: the x values; 2-D: n × 2 row-major) */
  x: Float64Array;
  /** quadrature weights on the common support */
  w: Float64Array;
  /** maps a kernel-shaped matrix (scalar or block) to the square matrix on the common support */
  map: (G: Mat) => Mat;
  interpolated: boolean;
}

export function squareView(k: Kernel): SquareView | null {
  const cin = k.components.in, cout = k.components.out;
  if (cin !== cout) return null;
  const c = cin;
  if (colocated(k)) {
    const n = k.pointsIn.rows;
    return { idx: Array.from({ length: n }, (_, i) => i), x: k.pointsIn.data, w: k.weightsIn, map: (G) => G, interpolated: false };
  }
  if (k.dimension !== 1) return null;
  const xo = k.pointsOut.data, xi = k.pointsIn.data;
  const no = xo.length, ni = xi.length;
  const ord = Array.from({ length: no }, (_, i) => i).sort((a, b) => xo[a]! - xo[b]!);
  const lo = xo[ord[0]!]!, hi = xo[ord[no - 1]!]!;
  const idx: number[] = [];
  for (let j = 0; j < ni; j++) if (xi[j]! >= lo && xi[j]! <= hi) idx.push(j);
  if (idx.length < 8) return null;
  // interpolation stencil: for each common point, the two bracketing outputs and weights
  const left = new Int32Array(idx.length), right = new Int32Array(idx.length), t = new Float64Array(idx.length);
  for (let m = 0; m < idx.length; m++) {
    const v = xi[idx[m]!]!;
    let a = 0, b = no - 1;
    while (b - a > 1) { const mid = (a + b) >> 1; if (xo[ord[mid]!]! <= v) a = mid; else b = mid; }
    const xa = xo[ord[a]!]!, xb = xo[ord[b]!]!;
    left[m] = ord[a]!; right[m] = ord[b]!;
    t[m] = xb > xa ? (v - xa) / (xb - xa) : 0;
  }
  const x = Float64Array.from(idx, (j) => xi[j]!);
  const wAll = k.weightsIn;
  const w = Float64Array.from(idx, (j) => wAll[j]!);
  const nc = idx.length;
  const map = (G: Mat): Mat => {
    const out = zeros(nc * c, nc * c);
    for (let bi = 0; bi < c; bi++) for (let bj = 0; bj < c; bj++) {
      for (let m = 0; m < nc; m++) {
        const ra = (bi * no + left[m]!) * G.cols, rb = (bi * no + right[m]!) * G.cols, tm = t[m]!;
        const orow = (bi * nc + m) * out.cols + bj * nc;
        for (let q = 0; q < nc; q++) {
          const col = bj * ni + idx[q]!;
          out.data[orow + q] = (1 - tm) * G.data[ra + col]! + tm * G.data[rb + col]!;
        }
      }
    }
    return out;
  };
  return { idx, x, w, map, interpolated: true };
}

/** √(Σ_ij wr_i wc_j A_ij²): the Frobenius norm of W_r^{1/2} A W_c^{1/2}. */
export function weightedNorm(A: Mat, wr: ArrayLike<number>, wc: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < A.rows; i++) {
    const o = i * A.cols, wi = wr[i]!;
    let r = 0;
    for (let j = 0; j < A.cols; j++) { const v = A.data[o + j]!; r += wc[j]! * v * v; }
    s += wi * r;
  }
  return Math.sqrt(s);
}

/** W_r^{1/2} A W_c^{1/2}. */
export function sqrtWeighted(A: Mat, wr: ArrayLike<number>, wc: ArrayLike<number>): Mat {
  const out = zeros(A.rows, A.cols);
  const sc = Float64Array.from({ length: A.cols }, (_, j) => Math.sqrt(wc[j]!));
  for (let i = 0; i < A.rows; i++) {
    const si = Math.sqrt(wr[i]!), o = i * A.cols;
    for (let j = 0; j < A.cols; j++) out.data[o + j] = si * A.data[o + j]! * sc[j]!;
  }
  return out;
}

// ------------------------------------------------------------------ replicates and floors

/** The resampled kernels of the context (at most `max`, first ones: deterministic). */
export function replicates(ctx: Context, max = 50): Mat[] {
  return ctx.noise.replicates.slice(0, max);
}

/** Entrywise mean of matrices of equal shape. */
export function meanMat(ms: Mat[]): Mat {
  const out = zeros(ms[0]!.rows, ms[0]!.cols);
  for (const m of ms) for (let i = 0; i < m.data.length; i++) out.data[i] += m.data[i]!;
  for (let i = 0; i < out.data.length; i++) out.data[i] /= ms.length;
  return out;
}

/**
 * Deviations of the replicates from their mean, scaled by √(R/(R−1)) so that their spread
 * estimates the estimator's error (the usual bootstrap-variance correction). The matrices are
 * shared between callers (computed once per list of replicates): treat them as read-only.
 */
export function deviations(reps: Mat[]): Mat[] {
  if (reps.length < 2) return [];
  // memoized on the replicates' identity: most analyses ask for the same list (read-only result)
  const hit = deviationCache.get(reps[0]!);
  if (hit && hit.reps.length === reps.length && hit.reps.every((r, i) => r === reps[i])) return hit.devs.slice();
  const mu = meanMat(reps);
  const f = Math.sqrt(reps.length / (reps.length - 1));
  const devs = reps.map((r) => {
    const d = zeros(r.rows, r.cols);
    for (let i = 0; i < d.data.length; i++) d.data[i] = f * (r.data[i]! - mu.data[i]!);
    return d;
  });
  deviationCache.set(reps[0]!, { reps: reps.slice(), devs });
  return devs.slice();
}

/** Shared results of `deviations` (callers must not modify the matrices). */
const deviationCache = new WeakMap<Mat, { reps: Mat[]; devs: Mat[] }>();

export function mean(v: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < v.length; i++) s += v[i]!;
  return v.length ? s / v.length : NaN;
}

export function std(v: ArrayLike<number>): number {
  if (v.length < 2) return NaN;
  const m = mean(v);
  let s = 0;
  for (let i = 0; i < v.length; i++) s += (v[i]! - m) ** 2;
  return Math.sqrt(s / (v.length - 1));
}

/** Entry-wise mean and sample standard deviation over replicate vectors (the first n entries of each; ≥ 2 replicates). */
export function replicateSpread(reps: readonly ArrayLike<number>[], n: number): { mean: Float64Array; sd: Float64Array } {
  const mean = new Float64Array(n), sd = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let m = 0;
    for (const r of reps) m += r[i]!;
    m /= reps.length;
    let v = 0;
    for (const r of reps) v += (r[i]! - m) ** 2;
    sd[i] = Math.sqrt(v / (reps.length - 1));
    mean[i] = m;
  }
  return { mean, sd };
}

export function rms(v: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < v.length; i++) s += v[i]! * v[i]!;
  return v.length ? Math.sqrt(s / v.length) : NaN;
}

export function median(v: ArrayLike<number>): number {
  const s = Array.from(v).filter(Number.isFinite).sort((a, b) => a - b);
  if (!s.length) return NaN;
  const m = s.length >> 1;
  return s.length % 2 ? s[m]! : 0.5 * (s[m - 1]! + s[m]!);
}

// ------------------------------------------------------------------ decisions

export type Decision = 'present' | 'absent' | 'inconclusive';

/**
 * Three-way decision on an effect whose size is `stat` (≥ 0) when pure noise would give
 * about `floor` (one standard unit). Our rule, stated once for all analyses:
 *  - absent when the effect is confidently smaller than `resolution`, the smallest effect worth
 *    reporting: the one-sided 95 % upper bound stat + 1.645·floor lies below it (two one-sided
 *    tests, Schuirmann, J. Pharmacokinet. Biopharm. 15 (1987)); confidence
 *    Φ((resolution − stat)/floor − 1), one unit held back for the floor's own uncertainty.
 *    This comes first: a difference that is statistically clear but immaterial (round-off, a
 *    fit's tiny bias) is not reported as an effect;
 *  - present when stat ≥ 3·floor ("3 sigma to claim", common practice; confidence Φ(z − 2), the
 *    shared separationConfidence map);
 *  - inconclusive otherwise (confidence 0.5: the data do not decide). A statistic merely "within
 *    the noise" is not evidence of absence when the noise is as large as the effects of interest.
 * A floor that is unknown (NaN, no replicates) decides nothing; a floor of exactly 0 (exact
 * replicates) decides by the resolution alone.
 */
export function decide(stat: number, floor: number, resolution: number): { decision: Decision; confidence: number; z: number } {
  if (!Number.isFinite(stat) || !(floor >= 0)) return { decision: 'inconclusive', confidence: 0.5, z: NaN };
  const f = floor;
  const z = f > 0 ? stat / f : (stat > 0 ? Infinity : 0);
  if (f === 0) return stat < resolution ? { decision: 'absent', confidence: 0.99, z } : { decision: 'present', confidence: 0.99, z };
  if (stat + EQUIVALENCE_Z * f < resolution) {
    const c = Math.min(0.99, normalCdf((resolution - stat) / f - 1));
    return { decision: 'absent', confidence: clamp01(round3(c)), z };
  }
  if (z >= 3) return { decision: 'present', confidence: clamp01(round3(normalCdf(z - 2))), z };
  return { decision: 'inconclusive', confidence: 0.5, z };
}

/** One-sided 95 % normal quantile used by the equivalence branch of `decide`. */
export const EQUIVALENCE_Z = 1.6449;

export function round3(x: number): number {
  return Math.round(x * 1000) / 1000;
}

/** Round to `d` significant digits (for findings; null stays null, non-finite becomes null). */
export function sig(x: number | null | undefined, d = 4): number | null {
  if (x === null || x === undefined || !Number.isFinite(x)) return null;
  if (x === 0) return 0;
  return Number(x.toPrecision(d));
}

// ------------------------------------------------------------------ small linear algebra

/** Orthonormal basis of the columns of Y (modified Gram–Schmidt, twice for stability). */
export function orth(Y: Mat): Mat {
  const n = Y.rows, k = Y.cols;
  const Q = transpose(Y); // k × n: rows are the vectors
  const q = Q.data;
  const keep: number[] = [];
  for (let pass = 0; pass < 2; pass++) {
    for (let j = 0; j < k; j++) {
      const oj = j * n;
      for (let i = 0; i < j; i++) {
        const oi = i * n;
        let d = 0;
        for (let t = 0; t < n; t++) d += q[oi + t]! * q[oj + t]!;
        for (let t = 0; t < n; t++) q[oj + t] -= d * q[oi + t]!;
      }
      let s = 0;
      for (let t = 0; t < n; t++) s += q[oj + t]! * q[oj + t]!;
      s = Math.sqrt(s);
      if (s > 0) for (let t = 0; t < n; t++) q[oj + t] /= s;
    }
  }
  for (let j = 0; j < k; j++) {
    let s = 0;
    for (let t = 0; t < n; t++) s += q[j * n + t]! ** 2;
    if (s > 0.5) keep.push(j);
  }
  const out = zeros(n, keep.length);
  for (let c = 0; c < keep.length; c++) for (let t = 0; t < n; t++) out.data[t * keep.length + c] = q[keep[c]! * n + t]!;
  return out;
}

export interface TopSvd { U: Mat; s: Float64Array; V: Mat; exact: boolean }

/**
 * Thin SVD of a matrix with few rows (l × n, l ≤ n) by one-sided Jacobi rotations of its rows;
 * accurate also for small singular values.
 */
// One-sided Jacobi SVD: Hestenes, J. SIAM 6 (1958); Demmel & Veselić, SIAM J. Matrix Anal. Appl. 13 (1992).
export function jacobiSvdRows(B: Mat): TopSvd {
  if (B.cols > 2 * B.rows) return qrJacobiSvdRows(B);
  return plainJacobiSvdRows(B);
}

/**
 * The same SVD for a wide B (l × n, n > 2l): Householder QR of Bᵀ = QR first, then Jacobi on the
 * l × l factor Rᵀ (rows of length l instead of n, and faster convergence); V = Q·V_R.
 */
// QR preconditioning of one-sided Jacobi: Drmač & Veselić, SIAM J. Matrix Anal. Appl. 29 (2008).
function qrJacobiSvdRows(B: Mat): TopSvd {
  const l = B.rows, n = B.cols;
  const X = Float64Array.from(B.data); // row k of B = column k of Bᵀ
  const beta = new Float64Array(l);
  const R = zeros(l, l); // holds Rᵀ (lower triangular), row i = column i of R
  for (let k = 0; k < l; k++) {
    const ok = k * n;
    let nrm = 0;
    for (let t = k; t < n; t++) nrm += X[ok + t]! * X[ok + t]!;
    nrm = Math.sqrt(nrm);
    const alpha = X[ok + k]! > 0 ? -nrm : nrm;
    // reflector v (stored in place of column k, from entry k on), H = I − β v vᵀ
    X[ok + k] = X[ok + k]! - alpha;
    let vv = 0;
    for (let t = k; t < n; t++) vv += X[ok + t]! * X[ok + t]!;
    beta[k] = vv > 0 ? 2 / vv : 0;
    for (let j = k + 1; j < l; j++) {
      const oj = j * n;
      let d = 0;
      for (let t = k; t < n; t++) d += X[ok + t]! * X[oj + t]!;
      const f = beta[k]! * d;
      if (f !== 0) for (let t = k; t < n; t++) X[oj + t] -= f * X[ok + t]!;
    }
    R.data[k * l + k] = alpha;
    for (let j = k + 1; j < l; j++) R.data[j * l + k] = X[j * n + k]!;
  }
  const d = plainJacobiSvdRows(R); // Rᵀ = U Σ V_Rᵀ, so B = Rᵀ Qᵀ = U Σ (Q V_R)ᵀ
  const V = zeros(n, l);
  for (let i = 0; i < l; i++) for (let c = 0; c < l; c++) V.data[i * l + c] = d.V.data[i * l + c]!;
  // V ← H_0 H_1 ⋯ H_{l−1} V: apply the reflectors in reverse order
  const col = new Float64Array(n);
  for (let k = l - 1; k >= 0; k--) {
    const ok = k * n, bk = beta[k]!;
    if (bk === 0) continue;
    col.fill(0);
    for (let t = k; t < n; t++) { const v = X[ok + t]!; if (v === 0) continue; const vo = t * l; for (let c = 0; c < l; c++) col[c] += v * V.data[vo + c]!; }
    for (let t = k; t < n; t++) { const v = bk * X[ok + t]!; if (v === 0) continue; const vo = t * l; for (let c = 0; c < l; c++) V.data[vo + c] -= v * col[c]!; }
  }
  return { U: d.U, s: d.s, V, exact: true };
}

function plainJacobiSvdRows(B: Mat): TopSvd {
  const l = B.rows, n = B.cols;
  const X = Float64Array.from(B.data);
  const R = new Float64Array(l * l);
  for (let i = 0; i < l; i++) R[i * l + i] = 1;
  for (let sweep = 0; sweep < 40; sweep++) {
    let rotated = 0;
    for (let p = 0; p < l - 1; p++) for (let q = p + 1; q < l; q++) {
      const op = p * n, oq = q * n;
      let a = 0, b = 0, g = 0;
      for (let t = 0; t < n; t++) { const u = X[op + t]!, v = X[oq + t]!; a += u * u; b += v * v; g += u * v; }
      if (!(Math.abs(g) > 1e-15 * Math.sqrt(a * b)) || g === 0) continue;
      rotated++;
      const zeta = (b - a) / (2 * g);
      const tt = Math.sign(zeta || 1) / (Math.abs(zeta) + Math.sqrt(1 + zeta * zeta));
      const c = 1 / Math.sqrt(1 + tt * tt), sn = c * tt;
      for (let t = 0; t < n; t++) { const u = X[op + t]!, v = X[oq + t]!; X[op + t] = c * u - sn * v; X[oq + t] = sn * u + c * v; }
      const rp = p * l, rq = q * l;
      for (let t = 0; t < l; t++) { const u = R[rp + t]!, v = R[rq + t]!; R[rp + t] = c * u - sn * v; R[rq + t] = sn * u + c * v; }
    }
    if (!rotated) break;
  }
  const norms = Array.from({ length: l }, (_, i) => { let s2 = 0; for (let t = 0; t < n; t++) s2 += X[i * n + t]! ** 2; return Math.sqrt(s2); });
  const ord = norms.map((_, i) => i).sort((i, j) => norms[j]! - norms[i]!);
  const s = Float64Array.from(ord, (i) => norms[i]!);
  const U = zeros(l, l), V = zeros(n, l);
  for (let c = 0; c < l; c++) {
    const i = ord[c]!, sv = norms[i]!;
    for (let t = 0; t < l; t++) U.data[t * l + c] = R[i * l + t]!; // U_B = Rᵀ
    if (sv > 0) for (let t = 0; t < n; t++) V.data[t * l + c] = X[i * n + t]! / sv;
  }
  return { U, s, V, exact: true };
}

/**
 * Leading k singular triplets: a randomized range finder with power iterations, then a
 * Jacobi SVD of the small projected matrix (exact when k is close to the full size).
 */
// Randomized SVD: Halko, Martinsson & Tropp, SIAM Review 53 (2011), Alg. 4.4 and 5.1.
export function topSvd(A: Mat, k: number, rng: Rng, power = 3): TopSvd {
  const m = Math.min(A.rows, A.cols);
  if (k + 8 >= m) {
    const tall = A.rows >= A.cols;
    const d = jacobiSvdRows(tall ? transpose(A) : A);
    const kk = Math.min(k, d.s.length);
    return tall ? { U: takeColsOf(d.V, kk), s: Float64Array.from(d.s.subarray(0, kk)), V: takeColsOf(d.U, kk), exact: true }
      : { U: takeColsOf(d.U, kk), s: Float64Array.from(d.s.subarray(0, kk)), V: takeColsOf(d.V, kk), exact: true };
  }
  const l = Math.min(m, k + 8);
  const Om = zeros(A.cols, l);
  for (let i = 0; i < Om.data.length; i++) Om.data[i] = rng.normal();
  // Aᵀ formed once: row-major products with it are about twice as fast as matmulTN here
  const At = transpose(A);
  let Q = orth(matmul(A, Om));
  for (let it = 0; it < power; it++) {
    const Z = orth(matmul(At, Q));
    Q = orth(matmul(A, Z));
  }
  const Bt = transpose(matmul(At, Q)); // l × cols
  const d = jacobiSvdRows(Bt);
  const kk = Math.min(k, d.s.length);
  return { U: takeColsOf(matmul(Q, d.U), kk), s: Float64Array.from(d.s.subarray(0, kk)), V: takeColsOf(d.V, kk), exact: false };
}

/** The first k columns of M (M itself when it has k). */
export function takeColsOf(M: Mat, k: number): Mat {
  if (M.cols === k) return M;
  const out = zeros(M.rows, k);
  for (let i = 0; i < M.rows; i++) for (let j = 0; j < k; j++) out.data[i * k + j] = M.data[i * M.cols + j]!;
  return out;
}

/**
 * Largest singular value by power iteration on AᵀA (relative accuracy ~1e-3 is plenty here).
 * With `sr`, `sc`: that of diag(sr)·A·diag(sc), without forming it.
 */
export function spectralNorm(A: Mat, rng: Rng, iters = 30, sr?: ArrayLike<number>, sc?: ArrayLike<number>): number {
  let v = rng.normals(A.cols);
  let s = 0;
  const x = new Float64Array(A.cols);
  for (let it = 0; it < iters; it++) {
    let nv = 0;
    for (let i = 0; i < v.length; i++) nv += v[i]! * v[i]!;
    nv = Math.sqrt(nv);
    if (!(nv > 0)) return 0;
    for (let i = 0; i < v.length; i++) v[i] /= nv;
    for (let j = 0; j < A.cols; j++) x[j] = sc ? sc[j]! * v[j]! : v[j]!;
    const u = new Float64Array(A.rows);
    for (let i = 0; i < A.rows; i++) { let t = 0; const o = i * A.cols; for (let j = 0; j < A.cols; j++) t += A.data[o + j]! * x[j]!; u[i] = sr ? sr[i]! * t : t; }
    let nu = 0;
    for (let i = 0; i < u.length; i++) nu += u[i]! * u[i]!;
    const sNew = Math.sqrt(nu);
    const w = new Float64Array(A.cols);
    for (let i = 0; i < A.rows; i++) { const ui = sr ? sr[i]! * u[i]! : u[i]!; if (ui === 0) continue; const o = i * A.cols; for (let j = 0; j < A.cols; j++) w[j] += ui * A.data[o + j]!; }
    if (sc) for (let j = 0; j < A.cols; j++) w[j] *= sc[j]!;
    v = w;
    if (Math.abs(sNew - s) <= 1e-4 * sNew) { s = sNew; break; }
    s = sNew;
  }
  return s;
}

/** Solve the small dense least-squares problem min ‖X b − y‖ (normal equations with a tiny ridge). */
export function lstsq(X: number[][], y: number[], ridge = 1e-12): number[] | null {
  const p = X[0]?.length ?? 0;
  if (!p || X.length < p) return null;
  const A = Array.from({ length: p }, () => new Float64Array(p));
  const b = new Float64Array(p);
  for (let r = 0; r < X.length; r++) {
    const xr = X[r]!;
    for (let i = 0; i < p; i++) { b[i] += xr[i]! * y[r]!; for (let j = 0; j < p; j++) A[i]![j] += xr[i]! * xr[j]!; }
  }
  let tr = 0;
  for (let i = 0; i < p; i++) tr += A[i]![i]!;
  for (let i = 0; i < p; i++) A[i]![i] += ridge * (tr / p || 1);
  return solveSmall(A, b);
}

/** Gaussian elimination with partial pivoting on a small system (returns null when singular). */
export function solveSmall(Ain: Float64Array[], bin: Float64Array): number[] | null {
  const n = bin.length;
  const A = Ain.map((r) => Float64Array.from(r));
  const b = Float64Array.from(bin);
  for (let c = 0; c < n; c++) {
    let p = c;
    for (let r = c + 1; r < n; r++) if (Math.abs(A[r]![c]!) > Math.abs(A[p]![c]!)) p = r;
    if (!(Math.abs(A[p]![c]!) > 0)) return null;
    [A[c], A[p]] = [A[p]!, A[c]!];
    [b[c], b[p]] = [b[p]!, b[c]!];
    for (let r = c + 1; r < n; r++) {
      const f = A[r]![c]! / A[c]![c]!;
      if (f === 0) continue;
      for (let j = c; j < n; j++) A[r]![j] -= f * A[c]![j]!;
      b[r] -= f * b[c]!;
    }
  }
  const x = new Array<number>(n).fill(0);
  for (let r = n - 1; r >= 0; r--) {
    let s = b[r]!;
    for (let j = r + 1; j < n; j++) s -= A[r]![j]! * x[j]!;
    x[r] = s / A[r]![r]!;
  }
  return x.every(Number.isFinite) ? x : null;
}

/** Down-sample a matrix to at most `max`×`max` by picking evenly spaced rows and columns. */
export function downsample(A: Mat, max = 60): { rows: number[]; cols: number[]; values: number[][] } {
  const pick = (n: number) => n <= max ? Array.from({ length: n }, (_, i) => i) : Array.from({ length: max }, (_, i) => Math.round((i * (n - 1)) / (max - 1)));
  const ri = pick(A.rows), ci = pick(A.cols);
  return { rows: ri, cols: ci, values: ri.map((i) => ci.map((j) => sig(A.data[i * A.cols + j]!, 4) ?? 0)) };
}

/**
 * A generator for one analysis' internal randomness (random test matrices of the randomized
 * SVD, power-iteration starts). Fixed per analysis tag, so that results depend neither on the
 * order in which analyses run nor on how much randomness earlier ones consumed; these draws
 * affect results only at round-off level.
 */
export function analysisRng(tag: number): Rng {
  return new Rng((0x5eed ^ Math.imul(tag + 7, 0x9e3779b1)) >>> 0);
}

// ------------------------------------------------------------------ slope jump across the diagonal

/**
 * The slope jump [∂xG](s_j) of each interior column as a fixed linear functional of that column.
 * Per column, G(·, s_j) is fitted on the window |x − s_j| ≤ w by least squares with the basis
 * {1, u, u², u³, u⁴, |u|, |u|u, |u|u², |u|u³} (u = (x − s_j)/w), and the jump of the slope is
 * 2·c₅/w. The design depends only on the points, so the coefficient is hᵀy with h = X (XᵀX)⁻¹e₅:
 * computed once, applied to any number of matrices (kernel and replicates) at O(window) per
 * column. Points given in any order; `sorted` lists them by position.
 * With `derivative = 3` the same fit gives the jump of the third derivative instead,
 * [∂x³G](s_j) = 12·c₇/w³ (c₇ the coefficient of |u|u², whose third derivative jumps by 12 at 0):
 * the smoothness signature of a fourth-order operator (jump 1/e(s) there, Coddington & Levinson
 * ch. 7 (from memory); shared/references §2(f1)).
 */
export interface JumpFunctionals {
  /** point indices (into x) of the columns that have a full window */
  idx: number[];
  /** their positions */
  s: number[];
  /** per column: the point indices of the window rows and their weights */
  rows: Int32Array[];
  weights: Float64Array[];
  halfWidth: number;
}

const jumpCache = new WeakMap<ArrayLike<number>, Map<number, JumpFunctionals>>();

export function slopeJumpFunctionals(x: Float64Array, halfWidth?: number, derivative: 1 | 3 = 1): JumpFunctionals {
  const n = x.length;
  const ord = Array.from({ length: n }, (_, i) => i).sort((a, b) => x[a]! - x[b]!);
  const xs = Float64Array.from(ord, (i) => x[i]!);
  const L = xs[n - 1]! - xs[0]!, h = L / (n - 1);
  const w = halfWidth ?? Math.max(8 * h, 0.08 * L);
  let byW = jumpCache.get(x);
  const key = derivative === 1 ? w : -w; // one cache per derivative (w > 0)
  const hit = byW?.get(key);
  if (hit) return hit;
  const out: JumpFunctionals = { idx: [], s: [], rows: [], weights: [], halfWidth: w };
  const p = 9;
  const basis = (u: number, f: Float64Array) => { const a = Math.abs(u); f[0] = 1; f[1] = u; f[2] = u * u; f[3] = u * u * u; f[4] = u ** 4; f[5] = a; f[6] = a * u; f[7] = a * u * u; f[8] = a * u * u * u; };
  const f = new Float64Array(p);
  for (let c = 0; c < n; c++) {
    const sj = xs[c]!;
    if (sj - w < xs[0]! - 1e-12 || sj + w > xs[n - 1]! + 1e-12) continue;
    let lo = c, hi = c;
    while (lo > 0 && Math.abs((xs[lo - 1]! - sj) / w) <= 1 + 1e-12) lo--;
    while (hi < n - 1 && Math.abs((xs[hi + 1]! - sj) / w) <= 1 + 1e-12) hi++;
    const m = hi - lo + 1;
    if (m < 14) continue;
    const A = Array.from({ length: p }, () => new Float64Array(p));
    for (let r = lo; r <= hi; r++) {
      basis((xs[r]! - sj) / w, f);
      for (let a = 0; a < p; a++) for (let b = 0; b < p; b++) A[a]![b] += f[a]! * f[b]!;
    }
    const term = derivative === 1 ? 5 : 7, factor = derivative === 1 ? 2 / w : 12 / (w * w * w);
    const e5 = new Float64Array(p); e5[term] = 1;
    const z = solveSmall(A, e5); // (XᵀX)⁻¹e_term (XᵀX is symmetric)
    if (!z) continue;
    const wt = new Float64Array(m), rows = new Int32Array(m);
    for (let r = lo; r <= hi; r++) {
      basis((xs[r]! - sj) / w, f);
      let v = 0;
      for (let a = 0; a < p; a++) v += f[a]! * z[a]!;
      wt[r - lo] = factor * v;
      rows[r - lo] = ord[r]!;
    }
    out.idx.push(ord[c]!); out.s.push(sj); out.rows.push(rows); out.weights.push(wt);
  }
  if (!byW) { byW = new Map(); jumpCache.set(x, byW); }
  byW.set(key, out);
  return out;
}

/** The slope jumps of the columns of G (rows and columns indexed like the functionals' points). */
export function applyJumpFunctionals(G: Mat, fn: JumpFunctionals): Float64Array {
  const out = new Float64Array(fn.idx.length);
  for (let q = 0; q < out.length; q++) {
    const col = fn.idx[q]!, rows = fn.rows[q]!, wt = fn.weights[q]!;
    let v = 0;
    for (let t = 0; t < rows.length; t++) v += wt[t]! * G.data[rows[t]! * G.cols + col]!;
    out[q] = v;
  }
  return out;
}
