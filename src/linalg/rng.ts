/**
 * Seeded pseudo-random numbers. All randomness in kerneldx flows from here so that
 * the same inputs and seed give the same results.
 */
// xoshiro128**: Blackman & Vigna, "Scrambled linear pseudorandom number generators", ACM TOMS 2021.
export class Rng {
  private s0: number; private s1: number; private s2: number; private s3: number;
  private spare: number | null = null;

  constructor(seed: number) {
    // splitmix32 to spread the seed over the state
    let x = (seed >>> 0) ^ 0x9e3779b9;
    const next = () => {
      x = (x + 0x9e3779b9) >>> 0;
      let z = x;
      z = Math.imul(z ^ (z >>> 16), 0x85ebca6b) >>> 0;
      z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35) >>> 0;
      return (z ^ (z >>> 16)) >>> 0;
    };
    this.s0 = next(); this.s1 = next(); this.s2 = next(); this.s3 = next();
    if ((this.s0 | this.s1 | this.s2 | this.s3) === 0) this.s0 = 1;
  }

  /** uniform 32-bit unsigned integer */
  nextU32(): number {
    const result = Math.imul(rotl(Math.imul(this.s1, 5), 7), 9) >>> 0;
    const t = this.s1 << 9;
    this.s2 ^= this.s0; this.s3 ^= this.s1; this.s1 ^= this.s2; this.s0 ^= this.s3;
    this.s2 ^= t; this.s3 = rotl(this.s3, 11);
    return result;
  }

  /** uniform in [0, 1) with 53 random bits */
  uniform(): number {
    const hi = this.nextU32() >>> 5, lo = this.nextU32() >>> 6;
    return (hi * 67108864 + lo) / 9007199254740992;
  }

  /** standard normal (Marsaglia polar method, Marsaglia & Bray, SIAM Review 1964) */
  normal(): number {
    if (this.spare !== null) { const s = this.spare; this.spare = null; return s; }
    let u: number, v: number, q: number;
    do {
      u = 2 * this.uniform() - 1; v = 2 * this.uniform() - 1; q = u * u + v * v;
    } while (q >= 1 || q === 0);
    const f = Math.sqrt(-2 * Math.log(q) / q);
    this.spare = v * f;
    return u * f;
  }

  normals(n: number): Float64Array {
    const out = new Float64Array(n);
    for (let i = 0; i < n; i++) out[i] = this.normal();
    return out;
  }

  /** integer in [0, n) */
  int(n: number): number {
    return Math.floor(this.uniform() * n);
  }

  /** a child generator with an independent stream, derived deterministically */
  fork(tag: number): Rng {
    return new Rng((this.nextU32() ^ Math.imul(tag + 1, 0x27d4eb2d)) >>> 0);
  }

  /** Fisher–Yates shuffle of 0..n-1 */
  permutation(n: number): number[] {
    const p = Array.from({ length: n }, (_, i) => i);
    for (let i = n - 1; i > 0; i--) { const j = this.int(i + 1); const t = p[i]!; p[i] = p[j]!; p[j] = t; }
    return p;
  }
}

function rotl(x: number, k: number): number {
  return ((x << k) | (x >>> (32 - k))) >>> 0;
}
