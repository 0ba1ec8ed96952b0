/**
 * Oscillation (wave/Helmholtz-type kernels) and screening (reaction–diffusion kernels).
 *
 * Away from its diagonal each column x ↦ G(x, s) solves the homogeneous equation. For a
 * second-order operator with locally constant coefficients, −a u'' + b u' + c u = 0, the
 * solutions are e^{−p x/2}·{cos √θ x, sin √θ x} (cosh/sinh when θ < 0, {1, x} at θ = 0) with
 * p = −b/a and θ = −(c/a) − p²/4. We fit (p, θ) jointly to many off-diagonal column segments
 * by variable projection (the amplitudes of each segment are eliminated by least squares;
 * Golub & Pereyra, SIAM J. Numer. Anal. 10 (1973)), by a coarse grid search followed by a
 * local pattern search. Then
 *   - oscillation wavenumber k = √θ (θ > 0); for p = 0 this is the k of −u'' − k²u;
 *   - screening: κ² = c/a = −θ − p²/4 > 0 gives the screening length 1/κ.
 * Floors: the spread of θ and of κ² over the replicates (each refitted from the point
 * estimate). `localWaveNumber` does the same on a sub-interval, for per-region answers.
 */
import type { Analysis, AnalysisOutput, Context } from './analysis.js';
import type { Findings, Kernel, YesNo } from '../types.js';
import type { Mat } from '../linalg/dense.js';
import { replicates, decide, sig, round3, domainLength, std, colocated, EQUIVALENCE_Z } from './util/a_common.js';
import { normalCdf } from './analysis.js';
import { kernelSpectrum } from './order.js';

interface Segment { rows: Int32Array; col: number; xc: number }

export interface WaveFit {
  /** θ = oscillation wavenumber² (negative: decay rate²) */
  theta: number;
  /** p = −b/a (drift term of the homogeneous equation) */
  p: number;
  /** κ² = c/a = −θ − p²/4 (positive: screening) */
  kappa2: number;
  /** relative residual of the fit over all segments */
  residual: number;
  segments: number;
  points: number;
}

export interface LocalWave extends WaveFit {
  /** the fourth-order family's fit on the same segments */
  fourth: FourthOrderWave;
  wavenumber: number | null;
  screeningLength: number | null;
  thetaSd: number | null;
  kappa2Sd: number | null;
  /** relative size of the replicates' noise on the same segments (what a perfect model would leave) */
  noiseResidual: number | null;
  /** whether a constant-coefficient second-order model explains the segments (residual ≤ max(3× noise, 0.02)) */
  adequate: boolean;
  interval: [number, number];
}

/** Off-diagonal column segments inside [a, b] (1-D scalar kernel, sensors may differ from actuators). */
function segments(kernel: Kernel, a: number, b: number, gap: number, maxCols = 16): Segment[] {
  const xo = kernel.pointsOut.data, xi = kernel.pointsIn.data;
  const no = xo.length;
  const ord = Array.from({ length: no }, (_, i) => i).sort((p, q) => xo[p]! - xo[q]!);
  const L = domainLength(kernel);
  const minLen = Math.max(0.08 * (b - a), 4 * L / no);
  const cols = Array.from({ length: xi.length }, (_, j) => j).sort((p, q) => xi[p]! - xi[q]!);
  const step = Math.max(1, Math.floor(cols.length / maxCols));
  const out: Segment[] = [];
  for (let c = Math.floor(step / 2); c < cols.length; c += step) {
    const j = cols[c]!, s = xi[j]!;
    for (const side of [-1, 1]) {
      const lo = side > 0 ? Math.max(a, s + gap) : a, hi = side > 0 ? b : Math.min(b, s - gap);
      if (hi - lo < minLen) continue;
      const rows = ord.filter((i) => xo[i]! >= lo - 1e-12 && xo[i]! <= hi + 1e-12);
      if (rows.length < 6) continue;
      out.push({ rows: Int32Array.from(rows), col: j, xc: 0.5 * (lo + hi) });
    }
  }
  return out;
}

/** One matrix's segment data, gathered once for the many objective evaluations of a fit. */
interface Prep {
  /** per segment: the values y and the offsets t = x − xc, and Σy² */
  y: Float64Array[];
  t: Float64Array[];
  yy: Float64Array;
  /** per segment: rows as indices into the union of the rows of all segments (`xu`) */
  loc: Int32Array[];
  /** union of the segments' row positions, relative to their midpoint x₀, and the segment centres relative to x₀ */
  xu: Float64Array;
  xc: Float64Array;
  /** max |x − x₀| over the rows */
  half: number;
  g1: Float64Array;
  g2: Float64Array;
}

function prepare(G: Mat, x: Float64Array, segs: Segment[]): Prep {
  const used = new Map<number, number>();
  for (const sg of segs) for (let q = 0; q < sg.rows.length; q++) if (!used.has(sg.rows[q]!)) used.set(sg.rows[q]!, used.size);
  let lo = Infinity, hi = -Infinity;
  for (const i of used.keys()) { lo = Math.min(lo, x[i]!); hi = Math.max(hi, x[i]!); }
  const x0 = 0.5 * (lo + hi);
  const xu = new Float64Array(used.size);
  for (const [i, k] of used) xu[k] = x[i]! - x0;
  const y: Float64Array[] = [], t: Float64Array[] = [], loc: Int32Array[] = [];
  const yy = new Float64Array(segs.length);
  segs.forEach((sg, g) => {
    const m = sg.rows.length;
    const ys = new Float64Array(m), ts = new Float64Array(m), ls = new Int32Array(m);
    let e = 0;
    for (let q = 0; q < m; q++) { const i = sg.rows[q]!; ys[q] = G.data[i * G.cols + sg.col]!; ts[q] = x[i]! - sg.xc; ls[q] = used.get(i)!; e += ys[q]! * ys[q]!; }
    y.push(ys); t.push(ts); loc.push(ls); yy[g] = e;
  });
  return { y, t, yy, loc, xu, xc: Float64Array.from(segs, (sg) => sg.xc - x0), half: 0.5 * (hi - lo), g1: new Float64Array(used.size), g2: new Float64Array(used.size) };
}

