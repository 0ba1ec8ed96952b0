/**
 * Banded LU with partial pivoting and multi-column solves, for the piecewise collocation
 * systems of sources1d.ts (unknowns piece-major, rows ordered piece by piece, so every row
 * touches at most two neighbouring pieces).
 */
// Banded Gaussian elimination with partial pivoting (upper bandwidth grows to kl + ku): Golub & Van Loan, Matrix Computations (4th ed. 2013) §4.3.5.

/** Row-wise band storage: entry (r, c) at r·W + (c − r + kl), W = 2·kl + ku + 1. */
export interface Band {
  N: number; kl: number; ku: number; W: number;
  data: Float64Array;
  piv: Int32Array;
}

export function bandZeros(N: number, kl: number, ku: number): Band {
  const W = 2 * kl + ku + 1;
  return { N, kl, ku, W, data: new Float64Array(N * W), piv: new Int32Array(N) };
}

export function bandAdd(B: Band, r: number, c: number, v: number): void {
  const o = c - r + B.kl;
  if (o < 0 || o > B.kl + B.ku) throw new Error(`band: entry (${r}, ${c}) outside the band`);
  B.data[r * B.W + o] += v;
}

/** In-place LU; throws when a pivot column is exactly zero (singular system). */
export function bandFactor(B: Band): void {
  const { N, kl, ku, W, data, piv } = B;
  const at = (r: number, c: number) => r * W + (c - r + kl);
  for (let k = 0; k < N; k++) {
    const last = Math.min(N - 1, k + kl);
    let p = k, mx = Math.abs(data[at(k, k)]!);
    for (let i = k + 1; i <= last; i++) { const v = Math.abs(data[at(i, k)]!); if (v > mx) { mx = v; p = i; } }
    if (!(mx > 0)) throw new Error('band: singular collocation system');
    piv[k] = p;
    const cEnd = Math.min(N - 1, k + kl + ku);
    if (p !== k) for (let c = k; c <= cEnd; c++) { const a = at(k, c), b = at(p, c); const t = data[a]!; data[a] = data[b]!; data[b] = t; }
    const d = data[at(k, k)]!;
    for (let i = k + 1; i <= last; i++) {
      const ik = at(i, k);
      const l = data[ik]! / d;
      data[ik] = l;
      if (l === 0) continue;
      const oi = at(i, k), ok = at(k, k);
      for (let c = 1; c <= cEnd - k; c++) data[oi + c] -= l * data[ok + c]!;
    }
  }
}

/** Solve in place for the N × R right-hand sides X (row-major), after bandFactor. */
export function bandSolve(B: Band, X: Float64Array, R: number): void {
  const { N, kl, ku, W, data, piv } = B;
  const at = (r: number, c: number) => r * W + (c - r + kl);
  for (let k = 0; k < N; k++) {
    const p = piv[k]!;
    if (p !== k) for (let j = 0; j < R; j++) { const t = X[k * R + j]!; X[k * R + j] = X[p * R + j]!; X[p * R + j] = t; }
    const last = Math.min(N - 1, k + kl);
    for (let i = k + 1; i <= last; i++) {
      const l = data[at(i, k)]!;
      if (l === 0) continue;
      for (let j = 0; j < R; j++) X[i * R + j] -= l * X[k * R + j]!;
    }
  }
  for (let k = N - 1; k >= 0; k--) {
    const cEnd = Math.min(N - 1, k + kl + ku);
    const ok = at(k, k);
    for (let c = k + 1; c <= cEnd; c++) {
      const u = data[ok + c - k]!;
      if (u === 0) continue;
      for (let j = 0; j < R; j++) X[k * R + j] -= u * X[c * R + j]!;
    }
    const d = data[ok]!;
    for (let j = 0; j < R; j++) X[k * R + j] /= d;
  }
}
