/**
 * Point values of the Green's function of −∇·(a ∇u) + c u = f in 2-D, constant a > 0 and c:
 *  - box [ax, bx] × [ay, by], each side Dirichlet or Neumann: single eigenfunction series
 *      G = (1/a) Σ_m X_m(x) X_m(ξ) g_m(y, η),
 *    X_m the normalised 1-D eigenfunctions across one axis and g_m the closed-form 1-D Green's
 *    function of −d² + (μ_m + c/a) along the other. For every pair the series runs along the
 *    axis with the larger separation, whose terms decay like exp(−√μ_m · separation), and is
 *    cut when that factor drops below 1e-16.
 *  - disk, Dirichlet, c = 0: the closed form by inversion in the circle; c ≠ 0: disk.ts
 *    (free part + image part + a fast-converging Fourier–Bessel remainder).
 * On the diagonal (x = s) G is logarithmically infinite; the truth kernel holds there the
 * average of G over a disk of area w (the point's quadrature weight) centred at the point:
 *   (1/(2πa)) (1/2 − ln ρ) + R(s, s),  ρ = √(w/π),  R = G + ln|x − s|/(2πa) the regular part.
 */
// Unit-square single series (reference entry l): Polyanin (2002) ch. 7; Duffy (2001) (from memory).
// Unit-disk Green's function (reference entry j): Evans, PDE 2nd ed. §2.2.4; Polyanin (2002) ch. 7.
import type { Mat } from '../linalg/dense.js';
import { zeros } from '../linalg/dense.js';
import type { PdeSpec, SideCondition } from './spec.js';
import { diskScreenedKernel } from './disk.js';

type Bc = 'dirichlet' | 'neumann';

/** Normalised eigenfunctions of −d²/dt² on [0, L] with the given end conditions. */
interface ModeFamily {
  L: number;
  /** eigenvalue μ_m (m = 0, 1, ...) */
  mu: (m: number) => number;
  /** X_m(t) for t ∈ [0, L] */
  X: (m: number, t: number) => number;
}

function modes(left: Bc, right: Bc, L: number): ModeFamily {
  const s2 = Math.sqrt(2 / L);
  if (left === 'dirichlet' && right === 'dirichlet') {
    return { L, mu: (m) => ((m + 1) * Math.PI / L) ** 2, X: (m, t) => s2 * Math.sin((m + 1) * Math.PI * t / L) };
  }
  if (left === 'neumann' && right === 'neumann') {
    return { L, mu: (m) => (m * Math.PI / L) ** 2, X: (m, t) => (m === 0 ? Math.sqrt(1 / L) : s2 * Math.cos(m * Math.PI * t / L)) };
  }
  if (left === 'dirichlet') {
    return { L, mu: (m) => ((m + 0.5) * Math.PI / L) ** 2, X: (m, t) => s2 * Math.sin((m + 0.5) * Math.PI * t / L) };
  }
  return { L, mu: (m) => ((m + 0.5) * Math.PI / L) ** 2, X: (m, t) => s2 * Math.cos((m + 0.5) * Math.PI * t / L) };
}

/** Green's function of −g'' + q g on [0, L] with end conditions, at (y, η), overflow-free. */
export function green1dScreened(q: number, left: Bc, right: Bc, L: number, y: number, eta: number): number {
  const lo = Math.min(y, eta), hi = Math.max(y, eta);
  if (Math.abs(q) * L * L < 1e-12) {
    const u1 = left === 'dirichlet' ? lo : 1, u2 = right === 'dirichlet' ? L - hi : 1;
    const W = left === 'dirichlet' ? (right === 'dirichlet' ? L : 1) : (right === 'dirichlet' ? 1 : 0);
    if (W === 0) throw new Error('Neumann–Neumann mode with q = 0 has no Green\'s function');
    return (u1 * u2) / W;
  }
  if (q > 0) {
    const k = Math.sqrt(q);
    const s1 = left === 'dirichlet' ? -Math.expm1(-2 * k * lo) : 1 + Math.exp(-2 * k * lo);
    const s2 = right === 'dirichlet' ? -Math.expm1(-2 * k * (L - hi)) : 1 + Math.exp(-2 * k * (L - hi));
    const den = left === right ? -Math.expm1(-2 * k * L) : 1 + Math.exp(-2 * k * L);
    return (Math.exp(-k * (hi - lo)) * s1 * s2) / (2 * k * den);
  }
  const k = Math.sqrt(-q);
  const u1 = left === 'dirichlet' ? Math.sin(k * lo) : Math.cos(k * lo);
  const u2 = right === 'dirichlet' ? Math.sin(k * (L - hi)) : Math.cos(k * (L - hi));
  let W: number;
  if (left === 'dirichlet') W = right === 'dirichlet' ? k * Math.sin(k * L) : k * Math.cos(k * L);
  else W = right === 'dirichlet' ? k * Math.cos(k * L) : -k * Math.sin(k * L);
  if (Math.abs(W) < 1e-12 * k) throw new Error(`resonance: c/a hits an eigenvalue of the box (mode q = ${q})`);
  return (u1 * u2) / W;
}

