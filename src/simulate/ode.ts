/**
 * Linear (and cubic-nonlinear) boundary-value problems for the 1-D operators of spec.ts,
 * solved by piecewise Chebyshev collocation: the domain is cut at every coefficient break
 * (interfaces sit on piece ends), each piece carries n second-kind Chebyshev points per
 * component, and pieces whose solutions are not resolved to `tol` are halved (h-adaptivity).
 *
 * Per piece and component of order K the differential equation is imposed in rectangular
 * form, projected onto n − K first-kind points; the K missing rows per piece are the
 * boundary conditions and the interface conditions (continuity of u, [u', e u''] and of the
 * flux (e u'')' − a u'), so that coefficient jumps are honoured exactly.
 */
// Rectangular spectral collocation: Driscoll & Hale, IMA J. Numer. Anal. 36 (2016).
// Newton's method for the collocated nonlinear system (cubic term): e.g. Trefethen, Spectral Methods in MATLAB (SIAM 2000), ch. 13.
import { luSolve } from '../linalg/decomp.js';
import type { Mat } from '../linalg/dense.js';
import { compileExpr } from './expr.js';
import type { CoefSpec, EndCondition, OdeSpec } from './spec.js';
import { isZeroCoef } from './spec.js';
import { chebPoints, chebPoints1, baryWeights, diffMatrix, sqMul, interpMatrix, baryEval, chebCoeffs } from './cheb.js';

/** A coefficient evaluated at x; `mid` is a point inside the current piece (selects the side at a break). */
export type CoefFn = (x: number, mid: number) => number;

export interface CompiledOde {
  domain: [number, number];
  C: number;
  orders: number[];
  breaks: number[];
  a: CoefFn[]; b: CoefFn[]; c: CoefFn[]; e: CoefFn[];
  coupling: (CoefFn | null)[][];
  left: EndCondition[][];
  right: EndCondition[][];
  cubic: number;
}

export function compileCoef(c: CoefSpec): { fn: CoefFn; breaks: number[] } {
  const one = (v: number | string): ((x: number) => number) => {
    if (typeof v === 'number') return () => v;
    const f = compileExpr(v, ['x']);
    const env = { x: 0 };
    return (x) => { env.x = x; return f(env); };
  };
  if (typeof c === 'number' || typeof c === 'string') { const f = one(c); return { fn: (x) => f(x), breaks: [] }; }
  const fns = c.values.map(one);
  const br = c.breaks;
  return {
    fn: (x, mid) => {
      let k = 0;
      while (k < br.length && mid > br[k]!) k++;
      return fns[k]!(x);
    },
    breaks: [...br],
  };
}

/** Compile a spec; `extraC` is added to c of component 1 (used for linearisations). */
export function compileOde(op: OdeSpec, extraC?: (x: number) => number, extraBreaks: number[] = []): CompiledOde {
  const breaks = new Set<number>(extraBreaks);
  const take = (s: CoefSpec) => { const r = compileCoef(s); r.breaks.forEach((b) => breaks.add(b)); return r.fn; };
  const C = op.components.length;
  const a = op.components.map((cp) => take(cp.a));
  const b = op.components.map((cp) => take(cp.b));
  const c = op.components.map((cp, i) => {
    const f = take(cp.c);
    if (i === 0 && extraC) return (x: number, mid: number) => f(x, mid) + extraC(x);
    return f;
  });
  const e = op.components.map((cp) => take(cp.e));
  const coupling = op.coupling.map((r, i) => r.map((v, j) => (i === j || isZeroCoef(v) ? null : take(v))));
  const orders = op.components.map((cp) => (isZeroCoef(cp.e) ? 2 : 4));
  const [A, B] = op.domain;
  return {
    domain: op.domain, C, orders,
    breaks: [...breaks].filter((x) => x > A && x < B).sort((p, q) => p - q),
    a, b, c, e, coupling,
    left: op.components.map((cp) => cp.left), right: op.components.map((cp) => cp.right),
    cubic: op.cubic,
  };
}

export interface PieceData {
  l: number; r: number; mid: number;
  x: Float64Array; w: Float64Array;
  /** D[k] = k-th derivative matrix, k = 0..4 (D[0] unused) */
  D: Float64Array[];
  /** coefficient node values per component */
  av: Float64Array[]; ev: Float64Array[]; dev: Float64Array[];
}