/**
 * Residual energy of the best fit of all segments for given (p, θ). The basis of each segment is
 * e^{−pt/2}{cos wt, sin wt / w} (cosh/sinh for θ < 0, {1, t} at θ = 0) in the offset t = x − x_c
 * from its centre. Fast path: the same functions from per-row values shared by all segments
 * (angle-addition and exponential product rules: e^{−pt/2}cos wt = e^{p x_c/2}·Re(e^{−px/2}e^{iwx}e^{−iwx_c})),
 * used where they are accurate: w·(row range) ≥ 0.01, and exponents within ±600.
 */
function objective(pr: Prep, p: number, theta: number): number {
  let res = 0;
  const w = Math.sqrt(Math.abs(theta));
  const wave = theta > 1e-12 ? 1 : theta < -1e-12 ? -1 : 0;
  const fast = (wave === 0 || w * 2 * pr.half >= 0.01) && (0.5 * Math.abs(p) + (wave < 0 ? w : 0)) * pr.half < 600;
  const { g1, g2, xu } = pr;
  if (fast) {
    for (let k = 0; k < xu.length; k++) {
      const u = xu[k]!;
      if (wave > 0) { const e = Math.exp(-0.5 * p * u); g1[k] = e * Math.cos(w * u); g2[k] = e * Math.sin(w * u); }
      else if (wave < 0) { g1[k] = Math.exp((w - 0.5 * p) * u); g2[k] = Math.exp((-w - 0.5 * p) * u); }
      else g1[k] = Math.exp(-0.5 * p * u);
    }
  }
  for (let g = 0; g < pr.y.length; g++) {
    const y = pr.y[g]!, t = pr.t[g]!, loc = pr.loc[g]!, m = y.length;
    let s11 = 0, s12 = 0, s22 = 0, b1 = 0, b2 = 0;
    if (fast) {
      const c = pr.xc[g]!, E = Math.exp(0.5 * p * c);
      if (wave > 0) {
        const C = E * Math.cos(w * c), S = E * Math.sin(w * c), iw = 1 / w;
        for (let q = 0; q < m; q++) {
          const k = loc[q]!, a = g1[k]!, b = g2[k]!;
          const f1 = a * C + b * S, f2 = (b * C - a * S) * iw, yv = y[q]!;
          s11 += f1 * f1; s12 += f1 * f2; s22 += f2 * f2; b1 += f1 * yv; b2 += f2 * yv;
        }
      } else if (wave < 0) {
        const A = 0.5 * E * Math.exp(-w * c), B = 0.5 * E * Math.exp(w * c), iw = 1 / w;
        for (let q = 0; q < m; q++) {
          const k = loc[q]!, a = g1[k]! * A, b = g2[k]! * B;
          const f1 = a + b, f2 = (a - b) * iw, yv = y[q]!;
          s11 += f1 * f1; s12 += f1 * f2; s22 += f2 * f2; b1 += f1 * yv; b2 += f2 * yv;
        }
      } else {
        for (let q = 0; q < m; q++) {
          const f1 = g1[loc[q]!]! * E, f2 = f1 * t[q]!, yv = y[q]!;
          s11 += f1 * f1; s12 += f1 * f2; s22 += f2 * f2; b1 += f1 * yv; b2 += f2 * yv;
        }
      }
    } else {
      for (let q = 0; q < m; q++) {
        const tq = t[q]!;
        const e = Math.exp(-0.5 * p * tq);
        let f1: number, f2: number;
        if (wave > 0) { f1 = Math.cos(w * tq); f2 = Math.sin(w * tq) / w; }
        else if (wave < 0) { f1 = Math.cosh(w * tq); f2 = Math.sinh(w * tq) / w; }
        else { f1 = 1; f2 = tq; }
        f1 *= e; f2 *= e;
        const yv = y[q]!;
        s11 += f1 * f1; s12 += f1 * f2; s22 += f2 * f2; b1 += f1 * yv; b2 += f2 * yv;
      }
    }
    const det = s11 * s22 - s12 * s12;
    let fitE = 0;
    if (det > 1e-14 * s11 * s22 && det > 0) fitE = (s22 * b1 * b1 - 2 * s12 * b1 * b2 + s11 * b2 * b2) / det;
    else if (s11 > 0) fitE = b1 * b1 / s11;
    res += Math.max(0, pr.yy[g]! - fitE);
  }
  return res;
}

function energy(G: Mat, segs: Segment[]): number {
  let e = 0;
  for (const sg of segs) for (let q = 0; q < sg.rows.length; q++) e += G.data[sg.rows[q]! * G.cols + sg.col]! ** 2;
  return e;
}

/** Signed wavenumber parametrisation: κs = sign(θ)·√|θ|. */
const toTheta = (ks: number) => Math.sign(ks) * ks * ks;

function refine(pr: Prep, p0: number, ks0: number, dp0: number, dk0: number, maxIt: number): { p: number; ks: number; f: number } {
  let p = p0, ks = ks0, f = objective(pr, p, toTheta(ks));
  let dp = dp0, dk = dk0;
  // trial points already evaluated are skipped: the objective is deterministic and f is the least value
  // seen, so none of them can improve on it (the last RING points are remembered, the centre included);
  // the search path is the same with fewer evaluations; the centre and the previous centre are always skipped
  let prevP = NaN, prevKs = NaN;
  const ringP = new Float64Array(RING), ringK = new Float64Array(RING);
  ringP[0] = p; ringK[0] = ks;
  let stored = 1;
  for (let it = 0; it < maxIt && (dp > 1e-7 * (1 + Math.abs(p)) || dk > 1e-7 * (1 + Math.abs(ks))); it++) {
    let moved = false;
    for (let q = 0; q < 8; q++) {
      const cp = DIR_P[q]! * dp, ck = DIR_K[q]! * dk;
      const pt = p + cp, kt = ks + ck;
      if ((pt === p && kt === ks) || (pt === prevP && kt === prevKs) || seen(ringP, ringK, Math.min(stored, RING), pt, kt)) continue;
      ringP[stored % RING] = pt; ringK[stored % RING] = kt; stored++;
      const fn = objective(pr, pt, toTheta(kt));
      if (fn < f) { f = fn; prevP = p; prevKs = ks; p = pt; ks = kt; moved = true; break; }
    }
    if (!moved) { dp /= 2; dk /= 2; }
  }
  return { p, ks, f };
}

