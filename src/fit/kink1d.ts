/**
 * The 1-D estimator: a Green's function that is smooth on either side of its diagonal,
 *
 *   G_pq(x, s) = Σ_ab C_ab φ_a(x) ψ_b(s) + sign(x − s) Σ_ab D_ab φ_a(x) ψ_b(s),
 *
 * with orthonormal Legendre bases φ, ψ of size K on the study's interval. Every Green's function
 * of a 1-D differential operator with smooth coefficients has this form, G = A + sign(x − s)·B with
 * A, B smooth (from G = u1(x<) u2(x>)/(a_n W) and its order-n generalisation: Coddington &
 * Levinson 1955, ch. 7), self-adjoint or not, so the diagonal kink is represented exactly instead
 * of being smeared over many smooth modes. The model is linear in (C, D): a ridge with a
 * degree-weighted penalty, K and λ chosen by GCV (Golub, Heath & Wahba 1979); u_h is a free
 * intercept per sensor, profiled out by centring each sensor's data over its measured experiments.
 * The sign features are prefix sums over the sorted forcing points, so missing values, distinct
 * sensor/actuator points and several components cost nothing extra.
 *
 * Oscillatory enrichment: for an operator with constant leading behaviour of wave type, A and B lie in
 * span{cos ωx, sin ωx} ⊗ span{cos ωs, sin ωs} (G = u1(x<) u2(x>)/W with trigonometric u1, u2), which a
 * degree-penalised polynomial basis represents only with many heavily penalised coefficients. The basis
 * may therefore be [cos ωx, sin ωx, q_0, …, q_{K−3}] with ω chosen by GCV (path1d.ts); GCV also decides
 * whether the enriched or the plain Legendre basis is used, so nothing here assumes a wave operator.
 */
import type { Mat } from '../linalg/dense.js';
import { zeros, matmul, matmulTN } from '../linalg/dense.js';
import type { Prepared } from './prepare.js';
import { legendreBasis } from './basis.js';
import { type NormalSystem, type RidgeSpectrum, ridgeSpectrum, gcvMinimise, RidgeSolver, type GcvPoint, semidefiniteCholesky } from './spectral.js';

export type Constraint = 'none' | 'symmetric' | 'translation';

export interface KinkSetup {
  Kmax: number;
  Phi: Mat; // nOut × Kmax
  Psi: Mat; // nIn × Kmax
  /** features per row at Kmax: 2·Kmax·cIn */
  F: number;
  /** per (component, sensor) c = p·nOut + i: centred Gram XᵀX (F × F), Xᵀu (F), uᵀu, measured count */
  rowQ: Float64Array;
  rowR: Float64Array;
  rowYY: Float64Array;
  rowN: Int32Array;
  /** per (component, sensor): mean feature row over measured experiments (F) and mean response */
  xbar: Float64Array; // (cOut·nOut) × F
  ubar: Float64Array; // cOut·nOut
  /** penalty degree of each basis column (Legendre: its degree) */
  degree: Float64Array;
  /** frequency of the oscillatory columns, or null for the plain Legendre basis */
  omega: number | null;
}

/** A basis of size Kmax for both sides of the model, with the penalty degree of each column. */
export interface KinkBasis {
  Phi: Mat;
  Psi: Mat;
  degree: Float64Array;
  omega: number | null;
}

/** Orthonormal Legendre polynomials q_0..q_{Kmax−1} on the study's interval. */
export function legendreKinkBasis(prep: Prepared, Kmax: number): KinkBasis {
  const [lo, hi] = prep.box[0]!;
  return {
    Phi: legendreBasis(prep.pointsOut.data, Kmax, lo, hi), Psi: legendreBasis(prep.pointsIn.data, Kmax, lo, hi),
    degree: Float64Array.from({ length: Kmax }, (_, a) => a), omega: null,
  };
}

/**
 * Piecewise orthonormal Legendre polynomials on the pieces [lo, τ1), [τ1, τ2), …, [τm, hi] (no continuity
 * imposed: the ridge penalty and GCV decide how much the pieces differ). Column a = d·P + piece (P pieces),
 * so every nested size that is a multiple of P holds all pieces to the same degree d; each column is
 * scaled to unit mean square over the whole interval, q = √(L/ℓ) q_d on its piece of length ℓ, zero
 * elsewhere. Penalty degree of a column: its degree within the piece. Breaks outside (lo, hi) are dropped.
 */
export function piecewiseKinkBasis(prep: Prepared, Kmax: number, breaks: readonly number[]): KinkBasis {
  const [lo, hi] = prep.box[0]!;
  const edges = [lo, ...[...new Set(breaks)].filter((t) => t > lo && t < hi).sort((a, b) => a - b), hi];
  const P = edges.length - 1, D = Math.ceil(Kmax / P);
  const mk = (x: Float64Array): Mat => {
    const out = zeros(x.length, Kmax);
    for (let i = 0; i < x.length; i++) {
      let piece = 0;
      while (piece < P - 1 && x[i]! >= edges[piece + 1]!) piece++;
      const a = edges[piece]!, b = edges[piece + 1]!;
      const L = legendreBasis([x[i]!], D, a, b), sc = Math.sqrt((hi - lo) / (b - a));
      for (let d = 0; d < D; d++) { const col = d * P + piece; if (col < Kmax) out.data[i * Kmax + col] = sc * L.data[d]!; }
    }
    return out;
  };
  const degree = Float64Array.from({ length: Kmax }, (_, a) => Math.floor(a / P));
  return { Phi: mk(prep.pointsOut.data), Psi: mk(prep.pointsIn.data), degree, omega: null };
}

/** Candidate sizes of a piecewise basis with P pieces: multiples of P from degree 1 up (nested, increasing). */
export function piecewiseCandidates(Kmax: number, P: number): number[] {
  const c: number[] = [];
  for (let k = 2 * P; k <= Kmax; k += P) c.push(k);
  if (!c.length) c.push(Kmax);
  return c;
}

