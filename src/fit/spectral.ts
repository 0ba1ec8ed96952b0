/**
 * Ridge regression in normal-equation form with the regularisation chosen by GCV,
 * for every λ at once from one symmetric tridiagonalisation.
 *
 *   minimise ‖y − Xθ‖² + λ θᵀ diag(P) θ,   given only M = XᵀX, r = Xᵀy, ‖y‖².
 *
 * With θ = P^{-1/2} η the problem is standard ridge; M̄ = P^{-1/2} M P^{-1/2} = V diag(μ) Vᵀ and
 * c = Vᵀ P^{-1/2} r give RSS(λ) and tr H(λ) in O(p) per λ.
 * GCV: Golub, Heath & Wahba, Technometrics 21 (1979) 215–223.
 * Householder tridiagonalisation and implicit QL: Golub & Van Loan, Matrix Computations (4th ed.) §8.3;
 * the QL sweep follows the EISPACK tql1/tql2 pattern (Bowdler, Martin, Reinsch & Wilkinson, Numer. Math. 1968).
 */
import type { Mat } from '../linalg/dense.js';
import { cholesky, choleskySolve, eigSym } from '../linalg/decomp.js';

export interface NormalSystem {
  /** p × p, symmetric positive semi-definite */
  M: Mat;
  /** p */
  r: Float64Array;
  /** ‖y‖² */
  yy: number;
  /** number of observations behind M (after removing fitted intercepts) */
  nObs: number;
}

export interface RidgeSpectrum {
  /** the tridiagonal reduction of M̄ and P^{-1/2}, when kept (`ridgeSpectrum(…, true)`) */
  tri?: Tridiagonal;
  isqrtP?: Float64Array;
  /** eigenvalues of M̄ */
  mu: Float64Array;
  /** coordinates of P^{-1/2} r in the eigenbasis */
  c: Float64Array;
  yy: number;
  nObs: number;
}

/** Eigenvalues of a symmetric matrix and the eigen-coordinates of one vector (no eigenvectors formed). */
export function eigenCoordinates(Ain: Mat, v: Float64Array, keep = false, rebuild?: () => Mat): { values: Float64Array; coords: Float64Array; tri?: Tridiagonal } {
  const n = Ain.rows;
  // with `rebuild` the caller hands over Ain's storage (it holds the Householder vectors afterwards) and
  // can rebuild the matrix for the dense fallback
  const A = rebuild ? Ain.data : new Float64Array(Ain.data);
  const z = new Float64Array(v);
  const d = new Float64Array(n), e = new Float64Array(n);
  const u = new Float64Array(n), w = new Float64Array(n);
  // Householder: for k = 0..n−3 annihilate A[k+2.., k] (small functions, compiled once by V8)
  householderReduce(A, n, z, d, e, u, w);
  if (n >= 2) { d[n - 2] = A[(n - 2) * n + n - 2]!; e[n - 2] = A[(n - 1) * n + n - 2]!; }
  d[n - 1] = A[(n - 1) * n + n - 1]!;
  e[n - 1] = 0;
  // implicit QL with Wilkinson-type shift; rotations applied to the row vector zᵀ (Tridiagonal.eigenBatch)
  const tri = new Tridiagonal(A, n, d, e);
  const eig = tri.eigenBatch([z]);
  if (!eig) {
    const orig = rebuild ? rebuild() : Ain;
    return keep ? { ...eigenCoordinatesDense(orig, v), tri } : eigenCoordinatesDense(orig, v);
  }
  return { values: eig.values, coords: eig.coords[0]!, tri: keep ? tri : undefined };
}

/**
 * The Householder tridiagonalisation of `eigenCoordinates` (lower triangle of A, row-major), z ← Qᵀ z. Step k's
 * rank-2 update of the trailing block is done in the same pass over the matrix as step k + 1's product with its
 * reflection vector (whose column is updated first): the arithmetic of each entry, and its order, is that of
 * the two passes done one after the other, with half the memory traffic.
 */
