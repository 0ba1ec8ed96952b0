/**
 * Weak-form estimation of local operator coefficients from a kernel, with no derivatives of
 * the kernel itself.
 *
 * For L u = −(a u')' + b u' + c u (+ (e u'')'') and G its Green's function, any smooth test
 * bump φ supported inside the domain satisfies
 *     ∫ G(x, s) (L*φ)(x) dx = φ(s)   for every source s,
 * with L* the formal adjoint, L*φ = −(a φ')' − (b φ)' + c φ + (e φ'')''. With coefficients
 * that are constant or linear on the bump's support this is linear in the coefficient
 * parameters, so every source point gives one linear equation; many sources give a small
 * least-squares problem per bump. The derivatives fall on φ, known in closed form.
 * Weak (variational) formulation of a Green's function: Stakgold & Holst, Green's Functions and
 * Boundary Value Problems, 3rd ed. (2011), ch. 2 (distributions, test functions; from memory).
 *
 * Noise in the fitted kernel enters the design matrix, which biases plain least squares toward
 * zero; the replicates' spread of that matrix gives the bias correction (corrected least
 * squares for errors in variables: Fuller, Measurement Error Models, Wiley 1987, §2.2 — from
 * memory). Pure module: no file system, no randomness.
 */
import type { Mat } from '../linalg/dense.js';
import { replicateSpread } from './util/a_common.js';

export type TermName = 'diffusion' | 'advection' | 'reaction' | 'fourth-order';

/** One parameter of a local model: a term's coefficient as κ(x) = θ · η^degree, η = (x − x0)/r. */
export interface Param { term: TermName; degree: 0 | 1 | 2; axis?: 0 | 1 }

// ------------------------------------------------------------------ test bumps

const polyCache = new Map<number, Float64Array[]>();

/** Coefficients (in powers of t) of t^m (1 − t²)^p and its first five t-derivatives. */
function bumpPolys(p: number, m: number): Float64Array[] {
  const key = p * 64 + m;
  const hit = polyCache.get(key);
  if (hit) return hit;
  const c = new Float64Array(2 * p + 1 + m);
  let binom = 1;
  for (let k = 0; k <= p; k++) {
    c[2 * k + m] = (k % 2 ? -1 : 1) * binom;
    binom = (binom * (p - k)) / (k + 1);
  }
  const out = [c];
  for (let d = 1; d <= 5; d++) {
    const prev = out[d - 1]!;
    const nxt = new Float64Array(Math.max(1, prev.length - 1));
    for (let k = 1; k < prev.length; k++) nxt[k - 1] = k * prev[k]!;
    out.push(nxt);
  }
  polyCache.set(key, out);
  return out;
}

function horner(c: Float64Array, t: number): number {
  let v = 0;
  for (let k = c.length - 1; k >= 0; k--) v = v * t + c[k]!;
  return v;
}

/**
 * φ(x) = t^m (1 − t²)^p, t = (x − x0)/r, on |t| < 1 (0 outside) and its x-derivatives up to
 * `upTo`. p ≥ upTo/2 + 1 keeps every derivative used continuous; m = 0, 1, 2 give an even, an
 * odd and a second even test function on the same support.
 */
export function bump1d(x: number, x0: number, r: number, p: number, upTo: number, m = 0): number[] {
  const t = (x - x0) / r;
  const out = new Array<number>(upTo + 1).fill(0);
  if (Math.abs(t) >= 1) return out;
  const polys = bumpPolys(p, m);
  let scale = 1;
  for (let d = 0; d <= upTo; d++) {
    out[d] = horner(polys[d]!, t) * scale;
    scale /= r;
  }
  return out;
}

/**
 * (L*_T[κ] φ)(x) for one parameter of a 1-D model, κ = η^degree (degree ≤ 2), η = (x − x0)/r:
 * diffusion −(κφ')', advection −(κφ)', reaction κφ, fourth-order (κφ'')''.
 * `d` holds φ, φ', …, φ''''.
 */
