/**
 * Point values of the Green's function of a 1-D operator (spec kind 'ode'), for systems and
 * orders 2 and 4, from basis solutions of the homogeneous equation:
 *   Y^L_j solves L Y = 0 with the left conditions homogeneous and right condition j = 1,
 *   Y^R_j solves L Y = 0 with the right conditions homogeneous and left condition j = 1.
 * For a source at s in component d, G(·, s) = Σ α_j Y^L_j left of s and Σ β_j Y^R_j right of
 * s, where α, β make every interface functional continuous at s except the flux of component
 * d, which jumps by 1 (the classical jump conditions). This generalises u1(x<) u2(x>)/(pW).
 */
// Jump conditions and construction of Green's functions of n-th order systems: Coddington & Levinson, Theory of ODEs (1955) ch. 7 (from memory); Stakgold & Holst (2011) ch. 1.
import { luSolve } from '../linalg/decomp.js';
import type { Mat } from '../linalg/dense.js';
import { zeros } from '../linalg/dense.js';
import type { OdeSpec } from './spec.js';
import { compileOde, solveOde, evalColumn, functionals, pieceOf, type CompiledOde, type OdeSolution, type SolveOptions } from './ode.js';
import { forEachSourceColumn, pieceCache, type PieceCache } from './sources1d.js';
import { DataError } from '../errors.js';

export interface Ode1dModel {
  op: CompiledOde;
  /** columns 0..h−1 = Y^L, h..2h−1 = Y^R, 2h = u_h (actual boundary data; nonlinear if cubic ≠ 0) */
  sol: OdeSolution;
  h: number;
}

/** Solve once for the basis and the homogeneous part of a 1-D operator. */
export function buildOdeModel(spec: OdeSpec, opts: SolveOptions = {}, extraC?: (x: number) => number, extraBreaks: number[] = [], linearOnly = false): Ode1dModel {
  const op = compileOde(linearOnly ? { ...spec, cubic: 0 } : spec, extraC, extraBreaks);
  const leftCount = op.left.map((l) => l.length), rightCount = op.right.map((r) => r.length);
  const h = leftCount.reduce((s, v) => s + v, 0);
  const zero = () => ({ left: leftCount.map((k) => new Array<number>(k).fill(0)), right: rightCount.map((k) => new Array<number>(k).fill(0)) });
  const data = [];
  for (let c = 0; c < op.C; c++) for (let q = 0; q < rightCount[c]!; q++) { const d = zero(); d.right[c]![q] = 1; data.push(d); }
  for (let c = 0; c < op.C; c++) for (let q = 0; q < leftCount[c]!; q++) { const d = zero(); d.left[c]![q] = 1; data.push(d); }
  data.push({ left: op.left.map((l) => l.map((cd) => cd.value)), right: op.right.map((r) => r.map((cd) => cd.value)) });
  const sol = solveOde(op, data, { ...opts, newtonColumn: 2 * h });
  return { op, sol, h };
}

/**
 * How odeKernel builds G: 'basis' = basis solutions and a jump solve per source (fast);
 * 'direct' = every column as its own boundary-value problem (sources1d.ts); 'auto' = basis,
 * unless a check of its least trustworthy columns against direct solves disagrees.
 */
export type KernelMethod = 'auto' | 'basis' | 'direct';

/** Half the double-precision digits (common practice): the agreement asked of every check below. */
const CHECK_TOL = Math.sqrt(Number.EPSILON);
/** Columns checked directly when the basis error estimate is above CHECK_TOL: the riskiest ones. */
const CHECKED = 3;
/** Accuracy the simulator promises for its kernels (relative to the kernel's scale; docs/operator-spec.md). */
const ACCURACY = 1e-4;
/** Nodes per piece of the direct solve, and of its second solve (a different discretisation whose rounding differs). */
const DIRECT_N = 24, DIRECT_N2 = 16;

/**
 * G at (pointsOut × pointsIn), component-major blocks: (n_out·C) × (n_in·C). 'auto' keeps the
 * basis construction when its first-order error estimate is below CHECK_TOL of the kernel's scale,
 * or else when its riskiest columns agree with direct solves to CHECK_TOL; otherwise every column
 * is solved directly.
 */