/** A column of the solution: all unknowns, piece-major then component-major then node. */
export interface OdeSolution {
  op: CompiledOde;
  n: number;
  pieces: PieceData[];
  columns: Float64Array[];
  /** largest relative Chebyshev tail over pieces, components and columns (resolution estimate) */
  tail: number;
  newtonIterations: number;
}

export function makePiece(op: CompiledOde, l: number, r: number, n: number): PieceData {
  const x = chebPoints(n, l, r);
  const w = baryWeights(n);
  const D1 = diffMatrix(x, w);
  const maxK = Math.max(...op.orders);
  const D: Float64Array[] = [new Float64Array(0), D1];
  for (let k = 2; k <= Math.max(maxK, 3); k++) D.push(sqMul(D[k - 1]!, D1, n));
  const mid = (l + r) / 2;
  const av: Float64Array[] = [], ev: Float64Array[] = [], dev: Float64Array[] = [];
  for (let c = 0; c < op.C; c++) {
    const a = new Float64Array(n), e = new Float64Array(n);
    for (let j = 0; j < n; j++) { a[j] = op.a[c]!(x[j]!, mid); e[j] = op.e[c]!(x[j]!, mid); }
    av.push(a); ev.push(e); dev.push(matvecSq(D1, e, n));
  }
  return { l, r, mid, x, w, D, av, ev, dev };
}

function matvecSq(A: Float64Array, v: Float64Array, n: number): Float64Array {
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) { let s = 0; for (let j = 0; j < n; j++) s += A[i * n + j]! * v[j]!; out[i] = s; }
  return out;
}

interface System {
  N: number;
  A: Float64Array;
  /** row scale factors (already applied to A) */
  scale: Float64Array;
  /** rows of the differential equations: per piece, per component, first row and the projection */
  eqRows: { p: number; c: number; row0: number; P: Float64Array; m: number }[];
  leftRows: number[][];
  rightRows: number[][];
}

function assemble(op: CompiledOde, pieces: PieceData[], n: number): System {
  const C = op.C, NP = pieces.length;
  const N = NP * C * n;
  const A = new Float64Array(N * N);
  const col = (p: number, c: number) => (p * C + c) * n;
  let row = 0;
  const eqRows: System['eqRows'] = [];
  const projCache = new Map<string, Float64Array>();
  for (let p = 0; p < NP; p++) {
    const pc = pieces[p]!;
    for (let c = 0; c < C; c++) {
      const K = op.orders[c]!;
      const m = n - K;
      const key = `${p}:${K}`;
      let P = projCache.get(key);
      if (!P) { P = interpMatrix(pc.x, pc.w, chebPoints1(m, pc.l, pc.r)); projCache.set(key, P); }
      const PL = operatorRows(op, pc, n, c, P, m);
      for (let i = 0; i < m; i++) {
        const ro = (row + i) * N;
        for (let j = 0; j < n; j++) A[ro + col(p, c) + j] = PL[i * n + j]!;
        for (let d = 0; d < C; d++) {
          const cf = op.coupling[c]![d];
          if (!cf) continue;
          for (let j = 0; j < n; j++) A[ro + col(p, d) + j] += P[i * n + j]! * cf(pc.x[j]!, pc.mid);
        }
      }
      eqRows.push({ p, c, row0: row, P, m });
      row += m;
    }
  }
  // boundary conditions
  const bcRow = (pc: PieceData, node: number, c: number, coefs: number[], target: number, colBase: number) => {
    const ro = target * N;
    conditionRow(pc, n, node, coefs, (j, v) => { A[ro + colBase + j] += v; });
  };
  const leftRows: number[][] = [], rightRows: number[][] = [];
  for (let c = 0; c < C; c++) {
    leftRows.push(op.left[c]!.map((cd) => { bcRow(pieces[0]!, 0, c, cd.coefs, row, col(0, c)); return row++; }));
    rightRows.push(op.right[c]!.map((cd) => { bcRow(pieces[NP - 1]!, n - 1, c, cd.coefs, row, col(NP - 1, c)); return row++; }));
  }
  // interface conditions: functionals continuous across each piece end
  for (let p = 0; p + 1 < NP; p++) {
    for (let c = 0; c < C; c++) {
      const K = op.orders[c]!;
      for (let q = 0; q < K; q++) {
        const fl = functionalRow(op, pieces[p]!, n, c, q, n - 1);
        const fr = functionalRow(op, pieces[p + 1]!, n, c, q, 0);
        const ro = row * N;
        for (let j = 0; j < n; j++) { A[ro + col(p, c) + j] += fl[j]!; A[ro + col(p + 1, c) + j] -= fr[j]!; }
        row++;
      }
    }
  }
  if (row !== N) throw new Error(`collocation: ${row} rows for ${N} unknowns`);
  const scale = new Float64Array(N);
  for (let i = 0; i < N; i++) {
    let mx = 0;
    for (let j = 0; j < N; j++) mx = Math.max(mx, Math.abs(A[i * N + j]!));
    if (!(mx > 0)) throw new Error('collocation: empty equation row (degenerate operator)');
    scale[i] = 1 / mx;
    for (let j = 0; j < N; j++) A[i * N + j] *= scale[i]!;
  }
  return { N, A, scale, eqRows, leftRows, rightRows };
}

