/**
 * AAA rational approximation of real data on real sample points, with poles, zeros, residues
 * and removal of spurious pole–zero pairs (Froissart doublets).
 *
 * // AAA: Nakatsukasa, Sète & Trefethen, "The AAA algorithm for rational approximation", SIAM J. Sci. Comput. 40 (2018) A1494–A1522.
 *
 * The approximant is kept in barycentric form
 *     r(x) = Σ_j w_j f_j / (x − z_j)  /  Σ_j w_j / (x − z_j)
 * with support points z_j chosen greedily where the current error is largest, and weights w
 * the smallest right singular vector of the Loewner matrix A_ij = (F_i − f_j)/(Z_i − z_j) over
 * the remaining sample points. With m support points the type is (m−1, m−1).
 *
 * Poles are the finite eigenvalues of the arrowhead pencil (E, B), E = [0 wᵀ; 1 diag(z)],
 * B = diag(0, 1, …, 1) (§3 of the paper). We reduce it exactly to a standard (m−1)×(m−1)
 * eigenproblem on the complement of w (see `arrowheadEigenvalues`), then use a real
 * Hessenberg–QR eigensolver (hqr.ts; complex pairs included). Pure module: no I/O.
 */
import { zeros as matZeros, type Mat } from '../linalg/dense.js';
import { svd } from '../linalg/decomp.js';
import { eigenvaluesReal } from './hqr.js';

export interface Barycentric {
  /** support points z_j */
  support: Float64Array;
  /** data values f_j at the support points */
  values: Float64Array;
  /** barycentric weights w_j (unit 2-norm) */
  weights: Float64Array;
}

export interface AaaResult extends Barycentric {
  /** max |f − r| over the samples after each greedy step (length = number of steps taken) */
  errors: Float64Array;
  /** number of Froissart doublets removed by the cleanup */
  removed: number;
}

export interface AaaOptions {
  /** stop when max|f − r| ≤ tol · max|f| (default eps^(3/4), as in the paper's software) */
  tol?: number;
  /** maximum number of support points (default 100) */
  maxTerms?: number;
  /** remove Froissart doublets (default true) */
  cleanup?: boolean;
  /** a pole is spurious when |residue| / dist(pole, samples) < cleanupTol · geomean|f| (default 1e-13) */
  cleanupTol?: number;
}

/** Complex numbers as parallel arrays. */
export interface ComplexArray { re: Float64Array; im: Float64Array }

const EPS = 2.220446049250313e-16;

function validate(z: ArrayLike<number>, f: ArrayLike<number>): void {
  if (z.length !== f.length) throw new Error(`aaa: ${z.length} sample points but ${f.length} values`);
  if (z.length === 0) throw new Error('aaa: no sample points');
  for (let i = 0; i < z.length; i++) {
    if (!Number.isFinite(z[i]!)) throw new Error(`aaa: sample point ${i} is not finite (${z[i]})`);
    if (!Number.isFinite(f[i]!)) throw new Error(`aaa: value ${i} is not finite (${f[i]}); remove unmeasured samples first`);
  }
  const s = Array.from(z).sort((a, b) => a - b);
  for (let i = 1; i < s.length; i++) if (s[i] === s[i - 1]) throw new Error(`aaa: repeated sample point ${s[i]}`);
}

/**
 * Weights = right singular vector of the smallest singular value of the Loewner matrix
 * (rows = non-support samples, columns = support points). Householder QR with column pivoting
 * first, so a tall matrix costs O(rows · m²), then the smallest right singular vector of the
 * small triangular factor (see `smallestRightSingular`).
 */