export function odeKernel(model: Ode1dModel, xs: Float64Array, ss: Float64Array, method: KernelMethod = 'auto'): Mat {
  const cache = pieceCache();
  if (method === 'direct') return directKernel(model, xs, ss, cache);
  const basis = basisCoefficients(model, ss);
  const G = basisKernel(model, xs, ss, basis.coef);
  if (method === 'basis') return G;
  let scale = 0, risk = 0;
  for (const v of G.data) scale = Math.max(scale, Math.abs(v));
  for (const r of basis.risk) risk = Math.max(risk, r);
  if (risk <= CHECK_TOL * scale) return G;
  return basisAgrees(model, ss, basis, xs, cache) ? G : directKernel(model, xs, ss, cache);
}

interface BasisCoefficients {
  /** (k, d) → [α; β] at offset (k·C + d)·m */
  coef: Float64Array;
  /** first-order estimate of the absolute error of each column (k, d), max over components */
  risk: Float64Array;
}

/**
 * Jump solves at each source: [−F_L | F_R] [α; β] = e_flux(d). The risk of a column is the
 * componentwise first-order bound |M⁻¹| |δM| |x| + δ|x| on its coefficients, with δM the absolute
 * accuracy δ·max|F_j| of the basis functionals (δ = the solve's Chebyshev tail, at least the
 * machine epsilon), times the largest values of the basis solutions.
 */
// Componentwise perturbation bound for linear systems: Skeel, Math. Comp. 35 (1980); Higham, Accuracy and Stability of Numerical Algorithms (2002) ch. 7.
export function basisCoefficients(model: Ode1dModel, ss: Float64Array): BasisCoefficients {
  const { op, sol, h } = model;
  const C = op.C, m = 2 * h;
  const flux: number[] = [];
  { let q0 = 0; for (let c = 0; c < C; c++) { q0 += op.orders[c]!; flux.push(q0 - 1); } }
  // scales of the basis: largest functional values (per basis j, functional q) and values (j, component c)
  const Fmax = new Float64Array(m * m), Ymax = new Float64Array(m * C);
  for (let p = 0; p < sol.pieces.length; p++) {
    for (const x of sol.pieces[p]!.x) {
      for (let j = 0; j < m; j++) {
        const f = functionals(sol, j, x, p);
        for (let q = 0; q < m; q++) Fmax[j * m + q] = Math.max(Fmax[j * m + q]!, Math.abs(f[q]!));
        for (let c = 0; c < C; c++) Ymax[j * C + c] = Math.max(Ymax[j * C + c]!, Math.abs(evalColumn(sol, j, c, x, 0, p)));
      }
    }
  }
  const delta = Math.max(sol.tail, Number.EPSILON);
  const eye: Mat = zeros(m, m);
  for (let q = 0; q < m; q++) eye.data[q * m + q] = 1;
  const coef = new Float64Array(ss.length * C * m), risk = new Float64Array(ss.length * C);
  for (let k = 0; k < ss.length; k++) {
    const s = ss[k]!;
    const p = pieceOf(sol, s);
    const M: Mat = zeros(m, m);
    for (let j = 0; j < h; j++) {
      const fl = functionals(sol, j, s, p), fr = functionals(sol, h + j, s, p);
      for (let q = 0; q < m; q++) { M.data[q * m + j] = -fl[q]!; M.data[q * m + h + j] = fr[q]!; }
    }
    const rhs: Mat = zeros(m, C);
    for (let d = 0; d < C; d++) rhs.data[flux[d]! * C + d] = 1;
    const X = luSolve(M, rhs);
    for (let d = 0; d < C; d++) for (let q = 0; q < m; q++) coef[(k * C + d) * m + q] = X.data[q * C + d]!;
    const Minv = luSolve(M, eye);
    for (let d = 0; d < C; d++) {
      const x = coef.subarray((k * C + d) * m, (k * C + d + 1) * m);
      const dMx = new Float64Array(m);
      for (let q = 0; q < m; q++) { let v = 0; for (let j = 0; j < m; j++) v += delta * Fmax[j * m + q]! * Math.abs(x[j]!); dMx[q] = v; }
      let worst = 0;
      for (let c = 0; c < C; c++) {
        let e = 0;
        for (let j = 0; j < m; j++) {
          let dx = delta * Math.abs(x[j]!);
          for (let q = 0; q < m; q++) dx += Math.abs(Minv.data[j * m + q]!) * dMx[q]!;
          e += dx * Ymax[j * C + c]!;
        }
        worst = Math.max(worst, e);
      }
      risk[k * C + d] = Number.isFinite(worst) ? worst : Infinity;
    }
  }
  return { coef, risk };
}

