/**
 * Green's function of −a Δu + c u = f on a disk of radius R, Dirichlet boundary, c ≠ 0
 * (c > 0 screened, c < 0 Helmholtz-type away from the Dirichlet eigenvalues).
 *
 * In unit coordinates (x̂ = (x − centre)/R, λ = R √|c/a|) G = g/a with g the Green's function
 * of −Δ + sλ² (s = sign c) on the unit disk. With W_0 = K_0 (s = +1) or −(π/2)Y_0 (s = −1), the
 * free-space part (1/2π)W_0(λ|x − y|), and the image distance d* = √(|x|²|y|² − 2x·y + 1)
 * (d* = |x − y| on the circle):
 *   g = (1/2π)[W_0(λ d) − W_0(λ d*)] + h,
 *   h = (1/2π) Σ_n ε_n W_n(λ) Z_n(λ) [T_n(λ r ρ) − T_n(λ r) T_n(λ ρ)] cos nΔθ,
 * Z_n = I_n or J_n, W_n = K_n or −(π/2)Y_n, T_n(x) = Z_n(x)/Z_n(λ), ε_0 = 1, ε_n = 2.
 * The image term −W_0(λd*) is the disk's Laplace image (ln d*) carried over to the screened
 * equation: it is exactly the boundary value of the free part, so h solves
 * (−Δ + sλ²) h = (sλ²/2π)(1 − ρ²) W_0(λ d*) with h = 0 on the circle — smooth, and its mode
 * coefficients decay like λ²(1 − r²)(1 − ρ²)(rρ)^n/(8n²) even for points at the boundary.
 * The series comes from the Fourier–Bessel mode expansion of g (each mode's radial Green's
 * function Z_n(r<)[W_n(r>) − W_n(1) Z_n(r>)/Z_n(1)]) minus Graf's addition theorem for the
 * free and image parts.
 */
// Radial mode Green's functions of the disk: Duffy, Green's Functions with Applications (2001)
// ch. 6; Polyanin, Handbook of Linear PDEs (2002) ch. 7 (from memory, checked numerically against
// scipy/mpmath mode sums in test/fixtures/sim_disk_make_fixtures.py).
// Addition theorems K_0(|x−y|) = Σ ε_n I_n(r<) K_n(r>) cos nθ, Y_0 likewise with J_n, Y_n: A&S 9.1.79 / Watson §11.41.
import type { Mat } from '../linalg/dense.js';
import { zeros } from '../linalg/dense.js';
import { besselJSeq, besselK0, besselK0e, besselY0, besselY01, w0DiskMean, w0Series } from './bessel.js';

export interface DiskParams { center: [number, number]; radius: number; a: number; c: number }

/** Series cap and tolerance (unit-disk g, absolute). */
const NCAP = 6000;
const TOL = 1e-13;

interface Model {
  s: 1 | -1;
  lambda: number;
  p: DiskParams;
  /** n0: Helmholtz raw/ratio switch (T_n from raw J_n(λ) for n ≤ n0) */
  n0: number;
  /** σ_n(λ) = Z_n(λ)/Z_{n−1}(λ), n = 1..NT */
  sigL: Float64Array;
  /** Helmholtz: J_n(λ), n ≤ n0 */
  zL: Float64Array;
  /** screened: S(λ) = e^λ / I_0(λ) */
  SL: number;
  /** c_n = W_n(λ) Z_n(λ), n = 0..NCAP */
  cn: Float64Array;
}

/** Start value for the backward ratio recurrence: Z_n/Z_{n−1} ≈ x/(n + √(n² ± x²)). */
function ratioStart(x: number, n: number, s: 1 | -1): number {
  return x / (n + Math.sqrt(Math.max(n * n + s * x * x, n * n * 0.25)));
}

/** Backward recurrence for σ_n(x) = Z_n(x)/Z_{n−1}(x), n = lo..L, into sig (index n). */
// I: σ_n = 1/(2n/x + σ_{n+1}); J: σ_n = 1/(2n/x − σ_{n+1}) — A&S 9.6.26 / 9.1.27, the minimal
// solution is stable in the backward direction (Gautschi, SIAM Review 9, 1967).
function ratiosBackward(x: number, lo: number, L: number, s: 1 | -1, sig: Float64Array): void {
  let r = ratioStart(x, L + 1, s);
  for (let n = L; n >= lo; n--) { r = 1 / ((2 * n) / x + s * r); sig[n] = r; }
}