function loewnerWeights(Z: Float64Array, F: Float64Array, zs: Float64Array, fs: Float64Array): Float64Array {
  const M = Z.length, m = zs.length;
  if (m === 1) return Float64Array.of(1);
  if (M < m) {
    // fewer equations than unknowns: any null vector; use the SVD of the square-padded matrix
    const A = matZeros(m, m);
    for (let i = 0; i < M; i++) for (let j = 0; j < m; j++) A.data[i * m + j] = (F[i]! - fs[j]!) / (Z[i]! - zs[j]!);
    const d = svd(A);
    return lastColumn(d.V, d.s);
  }
  // column-major working copy for Householder QR
  const A = new Float64Array(M * m);
  loewnerColumns(A, Z, F, zs, fs);
  // column pivoting (Businger & Golub 1965): the largest remaining column first, so that R is
  // graded and the Jacobi iteration below converges in few sweeps (Drmač & Veselić 2008)
  const perm = Int32Array.from({ length: m }, (_, j) => j);
  const cn = new Float64Array(m);
  columnNorms2(A, M, m, cn);
  const exact = Float64Array.from(cn);
  const R = matZeros(m, m);
  const v = new Float64Array(M);
  // (small single-loop kernels: each is optimised early on complete type feedback, which keeps
  // a cold process from recompiling one large function after every newly taken branch)
  for (let k = 0; k < m; k++) {
    const piv = argmaxFrom(cn, k);
    if (piv !== k) swapColumns(A, M, k, piv, cn, exact, perm);
    const vv = householderColumn(A, M, k, v);
    if (vv !== 0) reflectRest(A, M, m, k, v, vv, cn, exact);
  }
  for (let i = 0; i < m; i++) for (let j = i; j < m; j++) R.data[i * m + j] = A[j * M + i]!;
  const y = smallestRightSingular(R);
  // A P = Q R: the weights are w = P y
  const w = new Float64Array(m);
  for (let j = 0; j < m; j++) w[perm[j]!] = y[j]!;
  return w;
}

/** A[:, j] = (F − f_j)/(Z − z_j), column-major. */
function loewnerColumns(A: Float64Array, Z: Float64Array, F: Float64Array, zs: Float64Array, fs: Float64Array): void {
  const M = Z.length, m = zs.length;
  for (let j = 0; j < m; j++) {
    const cj = j * M, fj = fs[j]!, zj = zs[j]!;
    for (let i = 0; i < M; i++) A[cj + i] = (F[i]! - fj) / (Z[i]! - zj);
  }
}

function columnNorms2(A: Float64Array, M: number, m: number, cn: Float64Array): void {
  for (let j = 0; j < m; j++) { let t = 0; const cj = j * M; for (let i = 0; i < M; i++) t += A[cj + i]! * A[cj + i]!; cn[j] = t; }
}

function argmaxFrom(a: Float64Array, k: number): number {
  let piv = k;
  for (let j = k + 1; j < a.length; j++) if (a[j]! > a[piv]!) piv = j;
  return piv;
}

function swapColumns(A: Float64Array, M: number, k: number, p: number, cn: Float64Array, exact: Float64Array, perm: Int32Array): void {
  const ck = k * M, cp = p * M;
  for (let i = 0; i < M; i++) { const t = A[ck + i]!; A[ck + i] = A[cp + i]!; A[cp + i] = t; }
  const t = cn[k]!; cn[k] = cn[p]!; cn[p] = t;
  const te = exact[k]!; exact[k] = exact[p]!; exact[p] = te;
  const pk = perm[k]!; perm[k] = perm[p]!; perm[p] = pk;
}

/**
 * Householder reflector of column k below row k (column-major, M rows): v (rows k…) and the column
 * replaced by (…, α, 0, …). Returns vᵀv (0: nothing to reflect).
 */
function householderColumn(A: Float64Array, M: number, k: number, v: Float64Array): number {
  const ck = k * M;
  let nrm = 0;
  for (let i = k; i < M; i++) nrm += A[ck + i]! * A[ck + i]!;
  nrm = Math.sqrt(nrm);
  if (nrm === 0) return 0;
  const alpha = A[ck + k]! > 0 ? -nrm : nrm;
  for (let i = k; i < M; i++) v[i] = A[ck + i]!;
  v[k] = v[k]! - alpha;
  let vv = 0;
  for (let i = k; i < M; i++) vv += v[i]! * v[i]!;
  A[ck + k] = alpha;
  for (let i = k + 1; i < M; i++) A[ck + i] = 0;
  return vv;
}