/** Rows (m × n) of the differential operator of component c on piece pc, projected by P (m × n). */
export function operatorRows(op: CompiledOde, pc: PieceData, n: number, c: number, P: Float64Array, m: number): Float64Array {
  const K = op.orders[c]!;
  // square operator on the nodes: Σ_k coef_k(x_i) D^k[i, j]
  const a = pc.av[c]!, e = pc.ev[c]!;
  const da = matvecSq(pc.D[1]!, a, n);
  const de = pc.dev[c]!;
  const dde = matvecSq(pc.D[2]!, e, n);
  const Lsq = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    const xi = pc.x[i]!;
    const bi = op.b[c]!(xi, pc.mid), ci = op.c[c]!(xi, pc.mid);
    const k4 = K === 4 ? e[i]! : 0, k3 = K === 4 ? 2 * de[i]! : 0, k2 = (K === 4 ? dde[i]! : 0) - a[i]!, k1 = bi - da[i]!;
    for (let j = 0; j < n; j++) {
      let v = k2 * pc.D[2]![i * n + j]! + k1 * pc.D[1]![i * n + j]!;
      if (K === 4) v += k4 * pc.D[4]![i * n + j]! + k3 * pc.D[3]![i * n + j]!;
      Lsq[i * n + j] = v;
    }
    Lsq[i * n + i] += ci;
  }
  return sqRectMul(P, Lsq, m, n);
}

/** A boundary-condition row Σ_k coefs_k u^(k)(x_node): calls add(j, value) for the piece's columns j. */
export function conditionRow(pc: PieceData, n: number, node: number, coefs: number[], add: (j: number, v: number) => void): void {
  for (let k = 0; k < coefs.length; k++) {
    const ak = coefs[k]!;
    if (ak === 0) continue;
    if (k === 0) { add(node, ak); continue; }
    for (let j = 0; j < n; j++) add(j, ak * pc.D[k]![node * n + j]!);
  }
}

function sqRectMul(P: Float64Array, L: Float64Array, m: number, n: number): Float64Array {
  const out = new Float64Array(m * n);
  for (let i = 0; i < m; i++) {
    for (let k = 0; k < n; k++) {
      const v = P[i * n + k]!;
      if (v === 0) continue;
      for (let j = 0; j < n; j++) out[i * n + j] += v * L[k * n + j]!;
    }
  }
  return out;
}

/**
 * Row (length n) of interface functional q of component c at node `node` of a piece:
 * order 2: u, −a u'; order 4: u, u', e u'', (e u'')' − a u'. The last one is the flux whose
 * jump a point source sets.
 */
export function functionalRow(op: CompiledOde, pc: PieceData, n: number, c: number, q: number, node: number): Float64Array {
  const K = op.orders[c]!;
  const r = new Float64Array(n);
  const a = pc.av[c]![node]!, e = pc.ev[c]![node]!, de = pc.dev[c]![node]!;
  const Drow = (k: number) => pc.D[k]!.subarray(node * n, (node + 1) * n);
  if (q === 0) { r[node] = 1; return r; }
  if (K === 2) { const d1 = Drow(1); for (let j = 0; j < n; j++) r[j] = -a * d1[j]!; return r; }
  if (q === 1) { r.set(Drow(1)); return r; }
  if (q === 2) { const d2 = Drow(2); for (let j = 0; j < n; j++) r[j] = e * d2[j]!; return r; }
  const d1 = Drow(1), d2 = Drow(2), d3 = Drow(3);
  for (let j = 0; j < n; j++) r[j] = de * d2[j]! + e * d3[j]! - a * d1[j]!;
  return r;
}