export function adjointColumn1d(p: Param, x: number, x0: number, r: number, d: number[]): number {
  const eta = (x - x0) / r;
  // κ = η^degree and its x-derivatives
  const k = p.degree === 0 ? 1 : p.degree === 1 ? eta : eta * eta;
  const k1 = p.degree === 0 ? 0 : p.degree === 1 ? 1 / r : (2 * eta) / r;
  const k2 = p.degree === 2 ? 2 / (r * r) : 0;
  switch (p.term) {
    case 'diffusion': return -(k1 * d[1]! + k * d[2]!);
    case 'advection': return -(k1 * d[0]! + k * d[1]!);
    case 'reaction': return k * d[0]!;
    case 'fourth-order': return k2 * d[2]! + 2 * k1 * d[3]! + k * d[4]!;
  }
}

/**
 * Trapezoid-rule error of ∫ f over a grid when f has a derivative jump J at s inside the cell
 * [x_i, x_i + h] at offset t = (s − x_i)/h, and f' vanishes at both ends of the range:
 * T − I ≈ J h² (t(1 − t)/2 − 1/12)  (Euler–Maclaurin on each side of s plus the cut cell;
 * Davis & Rabinowitz, Methods of Numerical Integration, 2nd ed. 1984, §2.9 — from memory).
 * Returns h² (t(1 − t)/2 − 1/12) for each source point s_k against sorted output points.
 */
export function kinkFactors1d(xOutSorted: Float64Array, xIn: ArrayLike<number>): Float64Array {
  const out = new Float64Array(xIn.length);
  const n = xOutSorted.length;
  for (let k = 0; k < xIn.length; k++) {
    const s = xIn[k]!;
    let lo = 0, hi = n - 1;
    if (s <= xOutSorted[0]! || s >= xOutSorted[n - 1]!) continue;
    while (hi - lo > 1) { const mid = (lo + hi) >> 1; if (xOutSorted[mid]! <= s) lo = mid; else hi = mid; }
    const h = xOutSorted[hi]! - xOutSorted[lo]!;
    const t = (s - xOutSorted[lo]!) / h;
    // at a node the neighbouring cells may differ: use their mean
    const hh = t === 0 && lo > 0 ? 0.5 * (h + xOutSorted[lo]! - xOutSorted[lo - 1]!) : h;
    out[k] = hh * hh * (t * (1 - t) / 2 - 1 / 12);
  }
  return out;
}

// ------------------------------------------------------------------ linear systems

/** One bump's contribution: the rows of the test functions on its support, and φ at the sources. */
export interface WeakBlock {
  /** output-point indices in the bump's support */
  support: Int32Array;
  /** support.length × P, row-major: (L*_j φ)(x_i) · w_out(x_i) */
  psi: Float64Array;
  /** the input points (sources) whose equations are used */
  sources: Int32Array;
  /** φ(s_k) at those sources (same length) */
  rhs: Float64Array;
  /**
   * optional sources × P correction added to the design matrix: the trapezoid rule's error from
   * the kink of G at x = s (see kinkFactors1d)
   */
  kink?: Float64Array;
  /** multiplier of the sources' quadrature weights (k when every k-th source is used; default 1) */
  scale?: number;
}

/**
 * M = Σ_i G(x_i, s_k) Ψ_ij over the support, for the block's sources k: sources × P, row-major.
 * `cols` (default: all of the block's) is the number of columns of `psi`; the kink correction is
 * added when its width matches.
 */
export function designMatrix(G: Mat, block: WeakBlock, P: number): Float64Array {
  const nIn = G.cols;
  const src = block.sources, nS = src.length;
  const g = G.data, psi = block.psi, sup = block.support;
  // column-major accumulation (P × nS): the inner loop runs over contiguous sources of one row of G
  const Mt = new Float64Array(P * nS);
  const s0 = nS ? src[0]! : 0;
  let contiguous = true;
  for (let k = 1; k < nS && contiguous; k++) if (src[k] !== s0 + k) contiguous = false;
  const row = contiguous ? null : new Float64Array(nS);
  for (let q = 0; q < sup.length; q++) {
    const gi = sup[q]! * nIn;
    // contiguous sources: read the row of G in place (no copy)
    const r = row ?? g, ro = row ? 0 : gi + s0;
    if (row) for (let k = 0; k < nS; k++) row[k] = g[gi + src[k]!]!;
    const pq = q * P;
    for (let j = 0; j < P; j++) {
      const pj = psi[pq + j]!;
      if (pj === 0) continue;
      const o = j * nS;
      for (let k = 0; k < nS; k++) Mt[o + k] += r[ro + k]! * pj;
    }
  }
  const M = block.kink && block.kink.length === nS * P ? new Float64Array(block.kink) : new Float64Array(nS * P);
  for (let j = 0; j < P; j++) { const o = j * nS; for (let k = 0; k < nS; k++) M[k * P + j] += Mt[o + k]!; }
  return M;
}