/** Apply the reflector v of step k to columns k+1… and downdate their remaining norms. */
function reflectRest(A: Float64Array, M: number, m: number, k: number, v: Float64Array, vv: number, cn: Float64Array, exact: Float64Array): void {
  for (let j = k + 1; j < m; j++) {
    const cj = j * M;
    let dot = 0;
    for (let i = k; i < M; i++) dot += v[i]! * A[cj + i]!;
    const t = (2 * dot) / vv;
    for (let i = k; i < M; i++) A[cj + i] = A[cj + i]! - t * v[i]!;
    // remaining column norm below row k: downdated, recomputed once cancellation looms (as LAPACK's xGEQP3)
    cn[j] = cn[j]! - A[cj + k]! * A[cj + k]!;
    if (cn[j]! <= 1e-4 * exact[j]!) { const s2 = tailNorm2(A, cj, k + 1, M); cn[j] = s2; exact[j] = s2; }
  }
}

function tailNorm2(A: Float64Array, c: number, from: number, M: number): number {
  let s2 = 0;
  for (let i = from; i < M; i++) s2 += A[c + i]! * A[c + i]!;
  return s2;
}

/**
 * Right singular vector of the smallest singular value of a small square matrix R by one-sided
 * Jacobi rotations of its columns (Hestenes 1958; Demmel & Veselić, SIAM J. Matrix Anal. Appl.
 * 1992: high relative accuracy, which the nearly singular Loewner factor needs), applied to the
 * triangular factor of a second QR, Rᵀ = Q₂R₂ (R = R₂ᵀQ₂ᵀ, so the right singular vectors of R
 * are Q₂ times those of R₂ᵀ), which cuts the number of sweeps about in half.
 */
// QR preconditioning of one-sided Jacobi: Drmač & Veselić, SIAM J. Matrix Anal. Appl. 29 (2008).
// Column norms updated by the rotation (Rutishauser's formulas, as in Golub & Van Loan §8.5, from memory), recomputed each sweep.
function smallestRightSingular(R: Mat): Float64Array {
  const m = R.cols;
  if (R.rows !== m) throw new Error('aaa: smallestRightSingular expects a square factor');
  // T = Rᵀ in column-major order (column i of T = row i of R), overwritten by its Householder QR
  const T = Float64Array.from(R.data);
  const beta = new Float64Array(m);
  // U: columns of X = R₂ᵀ (column-major), V: accumulated rotations
  const U = new Float64Array(m * m), V = new Float64Array(m * m);
  squareHouseholder(T, m, beta, U);
  // X[i][j] = R₂[j][i] = T[i·m + j] for i > j
  for (let j = 0; j < m; j++) { for (let i = j + 1; i < m; i++) U[j * m + i] = T[i * m + j]!; V[j * m + j] = 1; }
  const d = new Float64Array(m);
  for (let sweep = 0; sweep < 30; sweep++) {
    columnNorms2(U, m, m, d);
    if (!jacobiSweep(U, V, d, m)) break;
  }
  columnNorms2(U, m, m, d);
  let jmin = 0;
  for (let j = 1; j < m; j++) if (d[j]! < d[jmin]!) jmin = j;
  // w = Q₂ v = H₀ H₁ ⋯ H_{m−1} v
  const w = V.slice(jmin * m, (jmin + 1) * m);
  applyReflectorsBack(T, beta, m, w);
  return w;
}

