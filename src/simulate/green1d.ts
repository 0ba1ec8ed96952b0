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

/** G at (pointsOut × pointsIn), component-major blocks: (n_out·C) × (n_in·C). */
export function odeKernel(model: Ode1dModel, xs: Float64Array, ss: Float64Array): Mat {
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
  // jump solves at each source: [−F_L | F_R] [α; β] = e_flux(d)
  const flux: number[] = [];
  { let q0 = 0; for (let c = 0; c < C; c++) { q0 += op.orders[c]!; flux.push(q0 - 1); } }
  const coef = new Float64Array(nIn * C * m); // (k, d) → [α; β]
  for (let k = 0; k < nIn; k++) {
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