function householderReduce(A: Float64Array, n: number, z: Float64Array, d: Float64Array, e: Float64Array, u0: Float64Array, w0: Float64Array): void {
  if (n < 3) return;
  let u: Float64Array = u0, w: Float64Array = w0, u2: Float64Array = new Float64Array(n), w2: Float64Array = new Float64Array(n);
  let beta = reflector(A, n, 0, d, e, u);
  if (beta) { symmetricTimes(A, n, 0, u, w); finishProduct(n, 0, u, w, beta); reflectVector(n, 0, u, z, beta); }
  for (let k = 0; k < n - 2; k++) {
    if (k + 1 >= n - 2) { if (beta) updateTrailing(A, n, k, u, w, k + 1); break; }
    let beta2: number;
    if (!beta) {
      beta2 = reflector(A, n, k + 1, d, e, u2);
      if (beta2) symmetricTimes(A, n, k + 1, u2, w2);
    } else {
      updateColumn(A, n, k, u, w);
      beta2 = reflector(A, n, k + 1, d, e, u2);
      if (beta2) updateAndMultiply(A, n, k, u, w, u2, w2);
      else updateTrailing(A, n, k, u, w, k + 2);
    }
    if (beta2) { finishProduct(n, k + 1, u2, w2, beta2); reflectVector(n, k + 1, u2, z, beta2); }
    [u, u2] = [u2, u]; [w, w2] = [w2, w];
    beta = beta2;
  }
}

/** Reflection of step k from column k (rows k+1..): u[k+1..] = x − s e₁, d[k], e[k]; returns β = 2/(vᵀv), 0 for none. */
function reflector(A: Float64Array, n: number, k: number, d: Float64Array, e: Float64Array, u: Float64Array): number {
  let alpha = 0;
  for (let i = k + 1; i < n; i++) alpha += A[i * n + k]! * A[i * n + k]!;
  alpha = Math.sqrt(alpha);
  const x0 = A[(k + 1) * n + k]!;
  d[k] = A[k * n + k]!;
  if (alpha === 0) { e[k] = 0; return 0; }
  const s = x0 > 0 ? -alpha : alpha;
  // v = x − s e1, H = I − 2 v vᵀ / (vᵀv)
  for (let i = k + 1; i < n; i++) u[i] = A[i * n + k]!;
  u[k + 1] = x0 - s;
  let vv = 0;
  for (let i = k + 1; i < n; i++) vv += u[i]! * u[i]!;
  if (vv === 0) { e[k] = x0; return 0; }
  e[k] = s;
  return 2 / vv;
}

/** w = A22 u on the trailing block of step k, from its lower triangle (rows are contiguous) */
function symmetricTimes(A: Float64Array, n: number, k: number, u: Float64Array, w: Float64Array): void {
  for (let i = k + 1; i < n; i++) w[i] = 0;
  for (let i = k + 1; i < n; i++) {
    const o = i * n, ui = u[i]!;
    let acc = 0;
    for (let j = k + 1; j < i; j++) { const a = A[o + j]!; acc += a * u[j]!; w[j] += a * ui; }
    w[i] += acc + A[o + i]! * ui;
  }
}

/** p = β A22 u, then w = p − (β pᵀu / 2) u */
function finishProduct(n: number, k: number, u: Float64Array, w: Float64Array, beta: number): void {
  let pu = 0;
  for (let i = k + 1; i < n; i++) { w[i] = beta * w[i]!; pu += w[i]! * u[i]!; }
  const kk = (beta * pu) / 2;
  for (let i = k + 1; i < n; i++) w[i] = w[i]! - kk * u[i]!;
}

/** z ← H_k z on the trailing part */
function reflectVector(n: number, k: number, u: Float64Array, z: Float64Array, beta: number): void {
  let uz = 0;
  for (let i = k + 1; i < n; i++) uz += u[i]! * z[i]!;
  const f = beta * uz;
  for (let i = k + 1; i < n; i++) z[i] -= f * u[i]!;
}

