/**
 * Reference figure for a kernel known only on the forcings' span: the error of the best estimator that is
 * confined to that span and shrinks each identified input direction by one factor, given the true energy
 * of G in every direction (per-direction Wiener filter: Wiener, "Extrapolation, Interpolation, and
 * Smoothing of Stationary Time Series", 1949; in the SVD form of Hansen, "Rank-Deficient and Discrete
 * Ill-Posed Problems", SIAM 1998, §4). It is an oracle (it uses the truth), so a data-driven fit that stays
 * in the span cannot beat it; a fit below it gains from structure across sensors or outside the span.
 *
 * Directions: right singular vectors v_m of the centred forcings in W^{1/2}-coordinates, S = F̃ W^{1/2},
 * singular values s_m; per output row the data in direction m are
 * s_m (G W^{1/2} v_m)_i + noise of std σ, so the oracle mean-squared error is Σ_m n a_m σ² / (s_m² a_m + σ²)
 * with a_m = ‖G W^{1/2} v_m‖² / n. Returned as relative errors in the W^{1/2}-weighted Frobenius norm.
 */
import { zeros, type Mat } from '../../src/linalg/dense.js';
import { eigSym } from '../../src/linalg/decomp.js';

export function spanOracleBound(G: Mat, FW: Mat, weights: Float64Array, sigma: number): { spanRestricted: number; wiener: number } {
  const n = FW.cols, N = FW.rows, rows = G.rows;
  const sw = Float64Array.from(weights, Math.sqrt);
  const S = zeros(N, n);
  for (let c = 0; c < n; c++) {
    let m = 0;
    for (let j = 0; j < N; j++) m += FW.data[j * n + c]!;
    m /= N;
    for (let j = 0; j < N; j++) S.data[j * n + c] = sw[c]! > 0 ? (FW.data[j * n + c]! - m) / sw[c]! : 0;
  }
  const SSt = zeros(N, N);
  for (let a = 0; a < N; a++) for (let b = a; b < N; b++) {
    let t = 0;
    for (let c = 0; c < n; c++) t += S.data[a * n + c]! * S.data[b * n + c]!;
    SSt.data[a * N + b] = t; SSt.data[b * N + a] = t;
  }
  const e = eigSym(SSt);
  const H = zeros(rows, n);
  let total = 0;
  for (let i = 0; i < rows; i++) for (let c = 0; c < n; c++) { const v = G.data[i * n + c]! * sw[c]!; H.data[i * n + c] = v; total += v * v; }
  let inSpan = 0, mse = 0;
  const v = new Float64Array(n);
  for (let m = 0; m < N; m++) {
    const s2 = e.values[m]!;
    if (!(s2 > 1e-12 * e.values[0]!)) continue;
    const s = Math.sqrt(s2);
    v.fill(0);
    for (let j = 0; j < N; j++) { const u = e.vectors.data[j * N + m]! / s; for (let c = 0; c < n; c++) v[c] += S.data[j * n + c]! * u; }
    let en = 0;
    for (let i = 0; i < rows; i++) { let t = 0; for (let c = 0; c < n; c++) t += H.data[i * n + c]! * v[c]!; en += t * t; }
    inSpan += en;
    const a = en / rows;
    mse += (rows * a * sigma * sigma) / (s2 * a + sigma * sigma);
  }
  const out = Math.max(0, total - inSpan);
  return { spanRestricted: Math.sqrt(out / total), wiener: Math.sqrt((out + mse) / total) };
}