function buildModel(p: DiskParams): Model {
  const s: 1 | -1 = p.c > 0 ? 1 : -1;
  const lambda = p.radius * Math.sqrt(Math.abs(p.c) / p.a);
  const NT = NCAP + 2;
  const L = NT + 40 + Math.ceil(lambda + 10 * Math.sqrt(lambda));
  const sigL = new Float64Array(L + 2);
  const cn = new Float64Array(NCAP + 1);
  let n0 = 0, zL = new Float64Array(1), SL = 0;
  if (s === 1) {
    ratiosBackward(lambda, 1, L, 1, sigL);
    // S(λ) = 1 + 2 Σ_{n≥1} I_n/I_0 = e^λ/I_0(λ) (generating function at t = 1, A&S 9.6.33)
    let prod = 1, S = 1;
    for (let n = 1; n <= L; n++) { prod *= sigL[n]!; S += 2 * prod; if (prod < 1e-18 * S) break; }
    SL = S;
    // κ_n = K_n/K_{n−1}: κ_1 from the Wronskian I_0K_1 + I_1K_0 = 1/λ (A&S 9.6.15),
    // κ_{n+1} = 2n/λ + 1/κ_n (forward, stable for K); c_n = I_nK_n = 1/(λ(κ_{n+1} + σ_{n+1}))
    const lk0i0 = (lambda * besselK0e(lambda)) / S; // λ K_0(λ) I_0(λ)
    let kap = 1 / lk0i0 - sigL[1]!;
    for (let n = 0; n <= NCAP; n++) {
      cn[n] = 1 / (lambda * (kap + sigL[n + 1]!));
      kap = (2 * (n + 1)) / lambda + 1 / kap;
    }
  } else {
    n0 = Math.floor(lambda) + 2;
    zL = new Float64Array(n0 + 2);
    besselJSeq(lambda, n0 + 1, zL);
    ratiosBackward(lambda, n0 + 1, L, -1, sigL);
    for (let n = 1; n <= n0; n++) sigL[n] = zL[n]! / zL[n - 1]!;
    // Y_n forward (stable: Y dominant), c_n = −(π/2) Y_n J_n; beyond n0 in ratio form
    const [y0, y1] = besselY01(lambda);
    let ym = y0, y = y1;
    cn[0] = -(Math.PI / 2) * y0 * zL[0]!;
    for (let n = 1; n <= n0; n++) {
      cn[n] = -(Math.PI / 2) * y * zL[n]!;
      const yn = ((2 * n) / lambda) * y - ym;
      ym = y; y = yn;
    }
    // here ym = Y_{n0}, y = Y_{n0+1}
    let ups = y / ym;
    for (let n = n0 + 1; n <= NCAP; n++) {
      cn[n] = cn[n - 1]! * ups * sigL[n]!;
      ups = (2 * n) / lambda - 1 / ups;
    }
  }
  return { s, lambda, p, n0, sigL, zL, SL, cn };
}

/** T_n(x) = Z_n(x)/Z_n(λ) for n = 0..N (x ≤ λ), into out. sig is scratch of length ≥ L + 2. */
function fillT(m: Model, x: number, N: number, out: Float64Array, sig: Float64Array, raw: Float64Array): void {
  const { s, lambda, sigL } = m;
  if (x === 0) {
    out.fill(0, 0, N + 1);
    out[0] = s === 1 ? Math.exp(-lambda) * m.SL : 1 / m.zL[0]!;
    return;
  }
  // backward start beyond N: the start error shrinks by ~(x/2n)² per step once n > x
  const L = Math.max(N, Math.ceil(2 * x)) + 14;
  if (s === 1) {
    ratiosBackward(x, 1, L, 1, sig);
    // T_0 = I_0(x)/I_0(λ) = I_0(x) e^{−λ} S(λ), I_0 by its positive series (A&S 9.6.12)
    const q = (x * x) / 4;
    let term = 1, i0 = 1;
    for (let k = 1; k < 1000 && term > 1e-17 * i0; k++) { term *= q / (k * k); i0 += term; }
    let t = i0 * Math.exp(-lambda) * m.SL;
    out[0] = t;
    for (let n = 1; n <= N; n++) { t *= sig[n]! / sigL[n]!; out[n] = t; }
    return;
  }
  const n0 = m.n0;
  besselJSeq(x, n0, raw);
  let t = 0;
  for (let n = 0; n <= Math.min(N, n0); n++) { t = raw[n]! / m.zL[n]!; out[n] = t; }
  if (N <= n0) return;
  ratiosBackward(x, n0 + 1, L, -1, sig);
  // T_{n0} from the raw value; if J_{n0}(x) underflowed, every later T_n is 0 as well
  for (let n = n0 + 1; n <= N; n++) { t *= sig[n]! / sigL[n]!; out[n] = t; }
}