/** A22 −= u wᵀ + w uᵀ of step k on the lower triangle, columns from `from` on */
function updateTrailing(A: Float64Array, n: number, k: number, u: Float64Array, w: Float64Array, from: number): void {
  for (let i = Math.max(k + 1, from); i < n; i++) {
    const ui = u[i]!, wi = w[i]!, o = i * n;
    for (let j = from; j <= i; j++) A[o + j] -= ui * w[j]! + wi * u[j]!;
  }
}

/** step k's update of column k + 1 (rows k + 1..): the column step k + 1 reflects */
function updateColumn(A: Float64Array, n: number, k: number, u: Float64Array, w: Float64Array): void {
  const j = k + 1, uj = u[j]!, wj = w[j]!;
  for (let i = j; i < n; i++) A[i * n + j] -= u[i]! * wj + w[i]! * uj;
}

/** step k's update of columns k + 2.. together with w2 = A22′ u2 of step k + 1 (one pass over the block) */
function updateAndMultiply(A: Float64Array, n: number, k: number, u: Float64Array, w: Float64Array, u2: Float64Array, w2: Float64Array): void {
  const k2 = k + 2;
  for (let i = k2; i < n; i++) w2[i] = 0;
  for (let i = k2; i < n; i++) {
    const ui = u[i]!, wi = w[i]!, vi = u2[i]!, o = i * n;
    let acc = 0;
    for (let j = k2; j < i; j++) {
      const a = A[o + j]! - (ui * w[j]! + wi * u[j]!);
      A[o + j] = a;
      acc += a * u2[j]!; w2[j] += a * vi;
    }
    const a = A[o + i]! - (ui * w[i]! + wi * u[i]!);
    A[o + i] = a;
    w2[i] += acc + a * vi;
  }
}

/**
 * The Householder tridiagonal form Qᵀ A Q = T of `eigenCoordinates`, kept to reuse the reduction for more
 * vectors: Qᵀ v, Q w, solves with T + λI (a symmetric tridiagonal LDLᵀ sweep), and the eigen-coordinates of a
 * batch of vectors (the implicit QL sweep repeated with the rotations applied to all of them at once).
 * Householder vectors: column k of A below the diagonal (unchanged after step k), first entry x0 − s.
 */