/** The first K columns of a basis (the nested model of size K). */
export function truncateBasis(b: KinkBasis, K: number): KinkBasis {
  const cut = (M: Mat): Mat => {
    const out = zeros(M.rows, K);
    for (let i = 0; i < M.rows; i++) for (let a = 0; a < K; a++) out.data[i * K + a] = M.data[i * M.cols + a]!;
    return out;
  };
  return { Phi: cut(b.Phi), Psi: cut(b.Psi), degree: b.degree.slice(0, K), omega: b.omega };
}

/** Penalty degree of the oscillatory pair (a prior choice: penalised like a linear function). */
export const OSCILLATORY_DEGREE = 1;

/**
 * [c(x), s(x), q_0, …, q_{Kmax−3}] with c, s = √2 cos(ω(x − lo)), √2 sin(ω(x − lo)) (unit mean square over
 * the interval up to O(1/(ωL))): the oscillatory pair comes first, so every nested size contains it.
 */
export function oscillatoryKinkBasis(prep: Prepared, Kmax: number, omega: number): KinkBasis {
  const [lo, hi] = prep.box[0]!;
  const mk = (x: Float64Array): Mat => {
    const L = legendreBasis(x, Kmax - 2, lo, hi);
    const out = zeros(x.length, Kmax);
    for (let i = 0; i < x.length; i++) {
      const t = omega * (x[i]! - lo);
      out.data[i * Kmax] = Math.SQRT2 * Math.cos(t);
      out.data[i * Kmax + 1] = Math.SQRT2 * Math.sin(t);
      for (let a = 0; a < Kmax - 2; a++) out.data[i * Kmax + 2 + a] = L.data[i * (Kmax - 2) + a]!;
    }
    return out;
  };
  const degree = new Float64Array(Kmax);
  degree[0] = OSCILLATORY_DEGREE; degree[1] = OSCILLATORY_DEGREE;
  for (let a = 2; a < Kmax; a++) degree[a] = a - 2;
  return { Phi: mk(prep.pointsOut.data), Psi: mk(prep.pointsIn.data), degree, omega };
}

/**
 * Visit each sensor with its full feature matrix X (N × F, row-major) at basis size K.
 * Column c = q·2K + part·K + b: part 0 = Σ_k ψ_b(s_k) w_k f_j^q(s_k), part 1 = the same with sign(x − s_k).
 */
export function sweepFeatures(prep: Prepared, Psi: Mat, K: number, cb: (i: number, X: Float64Array) => void): void {
  const { N, nIn, cIn, nOut } = prep;
  const F = 2 * K * cIn;
  const s = prep.pointsIn.data, x = prep.pointsOut.data;
  const order = Array.from({ length: nIn }, (_, k) => k).sort((a, b) => s[a]! - s[b]!);
  const outOrder = Array.from({ length: nOut }, (_, i) => i).sort((a, b) => x[a]! - x[b]!);
  const KP = Psi.cols;
  // Z[q] = FW^q Ψ (N × K)
  const Z = new Float64Array(cIn * N * K);
  const cols = nIn * cIn;
  for (let q = 0; q < cIn; q++) for (let j = 0; j < N; j++) {
    const zo = (q * N + j) * K;
    for (let k = 0; k < nIn; k++) {
      const fw = prep.FW.data[j * cols + q * nIn + k]!;
      if (fw === 0) continue;
      const po = k * KP;
      for (let b = 0; b < K; b++) Z[zo + b] += fw * Psi.data[po + b]!;
    }
  }
  const lt = new Float64Array(cIn * N * K); // running Σ over s_k < x
  const eq = new Float64Array(cIn * N * K);
  const X = new Float64Array(N * F);
  let ptr = 0;
  const addPoint = (k: number, target: Float64Array) => {
    const po = k * KP;
    for (let q = 0; q < cIn; q++) for (let j = 0; j < N; j++) {
      const fw = prep.FW.data[j * cols + q * nIn + k]!;
      if (fw === 0) continue;
      const o = (q * N + j) * K;
      for (let b = 0; b < K; b++) target[o + b] += fw * Psi.data[po + b]!;
    }
  };
  for (const i of outOrder) {
    const xi = x[i]!;
    while (ptr < nIn && s[order[ptr]!]! < xi) { addPoint(order[ptr]!, lt); ptr++; }
    eq.fill(0);
    for (let p2 = ptr; p2 < nIn && s[order[p2]!]! === xi; p2++) addPoint(order[p2]!, eq);
    for (let j = 0; j < N; j++) {
      for (let q = 0; q < cIn; q++) {
        const o = (q * N + j) * K, xo = j * F + q * 2 * K;
        for (let b = 0; b < K; b++) {
          const z = Z[o + b]!;
          X[xo + b] = z;
          X[xo + K + b] = 2 * lt[o + b]! + eq[o + b]! - z;
        }
      }
    }
    cb(i, X);
  }
}

/** Whether every (component, sensor) is measured on the same experiments (then the Grams share their parts). */
function sharedSet(sets: number[][]): number[] | null {
  const J0 = sets[0];
  if (!J0) return null;
  for (const J of sets) {
    if (J.length !== J0.length) return null;
    for (let n = 0; n < J.length; n++) if (J[n] !== J0[n]) return null;
  }
  return J0;
}

/**
 * setupKink when all sensors share one experiment set J. With the forcings centred over J, sensor i's
 * features are X_i = [Z, Y_i], Y_i = 2L_i + E_i − Z, where Z = Σ_k a_k v_kᵀ over all input points,
 * L_i the same sum over the points s_k < x_i and E_i over s_k = x_i (a_k: centred weighted forcing at
 * point k over J; v_k: its basis row). Sweeping the sensors in order of x, L grows by rank-one terms,
 * so ZᵀL and LᵀL are updated in O(|J|·Kmax) per input point instead of forming every sensor's
 * |J| × F feature matrix and its Gram (O(|J|·F²) per sensor). Same Grams as the direct product up to
 * rounding.
 */