export interface BoxModel {
  kind: 'box';
  a: number; kap2: number;
  bounds: [[number, number], [number, number]];
  sides: { left: Bc; right: Bc; bottom: Bc; top: Bc };
  xModes: ModeFamily; yModes: ModeFamily;
}

export function boxModel(op: PdeSpec): BoxModel {
  if (op.domain.kind !== 'box') throw new Error('boxModel: not a box');
  const [[ax, bx], [ay, by]] = op.domain.bounds;
  const t = (s: SideCondition) => s.type;
  const sides = { left: t(op.sides.left), right: t(op.sides.right), bottom: t(op.sides.bottom), top: t(op.sides.top) };
  return {
    kind: 'box', a: op.a, kap2: op.c / op.a, bounds: op.domain.bounds, sides,
    xModes: modes(sides.left, sides.right, bx - ax), yModes: modes(sides.bottom, sides.top, by - ay),
  };
}

const CUT = 25; // series cut where exp(−√μ_m · separation) < exp(−25) ≈ 1e-11

/**
 * G0 = a·G at (x, y; ξ, η) off the diagonal, in box-local coordinates (origin at the lower-left corner).
 * `along`: 'x' expands in x-modes (Green's function along y), 'y' the other way.
 */
function boxSeries(bm: BoxModel, x: number, y: number, xi: number, eta: number, along: 'x' | 'y'): number {
  const fam = along === 'x' ? bm.xModes : bm.yModes;
  const [p, q, pp, qq] = along === 'x' ? [x, y, xi, eta] : [y, x, eta, xi];
  const [l, r] = along === 'x' ? [bm.sides.bottom, bm.sides.top] : [bm.sides.left, bm.sides.right];
  const Lg = along === 'x' ? bm.yModes.L : bm.xModes.L;
  const d = Math.abs(q - qq);
  let sum = 0;
  for (let m = 0; m < 1_000_000; m++) {
    const mu = fam.mu(m);
    const qm = mu + bm.kap2;
    sum += fam.X(m, p) * fam.X(m, pp) * green1dScreened(qm, l, r, Lg, q, qq);
    if (qm > 0 && Math.sqrt(qm) * d > CUT && m > 2) break;
    if (d === 0 && m > 200000) break;
  }
  return sum;
}

/** Box Green's function at one off-diagonal pair (physical coordinates). */
export function boxGreen(bm: BoxModel, x: number, y: number, xi: number, eta: number): number {
  const [[ax], [ay]] = bm.bounds;
  const X = x - ax, Y = y - ay, XI = xi - ax, ETA = eta - ay;
  const along = Math.abs(Y - ETA) >= Math.abs(X - XI) ? 'x' : 'y';
  return boxSeries(bm, X, Y, XI, ETA, along) / bm.a;
}

function onDirichletSide(bm: BoxModel, x: number, y: number): boolean {
  const [[ax, bx], [ay, by]] = bm.bounds;
  const tol = 1e-12 * Math.max(bx - ax, by - ay);
  return (Math.abs(x - ax) <= tol && bm.sides.left === 'dirichlet') || (Math.abs(x - bx) <= tol && bm.sides.right === 'dirichlet')
    || (Math.abs(y - ay) <= tol && bm.sides.bottom === 'dirichlet') || (Math.abs(y - by) <= tol && bm.sides.top === 'dirichlet');
}