export class Tridiagonal {
  constructor(private readonly A: Float64Array, readonly n: number, readonly d: Float64Array, readonly e: Float64Array) {}
  /** per reflection: first entry of its vector and 2/(vᵀv), or 0 for no reflection (computed once) */
  private coef: { u1: Float64Array; beta: Float64Array } | null = null;
  /** v ← H_k v for one reflection (symmetric), in place */
  private reflect(k: number, v: Float64Array): void {
    const n = this.n, A = this.A;
    if (!this.coef) {
      const u1 = new Float64Array(n), beta = new Float64Array(n);
      for (let j = 0; j < n - 2; j++) {
        let rest = 0;
        for (let i = j + 2; i < n; i++) rest += A[i * n + j]! * A[i * n + j]!;
        const x0 = A[(j + 1) * n + j]!;
        if (rest + x0 * x0 === 0) continue;
        u1[j] = x0 - this.e[j]!;
        const vv = u1[j]! * u1[j]! + rest;
        beta[j] = vv === 0 ? 0 : 2 / vv;
      }
      this.coef = { u1, beta };
    }
    const beta = this.coef.beta[k]!, u1 = this.coef.u1[k]!;
    if (beta === 0) return;
    let uz = u1 * v[k + 1]!;
    for (let i = k + 2; i < n; i++) uz += A[i * n + k]! * v[i]!;
    const f = beta * uz;
    v[k + 1] -= f * u1;
    for (let i = k + 2; i < n; i++) v[i] -= f * A[i * n + k]!;
  }
  /** Qᵀ v (the reflections in the order of the reduction) */
  toTridiagonal(v: Float64Array): Float64Array {
    const z = new Float64Array(v);
    for (let k = 0; k < this.n - 2; k++) this.reflect(k, z);
    return z;
  }
  /** Q w */
  fromTridiagonal(w: Float64Array): Float64Array {
    const z = new Float64Array(w);
    for (let k = this.n - 3; k >= 0; k--) this.reflect(k, z);
    return z;
  }
  /** (T + λI)⁻¹ b by the LDLᵀ recurrence of a symmetric tridiagonal matrix (positive definite for λ > 0) */
  solveShifted(b: Float64Array, lambda: number): Float64Array {
    const n = this.n, dd = new Float64Array(n), l = new Float64Array(n), y = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      const off = i > 0 ? this.e[i - 1]! : 0;
      dd[i] = this.d[i]! + lambda - (i > 0 ? l[i - 1]! * off : 0);
      y[i] = b[i]! - (i > 0 ? l[i - 1]! * y[i - 1]! : 0);
      if (i < n - 1) l[i] = this.e[i]! / dd[i]!;
    }
    const x = new Float64Array(n);
    for (let i = n - 1; i >= 0; i--) x[i] = y[i]! / dd[i]! - (i < n - 1 ? l[i]! * x[i + 1]! : 0);
    return x;
  }
  /**
   * Eigenvalues and the eigen-coordinates of each Qᵀ-transformed vector in `zs`: implicit QL with a
   * Wilkinson-type shift on copies of (d, e), the rotations applied to all vectors; null if it does not converge.
   */
  eigenBatch(zs: Float64Array[]): { values: Float64Array; coords: Float64Array[] } | null {
    const n = this.n, m = zs.length, d = this.d.slice(), e = this.e.slice();
    const Z = new Float64Array(n * m);
    zs.forEach((z, j) => { for (let i = 0; i < n; i++) Z[i * m + j] = z[i]!; });
    let anorm = 0;
    for (let i = 0; i < n; i++) anorm = Math.max(anorm, Math.abs(d[i]!) + Math.abs(e[i]!));
    const floor = anorm * 1e-300 + anorm * 2.2e-16 * 2.2e-16;
    for (let l = 0; l < n; l++) {
      let iter = 0;
      for (;;) {
        let mm = l;
        for (; mm < n - 1; mm++) {
          const dd = Math.abs(d[mm]!) + Math.abs(d[mm + 1]!);
          if (Math.abs(e[mm]!) <= 2.2e-16 * dd + floor) break;
        }
        if (mm === l) break;
        if (++iter > 300) return null;
        let g = (d[l + 1]! - d[l]!) / (2 * e[l]!);
        let r = pythag(g, 1);
        g = d[mm]! - d[l]! + e[l]! / (g + (g >= 0 ? Math.abs(r) : -Math.abs(r)));
        let s = 1, c = 1, p = 0;
        let underflow = false;
        for (let i = mm - 1; i >= l; i--) {
          const f = s * e[i]!, b = c * e[i]!;
          r = pythag(f, g);
          e[i + 1] = r;
          if (r === 0) { d[i + 1] -= p; e[mm] = 0; underflow = true; break; }
          s = f / r; c = g / r;
          g = d[i + 1]! - p;
          r = (d[i]! - g) * s + 2 * c * b;
          p = s * r;
          d[i + 1] = g + p;
          g = c * r - b;
          const o0 = i * m, o1 = o0 + m;
          for (let j = 0; j < m; j++) { const zf = Z[o1 + j]!, zi = Z[o0 + j]!; Z[o1 + j] = s * zi + c * zf; Z[o0 + j] = c * zi - s * zf; }
        }
        if (underflow) continue;
        d[l] -= p; e[l] = g; e[mm] = 0;
      }
    }
    return { values: d, coords: zs.map((_, j) => Float64Array.from({ length: n }, (_, i) => Z[i * m + j]!)) };
  }
}

/**
 * Eigenvalues (descending) and eigenvectors (columns, row-major n × n) of a symmetric matrix: the Householder
 * reduction of `eigenCoordinates`, the implicit QL sweep applied to the n unit vectors (rows of the tridiagonal
 * form's eigenvector matrix W), then V = Q W (tred2/tql2 in the form of Wilkinson & Reinsch, Handbook for
 * Automatic Computation II, 1971). Same contract as decomp.ts `eigSym`; null if the sweep does not converge.
 */