/** Points `refine` remembers (about four iterations' trials). */
const RING = 32;

/** Compass directions of `refine`, in trial order: ±p, ±κs, then the four diagonals (no array per iteration). */
const DIR_P = Float64Array.of(1, -1, 0, 0, 1, -1, 1, -1), DIR_K = Float64Array.of(0, 0, 1, -1, 1, -1, -1, 1);

function seen(ps: Float64Array, ks: Float64Array, n: number, p: number, k: number): boolean {
  for (let i = 0; i < n; i++) if (ps[i] === p && ks[i] === k) return true;
  return false;
}

/** Fit (p, θ) on the segments of one matrix; `start` skips the grid search (used for replicates). */
function fitWave(G: Mat, x: Float64Array, segs: Segment[], kmax: number, start: { p: number; ks?: number; fixP?: boolean }): WaveFit & { ks: number } {
  const fixP = !!start.fixP;
  const E = energy(G, segs);
  const pr = prepare(G, x, segs);
  let best: { p: number; ks: number; f: number };
  const dk = (2 * kmax) / 160, dpp = kmax / 20;
  if (start.ks !== undefined) best = refine(pr, start.p, start.ks, fixP ? 0 : dpp / 8, dk / 4, 60);
  else {
    // grid in the signed wavenumber at the starting drift, then a joint local search from the best three
    const top: { p: number; ks: number; f: number }[] = [];
    for (let a = 0; a <= 160; a++) {
      const ks = -kmax + a * dk;
      const f = objective(pr, start.p, toTheta(ks));
      top.push({ p: start.p, ks, f });
    }
    top.sort((u, v) => u.f - v.f);
    best = top.slice(0, 3).map((t) => refine(pr, t.p, t.ks, fixP ? 0 : dpp / 2, dk / 2, 400)).sort((u, v) => u.f - v.f)[0]!;
  }
  const theta = toTheta(best.ks);
  const points = segs.reduce((s, g) => s + g.rows.length, 0);
  return { theta, p: best.p, kappa2: -theta - best.p * best.p / 4, residual: E > 0 ? Math.sqrt(best.f / E) : NaN, segments: segs.length, points, ks: best.ks };
}

/**
 * Fourth-order family u⁽⁴⁾ + θ u″ = 0 (a beam under axial load, or any constant-coefficient
 * fourth-order operator without drift or foundation): solutions {1, t, F₂(θ, t), F₃(θ, t)} with
 * F₂ = 4 sin²(wt/2)/w² → t² and F₃ = 6(wt − sin wt)/w³ → t³ as θ = w² → 0 (sinh for θ < 0).
 * It contains the drift-free second-order solutions {cos, sin}, so a Helmholtz or screened
 * kernel fits it with the same θ. Residual energy of all segments, amplitudes by Gram–Schmidt.
 */
function basis4(theta: number, t: number, out: Float64Array): void {
  const w = Math.sqrt(Math.abs(theta)), u = w * t;
  out[0] = 1; out[1] = t;
  if (Math.abs(u) < 0.1) {
    const u2 = theta * t * t; // signed (wt)²: positive for θ > 0
    out[2] = t * t * (1 - u2 / 12 + u2 * u2 / 360);
    out[3] = t * t * t * (1 - u2 / 20 + u2 * u2 / 840);
  } else if (theta > 0) {
    const sh = Math.sin(0.5 * u);
    out[2] = 4 * sh * sh / (w * w);
    out[3] = 6 * (u - Math.sin(u)) / (w * w * w);
  } else {
    const sh = Math.sinh(0.5 * u);
    out[2] = 4 * sh * sh / (w * w);
    out[3] = 6 * (Math.sinh(u) - u) / (w * w * w);
  }
}

/**
 * The θ-independent part of the fourth-order fit on a set of segments (shared by a matrix and its
 * replicates: it depends on the rows only): per segment the offsets t, and a 4m buffer whose first two
 * columns hold {1, t} orthonormalised once by the same Gram–Schmidt steps `objective4` applies to the
 * θ-dependent columns, so each evaluation orthogonalises only F₂ and F₃ (the same arithmetic as
 * orthogonalising all four every time). The orthonormalised F₂, F₃ of every θ evaluated are kept
 * (`memo`, per segment at 2·off[g]): the grid and much of the search path are the same θ values for
 * the matrix and each of its replicates, which then cost one projection each.
 */
interface Prep4 { t: Float64Array[]; Q: Float64Array[]; off: Int32Array; points: number; memo: Map<number, Float64Array> }
/** One matrix's segment values, Σy², and the energy captured by {1, t} (Σ of (q_kᵀy)² over k = 0, 1). */
interface Data4 { y: Float64Array[]; yy: Float64Array; p01: Float64Array }

/** At most this many θ values' columns are kept per fit (about 50 kB each on a 200-point kernel). */
const MEMO4_MAX = 1024;

function prepare4(x: Float64Array, segs: Segment[]): Prep4 {
  const t: Float64Array[] = [], Qs: Float64Array[] = [];
  const off = new Int32Array(segs.length);
  let points = 0;
  segs.forEach((sg, g) => {
    const m = sg.rows.length;
    off[g] = points; points += m;
    const ts = new Float64Array(m), Q = new Float64Array(4 * m);
    for (let q = 0; q < m; q++) { ts[q] = x[sg.rows[q]!]! - sg.xc; Q[q] = 1; Q[m + q] = ts[q]!; }
    for (let k = 0; k < 2; k++) if (!orthogonalise4(Q, m, k)) for (let q = 0; q < m; q++) Q[k * m + q] = 0;
    t.push(ts); Qs.push(Q);
  });
  return { t, Q: Qs, off, points, memo: new Map() };
}