/** Columns `from … from + P − 1` of a sources × C row-major design, as sources × P (plus `add` if given). */
export function designColumns(M: Float64Array, C: number, from: number, P: number, add?: Float64Array): Float64Array {
  const nS = M.length / C;
  const out = add ? new Float64Array(add) : new Float64Array(nS * P);
  for (let k = 0; k < nS; k++) for (let j = 0; j < P; j++) out[k * P + j] += M[k * C + from + j]!;
  return out;
}

export interface WeakSolution {
  /** parameters (length P) */
  theta: Float64Array;
  /** standard errors from the least-squares residual */
  se: Float64Array;
  /** parameters refitted on each replicate kernel (may be empty; failed refits left out) */
  replicates: Float64Array[];
  /** the same, aligned with the replicate kernels (null where the refit failed) */
  aligned: (Float64Array | null)[];
  /** replicate standard deviation of each parameter (zeros without replicates) */
  sd: Float64Array;
  /** replicate mean of each parameter (θ itself without replicates) */
  mean: Float64Array;
  /** degrees of freedom of the residual standard error `se` */
  dof: number;
  /** ‖Mθ − φ‖ / ‖φ‖ in the source-weighted norm */
  residual: number;
  /** true when the errors-in-variables correction was applied */
  corrected: boolean;
  /** true when the system was too ill-conditioned or noise-dominated to trust */
  unreliable: boolean;
  /**
   * ρ = largest eigenvalue of (MᵀΩM)⁻¹ S, the share of the design's energy that is noise
   * (0 without replicates). Plain least squares shrinks the estimate by up to a factor (1 − ρ).
   */
  attenuation: number;
}

/** Normal equations Σ_blocks Mᵀ Ω M and Mᵀ Ω φ with Ω = diag(w_in). */
function normalEq(Ms: Float64Array[], blocks: WeakBlock[], wIn: Float64Array, P: number): { A: Float64Array; y: Float64Array; yy: number; rows: number } {
  const A = new Float64Array(P * P), y = new Float64Array(P);
  let yy = 0, rows = 0;
  for (let b = 0; b < blocks.length; b++) {
    const M = Ms[b]!, rhs = blocks[b]!.rhs, src = blocks[b]!.sources, scale = blocks[b]!.scale ?? 1;
    for (let k = 0; k < src.length; k++) {
      const w = scale * wIn[src[k]!]!;
      const mk = k * P;
      for (let i = 0; i < P; i++) {
        const v = w * M[mk + i]!;
        y[i] += v * rhs[k]!;
        for (let j = i; j < P; j++) A[i * P + j] += v * M[mk + j]!;
      }
      yy += w * rhs[k]! * rhs[k]!;
      rows++;
    }
  }
  for (let i = 0; i < P; i++) for (let j = 0; j < i; j++) A[i * P + j] = A[j * P + i]!;
  return { A, y, yy, rows };
}

/** Solve a small symmetric positive definite system by Cholesky; null if not SPD. */
function spdSolve(A: Float64Array, b: Float64Array, P: number): { x: Float64Array; inv: Float64Array } | null {
  const L = new Float64Array(P * P);
  for (let j = 0; j < P; j++) {
    let d = A[j * P + j]!;
    for (let k = 0; k < j; k++) d -= L[j * P + k]! ** 2;
    if (!(d > 0)) return null;
    const djj = Math.sqrt(d);
    L[j * P + j] = djj;
    for (let i = j + 1; i < P; i++) {
      let s = A[i * P + j]!;
      for (let k = 0; k < j; k++) s -= L[i * P + k]! * L[j * P + k]!;
      L[i * P + j] = s / djj;
    }
  }
  const solve = (rhs: Float64Array): Float64Array => {
    const z = new Float64Array(rhs);
    for (let i = 0; i < P; i++) { for (let k = 0; k < i; k++) z[i] -= L[i * P + k]! * z[k]!; z[i] /= L[i * P + i]!; }
    for (let i = P - 1; i >= 0; i--) { for (let k = i + 1; k < P; k++) z[i] -= L[k * P + i]! * z[k]!; z[i] /= L[i * P + i]!; }
    return z;
  };
  const x = solve(b);
  const inv = new Float64Array(P * P);
  for (let j = 0; j < P; j++) {
    const e = new Float64Array(P); e[j] = 1;
    const c = solve(e);
    for (let i = 0; i < P; i++) inv[i * P + j] = c[i]!;
  }
  return { x, inv };
}

