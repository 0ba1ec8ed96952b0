/**
 * Columns G(·, s) of a 1-D operator's Green's function, each solved directly as a boundary-value
 * problem: every source s is a break of the piecewise collocation of ode.ts, the interface rows
 * there carry the classical jump (flux of the forced component jumps by 1, every other interface
 * functional continuous), and all columns share one banded factorisation. Unlike the basis
 * construction of green1d.ts this never forms exponentially small combinations of exponentially
 * large solutions, so it stays accurate where the homogeneous solutions span hundreds of orders of
 * magnitude (turning points, thin layers). A source on an end of the domain enters through the
 * boundary rows (the boundary condition applies to the values beyond the jump).
 */
// Jump conditions of n-th order systems: Coddington & Levinson, Theory of ODEs (1955) ch. 7 (from memory); collocation: Driscoll & Hale, IMA J. Numer. Anal. 36 (2016).
import { chebPoints1, interpMatrix } from './cheb.js';
import { makePiece, operatorRows, conditionRow, functionalRow, pieceTails, type CompiledOde, type OdeSolution, type PieceData } from './ode.js';
import { bandZeros, bandAdd, bandFactor, bandSolve } from './banded.js';

export interface SourceColumnsOptions {
  /** Chebyshev nodes per piece (default 24) */
  n?: number;
  /** relative Chebyshev tail tolerance (default 1e-11, as ode.ts) */
  tol?: number;
  /** largest number of unknowns before giving up refining (default 60,000) */
  maxUnknowns?: number;
  /** pieces already built (from pieceCache()), shared between calls on the same operator */
  cache?: PieceCache;
}

/** Assembled pieces by end points and node count. */
export type PieceCache = Map<string, CachedPiece>;
export function pieceCache(): PieceCache { return new Map(); }

export interface SourceSolve {
  /** columns indexed by forced component d */
  sol: OdeSolution;
  /** true when every piece met the tail tolerance */
  resolved: boolean;
}

/**
 * Solve for G(·, s) in every forced component, one source at a time (a single extra break keeps
 * the pieces large: the collocation system's conditioning grows like (n²/width)^order, which
 * many small pieces would spoil for fourth order). `startBounds` (sorted, ends included) seeds the
 * pieces, e.g. the pieces of the basis solve; a source within 1e-12·(B − A) of a bound is put on
 * it. `visit` gets the input indices of a source with its solution (equal sources are solved once).
 */
export function forEachSourceColumn(op: CompiledOde, ss: Float64Array, startBounds: number[], visit: (ks: number[], r: SourceSolve) => void, opts: SourceColumnsOptions = {}): void {
  const [A, B] = op.domain;
  const snap = 1e-12 * (B - A);
  const sorted = Array.from(ss).map((s, k) => ({ s, k })).sort((p, q) => p.s - q.s || p.k - q.k);
  const cache = opts.cache ?? pieceCache();
  for (let i = 0; i < sorted.length;) {
    const s = sorted[i]!.s, ks: number[] = [];
    while (i < sorted.length && sorted[i]!.s - s <= snap) ks.push(sorted[i++]!.k);
    visit(ks, solveSource(op, s, startBounds, opts, snap, cache));
  }
}

interface CachedPiece { pc: PieceData; P: Float64Array[]; PL: Float64Array[] }

function solveSource(op: CompiledOde, s: number, startBounds: number[], opts: SourceColumnsOptions, snap: number, cache: Map<string, CachedPiece>): SourceSolve {
  const n = opts.n ?? 24, tol = opts.tol ?? 1e-11, maxUnknowns = opts.maxUnknowns ?? 60000;
  const C = op.C;
  let bounds = [...startBounds];
  if (bounds.every((b) => Math.abs(b - s) > snap)) bounds.splice(bounds.findIndex((b) => b > s), 0, s);
  for (;;) {
    const pieces = bounds.slice(0, -1).map((l, p) => {
      const r = bounds[p + 1]!, key = `${l},${r},${n}`;
      let cp = cache.get(key);
      if (!cp) {
        const pc = makePiece(op, l, r, n);
        const P: Float64Array[] = [], PL: Float64Array[] = [];
        for (let c = 0; c < C; c++) { const m = n - op.orders[c]!; P.push(interpMatrix(pc.x, pc.w, chebPoints1(m, l, r))); PL.push(operatorRows(op, pc, n, c, P[c]!, m)); }
        cp = { pc, P, PL };
        cache.set(key, cp);
      }
      return cp;
    });
    const columns = solveOnPieces(op, pieces, n, [s], snap);
    const pcs = pieces.map((cp) => cp.pc);
    const tails = pieceTails(op, pcs, n, columns);
    const bad = tails.map((t) => t > tol);
    const sol: OdeSolution = { op, n, pieces: pcs, columns, tail: Math.max(...tails), newtonIterations: 0 };
    if (!bad.some(Boolean)) return { sol, resolved: true };
    if ((pieces.length + bad.filter(Boolean).length) * C * n > maxUnknowns) return { sol, resolved: false };
    const nb = [bounds[0]!];
    for (let p = 0; p < pieces.length; p++) { if (bad[p]) nb.push((bounds[p]! + bounds[p + 1]!) / 2); nb.push(bounds[p + 1]!); }
    bounds = nb;
  }
}