/**
 * Modified Gram–Schmidt (twice) of column k of the m-row column-major Q against columns 0..k−1, then
 * normalised; false (column left unnormalised) when it is dependent on them (norm² ≤ 1e-24 of its own).
 */
function orthogonalise4(Q: Float64Array, m: number, k: number): boolean {
  const ok = k * m;
  let n0 = 0;
  for (let q = 0; q < m; q++) n0 += Q[ok + q]! ** 2;
  for (let pass = 0; pass < 2; pass++) for (let l = 0; l < k; l++) {
    const ol = l * m;
    let d = 0;
    for (let q = 0; q < m; q++) d += Q[ol + q]! * Q[ok + q]!;
    for (let q = 0; q < m; q++) Q[ok + q] -= d * Q[ol + q]!;
  }
  let nn = 0;
  for (let q = 0; q < m; q++) nn += Q[ok + q]! ** 2;
  if (!(nn > 1e-24 * n0)) return false;
  const inv = 1 / Math.sqrt(nn);
  for (let q = 0; q < m; q++) Q[ok + q] *= inv;
  return true;
}

/** The orthonormalised F₂(θ), F₃(θ) of every segment (a dependent column as zeros), from the memo or computed. */
function columns4(pr: Prep4, theta: number): Float64Array {
  const hit = pr.memo.get(theta);
  if (hit) return hit;
  const out = new Float64Array(2 * pr.points);
  const f = new Float64Array(4);
  for (let g = 0; g < pr.Q.length; g++) {
    const Q = pr.Q[g]!, t = pr.t[g]!, m = t.length, o = 2 * pr.off[g]!;
    for (let q = 0; q < m; q++) { basis4(theta, t[q]!, f); Q[2 * m + q] = f[2]!; Q[3 * m + q] = f[3]!; }
    for (let k = 2; k < 4; k++) {
      const ok = k * m, oo = o + (k - 2) * m;
      if (orthogonalise4(Q, m, k)) for (let q = 0; q < m; q++) out[oo + q] = Q[ok + q]!;
      else for (let q = 0; q < m; q++) Q[ok + q] = 0; // out stays 0
    }
  }
  if (pr.memo.size < MEMO4_MAX) pr.memo.set(theta, out);
  return out;
}

function data4(G: Mat, pr: Prep4, segs: Segment[]): Data4 {
  const y: Float64Array[] = [], yy = new Float64Array(segs.length), p01 = new Float64Array(segs.length);
  segs.forEach((sg, g) => {
    const m = sg.rows.length, Q = pr.Q[g]!;
    const ys = new Float64Array(m);
    for (let q = 0; q < m; q++) ys[q] = G.data[sg.rows[q]! * G.cols + sg.col]!;
    let e = 0;
    for (let q = 0; q < m; q++) e += ys[q]! * ys[q]!;
    let proj = 0;
    for (let k = 0; k < 2; k++) { let d = 0; for (let q = 0; q < m; q++) d += Q[k * m + q]! * ys[q]!; proj += d * d; }
    y.push(ys); yy[g] = e; p01[g] = proj;
  });
  return { y, yy, p01 };
}

/** Residual energy of all segments for θ: Σ (‖y‖² − ‖projection of y on {1, t, F₂(θ, t), F₃(θ, t)}‖²). */
function objective4(pr: Prep4, dt: Data4, theta: number): number {
  const C = columns4(pr, theta);
  let res = 0;
  for (let g = 0; g < pr.Q.length; g++) {
    const y = dt.y[g]!, m = y.length, o = 2 * pr.off[g]!;
    let proj = dt.p01[g]!;
    for (let k = 0; k < 2; k++) {
      const ok = o + k * m;
      let d = 0;
      for (let q = 0; q < m; q++) d += C[ok + q]! * y[q]!;
      proj += d * d;
    }
    res += Math.max(0, dt.yy[g]! - proj);
  }
  return res;
}

/**
 * Fit θ of the fourth-order family: grid in the signed wavenumber, then a shrinking-step search.
 * A trial at the previous centre (the step just taken, reversed) is not re-evaluated: its value is known.
 */
function fitWave4(G: Mat, pr: Prep4, segs: Segment[], kmax: number, startKs?: number): { theta: number; ks: number; residual: number } {
  const E = energy(G, segs);
  const dt = data4(G, pr, segs);
  const dk = (2 * kmax) / 80;
  let ks: number, f: number;
  if (startKs !== undefined) { ks = startKs; f = objective4(pr, dt, toTheta(ks)); }
  else {
    ks = 0; f = Infinity;
    for (let a = 0; a <= 80; a++) { const k = -kmax + a * dk; const v = objective4(pr, dt, toTheta(k)); if (v < f) { f = v; ks = k; } }
  }
  let step = startKs !== undefined ? dk / 8 : dk / 2;
  let prevKs = NaN, prevF = NaN;
  for (let it = 0; it < (startKs !== undefined ? 30 : 60) && step > 1e-7 * (1 + Math.abs(ks)); it++) {
    const ku = ks + step, kd = ks - step;
    const up = ku === prevKs ? prevF : objective4(pr, dt, toTheta(ku)), dn = kd === prevKs ? prevF : objective4(pr, dt, toTheta(kd));
    if (up < f && up <= dn) { prevKs = ks; prevF = f; f = up; ks = ku; } else if (dn < f) { prevKs = ks; prevF = f; f = dn; ks = kd; } else step /= 2;
  }
  return { theta: toTheta(ks), ks, residual: E > 0 ? Math.sqrt(f / E) : NaN };
}

export interface FourthOrderWave { theta: number; residual: number; thetaSd: number | null; adequate: boolean; identified: boolean; cubicResidual: number }

/**
 * Local wavenumber / screening estimate of a 1-D scalar kernel on the sub-interval [a, b]
 * (for per-region answers). `reps` (resampled kernels) give the uncertainty; pass [] to skip.
 * `driftRate` (b/a, e.g. from the transport analysis) is the starting value of −p.
 */