/**
 * Cell average of G over a disk of area w at (x, y): the singular part exactly, the regular part
 * R(s, s) as the mean of G(s ± ρ e, s) + ln ρ/(2πa) over the four axis directions (error O(ρ²)).
 * The two offsets along one axis share one series.
 */
function boxDiagonal(bm: BoxModel, x: number, y: number, w: number): number {
  if (onDirichletSide(bm, x, y)) return 0;
  const rho = Math.sqrt(w / Math.PI);
  const [[ax, bx], [ay, by]] = bm.bounds;
  const X = x - ax, Y = y - ay;
  const phi = -Math.log(rho) / (2 * Math.PI * bm.a);
  let s = 0, k = 0;
  for (const along of ['x', 'y'] as const) {
    const fam = along === 'x' ? bm.xModes : bm.yModes;
    const p = along === 'x' ? X : Y, q = along === 'x' ? Y : X;
    const [l, r] = along === 'x' ? [bm.sides.bottom, bm.sides.top] : [bm.sides.left, bm.sides.right];
    const Lg = along === 'x' ? by - ay : bx - ax;
    const offs = [q + rho, q - rho].filter((t) => t >= 0 && t <= Lg);
    if (!offs.length) continue;
    let sum = 0;
    for (let m = 0; m < 1_000_000; m++) {
      const qm = fam.mu(m) + bm.kap2;
      const xm = fam.X(m, p);
      let g = 0;
      for (const t of offs) g += green1dScreened(qm, l, r, Lg, t, q);
      sum += xm * xm * g;
      if (qm > 0 && Math.sqrt(qm) * rho > CUT && m > 2) break;
    }
    s += sum / bm.a - offs.length * phi;
    k += offs.length;
  }
  return (0.5 - Math.log(rho)) / (2 * Math.PI * bm.a) + s / k;
}

/** Dirichlet disk, −aΔ: closed form (1/(4πa)) ln((|x|²|y|² − 2x·y + 1)/|x − y|²) in unit coordinates. */
export function diskGreen(center: [number, number], R: number, a: number, x: number, y: number, xi: number, eta: number): number {
  const x1 = (x - center[0]) / R, x2 = (y - center[1]) / R, y1 = (xi - center[0]) / R, y2 = (eta - center[1]) / R;
  const num = (x1 * x1 + x2 * x2) * (y1 * y1 + y2 * y2) - 2 * (x1 * y1 + x2 * y2) + 1;
  const den = (x1 - y1) ** 2 + (x2 - y2) ** 2;
  return Math.log(num / den) / (4 * Math.PI * a);
}

function diskDiagonal(center: [number, number], R: number, a: number, x: number, y: number, w: number): number {
  const r2 = ((x - center[0]) ** 2 + (y - center[1]) ** 2) / (R * R);
  if (r2 >= 1 - 1e-12) return 0;
  const rho = Math.sqrt(w / Math.PI);
  return (0.5 - Math.log(rho) + Math.log(1 - r2) + Math.log(R)) / (2 * Math.PI * a);
}