/** Boundary data for one solve: values of every left and right condition, per component. */
export interface BoundaryData { left: number[][]; right: number[][] }

export interface SolveOptions {
  /** nodes per piece (default 40) */
  n?: number;
  /** relative Chebyshev tail tolerance for accepting a piece (default 1e-11) */
  tol?: number;
  /** largest number of unknowns (default 1600) */
  maxUnknowns?: number;
  /** index of the column solved with the cubic term by Newton (when op.cubic ≠ 0) */
  newtonColumn?: number;
}

/**
 * Solve L u = 0 with the given boundary data for each entry of `data` (one column each),
 * refining pieces until every column is resolved.
 */
export function solveOde(op: CompiledOde, data: BoundaryData[], opts: SolveOptions = {}): OdeSolution {
  const n = opts.n ?? 40;
  const tol = opts.tol ?? 1e-11;
  const maxUnknowns = opts.maxUnknowns ?? 1600;
  const [A0, B0] = op.domain;
  let bounds = [A0, ...op.breaks, B0];
  for (let iter = 0; ; iter++) {
    const pieces: PieceData[] = [];
    for (let p = 0; p + 1 < bounds.length; p++) pieces.push(makePiece(op, bounds[p]!, bounds[p + 1]!, n));
    const sys = assemble(op, pieces, n);
    const rhs: Mat = { rows: sys.N, cols: data.length, data: new Float64Array(sys.N * data.length) };
    data.forEach((bd, k) => {
      for (let c = 0; c < op.C; c++) {
        sys.leftRows[c]!.forEach((r, q) => { rhs.data[r * data.length + k] = bd.left[c]![q]! * sys.scale[r]!; });
        sys.rightRows[c]!.forEach((r, q) => { rhs.data[r * data.length + k] = bd.right[c]![q]! * sys.scale[r]!; });
      }
    });
    const X = luSolve({ rows: sys.N, cols: sys.N, data: sys.A }, rhs);
    const columns = data.map((_, k) => {
      const v = new Float64Array(sys.N);
      for (let i = 0; i < sys.N; i++) v[i] = X.data[i * data.length + k]!;
      return v;
    });
    let newtonIterations = 0;
    if (op.cubic !== 0 && opts.newtonColumn !== undefined) {
      const k = opts.newtonColumn;
      const bvec = new Float64Array(sys.N);
      for (let i = 0; i < sys.N; i++) bvec[i] = rhs.data[i * data.length + k]!;
      newtonIterations = newtonCubic(op, sys, n, columns[k]!, bvec);
    }
    // resolution check per piece
    const tails = pieceTails(op, pieces, n, columns);
    const worst = Math.max(...tails);
    const bad = tails.map((t) => t > tol);
    const nextCount = bounds.length - 1 + bad.filter(Boolean).length;
    if (!bad.some(Boolean) || nextCount * op.C * n > maxUnknowns) {
      return { op, n, pieces, columns, tail: worst, newtonIterations };
    }
    const nb: number[] = [bounds[0]!];
    for (let p = 0; p + 1 < bounds.length; p++) {
      if (bad[p]) nb.push((bounds[p]! + bounds[p + 1]!) / 2);
      nb.push(bounds[p + 1]!);
    }
    bounds = nb;
  }
}

export function pieceTails(op: CompiledOde, pieces: PieceData[], n: number, columns: Float64Array[]): number[] {
  const C = op.C;
  const tails = new Array<number>(pieces.length).fill(0);
  for (const v of columns) {
    for (let c = 0; c < C; c++) {
      let scale = 0;
      for (let p = 0; p < pieces.length; p++) for (let j = 0; j < n; j++) scale = Math.max(scale, Math.abs(v[(p * C + c) * n + j]!));
      if (!(scale > 0)) continue;
      for (let p = 0; p < pieces.length; p++) {
        const cf = chebCoeffs(v, (p * C + c) * n, n);
        const t = Math.max(Math.abs(cf[n - 1]!), Math.abs(cf[n - 2]!), Math.abs(cf[n - 3]!)) / scale;
        tails[p] = Math.max(tails[p]!, t);
      }
    }
  }
  return tails;
}