/**
 * Least squares for the parameters of a local model over one or more bumps, on the kernel and
 * on each replicate. Columns are scaled to unit norm before solving (the parameters of
 * different terms differ by orders of magnitude).
 */
export function solveWeak(G: Mat, replicates: Mat[], blocks: WeakBlock[], wIn: Float64Array, P: number): WeakSolution {
  return solveDesigns(blocks.map((b) => designMatrix(G, b, P)), replicates.map((R) => blocks.map((b) => designMatrix(R, b, P))), blocks, wIn, P);
}

/**
 * solveWeak on design matrices already formed (`Ms` per block for the kernel, `repMs` per
 * replicate and block), so that designs shared by several fits are formed once.
 */
export function solveDesigns(Ms: Float64Array[], repMs: Float64Array[][], blocks: WeakBlock[], wIn: Float64Array, P: number): WeakSolution {
  const main = normalEq(Ms, blocks, wIn, P);
  // column scaling
  const sc = new Float64Array(P);
  for (let i = 0; i < P; i++) sc[i] = main.A[i * P + i]! > 0 ? 1 / Math.sqrt(main.A[i * P + i]!) : 1;
  const scaleA = (A: Float64Array): Float64Array => {
    const o = new Float64Array(P * P);
    for (let i = 0; i < P; i++) for (let j = 0; j < P; j++) o[i * P + j] = A[i * P + j]! * sc[i]! * sc[j]!;
    return o;
  };
  const scaleY = (y: Float64Array): Float64Array => y.map((v, i) => v * sc[i]!);
  const As = scaleA(main.A);
  // a tiny ridge (relative to the unit diagonal) guards against exact collinearity only
  for (let i = 0; i < P; i++) As[i * P + i] += 1e-12;

  // errors in variables: S = mean over replicates of (M_r − M)ᵀ Ω (M_r − M)
  let S: Float64Array | null = null;
  if (repMs.length >= 2) {
    S = new Float64Array(P * P);
    for (const Mr of repMs) {
      for (let b = 0; b < blocks.length; b++) {
        const m = Mr[b]!, m0 = Ms[b]!, src = blocks[b]!.sources, scale = blocks[b]!.scale ?? 1;
        for (let k = 0; k < src.length; k++) addRowOuter(S, m, m0, k * P, (scale * wIn[src[k]!]!) / repMs.length, P);
      }
    }
    for (let i = 0; i < P; i++) for (let j = 0; j < i; j++) S[i * P + j] = S[j * P + i]!;
  }
  let corrected = false, unreliable = false, attenuation = 0;
  let Ause = As;
  if (S) {
    const Ss = scaleA(S);
    const Ac = As.map((v, i) => v - Ss[i]!);
    const base = spdSolve(As, new Float64Array(P), P);
    if (base) attenuation = largestEig(matProd(base.inv, Ss, P), P);
    // accept the correction only while it removes less than half of every direction's energy
    // (beyond that the design is noise-dominated and the corrected system is not trustworthy)
    if (attenuation < 0.5) { Ause = Ac; corrected = true; } else unreliable = true;
  }
  const sol = spdSolve(Ause, scaleY(main.y), P) ?? spdSolve(As, scaleY(main.y), P);
  if (!sol) {
    const nan = new Float64Array(P).fill(Number.NaN);
    return { theta: nan, se: nan, replicates: [], aligned: repMs.map(() => null), sd: nan, mean: nan, dof: 1, residual: Number.POSITIVE_INFINITY, corrected: false, unreliable: true, attenuation };
  }
  const theta = sol.x.map((v, i) => v * sc[i]!);
  // residual: yy − 2θᵀy + θᵀAθ (unscaled, uncorrected A)
  const rss = Math.max(0, main.yy - 2 * dotP(theta, main.y, P) + quadForm(main.A, theta, P));
  const residual = main.yy > 0 ? Math.sqrt(rss / main.yy) : Number.POSITIVE_INFINITY;
  // residual standard errors: s² (MᵀΩM)⁻¹ with s² = rss / dof. Residuals are smooth in s, so
  // rows far from a bump are nearly dependent: count as independent only the sources inside
  // each bump's support plus the two homogeneous conditions outside it.
  let eff = 0;
  for (const b of blocks) { let m = 0; for (const v of b.rhs) if (v !== 0) m++; eff += m + 2; }
  const dof = Math.max(1, Math.min(main.rows, eff) - P);
  const se = new Float64Array(P);
  for (let i = 0; i < P; i++) se[i] = Math.sqrt(Math.max(0, (rss / dof) * sol.inv[i * P + i]!)) * sc[i]!;
  // replicate refits with the same correction
  const reps: Float64Array[] = [];
  const aligned: (Float64Array | null)[] = [];
  const Ss = corrected && S ? scaleA(S) : null;
  for (const Mr of repMs) {
    const ne = normalEq(Mr, blocks, wIn, P);
    let Ar = scaleA(ne.A);
    for (let i = 0; i < P; i++) Ar[i * P + i] += 1e-12;
    if (Ss) Ar = Ar.map((v, i) => v - Ss[i]!);
    const r = spdSolve(Ar, scaleY(ne.y), P);
    const x = r ? r.x.map((v, i) => v * sc[i]!) : null;
    aligned.push(x);
    if (x) reps.push(x);
    else unreliable = true;
  }
  // with fewer than two replicates: no spread, and the estimate stands for their mean
  const { sd, mean } = reps.length >= 2 ? replicateSpread(reps, P) : { sd: new Float64Array(P), mean: new Float64Array(theta) };
  return { theta, se, replicates: reps, aligned, sd, mean, dof, residual, corrected, unreliable, attenuation };
}

