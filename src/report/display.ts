/**
 * Display-side reductions of a kernel: pick at most ~60 × 60 entries for a heat map, split
 * into symmetric and antisymmetric parts, and 2-D slices binned onto a grid. Pure functions over typed arrays.
 */
import type { Kernel } from '../types.js';
import type { Mat } from '../linalg/dense.js';

/** Evenly spread indices 0 … n−1 (both ends kept), at most `max` of them. */
export function spreadIndices(n: number, max: number): number[] {
  if (n <= max) return Array.from({ length: n }, (_, i) => i);
  const out: number[] = [];
  for (let k = 0; k < max; k++) out.push(Math.round((k * (n - 1)) / (max - 1)));
  return out;
}

export interface HeatGrid {
  /** coordinates of the chosen rows (output points) and columns (input points) */
  rowCoord: number[];
  colCoord: number[];
  /** rows × cols, row-major: exact kernel entries at the chosen points (no smoothing) */
  values: number[][];
}

/**
 * Sub-sample a block of G at evenly spread output and input points. Entries are shown
 * exactly as fitted (point values of G), so the display never invents a smoother kernel.
 */
export function heatGrid(G: Mat, rowCoord: ArrayLike<number>, colCoord: ArrayLike<number>, max = 60,
  block: { rowOffset?: number; colOffset?: number; rows?: number; cols?: number } = {}): HeatGrid {
  const r0 = block.rowOffset ?? 0, c0 = block.colOffset ?? 0;
  const nr = block.rows ?? G.rows, nc = block.cols ?? G.cols;
  const ri = spreadIndices(nr, max), ci = spreadIndices(nc, max);
  const values = ri.map((i) => ci.map((j) => G.data[(r0 + i) * G.cols + c0 + j]!));
  return { rowCoord: ri.map((i) => rowCoord[i]!), colCoord: ci.map((j) => colCoord[j]!), values };
}

/** Whether output and input points coincide (then G(x,s) vs G(s,x) is meaningful entrywise). */
export function samePoints(k: Kernel): boolean {
  if (k.pointsIn.rows !== k.pointsOut.rows || k.components.in !== k.components.out) return false;
  const a = k.pointsIn.data, b = k.pointsOut.data;
  const scale = Math.max(1e-300, ...Array.from(a, Math.abs));
  for (let i = 0; i < a.length; i++) if (Math.abs(a[i]! - b[i]!) > 1e-9 * scale) return false;
  return true;
}

/** (G + Gᵀ)/2 and (G − Gᵀ)/2 of a square matrix. */
export function symParts(G: Mat): { sym: Mat; anti: Mat } {
  const n = G.rows;
  if (G.cols !== n) throw new Error('symParts needs a square matrix');
  const s = new Float64Array(n * n), a = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) {
    const x = G.data[i * n + j]!, y = G.data[j * n + i]!;
    s[i * n + j] = 0.5 * (x + y);
    a[i * n + j] = 0.5 * (x - y);
  }
  return { sym: { rows: n, cols: n, data: s }, anti: { rows: n, cols: n, data: a } };
}

/**
 * A 2-D slice x ↦ G(x, s) of a scalar kernel, binned onto a `bins` × `bins` grid over the
 * output points' bounding box (mean of the points in a cell; empty cells are left out).
 */
export function slice2d(k: Kernel, sourceIndex: number, bins = 36, component = { in: 0, out: 0 }):
  { x: number[]; y: number[]; value: number[]; dx: number; dy: number } {
  const P = k.pointsOut, nOut = P.rows, nIn = k.pointsIn.rows;
  let x0 = Infinity, x1 = -Infinity, y0 = Infinity, y1 = -Infinity;
  for (let i = 0; i < nOut; i++) {
    const x = P.data[2 * i]!, y = P.data[2 * i + 1]!;
    x0 = Math.min(x0, x); x1 = Math.max(x1, x); y0 = Math.min(y0, y); y1 = Math.max(y1, y);
  }
  const dx = (x1 - x0) / bins || 1, dy = (y1 - y0) / bins || 1;
  const sum = new Float64Array(bins * bins), cnt = new Float64Array(bins * bins);
  const col = component.in * nIn + sourceIndex;
  for (let i = 0; i < nOut; i++) {
    const bx = Math.min(bins - 1, Math.floor((P.data[2 * i]! - x0) / dx));
    const by = Math.min(bins - 1, Math.floor((P.data[2 * i + 1]! - y0) / dy));
    const v = k.G.data[(component.out * nOut + i) * k.G.cols + col]!;
    if (!Number.isFinite(v)) continue;
    sum[by * bins + bx]! += v; cnt[by * bins + bx]! += 1;
  }
  const out = { x: [] as number[], y: [] as number[], value: [] as number[], dx, dy };
  for (let by = 0; by < bins; by++) for (let bx = 0; bx < bins; bx++) {
    const c = cnt[by * bins + bx]!;
    if (c === 0) continue;
    out.x.push(x0 + (bx + 0.5) * dx); out.y.push(y0 + (by + 0.5) * dy); out.value.push(sum[by * bins + bx]! / c);
  }
  return out;
}

/** Input points nearest to the given fractions of the bounding box (for 2-D slices). */
export function sliceSources(k: Kernel, fractions: [number, number][]): number[] {
  const P = k.pointsIn, n = P.rows;
  let x0 = Infinity, x1 = -Infinity, y0 = Infinity, y1 = -Infinity;
  for (let i = 0; i < n; i++) {
    x0 = Math.min(x0, P.data[2 * i]!); x1 = Math.max(x1, P.data[2 * i]!);
    y0 = Math.min(y0, P.data[2 * i + 1]!); y1 = Math.max(y1, P.data[2 * i + 1]!);
  }
  const out: number[] = [];
  for (const [fx, fy] of fractions) {
    const tx = x0 + fx * (x1 - x0), ty = y0 + fy * (y1 - y0);
    let best = 0, bd = Infinity;
    for (let i = 0; i < n; i++) {
      const d = (P.data[2 * i]! - tx) ** 2 + (P.data[2 * i + 1]! - ty) ** 2;
      if (d < bd) { bd = d; best = i; }
    }
    if (!out.includes(best)) out.push(best);
  }
  return out;
}
