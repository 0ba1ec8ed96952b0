/**
 * Scalar Bessel functions of order 0 and 1 and sequences J_n(x), n = 0..N, as the disk
 * simulator (disk.ts) needs them. Real arguments x > 0; relative accuracy ~1e-14 (checked
 * against scipy.special in test/simulate/diskScreened.test.ts).
 */
const EULER = 0.5772156649015329;
const J_SCRATCH = new Float64Array(96);

/**
 * W_0(z) = Σ_m (s z²/4)^m/(m!)² [H_m − γ − ln(z/2)]  (H_m harmonic numbers):
 * s = +1 gives K_0(z), s = −1 gives −(π/2) Y_0(z). Used for z ≤ 2.
 */
// K_0 series: Abramowitz & Stegun 9.6.13; Y_0 series: Abramowitz & Stegun 9.1.13.
export function w0Series(z: number, s: 1 | -1): number {
  const q = (s * z * z) / 4, L = Math.log(z / 2) + EULER;
  let term = 1, H = 0, sum = -L;
  for (let m = 1; m < 300; m++) {
    term *= q / (m * m); H += 1 / m;
    const d = term * (H - L);
    sum += d;
    if (Math.abs(term) * (H + Math.abs(L)) <= 1e-17 * Math.abs(sum)) break;
  }
  return sum;
}

/**
 * Mean of W_0(λ t) over the disk t ≤ ρ, as a function of Z = λρ: the term-by-term integral
 * 2∫₀¹ u W_0(Z u) du = Σ_m (s Z²/4)^m/(m!)² [(H_m − γ − ln(Z/2))/(m + 1) + 1/(2(m + 1)²)].
 */
// Integrated term by term from A&S 9.6.13 / 9.1.13 (∫₀¹ u^{2m+1} ln u du = −1/(2m+2)²).
export function w0DiskMean(Z: number, s: 1 | -1): number {
  const q = (s * Z * Z) / 4, L = Math.log(Z / 2) + EULER;
  let term = 1, H = 0, sum = -L + 0.5;
  for (let m = 1; m < 400; m++) {
    term *= q / (m * m); H += 1 / m;
    const d = term * ((H - L) / (m + 1) + 1 / (2 * (m + 1) * (m + 1)));
    sum += d;
    if (Math.abs(term) * (H + Math.abs(L) + 1) <= 1e-17 * Math.abs(sum)) break;
  }
  return sum;
}

/** e^x K_0(x) for x > 2. */
// 2 < x < 25: trapezoidal rule on K_0(x) = ∫₀^∞ exp(−x cosh t) dt (A&S 9.6.24), exponentially
// convergent for this analytic integrand (Trefethen & Weideman, SIAM Review 56, 2014); step 0.1
// keeps the error ≪ 1e-16 relative for x < 25. It is sampled once into piecewise Chebyshev
// interpolants (chebft/chebev: Numerical Recipes 2nd ed. §5.8), evaluated by Clenshaw's recurrence.
// x ≥ 25: asymptotic expansion A&S 9.7.2, summed to its smallest term.
function k0ScaledTrapezoid(x: number): number {
  let sum = 0.5;
  for (let k = 1; k < 2000; k++) {
    const e = x * (Math.cosh(0.1 * k) - 1);
    if (e > 40) break;
    sum += Math.exp(-e);
  }
  return 0.1 * sum;
}

const K0_BREAKS = [2, 3, 4.5, 7, 11, 17, 25];
const K0_DEG = 22;
const K0_COEF: Float64Array[] = K0_BREAKS.slice(1).map((b, i) => chebFit(k0ScaledTrapezoid, K0_BREAKS[i]!, b, K0_DEG));

function chebFit(f: (x: number) => number, l: number, r: number, M: number): Float64Array {
  const v = Float64Array.from({ length: M }, (_, k) => f(l + ((r - l) * (1 + Math.cos((Math.PI * (k + 0.5)) / M))) / 2));
  return Float64Array.from({ length: M }, (_, j) => {
    let s = 0;
    for (let k = 0; k < M; k++) s += v[k]! * Math.cos((Math.PI * j * (k + 0.5)) / M);
    return (2 / M) * s;
  });
}

function piece(x: number): number {
  let i = 0;
  while (x > K0_BREAKS[i + 1]!) i++;
  return i;
}