export function localWaveNumber(kernel: Kernel, interval: [number, number], reps: Mat[] = [], opts: { maxReplicates?: number; driftRate?: number; symmetric?: boolean; fourthVote?: boolean } = {}): LocalWave | null {
  if (kernel.dimension !== 1 || kernel.components.in !== 1 || kernel.components.out !== 1) return null;
  const L = domainLength(kernel);
  const n = kernel.pointsOut.rows;
  const [a, b] = interval;
  const gap = Math.max(3 * L / Math.max(1, n - 1), 0.03 * L);
  const segs = segments(kernel, a, b, gap);
  if (segs.length < 2) return null;
  const x = kernel.pointsOut.data;
  const kmax = Math.min(Math.PI * (n - 1) / (4 * L), 250 / L);
  const f = fitWave(kernel.G, x, segs, kmax, { p: opts.symmetric ? 0 : -(opts.driftRate ?? 0), fixP: opts.symmetric });
  const rf = reps.slice(0, opts.maxReplicates ?? 12).map((R) => fitWave(R, x, segs, kmax, { p: f.p, ks: f.ks, fixP: opts.symmetric }));
  const thetaSd = rf.length >= 3 ? std(rf.map((r) => r.theta)) : null;
  const kappa2Sd = rf.length >= 3 ? std(rf.map((r) => r.kappa2)) : null;
  const E = energy(kernel.G, segs);
  let noiseResidual: number | null = null;
  if (reps.length >= 2) {
    const mu = reps.reduce((acc, R) => { for (let i = 0; i < acc.length; i++) acc[i] += R.data[i]! / reps.length; return acc; }, new Float64Array(kernel.G.data.length));
    let e = 0;
    for (const R of reps) for (const sg of segs) for (let q = 0; q < sg.rows.length; q++) { const idx = sg.rows[q]! * R.cols + sg.col; e += (R.data[idx]! - mu[idx]!) ** 2; }
    noiseResidual = Math.sqrt(e / (reps.length - 1) / E);
  }
  // our adequacy rule: the model's systematic misfit √(res² − noise²) must not exceed the noise
  // itself (with a 2 % allowance for a noise-free kernel's own discretisation error)
  const allowance = Math.max(Math.SQRT2 * (noiseResidual ?? 0), 0.02);
  const adequate = f.residual <= allowance;
  // θ of the fourth-order family is identified only when plain cubics (θ = 0) do not already explain the segments
  // parsimony: the fourth-order family nests the drift-free second-order one, so it is fitted only
  // when the second-order model does not explain the segments
  const pr4 = adequate ? null : prepare4(x, segs);
  const f4 = pr4 ? fitWave4(kernel.G, pr4, segs, kmax) : { theta: NaN, ks: NaN, residual: NaN };
  const cubicResidual = pr4 ? Math.sqrt(objective4(pr4, data4(kernel.G, pr4, segs), 0) / E) : NaN;
  const adequate4 = !adequate && f4.residual <= allowance, identified = !adequate && cubicResidual > allowance;
  // replicate refits only when the fourth-order fit can vote (adequate). When plain cubics already
  // explain the segments, θ is weakly determined near 0 and a refit started at the estimate would
  // understate its spread: each replicate is then refitted from the full grid, so that the vote
  // (θ's one-sided 95 % bound below the lowest mode, `decideAbove`) rests on θ's real spread
  const rf4 = adequate4 && opts.fourthVote !== false ? reps.slice(0, Math.min(8, opts.maxReplicates ?? 8)).map((R) => fitWave4(R, pr4!, segs, kmax, identified ? f4.ks : undefined)) : [];
  const fourth: FourthOrderWave = {
    theta: f4.theta, residual: f4.residual, thetaSd: rf4.length >= 3 ? std(rf4.map((r) => r.theta)) : null,
    adequate: adequate4, identified, cubicResidual,
  };
  return {
    noiseResidual, adequate, fourth,
    theta: f.theta, p: f.p, kappa2: f.kappa2, residual: f.residual, segments: f.segments, points: f.points,
    wavenumber: f.theta > 0 ? Math.sqrt(f.theta) : null,
    screeningLength: f.kappa2 > 0 ? 1 / Math.sqrt(f.kappa2) : null,
    thetaSd, kappa2Sd, interval: [a, b],
  };
}

const cache = new WeakMap<Mat, { lw: LocalWave | null; why: string | null }>();

function saVerdict(ctx: Context): YesNo | undefined {
  return (ctx.results['self_adjoint']?.finding as Findings['self_adjoint'] | undefined)?.verdict;
}

/** The transport analysis's drift rate b/a (the column fits' starting drift), 0 without one. */
function driftRateOf(ctx: Context): number {
  const tr = ctx.results['transport']?.evidence.plot?.['drift_rate'];
  return Array.isArray(tr) && typeof tr[0] === 'number' && Number.isFinite(tr[0]) ? tr[0] : 0;
}

function globalFit(kernel: Kernel, ctx: Context): { lw: LocalWave | null; why: string | null } {
  const hit = cache.get(kernel.G);
  if (hit) return hit;
  let out: { lw: LocalWave | null; why: string | null };
  if (kernel.dimension !== 1) out = { lw: null, why: 'the column-segment fit is implemented for 1-D kernels only' };
  else if (kernel.components.in !== 1 || kernel.components.out !== 1) out = { lw: null, why: 'systems are not analysed for oscillation here (see coupling)' };
  else {
    const d = kernel.domain;
    const iv: [number, number] = d.kind === 'interval' ? d.bounds : [Math.min(...kernel.pointsOut.data), Math.max(...kernel.pointsOut.data)];
    // a self-adjoint constant-coefficient operator has no drift term: p = 0
    const lw = localWaveNumber(kernel, iv, replicates(ctx), { driftRate: driftRateOf(ctx), symmetric: saVerdict(ctx) === 'yes', fourthVote: fourthOrderApplies(ctx) });
    out = { lw, why: lw ? null : 'too few off-diagonal column segments' };
  }
  cache.set(kernel.G, out);
  return out;
}

export interface SignTest { decision: 'present' | 'absent' | 'inconclusive'; confidence: number; trusted: number; negatives: number }