export function symmetricEigen(A: Mat): { values: Float64Array; vectors: Mat } | null {
  const n = A.rows;
  if (n === 0) return { values: new Float64Array(0), vectors: { rows: 0, cols: 0, data: new Float64Array(0) } };
  const { tri } = eigenCoordinates(A, new Float64Array(n), true);
  if (!tri) return null;
  const units = Array.from({ length: n }, (_, j) => { const e = new Float64Array(n); e[j] = 1; return e; });
  const eig = tri.eigenBatch(units);
  if (!eig) return null;
  // coords[j][m] = W[j][m]; column m of V = Q W[:, m]
  const order = Array.from({ length: n }, (_, m) => m).sort((a, b) => eig.values[b]! - eig.values[a]!);
  const values = new Float64Array(n), V = new Float64Array(n * n), col = new Float64Array(n);
  order.forEach((m, c) => {
    values[c] = eig.values[m]!;
    for (let j = 0; j < n; j++) col[j] = eig.coords[j]![m]!;
    const v = tri.fromTridiagonal(col);
    for (let r = 0; r < n; r++) V[r * n + c] = v[r]!;
  });
  return { values, vectors: { rows: n, cols: n, data: V } };
}

/**
 * A factor of a symmetric positive semi-definite A (row-major, n × n): A ≈ (ΠL)(ΠL)ᵀ with L lower triangular
 * (n × rank, stored n × n) and Π the permutation `perm` (row i of L belongs to row perm[i] of A). Cholesky with
 * diagonal pivoting, stopped when the largest remaining pivot is below n·ε·max diag(A) (semidefinite
 * Cholesky: Higham, Accuracy and Stability of Numerical Algorithms, 2002, §10.3).
 */
export function semidefiniteCholesky(A: Mat): { L: Float64Array; perm: Int32Array; rank: number } {
  // left-looking (one dot product per entry of L, n³/6 multiply-adds): row i of L holds the factor of row perm[i]
  const n = A.rows, a = A.data, perm = Int32Array.from({ length: n }, (_, i) => i);
  const L = new Float64Array(n * n), d = new Float64Array(n);
  let top = 0;
  for (let i = 0; i < n; i++) { d[i] = a[i * n + i]!; top = Math.max(top, d[i]!); }
  const tol = n * 2.2e-16 * top;
  let rank = 0;
  for (let j = 0; j < n; j++) {
    let q = j;
    for (let i = j + 1; i < n; i++) if (d[i]! > d[q]!) q = i;
    if (!(d[q]! > tol)) break;
    if (q !== j) {
      const t = perm[j]!; perm[j] = perm[q]!; perm[q] = t;
      const td = d[j]!; d[j] = d[q]!; d[q] = td;
      const jo = j * n, qo = q * n;
      for (let v = 0; v < j; v++) { const tl = L[jo + v]!; L[jo + v] = L[qo + v]!; L[qo + v] = tl; }
    }
    const piv = Math.sqrt(d[j]!), jo = j * n, pj = perm[j]! * n;
    L[jo + j] = piv;
    for (let i = j + 1; i < n; i++) {
      const io = i * n;
      let acc = a[pj + perm[i]!]!;
      for (let v = 0; v < j; v++) acc -= L[io + v]! * L[jo + v]!;
      const l = acc / piv;
      L[io + j] = l;
      d[i] -= l * l;
    }
    rank = j + 1;
  }
  return { L, perm, rank };
}

/**
 * √(a² + b²) without overflow or destructive underflow (EISPACK's pythag, in the scaled form of Press et al.,
 * Numerical Recipes 3rd ed. §11.4); several times faster than Math.hypot in V8, which the QL sweep calls per rotation.
 */
export function pythag(a: number, b: number): number {
  const A = Math.abs(a), B = Math.abs(b);
  if (A > B) { const t = B / A; return A * Math.sqrt(1 + t * t); }
  if (B === 0) return 0;
  const t = A / B;
  return B * Math.sqrt(1 + t * t);
}

