/**
 * Orthonormal Legendre polynomials on an interval [a, b]: q_m(x) = sqrt(2m+1) P_m(t),
 * t = 2(x − a)/(b − a) − 1, so that (1/(b−a)) ∫ q_m q_n dx = δ_mn.
 * Three-term recurrence: Abramowitz & Stegun 22.7.10.
 */
import type { Mat } from '../linalg/dense.js';
import { zeros } from '../linalg/dense.js';

/** n × K matrix of q_0..q_{K−1} at the points x. */
export function legendreBasis(x: ArrayLike<number>, K: number, a: number, b: number): Mat {
  const n = x.length;
  const out = zeros(n, K);
  const d = out.data;
  const span = b - a;
  for (let i = 0; i < n; i++) {
    const t = (2 * (x[i]! - a)) / span - 1;
    let p0 = 1, p1 = t;
    const o = i * K;
    if (K > 0) d[o] = 1;
    if (K > 1) d[o + 1] = Math.sqrt(3) * t;
    for (let m = 1; m + 1 < K; m++) {
      const p2 = ((2 * m + 1) * t * p1 - m * p0) / (m + 1);
      d[o + m + 1] = Math.sqrt(2 * m + 3) * p2;
      p0 = p1; p1 = p2;
    }
  }
  return out;
}