/** Householder QR of the m×m column-major T in place (reflectors kept from the diagonal down, β_k = 2/vᵀv); R₂'s diagonal goes to U[k·m+k]. */
function squareHouseholder(T: Float64Array, m: number, beta: Float64Array, U: Float64Array): void {
  for (let k = 0; k < m; k++) {
    const ck = k * m;
    let nrm = 0;
    for (let i = k; i < m; i++) nrm += T[ck + i]! * T[ck + i]!;
    nrm = Math.sqrt(nrm);
    if (nrm === 0) continue;
    const alpha = T[ck + k]! > 0 ? -nrm : nrm;
    const v0 = T[ck + k]! - alpha;
    T[ck + k] = v0; // the reflector is kept in column k from row k down
    let vv = v0 * v0;
    for (let i = k + 1; i < m; i++) vv += T[ck + i]! * T[ck + i]!;
    beta[k] = vv === 0 ? 0 : 2 / vv;
    for (let j = k + 1; j < m; j++) reflectColumn(T, ck, j * m, k, m, beta[k]!);
    U[k * m + k] = alpha; // R₂[k][k]
  }
}

/** Column at c ← (I − β v vᵀ) column, v = the column at ck from row k down. */
function reflectColumn(T: Float64Array, ck: number, c: number, k: number, m: number, b: number): void {
  let dot = 0;
  for (let i = k; i < m; i++) dot += T[ck + i]! * T[c + i]!;
  const t = b * dot;
  for (let i = k; i < m; i++) T[c + i] = T[c + i]! - t * T[ck + i]!;
}

/** One cyclic sweep of one-sided Jacobi rotations over the column pairs of U (rotations accumulated in V); false when no pair needed one. */
function jacobiSweep(U: Float64Array, V: Float64Array, d: Float64Array, m: number): boolean {
  let rotated = false;
  for (let p = 0; p < m - 1; p++) {
    for (let q = p + 1; q < m; q++) {
      const up = p * m, uq = q * m;
      let g = 0;
      for (let i = 0; i < m; i++) g += U[up + i]! * U[uq + i]!;
      const a = d[p]!, b = d[q]!;
      if (g === 0 || Math.abs(g) <= m * EPS * Math.sqrt(a * b)) continue;
      rotated = true;
      const zeta = (b - a) / (2 * g);
      const t = (zeta >= 0 ? 1 : -1) / (Math.abs(zeta) + Math.sqrt(1 + zeta * zeta));
      const c = 1 / Math.sqrt(1 + t * t), s = c * t;
      rotatePair(U, up, uq, m, c, s);
      rotatePair(V, up, uq, m, c, s);
      d[p] = a - t * g; d[q] = b + t * g;
    }
  }
  return rotated;
}

function rotatePair(X: Float64Array, up: number, uq: number, m: number, c: number, s: number): void {
  for (let i = 0; i < m; i++) { const x = X[up + i]!, y = X[uq + i]!; X[up + i] = c * x - s * y; X[uq + i] = s * x + c * y; }
}

/** w ← H₀ H₁ ⋯ H_{m−1} w with the reflectors stored in T by `squareHouseholder`. */
function applyReflectorsBack(T: Float64Array, beta: Float64Array, m: number, w: Float64Array): void {
  for (let k = m - 1; k >= 0; k--) {
    if (beta[k] === 0) continue;
    const ck = k * m;
    let dot = 0;
    for (let i = k; i < m; i++) dot += T[ck + i]! * w[i]!;
    const t = beta[k]! * dot;
    for (let i = k; i < m; i++) w[i] = w[i]! - t * T[ck + i]!;
  }
}

function lastColumn(V: Mat, s: Float64Array): Float64Array {
  const k = V.cols;
  let jmin = k - 1;
  for (let j = 0; j < s.length; j++) if (s[j]! < s[jmin]!) jmin = j;
  const w = new Float64Array(V.rows);
  for (let i = 0; i < V.rows; i++) w[i] = V.data[i * k + jmin]!;
  return w;
}

/** Evaluate a barycentric rational function at real points (exact values at support points). */
export function evaluate(r: Barycentric, x: ArrayLike<number>): Float64Array {
  const out = new Float64Array(x.length);
  const { support: zs, values: fs, weights: w } = r;
  for (let i = 0; i < x.length; i++) {
    const xi = x[i]!;
    let num = 0, den = 0, hit = -1;
    for (let j = 0; j < zs.length; j++) {
      const d = xi - zs[j]!;
      if (d === 0) { hit = j; break; }
      const c = w[j]! / d;
      num += c * fs[j]!;
      den += c;
    }
    out[i] = hit >= 0 ? fs[hit]! : num / den;
  }
  return out;
}

