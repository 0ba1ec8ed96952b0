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
import { type NormalSystem, ridgeSpectrum, gcvMinimise, RidgeSolver, type GcvPoint } from './spectral.js';

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

/** Centre each sensor's data over its measured experiments and store the per-sensor Gram matrices at Kmax. */
export function setupKink(prep: Prepared, basis: KinkBasis, measuredSets: number[][]): KinkSetup {
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
  const c = base.filter((k) => k <= Kmax);
  if (!c.includes(Kmax)) c.push(Kmax);
  return c;
}

/**
 * Choose (K, penalty order, λ) for one output component by GCV. Sizes are tried in increasing order
 * and the search stops once GCV has risen for two sizes in a row (common practice for nested models).
 */
export function chooseKink(sys: NormalSystem, Kmax: number, cIn: number, constraint: Constraint, orders: number[], degree?: Float64Array, sizes = kinkCandidates(Kmax), jumps = [0.1, 10], behind?: (K: number, gcv: number) => boolean): KinkChoice {
  const tried: KinkChoice['tried'] = [];
  let best: KinkChoice | null = null;
  for (const order of orders) {
    const Pfull = penaltyWeights(Kmax, cIn, order, 1, degree);
    let rises = 0, prev = Infinity, lagging = 0;
    for (const K of sizes) {
      const map = constraint === 'symmetric' ? symmetricMap(Kmax, K) : unconstrainedMap(Kmax, cIn, K);
      const red = reduceSystem(sys, Pfull, map);
      const g = gcvMinimise(ridgeSpectrum(red.sys, red.P));
      tried.push({ K, order, gcv: g.gcv, lambda: g.lambda, dof: g.dof });
      if (!best || g.gcv < best.gcv.gcv) best = { K, order, gcv: g, tried };
      if (g.gcv >= prev) { if (++rises >= 2) break; } else rises = 0;
      prev = g.gcv;
      // an alternative basis that is behind a reference at two sizes in a row is abandoned (same rule)
      if (behind) { if (behind(K, g.gcv)) { if (++lagging >= 2) break; } else lagging = 0; }
    }
  }
  return chooseJump(sys, Kmax, cIn, constraint, best!, degree, jumps);
}

/** The relative prior size of the jump part, at the chosen size: factors 1/10, 1, 10 by GCV. */
export function chooseJump(sys: NormalSystem, Kmax: number, cIn: number, constraint: Constraint, b0: KinkChoice, degree?: Float64Array, jumps = [0.1, 10]): KinkChoice {
  let best = b0;
  const map = constraint === 'symmetric' ? symmetricMap(Kmax, b0.K) : unconstrainedMap(Kmax, cIn, b0.K);
  for (const jump of jumps) {
    const red = reduceSystem(sys, penaltyWeights(Kmax, cIn, b0.order, jump, degree), map);
    const g = gcvMinimise(ridgeSpectrum(red.sys, red.P));
    b0.tried.push({ K: b0.K, order: b0.order, gcv: g.gcv, lambda: g.lambda, dof: g.dof, jump });
    if (g.gcv < best.gcv.gcv) best = { K: b0.K, order: b0.order, jump, gcv: g, tried: b0.tried };
  }
  return best;
}

export interface KinkFit {
  K: number;
  order: number;
  jump: number;
  lambda: number;
  constraint: Constraint;
  map: ParamMap;
  solver: RidgeSolver;
  /** the reduced parameters */
  eta: Float64Array;
  /** θ in the layout of the system it was solved in (zeros beyond K) */
  theta: Float64Array;
  gcv: GcvPoint;
}

export function solveKink(sys: NormalSystem, Kf: number, cIn: number, choice: KinkChoice, constraint: Constraint, degree?: Float64Array): KinkFit {
  const Pfull = penaltyWeights(Kf, cIn, choice.order, choice.jump ?? 1, degree);
  const map = constraint === 'symmetric' ? symmetricMap(Kf, choice.K) : unconstrainedMap(Kf, cIn, choice.K);
  const red = reduceSystem(sys, Pfull, map);
  const solver = new RidgeSolver(red.sys, red.P, choice.gcv.lambda);
  const eta = solver.solveVec(red.sys.r);
  return { K: choice.K, order: choice.order, jump: choice.jump ?? 1, lambda: choice.gcv.lambda, constraint, map, solver, eta, theta: expand(map, eta, sys.r.length), gcv: choice.gcv };
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
  const { Kmax, F, Psi } = setup;
  const th = new Float64Array(F);
  const s = prep.pointsIn.data, x = prep.pointsOut.data;
  const cols = nIn * cIn;
  for (let i = 0; i < nOut; i++) {
    rowCoefficients(setup, theta, i, th, K);
    const ro = (p * nOut + i) * cols;
    for (let q = 0; q < cIn; q++) {
      const base = q * 2 * Kmax;
      for (let k = 0; k < nIn; k++) {
        const sg = Math.sign(x[i]! - s[k]!);
        let v = 0;
        const po = k * Kmax;
        for (let b = 0; b < K; b++) v += Psi.data[po + b]! * (th[base + b]! + sg * th[base + Kmax + b]!);
        G.data[ro + q * nIn + k] = v;
      }
    }
  }
}