/** Number of modes for a pair: the asymptotic tail λ²(1−r²)(1−ρ²) q^{N+1}/(8π(N+1)²(1−q)) below TOL. */
function modesFor(m: Model, r2: number, p2: number, q: number): number {
  const nmin = Math.ceil(m.lambda) + 8;
  const A = (m.lambda * m.lambda * Math.max(1 - r2, 0) * Math.max(1 - p2, 0)) / (8 * Math.PI);
  if (q <= 0 || A === 0) return nmin;
  let N = nmin;
  const lq = Math.log(q), lt = Math.log(TOL) - Math.log(A) + Math.log(1 - q + 1e-300);
  while (N < NCAP && (N + 1) * lq - 2 * Math.log(N + 1) > lt) N = Math.min(NCAP, Math.ceil(N * 1.25) + 4);
  return N;
}

/** T_n(λ r) of one point, n = 0..N (cached per point by the kernel builder). */
interface PointTable { r2: number; T: Float64Array; N: number }

export interface DiskKernelBuilder {
  /** G at one off-diagonal pair (physical coordinates) */
  pair: (x: number, y: number, xi: number, eta: number) => number;
  /** the mean of G over a disk of area w centred at (x, y) */
  diagonal: (x: number, y: number, w: number) => number;
}

/** The c ≠ 0 Dirichlet disk Green's function of −aΔu + cu = f. */
export function diskScreened(p: DiskParams): DiskKernelBuilder & {
  table: (x: number, y: number) => PointTable;
  pairT: (x: number, y: number, xi: number, eta: number, A: PointTable, B: PointTable) => number;
  diagonalT: (x: number, y: number, w: number, A: PointTable) => number;
} {
  if (!(p.c !== 0 && p.a > 0 && p.radius > 0)) throw new Error('diskScreened: needs a > 0, radius > 0, c ≠ 0');
  const m = buildModel(p);
  const { s, lambda } = m;
  const LMAX = NCAP + Math.ceil(lambda + 10 * Math.sqrt(lambda)) + 40;
  const sig = new Float64Array(LMAX + 2), raw = new Float64Array(m.n0 + 2);
  const Tp = new Float64Array(NCAP + 1), Tr = new Float64Array(NCAP + 1), Tq = new Float64Array(NCAP + 1);
  const W0 = (z: number) => (z <= 2 ? w0Series(z, s) : s === 1 ? besselK0(z) : -(Math.PI / 2) * besselY0(z));
  const unit = (x: number, y: number): [number, number] => [(x - p.center[0]) / p.radius, (y - p.center[1]) / p.radius];
  const table = (x: number, y: number): PointTable => {
    const [x1, x2] = unit(x, y);
    const r2 = x1 * x1 + x2 * x2;
    const N = Math.min(NCAP, 2 * modesFor(m, r2, r2, r2));
    const T = new Float64Array(N + 1);
    fillT(m, lambda * Math.sqrt(r2), N, T, sig, raw);
    return { r2, T, N };
  };
  // h at a pair of unit-disk points, with the mode number checked against the last terms
  const h = (x1: number, x2: number, y1: number, y2: number, A: PointTable | null, B: PointTable | null): number => {
    const r2 = x1 * x1 + x2 * x2, p2 = y1 * y1 + y2 * y2;
    const rr = Math.sqrt(r2), pp = Math.sqrt(p2), q = rr * pp;
    const cosT = q > 0 ? Math.max(-1, Math.min(1, (x1 * y1 + x2 * y2) / q)) : 1;
    let N = modesFor(m, r2, p2, q);
    for (;;) {
      fillT(m, lambda * q, N, Tp, sig, raw);
      let ta: Float64Array = Tr, tb: Float64Array = Tq;
      if (A && A.N >= N) ta = A.T; else fillT(m, lambda * rr, N, Tr, sig, raw);
      if (B && B.N >= N) tb = B.T; else fillT(m, lambda * pp, N, Tq, sig, raw);
      const cn = m.cn;
      let sum = cn[0]! * (Tp[0]! - ta[0]! * tb[0]!);
      let cPrev = 1, cCur = cosT, last = 0;
      for (let n = 1; n <= N; n++) {
        last = 2 * cn[n]! * (Tp[n]! - ta[n]! * tb[n]!);
        sum += last * cCur;
        const cNext = 2 * cosT * cCur - cPrev;
        cPrev = cCur; cCur = cNext;
      }
      // geometric tail estimate from the last coefficient
      const tail = q < 1 ? (Math.abs(last) * q) / (1 - q) : Infinity;
      if (tail <= 10 * TOL || N >= NCAP) return sum / (2 * Math.PI);
      N = Math.min(NCAP, 2 * N);
    }
  };
  const onBoundary = (r2: number) => r2 >= 1 - 1e-12;
  const pairT = (x: number, y: number, xi: number, eta: number, A: PointTable | null, B: PointTable | null): number => {
    const [x1, x2] = unit(x, y), [y1, y2] = unit(xi, eta);
    const r2 = x1 * x1 + x2 * x2, p2 = y1 * y1 + y2 * y2;
    if (onBoundary(r2) || onBoundary(p2)) return 0;
    const d = Math.hypot(x1 - y1, x2 - y2);
    const ds = Math.sqrt(Math.max(r2 * p2 - 2 * (x1 * y1 + x2 * y2) + 1, 0));
    const g = (W0(lambda * d) - W0(lambda * ds)) / (2 * Math.PI) + h(x1, x2, y1, y2, A, B);
    return g / p.a;
  };
  const diagonalT = (x: number, y: number, w: number, A: PointTable | null): number => {
    const [x1, x2] = unit(x, y);
    const r2 = x1 * x1 + x2 * x2;
    if (onBoundary(r2)) return 0;
    const rho = Math.sqrt(w / Math.PI) / p.radius;
    // exact mean of the free part over the cell, the smooth rest at the centre (error O(ρ²))
    const g = (w0DiskMean(lambda * rho, s) - W0(lambda * (1 - r2))) / (2 * Math.PI) + h(x1, x2, x1, x2, A, A);
    return g / p.a;
  };
  return {
    pair: (x, y, xi, eta) => pairT(x, y, xi, eta, null, null),
    diagonal: (x, y, w) => diagonalT(x, y, w, null),
    table, pairT, diagonalT,
  };
}

