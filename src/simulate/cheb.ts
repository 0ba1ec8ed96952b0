/**
 * Chebyshev tools on an interval [l, r]: points, barycentric weights, differentiation and
 * interpolation matrices, coefficients. Matrices are row-major Float64Array (n × n).
 */
// Barycentric interpolation and weights of Chebyshev points: Berrut & Trefethen, SIAM Review 46 (2004).
// Differentiation matrix from barycentric weights with the negative-sum diagonal: Baltensperger & Trummer, SIAM J. Sci. Comput. 24 (2003).

/** n Chebyshev points of the second kind on [l, r], ascending (endpoints included). */
export function chebPoints(n: number, l: number, r: number): Float64Array {
  const x = new Float64Array(n);
  if (n === 1) { x[0] = (l + r) / 2; return x; }
  for (let j = 0; j < n; j++) {
    const t = -Math.cos((j * Math.PI) / (n - 1));
    x[j] = l + ((t + 1) * (r - l)) / 2;
  }
  x[0] = l; x[n - 1] = r;
  return x;
}

/** m Chebyshev points of the first kind on [l, r], ascending (interior only). */
export function chebPoints1(m: number, l: number, r: number): Float64Array {
  const y = new Float64Array(m);
  for (let i = 0; i < m; i++) {
    const t = -Math.cos(((2 * i + 1) * Math.PI) / (2 * m));
    y[i] = l + ((t + 1) * (r - l)) / 2;
  }
  return y;
}

/** Barycentric weights of the second-kind points (any common factor dropped). */
export function baryWeights(n: number): Float64Array {
  const w = new Float64Array(n);
  for (let j = 0; j < n; j++) w[j] = (j % 2 ? -1 : 1) * (j === 0 || j === n - 1 ? 0.5 : 1);
  return w;
}

/** First-derivative matrix on the given nodes with barycentric weights w. */
export function diffMatrix(x: Float64Array, w: Float64Array): Float64Array {
  const n = x.length;
  const D = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    let s = 0;
    for (let j = 0; j < n; j++) {
      if (j === i) continue;
      const v = (w[j]! / w[i]!) / (x[i]! - x[j]!);
      D[i * n + j] = v;
      s += v;
    }
    D[i * n + i] = -s;
  }
  return D;
}

/** Square matrix product (n × n) · (n × n). */
export function sqMul(A: Float64Array, B: Float64Array, n: number): Float64Array {
  const C = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let k = 0; k < n; k++) {
      const a = A[i * n + k]!;
      if (a === 0) continue;
      for (let j = 0; j < n; j++) C[i * n + j] += a * B[k * n + j]!;
    }
  }
  return C;
}

/** Interpolation matrix (targets × nodes) for the barycentric interpolant. */
export function interpMatrix(x: Float64Array, w: Float64Array, targets: Float64Array): Float64Array {
  const n = x.length, m = targets.length;
  const P = new Float64Array(m * n);
  for (let i = 0; i < m; i++) {
    const t = targets[i]!;
    let hit = -1;
    let s = 0;
    for (let j = 0; j < n; j++) {
      const d = t - x[j]!;
      if (d === 0) { hit = j; break; }
      const v = w[j]! / d;
      P[i * n + j] = v;
      s += v;
    }
    if (hit >= 0) {
      P.fill(0, i * n, (i + 1) * n);
      P[i * n + hit] = 1;
    } else {
      for (let j = 0; j < n; j++) P[i * n + j] /= s;
    }
  }
  return P;
}

/** Value at t of the barycentric interpolant through (x, f) (second barycentric formula). */
export function baryEval(x: Float64Array, w: Float64Array, f: ArrayLike<number>, t: number, offset = 0): number {
  let num = 0, den = 0;
  for (let j = 0; j < x.length; j++) {
    const d = t - x[j]!;
    if (d === 0) return f[offset + j]!;
    const v = w[j]! / d;
    num += v * f[offset + j]!;
    den += v;
  }
  return num / den;
}

/** Chebyshev coefficients of the interpolant through values at the second-kind points (ascending). */
export function chebCoeffs(f: ArrayLike<number>, offset: number, n: number): Float64Array {
  const c = new Float64Array(n);
  if (n === 1) { c[0] = f[offset]!; return c; }
  const N = n - 1;
  // node j (ascending) is t_j = −cos(jπ/N) = cos((N − j)π/N); T_k(t_j) = cos(k (N − j) π / N)
  for (let k = 0; k < n; k++) {
    let s = 0;
    for (let j = 0; j < n; j++) {
      const wgt = j === 0 || j === N ? 0.5 : 1;
      s += wgt * f[offset + j]! * Math.cos((k * (N - j) * Math.PI) / N);
    }
    c[k] = (s * 2) / N * (k === 0 || k === N ? 0.5 : 1);
  }
  return c;
}