/** G on (pointsOut × pointsIn) for a 'pde' spec; wIn are the input points' quadrature weights (diagonal cells). */
export function pdeKernel(op: PdeSpec, pOut: Mat, pIn: Mat, wIn: Float64Array): Mat {
  const nOut = pOut.rows, nIn = pIn.rows;
  const G = zeros(nOut, nIn);
  const P = pOut.data, S = pIn.data;
  const same = (i: number, k: number) => P[2 * i] === S[2 * k] && P[2 * i + 1] === S[2 * k + 1];
  if (op.domain.kind === 'disk') {
    const { center, radius } = op.domain;
    if (op.c !== 0) return diskScreenedKernel({ center, radius, a: op.a, c: op.c }, pOut, pIn, wIn);
    for (let i = 0; i < nOut; i++) {
      for (let k = 0; k < nIn; k++) {
        G.data[i * nIn + k] = same(i, k)
          ? diskDiagonal(center, radius, op.a, S[2 * k]!, S[2 * k + 1]!, wIn[k]!)
          : diskGreen(center, radius, op.a, P[2 * i]!, P[2 * i + 1]!, S[2 * k]!, S[2 * k + 1]!);
      }
    }
    return G;
  }
  const bm = boxModel(op);
  const gOut = tensorAxes2(pOut), gIn = tensorAxes2(pIn);
  if (gOut && gIn) return boxKernelTensor(bm, pOut, pIn, wIn, gOut, gIn);
  const symmetricSet = pOut === pIn || (nOut === nIn && P.every((v, j) => v === S[j]));
  for (let i = 0; i < nOut; i++) {
    for (let k = symmetricSet ? i : 0; k < nIn; k++) {
      let v: number;
      if (same(i, k)) v = boxDiagonal(bm, S[2 * k]!, S[2 * k + 1]!, wIn[k]!);
      else if (onDirichletSide(bm, P[2 * i]!, P[2 * i + 1]!) || onDirichletSide(bm, S[2 * k]!, S[2 * k + 1]!)) v = 0;
      else v = boxGreen(bm, P[2 * i]!, P[2 * i + 1]!, S[2 * k]!, S[2 * k + 1]!);
      G.data[i * nIn + k] = v;
      // the operator is self-adjoint: G(x, s) = G(s, x) off the diagonal
      if (symmetricSet && k !== i) G.data[k * nIn + i] = v;
    }
  }
  return G;
}

interface Axes2 { xs: Float64Array; ys: Float64Array; ix: Int32Array; iy: Int32Array }

/** If the points form a full tensor grid, the sorted axes and each point's (ix, iy). */
function tensorAxes2(p: Mat): Axes2 | null {
  const n = p.rows;
  const uniq = (vals: number[]) => Float64Array.from([...new Set(vals)].sort((a, b) => a - b));
  const X: number[] = [], Y: number[] = [];
  for (let i = 0; i < n; i++) { X.push(p.data[2 * i]!); Y.push(p.data[2 * i + 1]!); }
  const xs = uniq(X), ys = uniq(Y);
  if (xs.length * ys.length !== n) return null;
  const mx = new Map<number, number>(), my = new Map<number, number>();
  xs.forEach((v, i) => mx.set(v, i)); ys.forEach((v, i) => my.set(v, i));
  const ix = new Int32Array(n), iy = new Int32Array(n);
  const seen = new Uint8Array(n);
  for (let i = 0; i < n; i++) {
    ix[i] = mx.get(X[i]!)!; iy[i] = my.get(Y[i]!)!;
    const cell = iy[i]! * xs.length + ix[i]!;
    if (seen[cell]) return null;
    seen[cell] = 1;
  }
  return { xs, ys, ix, iy };
}

/**
 * Tensor-grid fast path: tables of X_m(x)X_m(ξ) and g_m(y, η) over the grid axes, so that each
 * pair costs one dot product over the modes it needs.
 */