/**
 * Sign of the spectrum. A self-adjoint operator −∇·(a∇u) + c u with c ≥ 0 is positive
 * definite, so all eigenvalues of its Green's operator are positive; a wave (Helmholtz-type)
 * operator −∇·(a∇u) − k²u with k² above the lowest mode has negative ones — and since its
 * negative eigenvalues lie in (−k², 0), their Green's-operator counterparts are large in
 * magnitude, i.e. among the leading, trustworthy ones (Courant–Hilbert I ch. VI, min–max).
 * The sign of λ_k is that of u_kᵀv_k of the singular triplet (±1 for a symmetric kernel).
 * Works in any dimension; needs at least 6 trustworthy values (the count order.ts asks for a
 * decay fit) and a kernel not shown to be non-self-adjoint.
 */
export function spectralSignTest(kernel: Kernel, ctx: Context): SignTest {
  const none: SignTest = { decision: 'inconclusive', confidence: 0.5, trusted: 0, negatives: 0 };
  if (kernel.components.in !== 1 || kernel.components.out !== 1 || !colocated(kernel) || saVerdict(ctx) === 'no') return none;
  const idRank = ctx.fit?.coverage?.identified_rank;
  const sp = kernelSpectrum(kernel, replicates(ctx), typeof idRank === 'number' ? idRank : undefined);
  const K = sp.trusted, U = sp.svd.U, V = sp.svd.V, kc = U.cols;
  if (K < 6) return { ...none, trusted: K };
  let neg = 0, zNeg = 0, zPosMin = Infinity;
  for (let k = 0; k < K; k++) {
    let c = 0;
    for (let i = 0; i < U.rows; i++) c += U.data[i * kc + k]! * V.data[i * V.cols + k]!;
    const z = sp.s[k]! / Math.max(sp.err[k]!, 1e-300);
    if (c < -0.5) { neg++; zNeg = Math.max(zNeg, z); } else if (c > 0.5) zPosMin = Math.min(zPosMin, z);
    else return { ...none, trusted: K }; // not a symmetric pair: the sign is not defined
  }
  if (neg > 0) return { decision: 'present', confidence: round3(normalCdf(zNeg - 2)), trusted: K, negatives: neg };
  // wavenumbers beyond the trusted modes are not examined: at most 0.9
  return { decision: 'absent', confidence: round3(Math.min(0.9, normalCdf(zPosMin - 1))), trusted: K, negatives: 0 };
}

const explanationOsc =
  'Away from the source point every column of the kernel obeys the same homogeneous equation, so its shape tells the local physics. ' +
  'We fit all column segments at once with the solutions of a second-order equation with constant coefficients, e^{−px/2}(A cos kx + B sin kx), and of a fourth-order one (beam-like, 1, x, cos kx, sin kx), choosing the k² that fits best; a verdict needs every model that explains the columns to agree. ' +
  'Independently, a wave-type operator has negative eigenvalues among its leading ones, while a diffusion or beam operator has none; this sign test also works in 2-D. ' +
  'A positive k² well above its resampling spread means the response oscillates with wavenumber k (a wave or Helmholtz-type operator).';
const explanationScr =
  'From the second-order fit, the reaction part c/a = −k² − p²/4 measures how fast the response dies away beyond what transport explains. ' +
  'A positive value well above its resampling spread means screening, with screening length 1/√(c/a) (a reaction–diffusion operator).';

function inapplicable(key: 'oscillation' | 'screening', why: string): AnalysisOutput<Findings['oscillation'] | Findings['screening']> {
  const finding = key === 'oscillation' ? { verdict: 'inconclusive' as YesNo, wavenumber: null, confidence: 0.5, applicable: false } : { verdict: 'inconclusive' as YesNo, length: null, confidence: 0.5, applicable: false };
  return { finding, evidence: { statistic: null, noise_floor: null, summary: `Not tested: ${why}.`, explanation: key === 'oscillation' ? explanationOsc : explanationScr } };
}

/**
 * Oscillation means at least half a wavelength inside the domain: k² above the lowest
 * Dirichlet mode (π/L)² (below it a wave operator is still positive definite and its responses
 * do not oscillate). Present when k² exceeds it by 3 standard errors, absent when the one-sided
 * 95 % upper bound stays below it (as in `decide`), inconclusive otherwise.
 */
function decideAbove(value: number, sd: number, threshold: number): { decision: 'present' | 'absent' | 'inconclusive'; confidence: number } {
  if (!Number.isFinite(value) || !(sd >= 0)) return { decision: 'inconclusive', confidence: 0.5 };
  const z = sd > 0 ? (value - threshold) / sd : (value > threshold ? Infinity : -Infinity);
  if (z >= 3) return { decision: 'present', confidence: round3(normalCdf(z - 2)) };
  if (z < -EQUIVALENCE_Z) return { decision: 'absent', confidence: round3(Math.min(0.99, normalCdf(-z - 1))) };
  return { decision: 'inconclusive', confidence: 0.5 };
}

/** Effects weaker than the lowest Dirichlet mode of the domain, (π/L)², count as absent. */
function resolution(kernel: Kernel): number {
  return (Math.PI / domainLength(kernel)) ** 2;
}

type Vote = { by: string; decision: 'present' | 'absent' | 'inconclusive'; confidence: number };

/** Confidence of the order analysis's estimate 2 above which the fourth-order column family is not used (as the pipeline's 0.9 for established findings). */
const ORDER_ESTABLISHED = 0.9;

function secondOrderEstablished(ctx: Context): boolean {
  const order = ctx.results['order']?.finding as Findings['order'] | undefined;
  return order?.estimate === 2 && order.confidence >= ORDER_ESTABLISHED;
}

/**
 * Whether the fourth-order column family {1, t, F₂, F₃} may vote. It solves u⁗ + θu″ = 0, a drift-free
 * operator; a second-order operator's columns span only two functions per segment, so once order 2 is
 * established its two extra functions are spurious freedom (they fit a drift or a varying coefficient as
 * readily as an oscillation); and a kernel shown not to be self-adjoint has a drift the family lacks.
 */
function fourthOrderApplies(ctx: Context): boolean {
  return !secondOrderEstablished(ctx) && saVerdict(ctx) !== 'no';
}