function setupShared(prep: Prepared, basis: KinkBasis, J: number[]): KinkSetup {
  // the phases are separate small functions: V8 compiles each on its own once it is hot, instead of
  // recompiling one large function (with everything inlined) at every loop that becomes hot
  const { nIn, nOut, cOut, cIn } = prep;
  const { Phi, Psi } = basis;
  const Kmax = Phi.cols, KC = Kmax * cIn, F = 2 * KC;
  const nc = cOut * nOut, nJ = J.length, cols = nIn * cIn, colsOut = nOut * cOut;
  const rowQ = new Float64Array(nc * F * F), rowR = new Float64Array(nc * F), rowYY = new Float64Array(nc), rowN = new Int32Array(nc);
  const xbar = new Float64Array(nc * F), ubar = new Float64Array(nc);
  // centred weighted forcings, one contiguous vector per input column: Ac[col·nJ + n]
  const fbar = new Float64Array(cols), Ac = new Float64Array(cols * nJ);
  centreColumns(prep.FW.data, cols, J, fbar, Ac);
  // centred responses per (component, sensor): Uc[c·nJ + n]
  const Uc = new Float64Array(nc * nJ);
  centreColumns(prep.U.data, colsOut, J, ubar, Uc);
  for (let c = 0; c < nc; c++) { rowYY[c] = dotCols(Uc, c * nJ, Uc, c * nJ, nJ); rowN[c] = nJ; }
  // Z (nJ × KC, column-major: Zt[m·nJ + n]) and its mean-forcing counterpart zbar
  const Zt = new Float64Array(KC * nJ), zbar = new Float64Array(KC);
  for (let q = 0; q < cIn; q++) for (let k = 0; k < nIn; k++) accumulatePoint(Ac, fbar, Psi.data, q * nIn + k, k * Kmax, q * Kmax, Kmax, nJ, Zt, zbar);
  const ZZ = new Float64Array(KC * KC);
  for (let m = 0; m < KC; m++) for (let m2 = m; m2 < KC; m2++) { const v = dotCols(Zt, m * nJ, Zt, m2 * nJ, nJ); ZZ[m * KC + m2] = v; ZZ[m2 * KC + m] = v; }
  // running state over the sweep: L (column-major like Zt), A = ZᵀL, B = LᵀL, lbar (mean-forcing L)
  const Lt = new Float64Array(KC * nJ), A = new Float64Array(KC * KC), B = new Float64Array(KC * KC), lbar = new Float64Array(KC);
  const la = new Float64Array(KC), za = new Float64Array(KC);
  const s = prep.pointsIn.data, x = prep.pointsOut.data;
  const order = Array.from({ length: nIn }, (_, k) => k).sort((a, b) => s[a]! - s[b]!);
  const outOrder = Array.from({ length: nOut }, (_, i) => i).sort((a, b) => x[a]! - x[b]!);
  // per sensor: E = Σ_e a_e v_eᵀ over the points at x_i (rank ≤ their count), and its products
  const LE = new Float64Array(KC * KC), ZE = new Float64Array(KC * KC), EE = new Float64Array(KC * KC);
  const Lu = new Float64Array(KC), Zu = new Float64Array(KC), Eu = new Float64Array(KC), ebar = new Float64Array(KC);
  const zf = new Int32Array(KC);
  for (let m = 0; m < KC; m++) zf[m] = Math.floor(m / Kmax) * 2 * Kmax + (m % Kmax);
  let ptr = 0;
  for (const i of outOrder) {
    const xi = x[i]!;
    while (ptr < nIn && s[order[ptr]!]! < xi) {
      const k = order[ptr]!;
      for (let q = 0; q < cIn; q++) {
        const col = q * nIn + k, ao = col * nJ;
        projectColumn(Lt, Zt, Ac, ao, KC, nJ, la, za);
        sweepPoint(Psi.data, k * Kmax, q * Kmax, Kmax, KC, dotCols(Ac, ao, Ac, ao, nJ), la, za, A, B);
        accumulatePoint(Ac, fbar, Psi.data, col, k * Kmax, q * Kmax, Kmax, nJ, Lt, lbar);
      }
      ptr++;
    }
    LE.fill(0); ZE.fill(0); EE.fill(0); ebar.fill(0);
    const eCols: number[] = [];
    for (let p2 = ptr; p2 < nIn && s[order[p2]!]! === xi; p2++) for (let q = 0; q < cIn; q++) eCols.push(q * nIn + order[p2]!);
    for (const col of eCols) {
      const ao = col * nJ, q = Math.floor(col / nIn), k = col - q * nIn, qo = q * Kmax;
      projectColumn(Lt, Zt, Ac, ao, KC, nJ, la, za);
      for (let b = 0; b < Kmax; b++) {
        const vb = Psi.data[k * Kmax + b]!;
        if (vb === 0) continue;
        ebar[qo + b] += fbar[col]! * vb;
        for (let m = 0; m < KC; m++) { LE[m * KC + qo + b] += la[m]! * vb; ZE[m * KC + qo + b] += za[m]! * vb; }
      }
      for (const col2 of eCols) {
        const g = dotCols(Ac, ao, Ac, col2 * nJ, nJ), q2 = Math.floor(col2 / nIn), k2 = col2 - q2 * nIn;
        for (let b = 0; b < Kmax; b++) { const vb = Psi.data[k * Kmax + b]!; if (vb === 0) continue; for (let b2 = 0; b2 < Kmax; b2++) EE[(qo + b) * KC + q2 * Kmax + b2] += g * vb * Psi.data[k2 * Kmax + b2]!; }
      }
    }
    const hasE = eCols.length > 0;
    for (let p = 0; p < cOut; p++) {
      const c = p * nOut + i, uo = c * nJ;
      projectColumn(Lt, Zt, Uc, uo, KC, nJ, Lu, Zu);
      Eu.fill(0);
      if (hasE) for (const col of eCols) { const g = dotCols(Ac, col * nJ, Uc, uo, nJ); const q = Math.floor(col / nIn), k = col - q * nIn; for (let b = 0; b < Kmax; b++) Eu[q * Kmax + b] += g * Psi.data[k * Kmax + b]!; }
      sensorSystem(KC, Kmax, F, zf, ZZ, A, B, LE, ZE, EE, Zu, Lu, Eu, zbar, lbar, ebar, rowQ, rowR, xbar, c);
    }
  }
  return { Kmax, Phi, Psi, F, rowQ, rowR, rowYY, rowN, xbar, ubar, degree: basis.degree, omega: basis.omega };
}