/** Value of the basis-path column (k, d) in component c at x. */
function basisValue(model: Ode1dModel, coef: Float64Array, k: number, d: number, s: number, c: number, x: number): number {
  const { sol, h } = model;
  const base = (k * model.op.C + d) * 2 * h;
  const p = pieceOf(sol, x);
  let vl = 0, vr = 0;
  if (x <= s) for (let j = 0; j < h; j++) vl += evalColumn(sol, j, c, x, 0, p) * coef[base + j]!;
  if (x >= s) for (let j = 0; j < h; j++) vr += evalColumn(sol, h + j, c, x, 0, p) * coef[base + h + j]!;
  return x < s ? vl : x > s ? vr : (vl + vr) / 2;
}

/**
 * The basis path is kept when its CHECKED riskiest columns and its safest one agree with direct
 * solves to CHECK_TOL of the kernel's scale (the largest direct value among them), at the sensors
 * and at every node of the basis solve.
 */
function basisAgrees(model: Ode1dModel, ss: Float64Array, basis: BasisCoefficients, xs: Float64Array, cache: PieceCache): boolean {
  const { op, sol } = model;
  const C = op.C;
  const order = Array.from(basis.risk, (r, i) => ({ r, i })).sort((p, q) => q.r - p.r || p.i - q.i);
  const chosen = order.slice(0, CHECKED).map((o) => o.i);
  const srcs = Float64Array.from(chosen, (i) => ss[Math.floor(i / C)]!);
  const pts = [...xs, ...sol.pieces.flatMap((pc) => Array.from(pc.x))];
  let scale = 0, err = 0, resolved = true;
  forEachSourceColumn(op, srcs, boundsOf(sol), (ts, r) => {
    resolved &&= r.resolved;
    for (const t of ts) {
      const i = chosen[t]!, k = Math.floor(i / C), d = i % C;
      for (const x of pts) for (let c = 0; c < C; c++) {
        const ref = evalColumn(r.sol, d, c, x);
        scale = Math.max(scale, Math.abs(ref));
        err = Math.max(err, Math.abs(basisValue(model, basis.coef, k, d, ss[k]!, c, x) - ref));
      }
    }
  }, { n: DIRECT_N, cache });
  return resolved && err <= CHECK_TOL * scale;
}

function boundsOf(sol: OdeSolution): number[] {
  return [sol.pieces[0]!.l, ...sol.pieces.map((pc) => pc.r)];
}

/** G at the sensors from direct column solves with n nodes per piece; refuses (DataError) an unresolved column. */
function directColumns(model: Ode1dModel, xs: Float64Array, ss: Float64Array, n: number, cache: PieceCache): Mat {
  const { op, sol } = model;
  const C = op.C, nOut = xs.length, nIn = ss.length;
  const G = zeros(nOut * C, nIn * C);
  const cols = nIn * C;
  forEachSourceColumn(op, ss, boundsOf(sol), (ks, r) => {
    if (!r.resolved) {
      throw new DataError(`simulate: the Green's function of this operator cannot be computed accurately: the column for the source at ${ss[ks[0]!]} is not resolved to 1e-11 (Chebyshev tail ${r.sol.tail.toExponential(1)} with ${r.sol.pieces.length} pieces), and the basis construction is inaccurate for it`);
    }
    for (let i = 0; i < nOut; i++) {
      const x = xs[i]!;
      const p = pieceOf(r.sol, x);
      for (let c = 0; c < C; c++) {
        const row = (c * nOut + i) * cols;
        for (let d = 0; d < C; d++) {
          const v = evalColumn(r.sol, d, c, x, 0, p);
          for (const k of ks) G.data[row + d * nIn + k] = v;
        }
      }
    }
  }, { n, cache });
  return G;
}

