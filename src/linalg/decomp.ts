/**
 * Factorizations over the row-major `Mat` of dense.ts: Cholesky, LU solve,
 * symmetric eigen-decomposition and SVD. ml-matrix is used only here.
 */
import { Matrix, EigenvalueDecomposition, SingularValueDecomposition } from 'ml-matrix';
import { Mat, zeros, transpose } from './dense.js';

export function toMl(m: Mat): Matrix {
  const rowsArr: Float64Array[] = [];
  for (let i = 0; i < m.rows; i++) rowsArr.push(m.data.slice(i * m.cols, (i + 1) * m.cols));
  return new Matrix(rowsArr as unknown as number[][]);
}

export function fromMl(m: Matrix): Mat {
  const out = zeros(m.rows, m.columns);
  for (let i = 0; i < m.rows; i++) {
    const r = m.getRow(i);
    for (let j = 0; j < m.columns; j++) out.data[i * m.columns + j] = r[j]!;
  }
  return out;
}

/** Lower Cholesky factor L (A = L Lᵀ) of a symmetric positive definite matrix; null if not SPD. */
export function cholesky(a: Mat): Mat | null {
  const n = a.rows;
  if (a.cols !== n) throw new Error('cholesky: matrix not square');
  const L = zeros(n, n);
  const A = a.data, l = L.data;
  for (let j = 0; j < n; j++) {
    let d = A[j * n + j]!;
    const lj = j * n;
    for (let k = 0; k < j; k++) d -= l[lj + k]! * l[lj + k]!;
    if (!(d > 0)) return null;
    const djj = Math.sqrt(d);
    l[lj + j] = djj;
    for (let i = j + 1; i < n; i++) {
      const li = i * n;
      let s = A[li + j]!;
      for (let k = 0; k < j; k++) s -= l[li + k]! * l[lj + k]!;
      l[li + j] = s / djj;
    }
  }
  return L;
}

/** Solve (L Lᵀ) X = B for X, B with any number of columns. */
export function choleskySolve(L: Mat, b: Mat): Mat {
  const n = L.rows, m = b.cols;
  const x = new Float64Array(b.data);
  const l = L.data;
  // forward: L y = b
  for (let i = 0; i < n; i++) {
    for (let k = 0; k < i; k++) {
      const lik = l[i * n + k]!;
      if (lik === 0) continue;
      for (let j = 0; j < m; j++) x[i * m + j] -= lik * x[k * m + j]!;
    }
    const d = l[i * n + i]!;
    for (let j = 0; j < m; j++) x[i * m + j] /= d;
  }
  // backward: Lᵀ x = y
  for (let i = n - 1; i >= 0; i--) {
    for (let k = i + 1; k < n; k++) {
      const lki = l[k * n + i]!;
      if (lki === 0) continue;
      for (let j = 0; j < m; j++) x[i * m + j] -= lki * x[k * m + j]!;
    }
    const d = l[i * n + i]!;
    for (let j = 0; j < m; j++) x[i * m + j] /= d;
  }
  return { rows: n, cols: m, data: x };
}

/** Solve A X = B by LU with partial pivoting. Throws on a singular matrix. */
export function luSolve(a: Mat, b: Mat): Mat {
  const n = a.rows;
  if (a.cols !== n || b.rows !== n) throw new Error('luSolve: shape mismatch');
  const A = new Float64Array(a.data);
  const m = b.cols;
  const X = new Float64Array(b.data);
  for (let k = 0; k < n; k++) {
    let p = k, best = Math.abs(A[k * n + k]!);
    for (let i = k + 1; i < n; i++) {
      const v = Math.abs(A[i * n + k]!);
      if (v > best) { best = v; p = i; }
    }
    if (best === 0) throw new Error('luSolve: matrix is singular');
    if (p !== k) {
      for (let j = 0; j < n; j++) { const t = A[k * n + j]!; A[k * n + j] = A[p * n + j]!; A[p * n + j] = t; }
      for (let j = 0; j < m; j++) { const t = X[k * m + j]!; X[k * m + j] = X[p * m + j]!; X[p * m + j] = t; }
    }
    const piv = A[k * n + k]!;
    for (let i = k + 1; i < n; i++) {
      const f = A[i * n + k]! / piv;
      if (f === 0) continue;
      A[i * n + k] = f;
      for (let j = k + 1; j < n; j++) A[i * n + j] -= f * A[k * n + j]!;
      for (let j = 0; j < m; j++) X[i * m + j] -= f * X[k * m + j]!;
    }
  }
  for (let i = n - 1; i >= 0; i--) {
    for (let k = i + 1; k < n; k++) {
      const f = A[i * n + k]!;
      if (f === 0) continue;
      for (let j = 0; j < m; j++) X[i * m + j] -= f * X[k * m + j]!;
    }
    const d = A[i * n + i]!;
    for (let j = 0; j < m; j++) X[i * m + j] /= d;
  }
  return { rows: n, cols: m, data: X };
}