function clenshaw(c: Float64Array, l: number, r: number, x: number): number {
  const t = (2 * x - l - r) / (r - l), t2 = 2 * t;
  let b1 = 0, b2 = 0;
  for (let j = c.length - 1; j >= 1; j--) { const b0 = t2 * b1 - b2 + c[j]!; b2 = b1; b1 = b0; }
  return t * b1 - b2 + 0.5 * c[0]!;
}

function k0Scaled(x: number): number {
  if (x >= 25) return Math.sqrt(Math.PI / (2 * x)) * asymptoticK(0, x);
  const i = piece(x);
  return clenshaw(K0_COEF[i]!, K0_BREAKS[i]!, K0_BREAKS[i + 1]!, x);
}

/** 1 + (μ−1)/(8x) + (μ−1)(μ−9)/(2!(8x)²) + …, μ = 4ν², to its smallest term (A&S 9.7.2). */
function asymptoticK(nu: number, x: number): number {
  const mu = 4 * nu * nu;
  let term = 1, sum = 1;
  for (let k = 1; k < 100; k++) {
    const next = (term * (mu - (2 * k - 1) ** 2)) / (k * 8 * x);
    if (Math.abs(next) >= Math.abs(term)) break;
    term = next; sum += term;
    if (Math.abs(term) < 1e-17 * Math.abs(sum)) break;
  }
  return sum;
}

/** K_0(x), x > 0. */
export function besselK0(x: number): number {
  if (x <= 2) return w0Series(x, 1);
  if (x > 745) return 0;
  return Math.exp(-x) * k0Scaled(x);
}

/** e^x K_0(x), x > 0 (no overflow or underflow for large x). */
export function besselK0e(x: number): number {
  return x <= 2 ? Math.exp(x) * w0Series(x, 1) : k0Scaled(x);
}

/**
 * J_k(x) for k = 0..n into out (length ≥ n + 1), x ≥ 0. Values below the floating-point range
 * come out as 0.
 */
// Miller's backward recurrence J_{k−1} = (2k/x) J_k − J_{k+1}, normalised by
// J_0 + 2 Σ J_{2k} = 1 (A&S 9.1.46; Numerical Recipes 2nd ed. §6.5).
export function besselJSeq(x: number, n: number, out: Float64Array): void {
  if (x === 0) { out.fill(0, 0, n + 1); out[0] = 1; return; }
  if (x < 1e-8) {
    // leading series term, relative error x²/(4(k+1)) < 1e-16 (A&S 9.1.10)
    let t = 1;
    for (let k = 0; k <= n; k++) { out[k] = t; t *= x / (2 * (k + 1)); }
    return;
  }
  const top = Math.max(n, x);
  let L = Math.ceil(top + 15 + Math.sqrt(40 * top));
  if (L % 2) L++;
  let jp = 0, j = 1e-300, norm = 0, scale = 1;
  out.fill(0, 0, n + 1);
  for (let k = L; k >= 1; k--) {
    // j = J_k (unnormalised), jp = J_{k+1}
    if (k <= n) out[k] = j;
    if (k % 2 === 0) norm += 2 * j;
    const jm = ((2 * k) / x) * j - jp;
    jp = j; j = jm;
    if (Math.abs(j) > 1e250) {
      j *= 1e-250; jp *= 1e-250; norm *= 1e-250; scale *= 1e-250;
      for (let i = k; i <= n; i++) out[i] = out[i]! * 1e-250;
    }
  }
  out[0] = j;
  norm += j;
  void scale;
  for (let k = 0; k <= n; k++) out[k] = out[k]! / norm;
}

/** Y_0(x) and Y_1(x), x > 0. */
// x < 25: Neumann series Y_0 = (2/π)[(ln(x/2) + γ) J_0 − 2 Σ_{k≥1} (−1)^k J_{2k}/k] (A&S 9.1.88),
// Y_1 = −Y_0′ from it with J_{2k}′ = (J_{2k−1} − J_{2k+1})/2 (A&S 9.1.27), J_k by Miller.
// x ≥ 25: Hankel's asymptotic expansions A&S 9.2.5–9.2.10, summed to the smallest term.
export function besselY01(x: number): [number, number] {
  if (x >= 25) return [hankelAsymptotic(0, x)[1], hankelAsymptotic(1, x)[1]];
  const J = jScratch(x);
  const K = J.length - 2;
  const L = Math.log(x / 2) + EULER;
  let s0 = 0, s1 = 0;
  for (let k = 1; 2 * k + 1 <= K + 1; k++) {
    const sg = k % 2 ? -1 : 1;
    s0 += (sg * J[2 * k]!) / k;
    s1 += (sg * (J[2 * k - 1]! - J[2 * k + 1]!)) / k;
  }
  const y0 = (2 / Math.PI) * (L * J[0]! - 2 * s0);
  const y1 = -(2 / Math.PI) * (J[0]! / x - L * J[1]!) + (2 / Math.PI) * s1;
  return [y0, y1];
}