/** Newton for A u + ε P u³ = b (scaled rows), in place on u; returns the iteration count. */
function newtonCubic(op: CompiledOde, sys: System, n: number, u: Float64Array, b: Float64Array): number {
  const N = sys.N, eps = op.cubic;
  for (let it = 1; it <= 60; it++) {
    const J = new Float64Array(sys.A);
    const r = new Float64Array(N);
    for (let i = 0; i < N; i++) { let s = -b[i]!; for (let j = 0; j < N; j++) s += sys.A[i * N + j]! * u[j]!; r[i] = s; }
    for (const er of sys.eqRows) {
      const base = (er.p * op.C + er.c) * n;
      for (let i = 0; i < er.m; i++) {
        const row = er.row0 + i, sc = sys.scale[row]!;
        for (let j = 0; j < n; j++) {
          const uj = u[base + j]!;
          const pij = er.P[i * n + j]! * sc * eps;
          r[row] += pij * uj * uj * uj;
          J[row * N + base + j] += 3 * pij * uj * uj;
        }
      }
    }
    const d = luSolve({ rows: N, cols: N, data: J }, { rows: N, cols: 1, data: r });
    let dmax = 0, umax = 0;
    for (let i = 0; i < N; i++) { u[i] -= d.data[i]!; dmax = Math.max(dmax, Math.abs(d.data[i]!)); umax = Math.max(umax, Math.abs(u[i]!)); }
    if (!Number.isFinite(dmax)) throw new Error('Newton iteration for the cubic term diverged');
    if (dmax <= 1e-13 * Math.max(umax, 1e-300)) return it;
  }
  throw new Error('Newton iteration for the cubic term did not converge in 60 steps');
}

// ------------------------------------------------------------------------------ evaluation

/** Index of the piece holding x (pieces are sorted; a point on a shared end goes to the left piece). */
export function pieceOf(sol: OdeSolution, x: number): number {
  const ps = sol.pieces;
  let lo = 0, hi = ps.length - 1;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (x <= ps[mid]!.r) hi = mid; else lo = mid + 1;
  }
  return lo;
}

const derivCache = new WeakMap<Float64Array, Map<string, Float64Array>>();

/** Nodal values of the k-th derivative of component c of a column on piece p. */
function nodal(sol: OdeSolution, col: Float64Array, p: number, c: number, k: number): Float64Array {
  const n = sol.n;
  const off = (p * sol.op.C + c) * n;
  if (k === 0) return col.subarray(off, off + n);
  let m = derivCache.get(col);
  if (!m) { m = new Map(); derivCache.set(col, m); }
  const key = `${p}:${c}:${k}`;
  let v = m.get(key);
  if (!v) { v = matvecSq(sol.pieces[p]!.D[k]!, col.subarray(off, off + n), n); m.set(key, v); }
  return v;
}

/** Value of the k-th derivative of component c of column `ci` at x. */
export function evalColumn(sol: OdeSolution, ci: number, c: number, x: number, k = 0, p = pieceOf(sol, x)): number {
  const pc = sol.pieces[p]!;
  return baryEval(pc.x, pc.w, nodal(sol, sol.columns[ci]!, p, c, k), x);
}

/** The m interface functionals (component-major) of column `ci` at x, on piece p. */
export function functionals(sol: OdeSolution, ci: number, x: number, p = pieceOf(sol, x)): Float64Array {
  const op = sol.op;
  const m = op.orders.reduce((s, k) => s + k, 0);
  const out = new Float64Array(m);
  const pc = sol.pieces[p]!;
  let q0 = 0;
  for (let c = 0; c < op.C; c++) {
    const K = op.orders[c]!;
    const a = op.a[c]!(x, pc.mid);
    const u = (k: number) => evalColumn(sol, ci, c, x, k, p);
    out[q0] = u(0);
    if (K === 2) out[q0 + 1] = -a * u(1);
    else {
      const e = op.e[c]!(x, pc.mid);
      const de = baryEval(pc.x, pc.w, pc.dev[c]!, x);
      const u1 = u(1), u2 = u(2), u3 = u(3);
      out[q0 + 1] = u1; out[q0 + 2] = e * u2; out[q0 + 3] = de * u2 + e * u3 - a * u1;
    }
    q0 += K;
  }
  return out;
}
