/**
 * Two exact identities of second-order Green's functions, used as robust local evidence of
 * interfaces (pooled over many kernel entries rather than read from a derivative at one point).
 *
 * For L u = −(a u')' + b u' + c u with separated boundary conditions:
 *  (1) Symmetrisation: ρ L with ρ = exp(−∫ b/a) is formally self-adjoint (Sturm–Liouville form),
 *      so G(x, s) = K(x, s) ρ(s) with K symmetric, hence
 *      log(G(x, s) / G(s, x)) = φ(x) − φ(s),  φ = ∫ b/a.
 *      // Sturm–Liouville symmetrising factor: Coddington & Levinson ch. 7; Stakgold & Holst ch. 3 (from memory)
 *  (2) Semi-separability: G(x, s) = u₁(x) v(s) for x < s and u₂(x) w(s) for x > s, with u₁, u₂ the
 *      homogeneous solutions satisfying the left and right boundary conditions.
 *      // Green's matrices are semiseparable: Gantmacher & Krein (1950); Vandebril, Van Barel & Mastronardi, Matrix Computations and Semiseparable Matrices, 2008
 *      At a change of a, u₁ and u₂ keep their value and their flux a u', so their slope jumps.
 * Pure numerics on row-major matrices; 1-D, co-located sorted points.
 */
import type { Mat } from '../../linalg/dense.js';
import { subMatrix, matmulTN, matvec } from '../../linalg/dense.js';
import { normalCdf } from '../analysis.js';

/**
 * Local φ' = b/a at each centre from (1): weighted least-squares slope of
 * r = log(G(x_i, x_j) / G(x_j, x_i)) against Δ = x_i − x_j over the pairs inside
 * [c − w, c + w] with dmin ≤ |Δ|. Weights min(|G_ij|, |G_ji|)² (the log ratio's error is the
 * kernel's error relative to its size). NaN where fewer than 8 pairs qualify.
 */
export function asymmetrySlope(G: Mat, x: Float64Array, centers: Float64Array, w: number, dmin: number): Float64Array {
  const n = x.length;
  const out = new Float64Array(centers.length).fill(NaN);
  let gmax = 0;
  for (let i = 0; i < G.data.length; i++) gmax = Math.max(gmax, Math.abs(G.data[i]!));
  const tiny = 1e-6 * gmax;
  for (let k = 0; k < centers.length; k++) {
    const c = centers[k]!;
    let num = 0, den = 0, cnt = 0;
    for (let i = 0; i < n; i++) {
      if (Math.abs(x[i]! - c) > w) continue;
      for (let j = 0; j < i; j++) {
        const d = x[i]! - x[j]!;
        if (d < dmin || Math.abs(x[j]! - c) > w) continue;
        const a = G.data[i * G.cols + j]!, b = G.data[j * G.cols + i]!;
        if (!(a * b > 0) || Math.abs(a) < tiny || Math.abs(b) < tiny) continue;
        const wt = Math.min(a * a, b * b);
        num += wt * Math.log(a / b) * d; den += wt * d * d; cnt++;
      }
    }
    if (cnt >= 8 && den > 0) out[k] = num / den;
  }
  return out;
}

export interface ChangeLocation {
  /** least-squares change point */
  tau: number;
  /** half-width of the profile-likelihood interval {τ : ΔRSS(τ)/σ̂² ≤ 1} (σ̂² the best fit's residual variance) */
  halfWidth: number;
}

/** least squares with few columns (normal equations, ridge 1e-12 relative); returns the residual sum of squares */
function lsRss(rows: number[][], y: number[]): number {
  const p = rows[0]?.length ?? 0;
  const A = new Float64Array(p * p), b = new Float64Array(p);
  for (let r = 0; r < rows.length; r++) for (let i = 0; i < p; i++) { b[i] += rows[r]![i]! * y[r]!; for (let k = 0; k < p; k++) A[i * p + k] += rows[r]![i]! * rows[r]![k]!; }
  for (let i = 0; i < p; i++) A[i * p + i] += 1e-12 * (A[i * p + i]! + 1e-300);
  // Gaussian elimination with partial pivoting
  const M = Array.from({ length: p }, (_, i) => [...Array.from(A.subarray(i * p, i * p + p)), b[i]!]);
  for (let c = 0; c < p; c++) {
    let q = c;
    for (let r = c + 1; r < p; r++) if (Math.abs(M[r]![c]!) > Math.abs(M[q]![c]!)) q = r;
    [M[c], M[q]] = [M[q]!, M[c]!];
    if (!(Math.abs(M[c]![c]!) > 1e-300)) continue;
    for (let r = c + 1; r < p; r++) { const f = M[r]![c]! / M[c]![c]!; for (let k = c; k <= p; k++) M[r]![k] -= f * M[c]![k]!; }
  }
  const coef = new Array<number>(p).fill(0);
  for (let r = p - 1; r >= 0; r--) { let v = M[r]![p]!; for (let k = r + 1; k < p; k++) v -= M[r]![k]! * coef[k]!; coef[r] = M[r]![r] ? v / M[r]![r]! : 0; }
  let rss = 0;
  for (let r = 0; r < rows.length; r++) { let v = 0; for (let i = 0; i < p; i++) v += rows[r]![i]! * coef[i]!; rss += (y[r]! - v) ** 2; }
  return rss;
}