/**
 * G from direct column solves, accepted when a second solve with another node count agrees to
 * ACCURACY of the kernel's scale (rounding in ill-conditioned collocation, e.g. fourth order
 * next to a free end, shows as disagreement); otherwise refused with a DataError.
 */
function directKernel(model: Ode1dModel, xs: Float64Array, ss: Float64Array, cache: PieceCache): Mat {
  const G = directColumns(model, xs, ss, DIRECT_N, cache);
  const G2 = directColumns(model, xs, ss, DIRECT_N2, cache);
  let scale = 0, err = 0, worst = 0;
  for (let i = 0; i < G.data.length; i++) {
    const v = G.data[i]!, d = Math.abs(v - G2.data[i]!);
    if (!Number.isFinite(v)) throw new DataError('simulate: the Green\'s function of this operator is not finite (singular boundary-value problem)');
    scale = Math.max(scale, Math.abs(v));
    if (d > err) { err = d; worst = i % ss.length; }
  }
  if (!(err <= ACCURACY * scale)) {
    throw new DataError(`simulate: the Green's function of this operator cannot be computed accurately: two direct solves differ by ${(err / scale).toExponential(1)} of its scale (column of the source at ${ss[worst]}): the boundary-value problem is too ill-conditioned for double precision (e.g. an exponentially small eigenvalue), and the basis construction is inaccurate for it`);
  }
  return G;
}

function basisKernel(model: Ode1dModel, xs: Float64Array, ss: Float64Array, coef: Float64Array): Mat {
  const { op, sol, h } = model;
  const C = op.C, m = 2 * h;
  const nOut = xs.length, nIn = ss.length;
  // sensor values of the basis: VL[c][i*h + j], VR[c][i*h + j]
  const VL: Float64Array[] = [], VR: Float64Array[] = [];
  for (let c = 0; c < C; c++) {
    const L = new Float64Array(nOut * h), R = new Float64Array(nOut * h);
    for (let i = 0; i < nOut; i++) {
      const p = pieceOf(sol, xs[i]!);
      for (let j = 0; j < h; j++) {
        L[i * h + j] = evalColumn(sol, j, c, xs[i]!, 0, p);
        R[i * h + j] = evalColumn(sol, h + j, c, xs[i]!, 0, p);
      }
    }
    VL.push(L); VR.push(R);
  }
  const G = zeros(nOut * C, nIn * C);
  const cols = nIn * C;
  for (let c = 0; c < C; c++) {
    const L = VL[c]!, R = VR[c]!;
    for (let i = 0; i < nOut; i++) {
      const x = xs[i]!;
      const row = (c * nOut + i) * cols;
      for (let d = 0; d < C; d++) {
        for (let k = 0; k < nIn; k++) {
          const s = ss[k]!;
          const base = (k * C + d) * m;
          let vl = 0, vr = 0;
          if (x <= s) for (let j = 0; j < h; j++) vl += L[i * h + j]! * coef[base + j]!;
          if (x >= s) for (let j = 0; j < h; j++) vr += R[i * h + j]! * coef[base + h + j]!;
          G.data[row + d * nIn + k] = x < s ? vl : x > s ? vr : (vl + vr) / 2;
        }
      }
    }
  }
  return G;
}

/** u_h at points (component-major, length n·C). */
export function odeHomogeneous(model: Ode1dModel, xs: Float64Array): Float64Array {
  const { op, sol, h } = model;
  const out = new Float64Array(xs.length * op.C);
  for (let c = 0; c < op.C; c++) for (let i = 0; i < xs.length; i++) out[c * xs.length + i] = evalColumn(sol, 2 * h, c, xs[i]!);
  return out;
}

/** Linearisation of a cubic operator at u = u_h: c(x) → c(x) + 3ε u_h(x)². */
export function linearisedModel(spec: OdeSpec, nonlinear: Ode1dModel, opts: SolveOptions = {}): Ode1dModel {
  const { sol, h } = nonlinear;
  const eps = spec.cubic;
  const uh = (x: number) => { const v = evalColumn(sol, 2 * h, 0, x); return 3 * eps * v * v; };
  const inner = sol.pieces.slice(1).map((p) => p.l);
  return buildOdeModel(spec, opts, uh, inner, true);
}