/** Column means over the experiments J of a row-major (experiments × cols) array, and the centred columns (col·|J| + n). */
function centreColumns(data: Float64Array, cols: number, J: number[], mean: Float64Array, out: Float64Array): void {
  const nJ = J.length;
  for (let col = 0; col < cols; col++) {
    let m = 0;
    for (let n = 0; n < nJ; n++) m += data[J[n]! * cols + col]!;
    m /= nJ;
    mean[col] = m;
    const o = col * nJ;
    for (let n = 0; n < nJ; n++) out[o + n] = data[J[n]! * cols + col]! - m;
  }
}

function dotCols(x: Float64Array, xo: number, y: Float64Array, yo: number, n: number): number {
  let s = 0;
  for (let k = 0; k < n; k++) s += x[xo + k]! * y[yo + k]!;
  return s;
}

/** target[(qo + b)·nJ + ·] += a_col ψ_b(s_k) and tbar[qo + b] += fbar_col ψ_b(s_k) for one input column */
function accumulatePoint(Ac: Float64Array, fbar: Float64Array, Psi: Float64Array, col: number, po: number, qo: number, Kmax: number, nJ: number, target: Float64Array, tbar: Float64Array): void {
  const ao = col * nJ;
  for (let b = 0; b < Kmax; b++) {
    const v = Psi[po + b]!;
    if (v === 0) continue;
    const to = (qo + b) * nJ;
    for (let n = 0; n < nJ; n++) target[to + n] += Ac[ao + n]! * v;
    tbar[qo + b] += fbar[col]! * v;
  }
}

/** la = Lᵀa, za = Zᵀa for one column a (at offset ao) */
function projectColumn(Lt: Float64Array, Zt: Float64Array, a: Float64Array, ao: number, KC: number, nJ: number, la: Float64Array, za: Float64Array): void {
  for (let m = 0; m < KC; m++) { la[m] = dotCols(Lt, m * nJ, a, ao, nJ); za[m] = dotCols(Zt, m * nJ, a, ao, nJ); }
}

/** B += la vᵀ + v laᵀ + aa v vᵀ;  A += za vᵀ  (v = ψ(s_k) in block qo) */
function sweepPoint(Psi: Float64Array, po: number, qo: number, Kmax: number, KC: number, aa: number, la: Float64Array, za: Float64Array, A: Float64Array, B: Float64Array): void {
  for (let b = 0; b < Kmax; b++) {
    const vb = Psi[po + b]!;
    if (vb === 0) continue;
    const cb = qo + b;
    for (let m = 0; m < KC; m++) { B[m * KC + cb] += la[m]! * vb; B[cb * KC + m] += la[m]! * vb; A[m * KC + cb] += za[m]! * vb; }
    for (let b2 = 0; b2 < Kmax; b2++) B[cb * KC + qo + b2] += aa * vb * Psi[po + b2]!;
  }
}

/** Sensor c's Gram, right-hand side and mean feature row from the sweep's running products (features [Z, Y], Y = 2L + E − Z) */
function sensorSystem(KC: number, Kmax: number, F: number, zf: Int32Array, ZZ: Float64Array, A: Float64Array, B: Float64Array, LE: Float64Array, ZE: Float64Array, EE: Float64Array,
  Zu: Float64Array, Lu: Float64Array, Eu: Float64Array, zbar: Float64Array, lbar: Float64Array, ebar: Float64Array, rowQ: Float64Array, rowR: Float64Array, xbar: Float64Array, c: number): void {
  const Qo = c * F * F, ro = c * F;
  for (let m = 0; m < KC; m++) {
    const f0 = zf[m]!, f1 = f0 + Kmax;
    rowR[ro + f0] = Zu[m]!; rowR[ro + f1] = 2 * Lu[m]! + Eu[m]! - Zu[m]!;
    xbar[ro + f0] = zbar[m]!; xbar[ro + f1] = 2 * lbar[m]! + ebar[m]! - zbar[m]!;
    for (let m2 = 0; m2 < KC; m2++) {
      const g0 = zf[m2]!, g1 = g0 + Kmax;
      const mm = m * KC + m2, tt = m2 * KC + m;
      // Y = 2L + E − Z:  ZᵀY = 2A + ZE − ZZ;  YᵀY = 4B + 2(LE + LEᵀ) + EE − 2(A + Aᵀ) − (ZE + ZEᵀ) + ZZ
      const zy = 2 * A[mm]! + ZE[mm]! - ZZ[mm]!;
      const yy = 4 * B[mm]! + 2 * (LE[mm]! + LE[tt]!) + EE[mm]! - 2 * (A[mm]! + A[tt]!) - (ZE[mm]! + ZE[tt]!) + ZZ[mm]!;
      rowQ[Qo + f0 * F + g0] = ZZ[mm]!;
      rowQ[Qo + f0 * F + g1] = zy;
      rowQ[Qo + g1 * F + f0] = zy;
      rowQ[Qo + f1 * F + g1] = yy;
    }
  }
}

/** Centre each sensor's data over its measured experiments and store the per-sensor Gram matrices at Kmax. */
export function setupKink(prep: Prepared, basis: KinkBasis, measuredSets: number[][]): KinkSetup {
  const shared = sharedSet(measuredSets);
  if (shared && shared.length >= 2) return setupShared(prep, basis, shared);
  return setupDirect(prep, basis, measuredSets);
}