function boxKernelTensor(bm: BoxModel, pOut: Mat, pIn: Mat, wIn: Float64Array, gO: Axes2, gI: Axes2): Mat {
  const [[ax], [ay]] = bm.bounds;
  const loc = (v: Float64Array, o: number) => Float64Array.from(v, (t) => t - o);
  const xo = loc(gO.xs, ax), xi = loc(gI.xs, ax), yo = loc(gO.ys, ay), yi = loc(gI.ys, ay);
  // smallest nonzero separation along each axis sets the number of modes
  const minSep = (a: Float64Array, b: Float64Array) => {
    let m = Infinity;
    for (const u of a) for (const v of b) { const d = Math.abs(u - v); if (d > 0 && d < m) m = d; }
    return m;
  };
  const sx = minSep(xo, xi), sy = minSep(yo, yi);
  const mCut = (fam: ModeFamily, d: number) => {
    if (!Number.isFinite(d)) return 4;
    let m = 0;
    while (m < 200000) { const q = fam.mu(m) + bm.kap2; if (q > 0 && Math.sqrt(q) * d > CUT && m > 2) break; m++; }
    return m + 1;
  };
  // along x: needs separations in y ≥ separations in x, i.e. the y separation is ≥ the smallest positive one
  const Mx = mCut(bm.xModes, sy), My = mCut(bm.yModes, sx);
  const table = (fam: ModeFamily, a: Float64Array, b: Float64Array, M: number) => {
    const T = new Float64Array(a.length * b.length * M);
    const Xa = a.map(() => 0), Xb = b.map(() => 0);
    for (let m = 0; m < M; m++) {
      for (let i = 0; i < a.length; i++) Xa[i] = fam.X(m, a[i]!);
      for (let k = 0; k < b.length; k++) Xb[k] = fam.X(m, b[k]!);
      for (let i = 0; i < a.length; i++) for (let k = 0; k < b.length; k++) T[(i * b.length + k) * M + m] = Xa[i]! * Xb[k]!;
    }
    return T;
  };
  const gTable = (fam: ModeFamily, l: Bc, r: Bc, Lg: number, a: Float64Array, b: Float64Array, M: number) => {
    const T = new Float64Array(a.length * b.length * M);
    for (let i = 0; i < a.length; i++) for (let k = 0; k < b.length; k++) {
      const o = (i * b.length + k) * M;
      for (let m = 0; m < M; m++) T[o + m] = green1dScreened(fam.mu(m) + bm.kap2, l, r, Lg, a[i]!, b[k]!);
    }
    return T;
  };
  const XX = table(bm.xModes, xo, xi, Mx), GY = gTable(bm.xModes, bm.sides.bottom, bm.sides.top, bm.yModes.L, yo, yi, Mx);
  const YY = table(bm.yModes, yo, yi, My), GX = gTable(bm.yModes, bm.sides.left, bm.sides.right, bm.xModes.L, xo, xi, My);
  const cutX = new Int32Array(yo.length * yi.length), cutY = new Int32Array(xo.length * xi.length);
  const cutFor = (fam: ModeFamily, d: number, M: number) => Math.min(M, d > 0 ? mCut(fam, d) : M);
  for (let i = 0; i < yo.length; i++) for (let k = 0; k < yi.length; k++) cutX[i * yi.length + k] = cutFor(bm.xModes, Math.abs(yo[i]! - yi[k]!), Mx);
  for (let i = 0; i < xo.length; i++) for (let k = 0; k < xi.length; k++) cutY[i * xi.length + k] = cutFor(bm.yModes, Math.abs(xo[i]! - xi[k]!), My);
  const nOut = pOut.rows, nIn = pIn.rows, nxi = xi.length, nyi = yi.length;
  const G = zeros(nOut, nIn);
  // same point set in the same order: G is symmetric (self-adjoint operator), fill the upper triangle
  const sym = nOut === nIn && pOut.data.every((v, j) => v === pIn.data[j]);
  for (let i = 0; i < nOut; i++) {
    const oxi = gO.ix[i]!, oyi = gO.iy[i]!;
    const X = xo[oxi]!, Y = yo[oyi]!;
    const dirOut = onDirichletSide(bm, pOut.data[2 * i]!, pOut.data[2 * i + 1]!);
    for (let k = sym ? i : 0; k < nIn; k++) {
      const kx = gI.ix[k]!, ky = gI.iy[k]!;
      const dX = Math.abs(X - xi[kx]!), dY = Math.abs(Y - yi[ky]!);
      let v = 0;
      if (dX === 0 && dY === 0) v = boxDiagonal(bm, pIn.data[2 * k]!, pIn.data[2 * k + 1]!, wIn[k]!);
      else if (dirOut || onDirichletSide(bm, pIn.data[2 * k]!, pIn.data[2 * k + 1]!)) v = 0;
      else if (dY >= dX) {
        const M = cutX[oyi * nyi + ky]!, a0 = (oxi * nxi + kx) * Mx, b0 = (oyi * nyi + ky) * Mx;
        for (let m = 0; m < M; m++) v += XX[a0 + m]! * GY[b0 + m]!;
        v /= bm.a;
      } else {
        const M = cutY[oxi * nxi + kx]!, a0 = (oyi * nyi + ky) * My, b0 = (oxi * nxi + kx) * My;
        for (let m = 0; m < M; m++) v += YY[a0 + m]! * GX[b0 + m]!;
        v /= bm.a;
      }
      G.data[i * nIn + k] = v;
      if (sym) G.data[k * nIn + i] = v;
    }
  }
  return G;
}