/** Fallback when the QL sweep does not converge: full eigen-decomposition (slower, robust). */
function eigenCoordinatesDense(A: Mat, v: Float64Array): { values: Float64Array; coords: Float64Array } {
  const e = eigSym(A);
  const n = A.rows;
  const coords = new Float64Array(n);
  for (let m = 0; m < n; m++) { let s = 0; for (let r = 0; r < n; r++) s += e.vectors.data[r * n + m]! * v[r]!; coords[m] = s; }
  return { values: Float64Array.from(e.values), coords };
}

export function ridgeSpectrum(sys: NormalSystem, P: Float64Array, keep = false): RidgeSpectrum {
  const p = sys.r.length;
  const is = new Float64Array(p);
  for (let i = 0; i < p; i++) is[i] = 1 / Math.sqrt(P[i]!);
  // P^{-1/2} M P^{-1/2}, reduced in place
  const scaled = (): Mat => {
    const Mb = new Float64Array(p * p);
    for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) Mb[i * p + j] = sys.M.data[i * p + j]! * is[i]! * is[j]!;
    return { rows: p, cols: p, data: Mb };
  };
  const rb = new Float64Array(p);
  for (let i = 0; i < p; i++) rb[i] = sys.r[i]! * is[i]!;
  const { values, coords, tri } = eigenCoordinates(scaled(), rb, keep, scaled);
  for (let i = 0; i < p; i++) if (values[i]! < 0) values[i] = 0;
  return keep ? { mu: values, c: coords, yy: sys.yy, nObs: sys.nObs, tri, isqrtP: is } : { mu: values, c: coords, yy: sys.yy, nObs: sys.nObs };
}

export interface GcvPoint { lambda: number; gcv: number; rss: number; dof: number }

/** RSS and effective degrees of freedom at λ from the spectrum. */
export function gcvAt(sp: RidgeSpectrum, lambda: number): GcvPoint {
  let fit = 0, dof = 0;
  for (let i = 0; i < sp.mu.length; i++) {
    const m = sp.mu[i]!, c2 = sp.c[i]! * sp.c[i]!;
    const q = m + lambda;
    if (q <= 0) continue;
    fit += c2 * (2 / q - m / (q * q));
    dof += m / q;
  }
  const rss = Math.max(sp.yy - fit, 1e-300 * sp.yy);
  const den = sp.nObs - dof;
  const gcv = den > 0 ? (sp.nObs * rss) / (den * den) : Infinity;
  return { lambda, gcv, rss, dof };
}

/** Minimise GCV over log λ: a coarse grid then golden-section refinement. */
export function gcvMinimise(sp: RidgeSpectrum): GcvPoint {
  let top = 0;
  for (const m of sp.mu) top = Math.max(top, m);
  if (!(top > 0)) return gcvAt(sp, 1);
  const lo = Math.log(top * 1e-15), hi = Math.log(top * 10);
  const steps = 60;
  let best = gcvAt(sp, Math.exp(lo)), bi = 0;
  const grid: GcvPoint[] = [];
  for (let k = 0; k <= steps; k++) {
    const pt = gcvAt(sp, Math.exp(lo + ((hi - lo) * k) / steps));
    grid.push(pt);
    if (pt.gcv < best.gcv) { best = pt; bi = k; }
  }
  let a = lo + ((hi - lo) * Math.max(0, bi - 1)) / steps, b = lo + ((hi - lo) * Math.min(steps, bi + 1)) / steps;
  const gr = (Math.sqrt(5) - 1) / 2;
  let x1 = b - gr * (b - a), x2 = a + gr * (b - a);
  let f1 = gcvAt(sp, Math.exp(x1)).gcv, f2 = gcvAt(sp, Math.exp(x2)).gcv;
  for (let it = 0; it < 30; it++) {
    if (f1 < f2) { b = x2; x2 = x1; f2 = f1; x1 = b - gr * (b - a); f1 = gcvAt(sp, Math.exp(x1)).gcv; }
    else { a = x1; x1 = x2; f1 = f2; x2 = a + gr * (b - a); f2 = gcvAt(sp, Math.exp(x2)).gcv; }
  }
  const cand = gcvAt(sp, Math.exp((a + b) / 2));
  return cand.gcv < best.gcv ? cand : best;
}