/** One banded solve on fixed pieces; returns the columns (unknowns piece-major as in ode.ts). */
function solveOnPieces(op: CompiledOde, cached: CachedPiece[], n: number, uniq: number[], snap: number): Float64Array[] {
  const pieces = cached.map((cp) => cp.pc);
  const C = op.C, NP = pieces.length, N = NP * C * n;
  const col = (p: number, c: number) => (p * C + c) * n;
  const rows: number[] = [], cols: number[] = [], vals: number[] = [];
  const put = (r: number, c: number, v: number) => { rows.push(r); cols.push(c); vals.push(v); };
  let row = 0;
  // rows piece by piece so that the matrix is banded: left conditions, then per piece its
  // equations and the interface with the next piece, then right conditions
  const leftRows: number[][] = [], rightRows: number[][] = [];
  for (let c = 0; c < C; c++) {
    leftRows.push(op.left[c]!.map((cd) => { const r = row++; conditionRow(pieces[0]!, n, 0, cd.coefs, (j, v) => put(r, col(0, c) + j, v)); return r; }));
  }
  const ifaceRow: number[][][] = [];
  for (let p = 0; p < NP; p++) {
    const pc = pieces[p]!;
    for (let c = 0; c < C; c++) {
      const m = n - op.orders[c]!;
      const P = cached[p]!.P[c]!, PL = cached[p]!.PL[c]!;
      for (let i = 0; i < m; i++) {
        for (let j = 0; j < n; j++) put(row + i, col(p, c) + j, PL[i * n + j]!);
        for (let d = 0; d < C; d++) {
          const cf = op.coupling[c]![d];
          if (!cf) continue;
          for (let j = 0; j < n; j++) put(row + i, col(p, d) + j, P[i * n + j]! * cf(pc.x[j]!, pc.mid));
        }
      }
      row += m;
    }
    if (p + 1 < NP) {
      const per: number[][] = [];
      for (let c = 0; c < C; c++) {
        const K = op.orders[c]!, rs: number[] = [];
        for (let q = 0; q < K; q++) {
          const fl = functionalRow(op, pc, n, c, q, n - 1), fr = functionalRow(op, pieces[p + 1]!, n, c, q, 0);
          for (let j = 0; j < n; j++) { put(row, col(p, c) + j, fl[j]!); put(row, col(p + 1, c) + j, -fr[j]!); }
          rs.push(row++);
        }
        per.push(rs);
      }
      ifaceRow.push(per);
    }
  }
  for (let c = 0; c < C; c++) {
    rightRows.push(op.right[c]!.map((cd) => { const r = row++; conditionRow(pieces[NP - 1]!, n, n - 1, cd.coefs, (j, v) => put(r, col(NP - 1, c) + j, v)); return r; }));
  }
  if (row !== N) throw new Error(`collocation: ${row} rows for ${N} unknowns`);
  let kl = 0, ku = 0;
  for (let t = 0; t < rows.length; t++) { const d = cols[t]! - rows[t]!; if (d < -kl) kl = -d; if (d > ku) ku = d; }
  const band = bandZeros(N, kl, ku);
  for (let t = 0; t < rows.length; t++) bandAdd(band, rows[t]!, cols[t]!, vals[t]!);
  // row equilibration as in ode.ts
  const scale = new Float64Array(N);
  for (let r = 0; r < N; r++) {
    const o = r * band.W;
    let mx = 0;
    for (let j = 0; j < band.W; j++) mx = Math.max(mx, Math.abs(band.data[o + j]!));
    if (!(mx > 0)) throw new Error('collocation: empty equation row (degenerate operator)');
    scale[r] = 1 / mx;
    for (let j = 0; j < band.W; j++) band.data[o + j] *= scale[r]!;
  }
  // right-hand sides: the jump of the flux of component d at each source
  const [A, B] = op.domain;
  const Rn = uniq.length * C;
  const X = new Float64Array(N * Rn);
  const boundsR = pieces.map((pc) => pc.r);
  for (let u = 0; u < uniq.length; u++) {
    const s = uniq[u]!;
    for (let d = 0; d < C; d++) {
      const k = u * C + d;
      const K = op.orders[d]!;
      if (s - A <= snap || B - s <= snap) {
        // jump of the derivatives of component d: order 2 u' by −1/a, order 4 u''' by 1/e
        const atLeft = s - A <= snap;
        const pc = pieces[atLeft ? 0 : NP - 1]!, node = atLeft ? 0 : n - 1;
        const jump = new Array<number>(4).fill(0);
        if (K === 2) jump[1] = -1 / pc.av[d]![node]!; else jump[3] = 1 / pc.ev[d]![node]!;
        const conds = atLeft ? op.left[d]! : op.right[d]!, rs = atLeft ? leftRows[d]! : rightRows[d]!;
        conds.forEach((cd, q) => {
          let v = 0;
          cd.coefs.forEach((a, kk) => { v += a * (jump[kk] ?? 0); });
          X[rs[q]! * Rn + k] = (atLeft ? v : -v) * scale[rs[q]!]!;
        });
      } else {
        // interface between pieces p and p + 1 with pieces[p].r = s: flux(s−) − flux(s+) = −1
        let p = 0;
        while (p < NP - 1 && Math.abs(boundsR[p]! - s) > snap) p++;
        const r = ifaceRow[p]![d]![K - 1]!;
        X[r * Rn + k] = -scale[r]!;
      }
    }
  }
  bandFactor(band);
  bandSolve(band, X, Rn);
  const columns: Float64Array[] = [];
  for (let k = 0; k < Rn; k++) {
    const v = new Float64Array(N);
    for (let i = 0; i < N; i++) v[i] = X[i * Rn + k]!;
    columns.push(v);
  }
  return columns;
}