/** setupKink for sensors measured on different experiments: each sensor's centred feature matrix and its Gram. */
export function setupDirect(prep: Prepared, basis: KinkBasis, measuredSets: number[][]): KinkSetup {
  const { nOut, cOut, cIn } = prep;
  const { Phi, Psi } = basis;
  const Kmax = Phi.cols;
  const F = 2 * Kmax * cIn;
  const nc = cOut * nOut;
  const rowQ = new Float64Array(nc * F * F), rowR = new Float64Array(nc * F), rowYY = new Float64Array(nc), rowN = new Int32Array(nc);
  const xbar = new Float64Array(nc * F), ubar = new Float64Array(nc);
  const colsOut = nOut * cOut;
  sweepFeatures(prep, Psi, Kmax, (i, X) => {
    for (let p = 0; p < cOut; p++) {
      const c = p * nOut + i;
      const J = measuredSets[c]!;
      const nJ = J.length;
      const xb = xbar.subarray(c * F, (c + 1) * F);
      let ub = 0;
      for (const j of J) { ub += prep.U.data[j * colsOut + c]!; for (let f = 0; f < F; f++) xb[f] += X[j * F + f]!; }
      ub /= nJ;
      for (let f = 0; f < F; f++) xb[f] /= nJ;
      ubar[c] = ub;
      const r = rowR.subarray(c * F, (c + 1) * F);
      const Xc = zeros(nJ, F);
      let yy = 0;
      J.forEach((j, n) => {
        const u = prep.U.data[j * colsOut + c]! - ub;
        yy += u * u;
        const xo = j * F, co = n * F;
        for (let f = 0; f < F; f++) { const v = X[xo + f]! - xb[f]!; Xc.data[co + f] = v; r[f] += v * u; }
      });
      rowQ.set(matmulTN(Xc, Xc).data, c * F * F);
      rowYY[c] = yy;
      rowN[c] = nJ;
    }
  });
  return { Kmax, Phi, Psi, F, rowQ, rowR, rowYY, rowN, xbar, ubar, degree: basis.degree, omega: basis.omega };
}

/**
 * The full tensor model's normal system for output component p at basis size K (layout of
 * `kinkIndex(K, …)`), assembled from the per-sensor Grams: M = Σ_i (φ_i φ_iᵀ) ⊗ Q_i.
 */
export function assembleFull(setup: KinkSetup, prep: Prepared, p: number, K: number): NormalSystem {
  const { nOut, cIn } = prep;
  const { Kmax, F } = setup;
  const Fk = 2 * K * cIn;
  const sel: number[] = [];
  for (let q = 0; q < cIn; q++) for (let part = 0; part < 2; part++) for (let b = 0; b < K; b++) sel.push(q * 2 * Kmax + part * Kmax + b);
  const P = K * Fk;
  const M = zeros(P, P), r = new Float64Array(P);
  let yy = 0, nObs = 0;
  // M[(a,f),(a2,g)] = Σ_i φ_ia φ_ia2 Q_i[f,g] for a ≤ a2: one product (pairs × n)(n × Fk²)
  const pairs: [number, number][] = [];
  for (let a = 0; a < K; a++) for (let a2 = a; a2 < K; a2++) pairs.push([a, a2]);
  const np = pairs.length;
  const AphiT = zeros(np, nOut), Bq = zeros(nOut, Fk * Fk);
  for (let i = 0; i < nOut; i++) {
    const c = p * nOut + i;
    const Q = setup.rowQ.subarray(c * F * F, (c + 1) * F * F), rr = setup.rowR.subarray(c * F, (c + 1) * F);
    const yyc = setup.rowYY[c]!, nc = setup.rowN[c]!;
    const bo = i * Fk * Fk;
    for (let f = 0; f < Fk; f++) { const so = sel[f]! * F; for (let g = 0; g < Fk; g++) Bq.data[bo + f * Fk + g] = Q[so + sel[g]!]!; }
    yy += yyc;
    nObs += Math.max(0, nc - 1);
    const phi = setup.Phi.data.subarray(i * Kmax, i * Kmax + K);
    for (let a = 0; a < K; a++) { const pa = phi[a]!; for (let f = 0; f < Fk; f++) r[a * Fk + f] += pa * rr[sel[f]!]!; }
    for (let q = 0; q < np; q++) AphiT.data[q * nOut + i] = phi[pairs[q]![0]]! * phi[pairs[q]![1]]!;
  }
  const Mr = matmul(AphiT, Bq);
  pairs.forEach(([a, a2], q) => {
    const src = q * Fk * Fk;
    for (let f = 0; f < Fk; f++) {
      const row = (a * Fk + f) * P + a2 * Fk, so = src + f * Fk;
      for (let g = 0; g < Fk; g++) M.data[row + g] = Mr.data[so + g]!;
      if (a2 !== a) for (let g = 0; g < Fk; g++) M.data[(a2 * Fk + g) * P + a * Fk + f] = Mr.data[so + g]!;
    }
  });
  return { M, r, yy, nObs };
}

/** Embed θ of the layout at K into the layout at Kmax. */
export function embedTheta(theta: Float64Array, K: number, Kmax: number, cIn: number): Float64Array {
  const out = new Float64Array(Kmax * 2 * Kmax * cIn);
  for (let a = 0; a < K; a++) for (let q = 0; q < cIn; q++) for (let part = 0; part < 2; part++) for (let b = 0; b < K; b++) {
    out[kinkIndex(Kmax, cIn, a, q, part, b)] = theta[kinkIndex(K, cIn, a, q, part, b)]!;
  }
  return out;
}

/** θ index at basis size Kmax of coefficient (a, q, part, b). */
export function kinkIndex(Kmax: number, cIn: number, a: number, q: number, part: number, b: number): number {
  return a * 2 * Kmax * cIn + q * 2 * Kmax + part * Kmax + b;
}

/** Map from reduced parameters η to θ (at Kmax): θ = T η, each θ entry takes ±η_e or 0. */
export interface ParamMap {
  /** size of η */
  size: number;
  /** θ indices (at Kmax) with their η index and sign */
  theta: Int32Array;
  eta: Int32Array;
  sign: Float64Array;
}

export function unconstrainedMap(Kmax: number, cIn: number, K: number): ParamMap {
  const th: number[] = [], et: number[] = [], sg: number[] = [];
  let e = 0;
  for (let a = 0; a < K; a++) for (let q = 0; q < cIn; q++) for (let part = 0; part < 2; part++) for (let b = 0; b < K; b++) {
    th.push(kinkIndex(Kmax, cIn, a, q, part, b)); et.push(e++); sg.push(1);
  }
  return { size: e, theta: Int32Array.from(th), eta: Int32Array.from(et), sign: Float64Array.from(sg) };
}