export interface SymEig {
  /** eigenvalues, descending */
  values: Float64Array;
  /** eigenvectors as columns, in the order of `values` */
  vectors: Mat;
}

/** Eigen-decomposition of a symmetric matrix (Householder + QL, via ml-matrix), sorted descending. */
export function eigSym(a: Mat): SymEig {
  const n = a.rows;
  const e = new EigenvalueDecomposition(toMl(a), { assumeSymmetric: true });
  const vals = e.realEigenvalues;
  const V = e.eigenvectorMatrix;
  const order = Array.from({ length: n }, (_, i) => i).sort((i, j) => vals[j]! - vals[i]!);
  const values = new Float64Array(n);
  const vectors = zeros(n, n);
  for (let c = 0; c < n; c++) {
    const src = order[c]!;
    values[c] = vals[src]!;
    for (let r = 0; r < n; r++) vectors.data[r * n + c] = V.get(r, src);
  }
  return { values, vectors };
}

export interface Svd {
  /** left singular vectors as columns (rows × k) */
  U: Mat;
  /** singular values, descending (k) */
  s: Float64Array;
  /** right singular vectors as columns (cols × k) */
  V: Mat;
}

/** Thin SVD (Golub–Kahan–Reinsch via ml-matrix). */
export function svd(a: Mat): Svd {
  const wide = a.cols > a.rows;
  const src = wide ? transpose(a) : a;
  const d = new SingularValueDecomposition(toMl(src), { autoTranspose: false, computeLeftSingularVectors: true, computeRightSingularVectors: true });
  const U = fromMl(d.leftSingularVectors);
  const V = fromMl(d.rightSingularVectors);
  const s = Float64Array.from(d.diagonal);
  const k = Math.min(a.rows, a.cols);
  const Uk = takeCols(U, k), Vk = takeCols(V, k);
  return wide ? { U: Vk, s: s.subarray(0, k), V: Uk } : { U: Uk, s: s.subarray(0, k), V: Vk };
}

/** Singular values only, via the eigenvalues of the smaller Gram matrix (fast, accurate to ~sqrt(eps)·s_max). */
export function singularValues(a: Mat): Float64Array {
  const d = new SingularValueDecomposition(toMl(a), { autoTranspose: true, computeLeftSingularVectors: false, computeRightSingularVectors: false });
  return Float64Array.from(d.diagonal);
}

export function takeCols(m: Mat, k: number): Mat {
  if (k === m.cols) return m;
  const out = zeros(m.rows, k);
  for (let i = 0; i < m.rows; i++) for (let j = 0; j < k; j++) out.data[i * k + j] = m.data[i * m.cols + j]!;
  return out;
}

/** Eigenvalues of a general real square matrix (Hessenberg reduction + real Schur QR, via ml-matrix); complex pairs as (re, im). */
export function eigGeneral(a: Mat): { re: Float64Array; im: Float64Array } {
  if (a.cols !== a.rows) throw new Error('eigGeneral: matrix not square');
  if (a.rows === 0) return { re: new Float64Array(0), im: new Float64Array(0) };
  const e = new EigenvalueDecomposition(toMl(a), { assumeSymmetric: false });
  return { re: Float64Array.from(e.realEigenvalues), im: Float64Array.from(e.imaginaryEigenvalues) };
}