/** Y_0(x) by the Neumann series (x < 25). */
function y0Neumann(x: number): number {
  const J = jScratch(x);
  const K = J.length - 2;
  let s0 = 0;
  for (let k = 1; 2 * k <= K + 1; k++) s0 += ((k % 2 ? -1 : 1) * J[2 * k]!) / k;
  return (2 / Math.PI) * ((Math.log(x / 2) + EULER) * J[0]! - 2 * s0);
}

// For 2 < x < 25, Y_0 = √(2/(πx)) (P sin χ + Q cos χ), χ = x − π/4, with the smooth,
// non-oscillating P, Q of Hankel's form (A&S 9.2.5–9.2.6) sampled from the Neumann series and
// J_0 into the same piecewise Chebyshev interpolants as e^x K_0 (Numerical Recipes §5.8).
const PQ = K0_BREAKS.slice(1).map((b, i) => {
  const pq = (x: number, which: 0 | 1) => {
    const J = new Float64Array(4);
    besselJSeq(x, 1, J);
    const y = y0Neumann(x), chi = x - Math.PI / 4, f = Math.sqrt((Math.PI * x) / 2);
    return which === 0 ? f * (J[0]! * Math.cos(chi) + y * Math.sin(chi)) : f * (-J[0]! * Math.sin(chi) + y * Math.cos(chi));
  };
  return [chebFit((x) => pq(x, 0), K0_BREAKS[i]!, b, K0_DEG), chebFit((x) => pq(x, 1), K0_BREAKS[i]!, b, K0_DEG)] as const;
});

/** Y_0(x), x > 0 (without allocation). */
export function besselY0(x: number): number {
  if (x >= 25) return hankelAsymptotic(0, x)[1];
  if (x <= 2) return y0Neumann(x);
  const i = piece(x);
  const l = K0_BREAKS[i]!, r = K0_BREAKS[i + 1]!;
  const P = clenshaw(PQ[i]![0], l, r, x), Q = clenshaw(PQ[i]![1], l, r, x);
  const chi = x - Math.PI / 4;
  return Math.sqrt(2 / (Math.PI * x)) * (P * Math.sin(chi) + Q * Math.cos(chi));
}

/** J_0..J_{K+1}(x) for the Neumann series (x < 25), in a reused buffer (view of length K + 2). */
function jScratch(x: number): Float64Array {
  const K = Math.min(Math.ceil(x + 15 + Math.sqrt(40 * x)) + 2, J_SCRATCH.length - 2);
  const J = J_SCRATCH.subarray(0, K + 2);
  besselJSeq(x, K + 1, J);
  return J;
}

/** [J_ν(x), Y_ν(x)] for large x by Hankel's expansion (A&S 9.2.5–9.2.10), ν = 0 or 1. */
function hankelAsymptotic(nu: number, x: number): [number, number] {
  const mu = 4 * nu * nu;
  // a_k = (μ−1)(μ−9)…(μ−(2k−1)²)/(k! 8^k x^k); P = Σ (−1)^k a_{2k}, Q = Σ (−1)^k a_{2k+1}
  let a = 1, P = 1, Q = 0;
  for (let k = 1; k < 120; k++) {
    const next = (a * (mu - (2 * k - 1) ** 2)) / (k * 8 * x);
    if (Math.abs(next) >= Math.abs(a) && k > 1) break;
    a = next;
    const sg = Math.floor(k / 2) % 2 ? -1 : 1;
    if (k % 2 === 0) P += sg * a; else Q += sg * a;
    if (Math.abs(a) < 1e-17) break;
  }
  const chi = x - (nu / 2 + 0.25) * Math.PI;
  const f = Math.sqrt(2 / (Math.PI * x));
  return [f * (P * Math.cos(chi) - Q * Math.sin(chi)), f * (P * Math.sin(chi) + Q * Math.cos(chi))];
}