/** minimiser of a profile over candidate τ and the half-width of {ΔRSS/σ̂² ≤ 1} */
function profileInterval(taus: number[], rss: number[], dof: number): ChangeLocation | null {
  let k = -1;
  for (let q = 0; q < rss.length; q++) if (Number.isFinite(rss[q]!) && (k < 0 || rss[q]! < rss[k]!)) k = q;
  if (k < 0) return null;
  const s2 = Math.max(rss[k]! / Math.max(1, dof), 1e-300);
  let lo = taus[k]!, hi = taus[k]!;
  for (let q = k; q >= 0 && (rss[q]! - rss[k]!) / s2 <= 1; q--) lo = taus[q]!;
  for (let q = k; q < rss.length && (rss[q]! - rss[k]!) / s2 <= 1; q++) hi = taus[q]!;
  return { tau: taus[k]!, halfWidth: (hi - lo) / 2 };
}

/**
 * Location of a jump of b/a near t0 from (1): on the pairs (i, j) with x_i, x_j within R of t0
 * and dmin ≤ |x_i − x_j|, r_ij = log(G_ij/G_ji) = φ(x_i) − φ(x_j) with φ continuous and
 * piecewise linear, slopes κ_L, κ_R on either side of τ (an exact model of a sharp change of b/a
 * with a constant on each side). τ searched over the points within r of t0.
 */
export function locateDriftChange(G: Mat, x: Float64Array, t0: number, r: number, R: number, dmin: number): ChangeLocation | null {
  const n = x.length;
  const idx: number[] = [];
  for (let i = 0; i < n; i++) if (Math.abs(x[i]! - t0) <= R) idx.push(i);
  let gmax = 0;
  for (const i of idx) for (const j of idx) gmax = Math.max(gmax, Math.abs(G.data[i * G.cols + j]!));
  // the pairs (x_i, x_j, weight, weighted log ratio) in flat arrays
  const cap = idx.length * idx.length;
  const pxi = new Float64Array(cap), pxj = new Float64Array(cap), pw = new Float64Array(cap), py = new Float64Array(cap);
  let np = 0;
  for (const i of idx) for (const j of idx) {
    if (x[i]! - x[j]! < dmin) continue;
    const a = G.data[i * G.cols + j]!, b = G.data[j * G.cols + i]!;
    if (!(a * b > 0) || Math.min(Math.abs(a), Math.abs(b)) < 1e-6 * gmax) continue;
    const w = Math.min(Math.abs(a), Math.abs(b));
    pxi[np] = x[i]!; pxj[np] = x[j]!; pw[np] = w; py[np] = w * Math.log(a / b); np++;
  }
  if (np < 12) return null;
  const taus: number[] = [], rss: number[] = [];
  for (const i of idx) {
    const t = x[i]!;
    if (Math.abs(t - t0) > r) continue;
    taus.push(t); rss.push(hingeRss(pxi, pxj, pw, py, np, t));
  }
  return profileInterval(taus, rss, np - 3);
}

/**
 * `lsRss` of the two-slope model at τ = t (rows w·(min(x_i, t) − min(x_j, t)), w·(max(x_i, t) − max(x_j, t)),
 * values w·r) without forming the rows: the same normal equations, ridge, elimination and residual, term by term.
 */
function hingeRss(pxi: Float64Array, pxj: Float64Array, pw: Float64Array, py: Float64Array, np: number, t: number): number {
  let a00 = 0, a01 = 0, a11 = 0, b0 = 0, b1 = 0;
  for (let q = 0; q < np; q++) {
    const w = pw[q]!, xi = pxi[q]!, xj = pxj[q]!, y = py[q]!;
    const r0 = w * (Math.min(xi, t) - Math.min(xj, t)), r1 = w * (Math.max(xi, t) - Math.max(xj, t));
    b0 += r0 * y; a00 += r0 * r0; a01 += r0 * r1;
    b1 += r1 * y; a11 += r1 * r1;
  }
  a00 += 1e-12 * (a00 + 1e-300);
  a11 += 1e-12 * (a11 + 1e-300);
  const c = solve2(a00, a01, a01, a11, b0, b1);
  const c0 = c[0]!, c1 = c[1]!;
  let rss = 0;
  for (let q = 0; q < np; q++) {
    const w = pw[q]!, xi = pxi[q]!, xj = pxj[q]!;
    const r0 = w * (Math.min(xi, t) - Math.min(xj, t)), r1 = w * (Math.max(xi, t) - Math.max(xj, t));
    let v = 0;
    v += r0 * c0; v += r1 * c1;
    rss += (py[q]! - v) ** 2;
  }
  return rss;
}