/** A factorised ridge system at fixed λ; solves reuse the Cholesky factor. */
export class RidgeSolver {
  private readonly L: Mat;
  constructor(readonly sys: NormalSystem, readonly P: Float64Array, readonly lambda: number) {
    const p = sys.r.length;
    const A = new Float64Array(sys.M.data);
    for (let i = 0; i < p; i++) A[i * p + i] += lambda * P[i]!;
    let L = cholesky({ rows: p, cols: p, data: A });
    for (let jitter = 1e-14; !L; jitter *= 10) {
      if (jitter > 1e-6) throw new Error('RidgeSolver: normal matrix is not positive definite');
      let tr = 0;
      for (let i = 0; i < p; i++) tr += A[i * p + i]!;
      const B = new Float64Array(A);
      for (let i = 0; i < p; i++) B[i * p + i] += (jitter * tr) / p;
      L = cholesky({ rows: p, cols: p, data: B });
    }
    this.L = L;
  }
  /** solve for one or several right-hand sides (p × m) */
  solve(rhs: Mat): Mat {
    return choleskySolve(this.L, rhs);
  }
  solveVec(r: Float64Array): Float64Array {
    return this.solve({ rows: r.length, cols: 1, data: r }).data;
  }
  /** diag((M + λP)⁻¹) = the squared column norms of L⁻¹ (each column by forward substitution, n³/6 multiply-adds) */
  inverseDiagonal(): Float64Array {
    const n = this.L.rows, l = this.L.data, x = new Float64Array(n), out = new Float64Array(n);
    for (let j = 0; j < n; j++) out[j] = inverseColumnNorm(l, n, j, x);
    return out;
  }
}

/** ‖L⁻¹ e_j‖² for lower-triangular L (row-major): x_i = (δ_ij − Σ_{k=j}^{i−1} L_ik x_k) / L_ii for i ≥ j */
function inverseColumnNorm(l: Float64Array, n: number, j: number, x: Float64Array): number {
  x[j] = 1 / l[j * n + j]!;
  let ss = x[j]! * x[j]!;
  for (let i = j + 1; i < n; i++) {
    const io = i * n;
    let acc = 0;
    for (let k = j; k < i; k++) acc += l[io + k]! * x[k]!;
    x[i] = -acc / l[io + i]!;
    ss += x[i]! * x[i]!;
  }
  return ss;
}

/**
 * The ridge solution at one λ and its GCV point without a spectrum (a fit at fixed hyper-parameters):
 * η = (M + λP)⁻¹ r by Cholesky, rss = yᵀy − ηᵀr − λ ηᵀPη, dof = tr((M + λP)⁻¹ M) = p − λ Σ_i P_i [(M + λP)⁻¹]_ii.
 */
export function ridgeAt(sys: NormalSystem, P: Float64Array, lambda: number): { solver: RidgeSolver; eta: Float64Array; point: GcvPoint } {
  const solver = new RidgeSolver(sys, P, lambda);
  const eta = solver.solveVec(sys.r);
  const p = eta.length, di = solver.inverseDiagonal();
  let er = 0, ePe = 0, tr = 0;
  for (let i = 0; i < p; i++) { er += eta[i]! * sys.r[i]!; ePe += P[i]! * eta[i]! * eta[i]!; tr += P[i]! * di[i]!; }
  const rss = Math.max(sys.yy - er - lambda * ePe, 1e-300 * sys.yy);
  const dof = p - lambda * tr;
  const den = sys.nObs - dof;
  return { solver, eta, point: { lambda, gcv: den > 0 ? (sys.nObs * rss) / (den * den) : Infinity, rss, dof } };
}