/** Self-adjoint (scalar): G(x,s) = G(s,x) ⇔ C symmetric and D antisymmetric. */
export function symmetricMap(Kmax: number, K: number): ParamMap {
  const th: number[] = [], et: number[] = [], sg: number[] = [];
  let e = 0;
  for (let a = 0; a < K; a++) for (let b = a; b < K; b++) {
    th.push(kinkIndex(Kmax, 1, a, 0, 0, b)); et.push(e); sg.push(1);
    if (b !== a) { th.push(kinkIndex(Kmax, 1, b, 0, 0, a)); et.push(e); sg.push(1); }
    e++;
  }
  for (let a = 0; a < K; a++) for (let b = a + 1; b < K; b++) {
    th.push(kinkIndex(Kmax, 1, a, 0, 1, b)); et.push(e); sg.push(1);
    th.push(kinkIndex(Kmax, 1, b, 0, 1, a)); et.push(e); sg.push(-1);
    e++;
  }
  return { size: e, theta: Int32Array.from(th), eta: Int32Array.from(et), sign: Float64Array.from(sg) };
}

/**
 * Penalty weight of coefficient (a, b): ((1 + d_a)(1 + d_b))^order with d the columns' penalty degrees
 * (Legendre: d_a = a) — a smoothness prior on A and B — times `jump` for the D (sign) part: the relative
 * prior size of the jump part is a hyper-parameter (GCV).
 */
export function penaltyWeights(Kmax: number, cIn: number, order: number, jump = 1, degree?: Float64Array): Float64Array {
  const d = (a: number) => (degree ? degree[a]! : a);
  const F = 2 * Kmax * cIn;
  const w = new Float64Array(Kmax * F);
  for (let a = 0; a < Kmax; a++) for (let q = 0; q < cIn; q++) for (let part = 0; part < 2; part++) for (let b = 0; b < Kmax; b++) {
    w[kinkIndex(Kmax, cIn, a, q, part, b)] = Math.pow((1 + d(a)) * (1 + d(b)), order) * (part ? jump : 1);
  }
  return w;
}

/** The reduced normal system Tᵀ M T, Tᵀ r and penalty Tᵀ diag(P) T (diagonal since T has one entry a row). */
export function reduceSystem(sys: NormalSystem, Pfull: Float64Array, map: ParamMap): { sys: NormalSystem; P: Float64Array } {
  const n = map.size, P0 = sys.r.length;
  const M = zeros(n, n), r = new Float64Array(n), P = new Float64Array(n);
  const L = map.theta.length;
  for (let u = 0; u < L; u++) {
    const tu = map.theta[u]!, eu = map.eta[u]!, su = map.sign[u]!;
    r[eu] += su * sys.r[tu]!;
    P[eu] += Pfull[tu]!;
    const row = tu * P0;
    for (let v = 0; v < L; v++) M.data[eu * n + map.eta[v]!] += su * map.sign[v]! * sys.M.data[row + map.theta[v]!]!;
  }
  return { sys: { M, r, yy: sys.yy, nObs: sys.nObs }, P };
}

export interface KinkChoice {
  K: number;
  order: number;
  /** penalty factor of the jump (D) part */
  jump?: number;
  gcv: GcvPoint;
  /** GCV path over the candidates tried */
  tried: { K: number; order: number; gcv: number; lambda: number; dof: number; jump?: number }[];
}

/** Candidate basis sizes (nested Legendre bases), in increasing order. */
export function kinkCandidates(Kmax: number): number[] {
  const base = [3, 4, 6, 8, 10, 13, 16, 20, 24, 28, 32];
  // the cap replaces a grid size within 20 % below it (the grid steps by 1.25–1.5; a step of 13 → 14 at the
  // costliest sizes would add a near-duplicate model)
  const c = base.filter((k) => k <= Kmax && !(k < Kmax && k > Kmax / 1.2));
  if (!c.includes(Kmax)) c.push(Kmax);
  return c;
}

/**
 * A resumable GCV search over nested basis sizes for one output component and penalty order. Sizes are
 * tried in increasing order and the search stops once GCV has risen for two sizes in a row (common practice
 * for nested models) or once the best GCV is at the rounding floor of the next size (`atRoundingFloor`); an alternative basis that is behind a reference at two sizes in a row is abandoned
 * (same rule). `advanceKinkSearch(s, upTo)` evaluates sizes ≤ upTo only, so a caller can defer the largest
 * (costliest) sizes and resume later with the same outcome as an uninterrupted search.
 */
export interface KinkSearch {
  sys: NormalSystem;
  Kmax: number;
  cIn: number;
  constraint: Constraint;
  order: number;
  degree?: Float64Array;
  sizes: number[];
  behind?: (K: number, gcv: number) => boolean;
  /** index in `sizes` of the next size to evaluate */
  next: number;
  rises: number;
  prev: number;
  lagging: number;
  done: boolean;
  best: KinkChoice | null;
  tried: KinkChoice['tried'];
  /** the tried sizes' spectra with their tridiagonal reductions (for replicates that re-choose the size) */
  spectra: Map<number, RidgeSpectrum>;
}

export function startKinkSearch(sys: NormalSystem, Kmax: number, cIn: number, constraint: Constraint, order: number, degree: Float64Array | undefined, sizes: number[], behind?: (K: number, gcv: number) => boolean, tried: KinkChoice['tried'] = []): KinkSearch {
  return { sys, Kmax, cIn, constraint, order, degree, sizes, behind, next: 0, rises: 0, prev: Infinity, lagging: 0, done: sizes.length === 0, best: null, tried, spectra: new Map() };
}

export function advanceKinkSearch(st: KinkSearch, upTo = Infinity): void {
  const Pfull = penaltyWeights(st.Kmax, st.cIn, st.order, 1, st.degree);
  while (!st.done && st.sizes[st.next]! <= upTo) {
    const K = st.sizes[st.next++]!;
    const map = st.constraint === 'symmetric' ? symmetricMap(st.Kmax, K) : unconstrainedMap(st.Kmax, st.cIn, K);
    const red = reduceSystem(st.sys, Pfull, map);
    const sp = ridgeSpectrum(red.sys, red.P, true);
    st.spectra.set(K, sp);
    const g = gcvMinimise(sp);
    st.tried.push({ K, order: st.order, gcv: g.gcv, lambda: g.lambda, dof: g.dof });
    if (!st.best || g.gcv < st.best.gcv.gcv) st.best = { K, order: st.order, gcv: g, tried: st.tried };
    if (st.next >= st.sizes.length) st.done = true;
    if (g.gcv >= st.prev) { if (++st.rises >= 2) st.done = true; } else st.rises = 0;
    st.prev = g.gcv;
    if (st.behind) { if (st.behind(K, g.gcv)) { if (++st.lagging >= 2) st.done = true; } else st.lagging = 0; }
    if (atRoundingFloor(st)) st.done = true;
  }
}