/**
 * The greedy AAA iteration. `onStep` (if given) sees the approximant after every step — used
 * for choosing the degree by cross-validation without re-running the iteration.
 */
function greedy(z: Float64Array, f: Float64Array, tol: number, maxTerms: number,
  onStep?: (r: Barycentric, step: number) => void): { r: Barycentric; errors: number[] } {
  const M = z.length;
  let fmax = 0, mean = 0;
  for (let i = 0; i < M; i++) { fmax = Math.max(fmax, Math.abs(f[i]!)); mean += f[i]!; }
  mean /= M;
  const atol = tol * fmax;
  const free = new Uint8Array(M).fill(1);
  const R = new Float64Array(M).fill(mean);
  const zs: number[] = [], fs: number[] = [];
  const errors: number[] = [];
  let r: Barycentric = { support: new Float64Array(0), values: new Float64Array(0), weights: new Float64Array(0) };
  const steps = Math.min(maxTerms, M);
  for (let m = 0; m < steps; m++) {
    let jj = -1, best = -1;
    for (let i = 0; i < M; i++) {
      if (!free[i]) continue;
      const e = Math.abs(f[i]! - R[i]!);
      if (e > best) { best = e; jj = i; }
    }
    zs.push(z[jj]!); fs.push(f[jj]!); free[jj] = 0;
    const nFree = M - zs.length;
    const Z = new Float64Array(nFree), F = new Float64Array(nFree);
    for (let i = 0, k = 0; i < M; i++) if (free[i]) { Z[k] = z[i]!; F[k] = f[i]!; k++; }
    const support = Float64Array.from(zs), values = Float64Array.from(fs);
    const weights = loewnerWeights(Z, F, support, values);
    r = { support, values, weights };
    const ev = evaluate(r, z);
    let err = 0;
    for (let i = 0; i < M; i++) { R[i] = ev[i]!; err = Math.max(err, Math.abs(f[i]! - ev[i]!)); }
    errors.push(err);
    onStep?.(r, m + 1);
    if (err <= atol) break;
  }
  return { r: dropZeroWeights(r), errors };
}

function dropZeroWeights(r: Barycentric): Barycentric {
  const keep: number[] = [];
  for (let j = 0; j < r.weights.length; j++) if (r.weights[j] !== 0) keep.push(j);
  if (keep.length === r.weights.length) return r;
  return {
    support: Float64Array.from(keep, (j) => r.support[j]!),
    values: Float64Array.from(keep, (j) => r.values[j]!),
    weights: Float64Array.from(keep, (j) => r.weights[j]!),
  };
}

/** AAA approximation of f on the real points z. Throws on non-finite input or repeated points. */
export function aaa(z: ArrayLike<number>, f: ArrayLike<number>, opts: AaaOptions = {}): AaaResult {
  validate(z, f);
  const Z = Float64Array.from(z), F = Float64Array.from(f);
  const tol = opts.tol ?? Math.pow(EPS, 0.75);
  const maxTerms = opts.maxTerms ?? 100;
  if (!(maxTerms >= 1)) throw new Error(`aaa: maxTerms must be ≥ 1 (got ${maxTerms})`);
  const { r, errors } = greedy(Z, F, tol, maxTerms);
  let out: Barycentric = r, removed = 0;
  if (opts.cleanup ?? true) ({ r: out, removed } = cleanupDoublets(r, Z, F, opts.cleanupTol ?? 1e-13));
  return { ...out, errors: Float64Array.from(errors), removed };
}

/**
 * All approximants of the greedy sequence, m = 1 … maxTerms support points (no cleanup), for
 * degree selection. The iteration stops early once the data are matched to `tol`.
 */
export function aaaSequence(z: ArrayLike<number>, f: ArrayLike<number>, maxTerms: number, tol = 1e-13): Barycentric[] {
  validate(z, f);
  const seq: Barycentric[] = [];
  greedy(Float64Array.from(z), Float64Array.from(f), tol, maxTerms, (r) => seq.push(r));
  return seq;
}