const coef2 = new Float64Array(2);
/** `lsRss`'s Gaussian elimination with partial pivoting for p = 2, step by step (the result in a shared buffer). */
function solve2(m00: number, m01: number, m10: number, m11: number, r0: number, r1: number): Float64Array {
  if (Math.abs(m10) > Math.abs(m00)) { let t = m00; m00 = m10; m10 = t; t = m01; m01 = m11; m11 = t; t = r0; r0 = r1; r1 = t; }
  if (Math.abs(m00) > 1e-300) { const f = m10 / m00; m10 -= f * m00; m11 -= f * m01; r1 -= f * r0; }
  const c1 = m11 ? r1 / m11 : 0;
  const c0 = m00 ? (r0 - m01 * c1) / m00 : 0;
  coef2[0] = c0; coef2[1] = c1;
  return coef2;
}

/**
 * Location of a change of a near t0 from (2): the rows within R of t0 of the columns whose
 * sources lie beyond R + gap on either side form two rank-one blocks, u₁(x)v(s) and u₂(x)w(s);
 * at a change of a the factors u₁, u₂ keep their value and their flux a u' but their slope
 * jumps. Each factor (leading singular vector of its block) is fitted by a hinge at τ,
 * α + σ (x − τ) + Δσ h_ε(x − τ) + κ (x − τ)² (h_ε the Gaussian-smoothed ramp, ε profiled; the
 * curvature absorbs weak drift or reaction); the two RSS profiles (unit-norm factors) are summed.
 */
export function locateKink(G: Mat, x: Float64Array, s: Float64Array, t0: number, r: number, R: number, gap: number): ChangeLocation | null {
  const rowsI: number[] = [];
  for (let i = 0; i < x.length; i++) if (Math.abs(x[i]! - t0) <= R) rowsI.push(i);
  if (rowsI.length < 8) return null;
  const factors: Float64Array[] = [];
  for (const side of [1, -1]) {
    const cols: number[] = [];
    for (let j = 0; j < s.length; j++) if (side * (s[j]! - t0) > R + gap) cols.push(j);
    if (cols.length < 3) continue;
    factors.push(leadingLeftVector(G, rowsI, cols));
  }
  if (!factors.length) return null;
  // a fitted kernel carries the kink smeared over its resolution: the hinge is smoothed by a
  // Gaussian of width ε, max(d, 0) → E max(d + εZ, 0) = d Φ(d/ε) + ε φ(d/ε), with ε (0 = sharp)
  // profiled out like τ; a sharp hinge fitted to a smeared kink latches onto the ringing beside it
  const eps = [0, R / 16, R / 8, R / 4, (3 * R) / 8];
  const ys = factors.map((u) => Array.from(u));
  const taus: number[] = [], rss: number[] = [];
  for (const i of rowsI) {
    const t = x[i]!;
    if (Math.abs(t - t0) > r) continue;
    let best = Infinity;
    for (const e of eps) {
      const rows = rowsI.map((q) => { const d = x[q]! - t; const hinge = e > 0 ? d * normalCdf(d / e) + e * gaussPdf(d / e) : Math.max(d, 0); return [1, d / R, hinge / R, (d / R) ** 2]; });
      best = Math.min(best, ys.reduce((acc, y) => acc + lsRss(rows, y), 0));
    }
    taus.push(t); rss.push(best);
  }
  return profileInterval(taus, rss, factors.length * (rowsI.length - 6));
}

/**
 * Leading left singular vector of the block G[rows, cols] by 50 power iterations on B Bᵀ from the ones vector
 * (each sum accumulated in index order).
 */
function leadingLeftVector(G: Mat, rowsI: number[], cols: number[]): Float64Array {
  const B = subMatrix(G, rowsI, cols);
  let u = new Float64Array(rowsI.length).fill(1);
  for (let it = 0; it < 50; it++) {
    const v = matmulTN(B, { rows: B.rows, cols: 1, data: u }).data;
    const nu = matvec(B, v);
    const nrm = Math.hypot(...nu);
    if (!(nrm > 0)) break;
    u = Float64Array.from(nu, (q) => q / nrm);
  }
  return u;
}

function gaussPdf(z: number): number { return Math.exp(-0.5 * z * z) / Math.sqrt(2 * Math.PI); }