/** Size of the reduced parameter vector at basis size K. */
export function reducedSize(Kmax: number, cIn: number, K: number, constraint: Constraint): number {
  return constraint === 'symmetric' ? K * K : 2 * K * K * cIn;
}

/**
 * A lower bound on the GCV score of every size not yet tried by a search, at every λ: the nested tensor
 * model's residual at any λ is at least `rowBound`, a lower bound on the unpenalised residual of the largest
 * model containing it (`unpenalisedResidual` of the full system), and the effective parameters are at least
 * 0, so GCV = n·RSS/(n − dof)² ≥ n·rowBound/n² = rowBound/n (the denominator can be as large as n², for a
 * heavily penalised fit; a bound with (n − p_K)² in the denominator would be an upper bound on that factor,
 * not a lower one). Infinity when nothing remains.
 */
export function remainingGcvBound(st: KinkSearch, rowBound: number): number {
  if (st.done) return Infinity;
  return rowBound / st.sys.nObs;
}

/**
 * Whether no size after the current best can win by more than rounding: the best GCV is already below the
 * rounding of the next size's GCV, n·p'·ε·yᵀy/(n − p')² (RSS = yᵀy − fit is formed with an absolute error
 * up to p'·ε·yᵀy: summation bound over p' spectral terms, Higham 2002 §4.2), so even a residual of exactly
 * zero there could not be told apart from it (noise-free data fitted to machine precision).
 */
function atRoundingFloor(st: KinkSearch): boolean {
  if (!st.best || st.next >= st.sizes.length) return false;
  const p = reducedSize(st.Kmax, st.cIn, st.sizes[st.next]!, st.constraint), n = st.sys.nObs;
  if (!(n > p)) return false;
  return st.best.gcv.gcv <= (n * p * 2.2e-16 * st.sys.yy) / ((n - p) * (n - p));
}

/**
 * The residual of the unpenalised least-squares fit of the full system (the largest tensor model, every
 * size's model nested in it, constraints only shrink it): min_θ ‖y − Xθ‖² = yᵀy − rᵀM⁺r, from a pivoted
 * semidefinite Cholesky factor of M. A lower bound on every nested size's residual at every λ (up to the
 * rounding of the dropped pivots, below p·ε·max diag M), hence with `remainingGcvBound` on their GCV.
 */
export function unpenalisedResidual(sys: NormalSystem): number {
  const { L, perm, rank } = semidefiniteCholesky(sys.M);
  const n = sys.M.rows, w = new Float64Array(rank);
  let fit = 0;
  for (let j = 0; j < rank; j++) {
    let t = sys.r[perm[j]!]!;
    const o = j * n;
    for (let v = 0; v < j; v++) t -= L[o + v]! * w[v]!;
    w[j] = t / L[o + j]!;
    fit += w[j]! * w[j]!;
  }
  return Math.max(0, sys.yy - fit);
}

/** Choose (K, penalty order, λ) for one output component by GCV (a complete `KinkSearch` per order). */
export function chooseKink(sys: NormalSystem, Kmax: number, cIn: number, constraint: Constraint, orders: number[], degree?: Float64Array, sizes = kinkCandidates(Kmax), jumps = [0.1, 10], behind?: (K: number, gcv: number) => boolean): KinkChoice {
  const tried: KinkChoice['tried'] = [];
  let best: KinkChoice | null = null;
  for (const order of orders) {
    const st = startKinkSearch(sys, Kmax, cIn, constraint, order, degree, sizes, behind, tried);
    advanceKinkSearch(st);
    if (st.best && (!best || st.best.gcv.gcv < best.gcv.gcv)) best = st.best;
  }
  return chooseJump(sys, Kmax, cIn, constraint, best!, degree, jumps);
}

/** Largest basis size at which the jump factors are scanned (the chosen size when it is not larger). */
export const JUMP_SCAN_SIZE = 10;

/**
 * The relative prior size of the jump part: factors 1/10, 1, 10 by GCV. The factors are compared at the
 * chosen size or, when that is larger than JUMP_SCAN_SIZE, at the largest size tried not above it (the
 * prior scale of the jump part against the smooth part is a property of the kernel, not of the basis
 * size, and the spectra of the largest systems dominate the cost); a factor other than 1 found there is
 * then applied at the chosen size only if it lowers GCV there too.
 */
export function chooseJump(sys: NormalSystem, Kmax: number, cIn: number, constraint: Constraint, b0: KinkChoice, degree?: Float64Array, jumps = [0.1, 10]): KinkChoice {
  const gcvOf = (K: number, jump: number): GcvPoint => {
    const map = constraint === 'symmetric' ? symmetricMap(Kmax, K) : unconstrainedMap(Kmax, cIn, K);
    const red = reduceSystem(sys, penaltyWeights(Kmax, cIn, b0.order, jump, degree), map);
    return gcvMinimise(ridgeSpectrum(red.sys, red.P));
  };
  const at = b0.K <= JUMP_SCAN_SIZE ? undefined
    : b0.tried.filter((t) => t.K <= JUMP_SCAN_SIZE && t.order === b0.order && t.jump === undefined).sort((a, b) => b.K - a.K)[0];
  const Ks = at ? at.K : b0.K;
  let refGcv = at ? at.gcv : b0.gcv.gcv, bestJump = 1, bestPoint = b0.gcv;
  for (const jump of jumps) {
    const g = gcvOf(Ks, jump);
    b0.tried.push({ K: Ks, order: b0.order, gcv: g.gcv, lambda: g.lambda, dof: g.dof, jump });
    if (g.gcv < refGcv) { refGcv = g.gcv; bestJump = jump; bestPoint = g; }
  }
  if (bestJump === 1) return b0;
  if (Ks !== b0.K) {
    bestPoint = gcvOf(b0.K, bestJump);
    b0.tried.push({ K: b0.K, order: b0.order, gcv: bestPoint.gcv, lambda: bestPoint.lambda, dof: bestPoint.dof, jump: bestJump });
    if (!(bestPoint.gcv < b0.gcv.gcv)) return b0;
  }
  return { K: b0.K, order: b0.order, jump: bestJump, gcv: bestPoint, tried: b0.tried };
}