/**
 * Remove Froissart doublets: for each pole whose residue is negligible (relative to its
 * distance from the samples and the size of the data), drop the support point nearest to it
 * and re-solve the least-squares problem for the weights (cleanup step of §5 of the paper;
 * the criterion is the one scipy.interpolate.AAA uses).
 */
export function cleanupDoublets(r: Barycentric, z: Float64Array, f: Float64Array, cleanupTol = 1e-13): { r: Barycentric; removed: number } {
  if (r.support.length < 2) return { r, removed: 0 };
  const p = poles(r);
  const res = residues(r, p);
  let logsum = 0, nz = 0;
  for (let i = 0; i < f.length; i++) { const a = Math.abs(f[i]!); if (a > 0) { logsum += Math.log(a); nz++; } }
  const gmean = nz === f.length ? Math.exp(logsum / nz) : 0; // geometric mean is 0 if any value is 0
  const drop = new Set<number>();
  for (let k = 0; k < p.re.length; k++) {
    let dmin = Infinity;
    for (let i = 0; i < z.length; i++) dmin = Math.min(dmin, Math.hypot(p.re[k]! - z[i]!, p.im[k]!));
    const ratio = Math.hypot(res.re[k]!, res.im[k]!) / dmin;
    if (ratio < cleanupTol * gmean) {
      let jbest = 0, db = Infinity;
      for (let j = 0; j < r.support.length; j++) {
        const d = Math.hypot(r.support[j]! - p.re[k]!, p.im[k]!);
        if (d < db) { db = d; jbest = j; }
      }
      drop.add(jbest);
    }
  }
  if (drop.size === 0) return { r, removed: 0 };
  const keep = Array.from({ length: r.support.length }, (_, j) => j).filter((j) => !drop.has(j));
  const support = Float64Array.from(keep, (j) => r.support[j]!);
  const values = Float64Array.from(keep, (j) => r.values[j]!);
  const supSet = new Set(Array.from(support));
  const Z: number[] = [], F: number[] = [];
  for (let i = 0; i < z.length; i++) if (!supSet.has(z[i]!)) { Z.push(z[i]!); F.push(f[i]!); }
  const weights = loewnerWeights(Float64Array.from(Z), Float64Array.from(F), support, values);
  return { r: { support, values, weights }, removed: drop.size };
}

/**
 * Finite eigenvalues of the arrowhead pencil E = [0 uᵀ; 1 diag(z)], B = diag(0, I).
 * With v = (v0, v1): uᵀv1 = 0 and v0·1 + diag(z) v1 = λ v1. Writing v1 = Q y with Q an
 * orthonormal basis of u⊥ (a Householder reflector) and eliminating v0 = −uᵀ diag(z) Q y / Σu
 * gives the standard problem H y = λ y, H = Qᵀ D Q − (Qᵀ1)(Qᵀ D u)ᵀ / Σu, exactly.
 * Points are centred and scaled to [−1, 1] first for conditioning.
 */
