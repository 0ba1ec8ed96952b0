/**
 * Test helpers for the singularity / interface analyses: a stand-in for a fitted kernel made
 * the way the baseline fit works (projection of G onto K sine modes in x and in s, plus
 * Gaussian noise on the K×K coefficients), and its resampled replicates. This reproduces the
 * two things a real fit does to a kernel — truncation smoothing of kinks and smooth,
 * correlated errors — which iid entrywise noise does not.
 */
import type { Kernel } from '../../src/types.js';
import type { Mat } from '../../src/linalg/dense.js';
import { Rng } from '../../src/linalg/rng.js';
import { kernel1d, type G1 } from '../helpers/closedForms.js';

function sineBasis(x: Float64Array, K: number): Float64Array {
  const n = x.length, S = new Float64Array(n * K);
  for (let i = 0; i < n; i++) for (let k = 0; k < K; k++) S[i * K + k] = Math.SQRT2 * Math.sin((k + 1) * Math.PI * x[i]!);
  return S;
}

/** coefficients C = Sᵀ W G W S on [0, 1] (trapezoid weights w) */
function project(G: Mat, x: Float64Array, w: Float64Array, K: number): Float64Array {
  const n = x.length, S = sineBasis(x, K);
  const T = new Float64Array(n * K); // G W S
  for (let i = 0; i < n; i++) for (let k = 0; k < K; k++) {
    let s = 0;
    for (let j = 0; j < n; j++) s += G.data[i * n + j]! * w[j]! * S[j * K + k]!;
    T[i * K + k] = s;
  }
  const C = new Float64Array(K * K);
  for (let a = 0; a < K; a++) for (let k = 0; k < K; k++) {
    let s = 0;
    for (let i = 0; i < n; i++) s += S[i * K + a]! * w[i]! * T[i * K + k]!;
    C[a * K + k] = s;
  }
  return C;
}

function reconstruct(C: Float64Array, x: Float64Array, K: number): Mat {
  const n = x.length, S = sineBasis(x, K);
  const T = new Float64Array(n * K);
  for (let i = 0; i < n; i++) for (let b = 0; b < K; b++) {
    let s = 0;
    for (let a = 0; a < K; a++) s += S[i * K + a]! * C[a * K + b]!;
    T[i * K + b] = s;
  }
  const out = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) {
    let s = 0;
    for (let b = 0; b < K; b++) s += T[i * K + b]! * S[j * K + b]!;
    out[i * n + j] = s;
  }
  return { rows: n, cols: n, data: out };
}

/**
 * A modal "fitted" kernel of the closed form g: K sine modes, coefficient noise of relative
 * size `rel` (of the RMS coefficient), and `reps` replicates with fresh noise of the same size.
 */
export function modalKernel(g: G1, opts: { n?: number; K?: number; rel: number; reps: number; seed: number; homogeneous?: (x: number) => number; hNoise?: number }): { kernel: Kernel; replicates: Mat[]; homogeneousReplicates: Float64Array[] } {
  const n = opts.n ?? 200, K = opts.K ?? 40;
  const base = kernel1d(g, n);
  const x = base.pointsOut.data, w = base.weightsIn;
  const C0 = project(base.G, x, w, K);
  let ms = 0;
  for (const v of C0) ms += v * v;
  const sd = opts.rel * Math.sqrt(ms / C0.length);
  const rng = new Rng(opts.seed);
  const noisy = () => Float64Array.from(C0, (v) => v + sd * rng.normal());
  const hsd = opts.hNoise ?? 0;
  const hom = opts.homogeneous ? () => Float64Array.from(x, (t) => opts.homogeneous!(t) + hsd * rng.normal()) : () => null;
  const kernel: Kernel = { ...base, G: reconstruct(noisy(), x, K), homogeneous: hom() };
  const replicates: Mat[] = [], homogeneousReplicates: Float64Array[] = [];
  for (let r = 0; r < opts.reps; r++) {
    replicates.push(reconstruct(noisy(), x, K));
    const hr = hom();
    if (hr) homogeneousReplicates.push(hr);
  }
  return { kernel, replicates, homogeneousReplicates };
}