/** G on (pointsOut × pointsIn) for the c ≠ 0 disk; symmetric fill when both point sets agree. */
export function diskScreenedKernel(p: DiskParams, pOut: Mat, pIn: Mat, wIn: Float64Array): Mat {
  const b = diskScreened(p);
  const nOut = pOut.rows, nIn = pIn.rows;
  const G = zeros(nOut, nIn);
  const P = pOut.data, S = pIn.data;
  const sym = nOut === nIn && P.every((v, j) => v === S[j]);
  const tOut = Array.from({ length: nOut }, (_, i) => b.table(P[2 * i]!, P[2 * i + 1]!));
  const tIn = sym ? tOut : Array.from({ length: nIn }, (_, k) => b.table(S[2 * k]!, S[2 * k + 1]!));
  for (let i = 0; i < nOut; i++) {
    for (let k = sym ? i : 0; k < nIn; k++) {
      const same = P[2 * i] === S[2 * k] && P[2 * i + 1] === S[2 * k + 1];
      const v = same ? b.diagonalT(S[2 * k]!, S[2 * k + 1]!, wIn[k]!, tIn[k]!)
        : b.pairT(P[2 * i]!, P[2 * i + 1]!, S[2 * k]!, S[2 * k + 1]!, tOut[i]!, tIn[k]!);
      G.data[i * nIn + k] = v;
      // self-adjoint operator: G(x, s) = G(s, x)
      if (sym && k !== i) G.data[k * nIn + i] = v;
    }
  }
  return G;
}

export interface Resonance { n: number; zero: number; gap: number }

/**
 * The Dirichlet eigenvalue j²_{n,·} of the unit disk nearest to λ² (λ = R√(−c/a)), by Newton's
 * method on J_n from λ for every order n ≤ λ + 1 (zeros j_{n,k} > n). gap = |λ² − j²|/j².
 * Returns null when no zero is within one unit of λ.
 */
// Dirichlet eigenfunctions J_n(j_{n,k} r) cos nθ of the disk: Courant & Hilbert vol. 1 ch. V §5.
export function diskResonance(lambda: number): Resonance | null {
  let best: Resonance | null = null;
  const nmax = Math.floor(lambda) + 1;
  const J = new Float64Array(nmax + 3);
  for (let n = 0; n <= nmax; n++) {
    let x = lambda, ok = false;
    for (let it = 0; it < 40; it++) {
      besselJSeq(x, n + 1, J);
      const jn = J[n]!, dj = n === 0 ? -J[1]! : J[n - 1]! - (n / x) * jn; // A&S 9.1.27
      const step = jn / dj;
      if (!Number.isFinite(step) || (it === 0 && Math.abs(step) > 1)) break;
      x -= step;
      if (x <= 0) break;
      if (Math.abs(step) < 1e-14 * x) { ok = true; break; }
    }
    if (!ok) continue;
    const gap = Math.abs(lambda * lambda - x * x) / (x * x);
    if (!best || gap < best.gap) best = { n, zero: x, gap };
  }
  return best;
}