function arrowheadEigenvalues(zs: Float64Array, u: Float64Array): ComplexArray {
  const m = zs.length;
  if (m < 2) return { re: new Float64Array(0), im: new Float64Array(0) };
  let lo = Infinity, hi = -Infinity;
  for (const v of zs) { lo = Math.min(lo, v); hi = Math.max(hi, v); }
  const c = (lo + hi) / 2, s = (hi - lo) / 2 || 1;
  const d = Float64Array.from(zs, (v) => (v - c) / s);
  let S = 0, unrm = 0;
  for (let j = 0; j < m; j++) { S += u[j]!; unrm += u[j]! * u[j]!; }
  unrm = Math.sqrt(unrm);
  if (unrm === 0) throw new Error('aaa: all weights are zero');
  // Householder vector h with P = I − 2hhᵀ/hᵀh mapping u to ∓‖u‖e1
  const h = Float64Array.from(u);
  h[0] = h[0]! + (u[0]! >= 0 ? unrm : -unrm);
  let hh = 0;
  for (let j = 0; j < m; j++) hh += h[j]! * h[j]!;
  // with Q = columns 1..m−1 of P, in closed form (O(m²)): c = 2/hᵀh, γ = Σ h²d,
  // (PDP)_ij = d_i δ_ij − c h_i h_j (d_i + d_j) + c² γ h_i h_j, Pᵀ1 = 1 − c h Σh, PᵀDu = Du − c h (hᵀDu)
  const cH = 2 / hh;
  let gamma = 0, sh = 0, shdu = 0;
  for (let i = 0; i < m; i++) { gamma += h[i]! * h[i]! * d[i]!; sh += h[i]!; shdu += h[i]! * d[i]! * u[i]!; }
  const n1 = m - 1;
  const H = matZeros(n1, n1);
  const qe = new Float64Array(n1), qdu = new Float64Array(n1);
  for (let a = 0; a < n1; a++) {
    const ha = h[a + 1]!;
    qe[a] = 1 - cH * ha * sh;
    qdu[a] = d[a + 1]! * u[a + 1]! - cH * ha * shdu;
  }
  const tiny = Math.abs(S) < 1e-300;
  for (let a = 0; a < n1; a++) {
    const ha = h[a + 1]!, da = d[a + 1]!;
    for (let b = 0; b < n1; b++) {
      const hb = h[b + 1]!, db = d[b + 1]!;
      const t = (a === b ? da : 0) - cH * ha * hb * (da + db) + cH * cH * gamma * ha * hb;
      H.data[a * n1 + b] = t - (tiny ? 0 : (qe[a]! * qdu[b]!) / S);
    }
  }
  if (tiny) {
    // Σu = 0: one eigenvalue is at infinity; the pencil restricted as above is then degenerate.
    // Fall back to a tiny perturbation of S (the far eigenvalue is discarded by the caller's use).
    return arrowheadEigenvalues(zs, Float64Array.from(u, (v, j) => (j === 0 ? v + 1e-14 * unrm : v)));
  }
  const e = eigenvaluesReal(H.data, m - 1);
  return { re: Float64Array.from(e.re, (v) => c + s * v), im: Float64Array.from(e.im, (v) => s * v) };
}

/** Poles of r (m−1 of them for m support points; complex pairs for real data). */
export function poles(r: Barycentric): ComplexArray {
  return arrowheadEigenvalues(r.support, r.weights);
}

/** Zeros of r: finite eigenvalues of the same pencil with weights w_j f_j. */
export function zerosOf(r: Barycentric): ComplexArray {
  const u = Float64Array.from(r.weights, (w, j) => w * r.values[j]!);
  let any = false;
  for (const v of u) if (v !== 0) any = true;
  if (!any) return { re: new Float64Array(0), im: new Float64Array(0) };
  return arrowheadEigenvalues(r.support, u);
}

/** Residues n(λ)/d'(λ) at the given poles. */
export function residues(r: Barycentric, p: ComplexArray): ComplexArray {
  const K = p.re.length;
  const re = new Float64Array(K), im = new Float64Array(K);
  for (let k = 0; k < K; k++) {
    let nr = 0, ni = 0, dr = 0, di = 0;
    for (let j = 0; j < r.support.length; j++) {
      // 1/(λ − z_j)
      const ar = p.re[k]! - r.support[j]!, ai = p.im[k]!;
      const den = ar * ar + ai * ai;
      const cr = ar / den, ci = -ai / den;
      const w = r.weights[j]!;
      nr += w * r.values[j]! * cr; ni += w * r.values[j]! * ci;
      // −1/(λ − z_j)²
      dr -= w * (cr * cr - ci * ci); di -= w * (2 * cr * ci);
    }
    const dd = dr * dr + di * di;
    re[k] = (nr * dr + ni * di) / dd;
    im[k] = (ni * dr - nr * di) / dd;
  }
  return { re, im };
}