/** upper triangle of S += w (m − m0)_k (m − m0)_kᵀ for design row k (offset mk) */
function addRowOuter(S: Float64Array, m: Float64Array, m0: Float64Array, mk: number, w: number, P: number): void {
  for (let i = 0; i < P; i++) {
    const di = w * (m[mk + i]! - m0[mk + i]!);
    if (di === 0) continue;
    for (let j = i; j < P; j++) S[i * P + j] += di * (m[mk + j]! - m0[mk + j]!);
  }
}

function dotP(a: Float64Array, b: Float64Array, P: number): number {
  let s = 0;
  for (let i = 0; i < P; i++) s += a[i]! * b[i]!;
  return s;
}

/** θᵀAθ, summed as Σ_i Σ_j θ_i A_ij θ_j */
function quadForm(A: Float64Array, t: Float64Array, P: number): number {
  let q = 0;
  for (let i = 0; i < P; i++) for (let j = 0; j < P; j++) q += t[i]! * A[i * P + j]! * t[j]!;
  return q;
}

function matProd(A: Float64Array, B: Float64Array, P: number): Float64Array {
  const C = new Float64Array(P * P);
  for (let i = 0; i < P; i++) for (let k = 0; k < P; k++) { const a = A[i * P + k]!; for (let j = 0; j < P; j++) C[i * P + j] += a * B[k * P + j]!; }
  return C;
}

/** Largest eigenvalue of A⁻¹S (real, ≥ 0 for SPD A and PSD S) by power iteration. */
function largestEig(B: Float64Array, P: number): number {
  let v = new Float64Array(P).fill(1 / Math.sqrt(P));
  let lam = 0;
  for (let it = 0; it < 200; it++) {
    const w = new Float64Array(P);
    for (let i = 0; i < P; i++) for (let j = 0; j < P; j++) w[i] += B[i * P + j]! * v[j]!;
    let n = 0;
    for (const x of w) n += x * x;
    n = Math.sqrt(n);
    if (!(n > 0)) return 0;
    const next = w.map((x) => x / n);
    if (Math.abs(n - lam) <= 1e-10 * n) { lam = n; break; }
    lam = n; v = next;
  }
  return lam;
}