/** Interfaces and layers located with at least even odds (the interfaces and singularities analyses run before this one). */
const REGION_INTERFACE_CONFIDENCE = 0.5;

interface RegionWave { bounds: [number, number]; lw: LocalWave; votes: Vote[]; decision: Vote['decision']; confidence: number }

/**
 * A medium with interfaces or internal layers has no single constant-coefficient column family: the column fits
 * are made on each region between the interfaces and the layers the singularities analysis located (rows inside
 * it, kept 2 location uncertainties — a layer's width — or 2 grid cells off each cut), each judged against that
 * region's lowest mode (π/ℓ)²: a slower oscillation does not show within it. Null without cuts (1-D scalar
 * kernels only).
 */
function regionWaves(kernel: Kernel, ctx: Context, fourthOk: boolean, driftRate: number): RegionWave[] | null {
  if (kernel.dimension !== 1 || kernel.components.in !== 1 || kernel.components.out !== 1) return null;
  const layers = ((ctx.results['singularities']?.finding as Findings['singularities'] | undefined) ?? [])
    .map((q) => ({ location: q.location, uncertainty: q.width, confidence: q.confidence }));
  const ifs = [...((ctx.results['interfaces']?.finding as Findings['interfaces'] | undefined) ?? []), ...layers]
    .filter((i) => typeof i.location === 'number' && i.confidence >= REGION_INTERFACE_CONFIDENCE)
    .sort((p, q) => (p.location as number) - (q.location as number));
  if (!ifs.length) return null;
  const d = kernel.domain, x = kernel.pointsOut.data;
  const [lo, hi] = d.kind === 'interval' ? d.bounds : [Math.min(...x), Math.max(...x)];
  const cell = domainLength(kernel) / Math.max(1, x.length - 1);
  const margin = (i: (typeof ifs)[number]) => Math.max(2 * (Number.isFinite(i.uncertainty) ? i.uncertainty : 0), 2 * cell);
  const out: RegionWave[] = [];
  for (let r = 0; r <= ifs.length; r++) {
    const a = r === 0 ? lo : (ifs[r - 1]!.location as number) + margin(ifs[r - 1]!);
    const b = r === ifs.length ? hi : (ifs[r]!.location as number) - margin(ifs[r]!);
    if (!(b > a)) continue;
    const lw = localWaveNumber(kernel, [a, b], replicates(ctx), { driftRate, symmetric: saVerdict(ctx) === 'yes', fourthVote: fourthOk });
    if (!lw) continue;
    const res = (Math.PI / (b - a)) ** 2;
    const where = `[${a.toPrecision(3)}, ${b.toPrecision(3)}]`;
    const votes: Vote[] = [];
    if (lw.adequate) votes.push({ by: `second-order fit on ${where}`, ...decideAbove(lw.theta, lw.thetaSd ?? NaN, res) });
    if (lw.fourth.adequate && fourthOk) votes.push({ by: `fourth-order fit on ${where}`, ...decideAbove(lw.fourth.theta, lw.fourth.thetaSd ?? NaN, res) });
    const agree = votes.length > 0 && votes.every((v) => v.decision === votes[0]!.decision);
    out.push({ bounds: [a, b], lw, votes, decision: agree ? votes[0]!.decision : 'inconclusive', confidence: agree ? Math.min(...votes.map((v) => v.confidence)) : 0.5 });
  }
  return out.length ? out : null;
}

