/**
 * Quadrature weights of a point set: the w_k of the forward model
 * u(x_i) = Σ_k G(x_i, s_k) w_k f(s_k) (interface.md §1).
 *  - 1-D: the trapezoid rule over the sorted points.
 *  - 2-D tensor grid: product trapezoid rule.
 *  - 2-D scattered: a Voronoi-area estimate, by counting the cells of a fine lattice over the
 *    domain nearest to each point (deterministic, no randomness).
 */
import type { Mat } from './linalg/dense.js';
import type { Domain } from './types.js';

export function trapezoidWeights1d(x: ArrayLike<number>): Float64Array {
  const n = x.length;
  const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => x[a]! - x[b]!);
  const w = new Float64Array(n);
  if (n === 1) { w[0] = 1; return w; }
  for (let r = 0; r < n - 1; r++) {
    const i = order[r]!, j = order[r + 1]!;
    const h = x[j]! - x[i]!;
    w[i] += h / 2;
    w[j] += h / 2;
  }
  return w;
}

/** Distinct sorted values, with a tolerance relative to the spread. */
function distinctSorted(v: number[], tol: number): number[] {
  const s = [...v].sort((a, b) => a - b);
  const out: number[] = [];
  for (const x of s) if (!out.length || x - out[out.length - 1]! > tol) out.push(x);
  return out;
}

/** If the 2-D points form a full tensor grid, return its axes. */
export function tensorAxes(points: Mat): { xs: number[]; ys: number[] } | null {
  const n = points.rows;
  const X: number[] = [], Y: number[] = [];
  for (let i = 0; i < n; i++) { X.push(points.data[2 * i]!); Y.push(points.data[2 * i + 1]!); }
  const spread = Math.max(Math.max(...X) - Math.min(...X), Math.max(...Y) - Math.min(...Y)) || 1;
  const tol = 1e-9 * spread;
  const xs = distinctSorted(X, tol), ys = distinctSorted(Y, tol);
  if (xs.length * ys.length !== n || xs.length < 2 || ys.length < 2) return null;
  return { xs, ys };
}

export function quadratureWeights(points: Mat, domain: Domain): Float64Array {
  const d = points.cols;
  if (d === 1) return trapezoidWeights1d(points.data);
  const grid = tensorAxes(points);
  if (grid) {
    const wx = trapezoidWeights1d(grid.xs), wy = trapezoidWeights1d(grid.ys);
    const w = new Float64Array(points.rows);
    for (let i = 0; i < points.rows; i++) {
      const ix = nearestIndex(grid.xs, points.data[2 * i]!), iy = nearestIndex(grid.ys, points.data[2 * i + 1]!);
      w[i] = wx[ix]! * wy[iy]!;
    }
    return w;
  }
  return voronoiAreaWeights(points, domain);
}

function nearestIndex(sorted: number[], v: number): number {
  let lo = 0, hi = sorted.length - 1;
  while (hi - lo > 1) { const mid = (lo + hi) >> 1; if (sorted[mid]! <= v) lo = mid; else hi = mid; }
  return Math.abs(sorted[lo]! - v) <= Math.abs(sorted[hi]! - v) ? lo : hi;
}

/**
 * Voronoi-area estimate: lattice cells over the domain (box, disk, or the points' bounding box
 * cut to within 1.5 nearest-neighbour spacings of some point) are given to their nearest point.
 */
export function voronoiAreaWeights(points: Mat, domain: Domain, cellsPerPoint = 64): Float64Array {
  const n = points.rows;
  const P = points.data;
  let x0: number, x1: number, y0: number, y1: number;
  let inside: (x: number, y: number) => boolean = () => true;
  if (domain.kind === 'box') {
    [[x0, x1], [y0, y1]] = domain.bounds;
  } else if (domain.kind === 'disk') {
    const [cx, cy] = domain.center, r = domain.radius;
    x0 = cx - r; x1 = cx + r; y0 = cy - r; y1 = cy + r;
    inside = (x, y) => (x - cx) ** 2 + (y - cy) ** 2 <= r * r;
  } else {
    x0 = Infinity; x1 = -Infinity; y0 = Infinity; y1 = -Infinity;
    for (let i = 0; i < n; i++) {
      x0 = Math.min(x0, P[2 * i]!); x1 = Math.max(x1, P[2 * i]!);
      y0 = Math.min(y0, P[2 * i + 1]!); y1 = Math.max(y1, P[2 * i + 1]!);
    }
  }
  const area = (x1 - x0) * (y1 - y0);
  const total = Math.min(4_000_000, Math.max(10_000, n * cellsPerPoint));
  const h = Math.sqrt(area / total);
  const nx = Math.max(1, Math.ceil((x1 - x0) / h)), ny = Math.max(1, Math.ceil((y1 - y0) / h));
  const hx = (x1 - x0) / nx, hy = (y1 - y0) / ny;
  // bucket the points for nearest-neighbour queries
  const B = Math.max(1, Math.floor(Math.sqrt(n)));
  const bx = (x1 - x0) / B || 1, by = (y1 - y0) / B || 1;
  const buckets: number[][] = Array.from({ length: B * B }, () => []);
  for (let i = 0; i < n; i++) {
    const ix = Math.min(B - 1, Math.max(0, Math.floor((P[2 * i]! - x0) / bx)));
    const iy = Math.min(B - 1, Math.max(0, Math.floor((P[2 * i + 1]! - y0) / by)));
    buckets[iy * B + ix]!.push(i);
  }
  const nearest = (x: number, y: number): [number, number] => {
    const cx = Math.min(B - 1, Math.max(0, Math.floor((x - x0) / bx)));
    const cy = Math.min(B - 1, Math.max(0, Math.floor((y - y0) / by)));
    let best = -1, bd = Infinity;
    for (let ring = 0; ring < B; ring++) {
      for (let jy = cy - ring; jy <= cy + ring; jy++) {
        if (jy < 0 || jy >= B) continue;
        for (let jx = cx - ring; jx <= cx + ring; jx++) {
          if (jx < 0 || jx >= B) continue;
          if (Math.max(Math.abs(jx - cx), Math.abs(jy - cy)) !== ring) continue;
          for (const i of buckets[jy * B + jx]!) {
            const d2 = (P[2 * i]! - x) ** 2 + (P[2 * i + 1]! - y) ** 2;
            if (d2 < bd) { bd = d2; best = i; }
          }
        }
      }
      // any point in a further ring is at least ring*min(bx,by) away
      if (best >= 0 && Math.sqrt(bd) <= ring * Math.min(bx, by)) break;
    }
    return [best, Math.sqrt(bd)];
  };
  // spacing scale for the scattered case
  let cutoff = Infinity;
  if (domain.kind === 'points') {
    const nn: number[] = [];
    for (let i = 0; i < n; i++) {
      let bd = Infinity;
      for (let j = 0; j < n; j++) if (j !== i) bd = Math.min(bd, (P[2 * i]! - P[2 * j]!) ** 2 + (P[2 * i + 1]! - P[2 * j + 1]!) ** 2);
      nn.push(Math.sqrt(bd));
    }
    nn.sort((a, b) => a - b);
    cutoff = 1.5 * nn[Math.floor(n / 2)]!;
  }
  const w = new Float64Array(n);
  for (let iy = 0; iy < ny; iy++) {
    const y = y0 + (iy + 0.5) * hy;
    for (let ix = 0; ix < nx; ix++) {
      const x = x0 + (ix + 0.5) * hx;
      if (!inside(x, y)) continue;
      const [k, d] = nearest(x, y);
      if (d <= cutoff) w[k] += hx * hy;
    }
  }
  return w;
}