export interface KinkFit {
  K: number;
  order: number;
  jump: number;
  lambda: number;
  constraint: Constraint;
  map: ParamMap;
  /** the Cholesky-factorised ridge system at (K, λ) (built on first use) */
  solverOf: () => RidgeSolver;
  /** the reduced parameters */
  eta: Float64Array;
  /** θ in the layout of the system it was solved in (zeros beyond K) */
  theta: Float64Array;
  gcv: GcvPoint;
}

/**
 * The fit at a chosen (K, order, jump, λ). With `sp`, the spectrum of that same reduced system kept by the size
 * search, the solve reuses its Householder reduction, θ̄ = Q (T + λI)⁻¹ Qᵀ P^{-1/2} r (O(p²) instead of a new
 * Cholesky factor); the Cholesky solver is built only when asked for (`ridgeSolverOf`).
 */
export function solveKink(sys: NormalSystem, Kf: number, cIn: number, choice: KinkChoice, constraint: Constraint, degree?: Float64Array, sp?: RidgeSpectrum): KinkFit {
  const Pfull = penaltyWeights(Kf, cIn, choice.order, choice.jump ?? 1, degree);
  const map = constraint === 'symmetric' ? symmetricMap(Kf, choice.K) : unconstrainedMap(Kf, cIn, choice.K);
  const lambda = choice.gcv.lambda;
  if (sp?.tri && sp.isqrtP && sp.tri.n === map.size) {
    const is = sp.isqrtP, rb = reduceVec(map, sys.r);
    for (let e = 0; e < rb.length; e++) rb[e] = rb[e]! * is[e]!;
    const eta = sp.tri.fromTridiagonal(sp.tri.solveShifted(sp.tri.toTridiagonal(rb), lambda));
    for (let e = 0; e < eta.length; e++) eta[e] = eta[e]! * is[e]!;
    let solver: RidgeSolver | undefined;
    const solverOf = () => { if (!solver) { const red = reduceSystem(sys, Pfull, map); solver = new RidgeSolver(red.sys, red.P, lambda); } return solver; };
    return { K: choice.K, order: choice.order, jump: choice.jump ?? 1, lambda, constraint, map, solverOf, eta, theta: expand(map, eta, sys.r.length), gcv: choice.gcv };
  }
  const red = reduceSystem(sys, Pfull, map);
  const solver = new RidgeSolver(red.sys, red.P, lambda);
  const eta = solver.solveVec(red.sys.r);
  return { K: choice.K, order: choice.order, jump: choice.jump ?? 1, lambda, constraint, map, solverOf: () => solver, eta, theta: expand(map, eta, sys.r.length), gcv: choice.gcv };
}

export function expand(map: ParamMap, eta: Float64Array, P: number): Float64Array {
  const th = new Float64Array(P);
  for (let u = 0; u < map.theta.length; u++) th[map.theta[u]!] = map.sign[u]! * eta[map.eta[u]!]!;
  return th;
}

/** Tᵀ v for a θ-space vector (the reduced right-hand side). */
export function reduceVec(map: ParamMap, v: Float64Array): Float64Array {
  const out = new Float64Array(map.size);
  for (let u = 0; u < map.theta.length; u++) out[map.eta[u]!] += map.sign[u]! * v[map.theta[u]!]!;
  return out;
}

/** Row coefficient vector θ_i = Σ_a φ_a(x_i) Θ_a (length F) for sensor i; Θ_a is zero for a ≥ K. */
export function rowCoefficients(setup: KinkSetup, theta: Float64Array, i: number, out: Float64Array, K = setup.Kmax): Float64Array {
  const { Kmax, F } = setup;
  out.fill(0);
  for (let a = 0; a < K; a++) {
    const pa = setup.Phi.data[i * Kmax + a]!;
    if (pa === 0) continue;
    const o = a * F;
    for (let f = 0; f < F; f++) out[f] += pa * theta[o + f]!;
  }
  return out;
}

/** Write the kernel rows of output component p into G ((nOut·cOut) × (nIn·cIn)); θ is zero beyond size K. */
export function kernelRows(prep: Prepared, setup: KinkSetup, theta: Float64Array, p: number, G: Mat, K = setup.Kmax): void {
  const { nIn, nOut, cIn } = prep;
  const { Kmax, F } = setup;
  const Psi = setup.Psi.data, s = prep.pointsIn.data, x = prep.pointsOut.data;
  const th = new Float64Array(F), cPlus = new Float64Array(K), cMinus = new Float64Array(K), cZero = new Float64Array(K);
  const cols = nIn * cIn;
  for (let i = 0; i < nOut; i++) {
    rowCoefficients(setup, theta, i, th, K);
    const ro = (p * nOut + i) * cols, xi = x[i]!;
    for (let q = 0; q < cIn; q++) {
      // G(x_i, s_k) = ψ(s_k)·(a + sign(x_i − s_k) b): one dot product over the contiguous basis row per entry,
      // with the coefficients of its side of the diagonal
      const base = q * 2 * Kmax;
      for (let b = 0; b < K; b++) { const ta = th[base + b]!, tb = th[base + Kmax + b]!; cPlus[b] = ta + tb; cMinus[b] = ta - tb; cZero[b] = ta; }
      const go = ro + q * nIn;
      for (let k = 0; k < nIn; k++) {
        const d = xi - s[k]!;
        const c = d > 0 ? cPlus : d < 0 ? cMinus : cZero;
        const po = k * Kmax;
        let acc = 0;
        for (let b = 0; b < K; b++) acc += Psi[po + b]! * c[b]!;
        G.data[go + k] = acc;
      }
    }
  }
}