export const oscillation: Analysis<Findings['oscillation']> = {
  key: 'oscillation',
  dependsOn: ['self_adjoint', 'order', 'transport', 'interfaces', 'singularities'],
  run(kernel, ctx) {
    const { lw, why } = globalFit(kernel, ctx);
    const sign = spectralSignTest(kernel, ctx);
    const votes: Vote[] = [];
    const res = resolution(kernel);
    const fourthOk = fourthOrderApplies(ctx), secondOrder = secondOrderEstablished(ctx);
    const regionFits = regionWaves(kernel, ctx, fourthOk, driftRateOf(ctx));
    let waveRegion: RegionWave | null = null;
    if (regionFits) {
      // per region: a region that oscillates makes the kernel oscillatory; all regions without oscillation, not
      if (regionFits.some((r) => r.decision === 'present')) {
        waveRegion = regionFits.filter((r) => r.decision === 'present').sort((p, q) => q.confidence - p.confidence)[0]!;
        votes.push({ by: `column fits per region (${waveRegion.votes.map((v) => v.by).join(', ')})`, decision: 'present', confidence: waveRegion.confidence });
      } else if (regionFits.every((r) => r.decision === 'absent')) {
        votes.push({ by: `column fits per region (${regionFits.length} regions)`, decision: 'absent', confidence: Math.min(...regionFits.map((r) => r.confidence)) });
      } else votes.push({ by: 'column fits per region', decision: 'inconclusive', confidence: 0.5 });
    } else {
      if (lw?.adequate) votes.push({ by: 'second-order fit', ...decideAbove(lw.theta, lw.thetaSd ?? NaN, res) });
      if (lw?.fourth.adequate && fourthOk) votes.push({ by: 'fourth-order fit', ...decideAbove(lw.fourth.theta, lw.fourth.thetaSd ?? NaN, res) });
    }
    // the sign test counts only when it decides (it is undecided by construction with few trusted values)
    if (sign.decision !== 'inconclusive') votes.push({ by: 'spectrum sign', decision: sign.decision, confidence: sign.confidence });
    let verdict: YesNo = 'inconclusive', confidence = 0.5;
    if (votes.length && votes.every((v) => v.decision === votes[0]!.decision) && votes[0]!.decision !== 'inconclusive') {
      verdict = votes[0]!.decision === 'present' ? 'yes' : 'no';
      confidence = Math.min(...votes.map((v) => v.confidence));
    }
    if (!lw && sign.decision === 'inconclusive') {
      const o = inapplicable('oscillation', sign.trusted ? `${why}, and only ${sign.trusted} trustworthy singular values for the sign test` : why!) as AnalysisOutput<Findings['oscillation']>;
      return o;
    }
    // wavenumber from the adequate fit (second order first; the fourth-order family nests it)
    const useFit = waveRegion
      ? (waveRegion.lw.adequate ? { theta: waveRegion.lw.theta, sd: waveRegion.lw.thetaSd } : { theta: waveRegion.lw.fourth.theta, sd: waveRegion.lw.fourth.thetaSd })
      : lw && !regionFits ? (lw.adequate ? { theta: lw.theta, sd: lw.thetaSd } : lw.fourth.adequate && fourthOk ? { theta: lw.fourth.theta, sd: lw.fourth.thetaSd } : null) : null;
    const k = useFit && useFit.theta > 0 ? Math.sqrt(useFit.theta) : null;
    const sd = useFit?.sd ?? NaN;
    const kSd = k && Number.isFinite(sd) ? sd / (2 * k) : null;
    const vtxt = votes.map((v) => `${v.by}: ${v.decision}`).join('; ');
    return {
      finding: {
        verdict,
        wavenumber: verdict === 'yes' ? sig(k, 4) : null,
        wavenumber_uncertainty: verdict === 'yes' ? sig(kSd, 2) : null,
        confidence: round3(confidence),
        k_squared: lw ? sig(lw.theta, 4) : null,
        k_squared_fourth_order: lw ? sig(lw.fourth.theta, 4) : null,
        drift_term: lw ? sig(lw.p, 4) : null,
        fit_residual: lw ? sig(lw.residual, 3) : null,
        fit_residual_fourth_order: lw ? sig(lw.fourth.residual, 3) : null,
        noise_residual: lw ? sig(lw.noiseResidual, 3) : null,
        model_adequate: lw ? lw.adequate : null,
        fourth_order_adequate: lw ? lw.fourth.adequate : null,
        fourth_order_identified: lw ? lw.fourth.identified : null,
        negative_eigenvalues: sign.trusted >= 6 ? sign.negatives : null,
        trustworthy_values: sign.trusted,
        votes: votes.map((v) => ({ by: v.by, decision: v.decision, confidence: v.confidence })),
        region_fits: regionFits ? regionFits.map((r) => ({ bounds: [sig(r.bounds[0], 4), sig(r.bounds[1], 4)], model_adequate: r.lw.adequate, fourth_order_adequate: r.lw.fourth.adequate, decision: r.decision })) : null,
      },
      evidence: {
        statistic: lw ? sig(lw.theta, 4) : sign.negatives,
        noise_floor: lw ? sig(lw.thetaSd, 3) : null,
        summary: (lw ? `Column segments: second-order fit k² = ${lw.theta.toPrecision(4)} ± ${lw.thetaSd !== null ? lw.thetaSd.toPrecision(2) : '?'} (p = ${lw.p.toPrecision(3)}, residual ${lw.residual.toPrecision(2)}${lw.adequate ? '' : ', not adequate'}), fourth-order fit k² = ${lw.fourth.theta.toPrecision(4)} (residual ${lw.fourth.residual.toPrecision(2)}${lw.fourth.adequate ? (fourthOk ? '' : secondOrder ? ', not used: order 2 is established, and a second-order operator has two column solutions, not four' : ', not used: the kernel is not self-adjoint, and the family has no drift') : ', not adequate'}). ` : '') +
          (regionFits ? `The medium has interfaces or internal layers, so the column fits are made per region between them: ${regionFits.map((r) => `[${r.bounds[0].toPrecision(3)}, ${r.bounds[1].toPrecision(3)}] ${r.decision}${r.decision !== 'inconclusive' ? ` (${r.confidence.toFixed(2)})` : ''}`).join('; ')}. ` : '') +
          (sign.trusted >= 6 ? `${sign.negatives} negative among ${sign.trusted} trustworthy eigenvalues. ` : '') +
          `Evidence: ${vtxt || 'none decisive'} — ` +
          (verdict === 'yes' ? `oscillatory${k ? ` with wavenumber ${k.toPrecision(4)}` : ''}.` : verdict === 'no' ? 'no oscillation.' : 'not decided.'),
        explanation: explanationOsc,
        plot: { kind: 'segments', k_squared: lw?.theta ?? null, p: lw?.p ?? null, residual: lw?.residual ?? null, segments: lw?.segments ?? 0, negative_eigenvalues: sign.negatives, trusted: sign.trusted },
      },
    };
  },
};

export const screening: Analysis<Findings['screening']> = {
  key: 'screening',
  dependsOn: ['self_adjoint', 'order', 'transport'],
  run(kernel, ctx) {
    const { lw, why } = globalFit(kernel, ctx);
    if (!lw) return inapplicable('screening', why!) as AnalysisOutput<Findings['screening']>;
    const sd = lw.kappa2Sd ?? NaN;
    const d = decide(Math.max(lw.kappa2, 0), sd, resolution(kernel));
    let verdict: YesNo = d.decision === 'present' ? 'yes' : d.decision === 'absent' ? 'no' : 'inconclusive';
    if (!lw.adequate) verdict = 'inconclusive';
    const len = lw.screeningLength;
    const lenSd = len && Number.isFinite(sd) ? 0.5 * len * sd / lw.kappa2 : null;
    return {
      finding: {
        verdict,
        length: verdict === 'yes' ? sig(len, 4) : null,
        length_uncertainty: verdict === 'yes' ? sig(lenSd, 2) : null,
        confidence: verdict === 'inconclusive' ? 0.5 : d.confidence,
        kappa_squared: sig(lw.kappa2, 4),
      },
      evidence: {
        statistic: sig(lw.kappa2, 4),
        noise_floor: sig(sd, 3),
        summary: `Reaction-to-diffusion ratio c/a = ${lw.kappa2.toPrecision(4)} ± ${Number.isFinite(sd) ? sd.toPrecision(2) : '?'}: ` +
          (verdict === 'yes' ? `screened, with screening length ${len!.toPrecision(3)}.` : verdict === 'no' ? 'no screening.' : !lw.adequate ? 'the columns are not explained by one second-order equation with constant coefficients.' : 'the data do not decide.'),
        explanation: explanationScr,
        plot: { kind: 'segments', kappa_squared: lw.kappa2, p: lw.p },
      },
    };
  },
};
