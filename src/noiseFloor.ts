/**
 * A noise floor for a kernel that comes without its experiments (fitted elsewhere): the
 * kernel's own smallest-scale variation is taken as iid noise, and replicates are made by
 * perturbing the kernel with noise of that size. The assumption is stated in the findings.
 */
import type { Kernel, NoiseFloor } from './types.js';
import type { Mat } from './linalg/dense.js';
import { matmul, matmulTN } from './linalg/dense.js';
import { Rng } from './linalg/rng.js';

/** Index of the nearest other point for each point (n × d points). */
export function nearestNeighbours(points: Mat): Int32Array {
  const n = points.rows, d = points.cols, P = points.data;
  const nn = new Int32Array(n).fill(-1);
  if (d === 1) {
    const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => P[a]! - P[b]!);
    for (let r = 0; r < n; r++) {
      const i = order[r]!;
      const left = r > 0 ? order[r - 1]! : -1, right = r < n - 1 ? order[r + 1]! : -1;
      if (left < 0) nn[i] = right;
      else if (right < 0) nn[i] = left;
      else nn[i] = Math.abs(P[left]! - P[i]!) <= Math.abs(P[right]! - P[i]!) ? left : right;
    }
    return nn;
  }
  for (let i = 0; i < n; i++) {
    let best = Infinity;
    for (let j = 0; j < n; j++) {
      if (j === i) continue;
      let s = 0;
      for (let k = 0; k < d; k++) { const t = P[i * d + k]! - P[j * d + k]!; s += t * t; }
      if (s < best) { best = s; nn[i] = j; }
    }
  }
  return nn;
}

function median(v: number[]): number {
  if (!v.length) return 0;
  const s = [...v].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m]! : (s[m - 1]! + s[m]!) / 2;
}

function distance(points: Mat, i: number, other: Mat, k: number): number {
  let s = 0;
  for (let c = 0; c < points.cols; c++) { const t = points.data[i * points.cols + c]! - other.data[k * other.cols + c]!; s += t * t; }
  return Math.sqrt(s);
}

/**
 * Entry noise std of G, by the MAD estimator of a Gaussian scale (Hampel 1974) applied to
 * high-order differences in which the smooth part of G cancels:
 *  - 1-D: fourth differences along x over the sorted output points, D = Δ⁴G (iid noise gives std √70·σ;
 *    a smooth part contributes O(h⁴ ∂⁴G));
 *  - 2-D: mixed differences D = G(i,k) − G(i',k) − G(i,k') + G(i',k') over nearest neighbours (std 2σ).
 * Stencils within a few spacings of the diagonal are skipped: the kink there is signal, not noise.
 */
export function entryNoiseStd(kernel: Kernel): number {
  const { G, pointsOut, pointsIn } = kernel;
  const cIn = kernel.components.in, cOut = kernel.components.out;
  const nOut = pointsOut.rows, nIn = pointsIn.rows, C = G.cols;
  const nnIn = nearestNeighbours(pointsIn);
  const spacing = median(Array.from({ length: nIn }, (_, k) => (nnIn[k]! >= 0 ? distance(pointsIn, k, pointsIn, nnIn[k]!) : 0)));
  const stride = Math.max(1, Math.floor(Math.sqrt((nOut * nIn) / 40000)));
  const diffs: number[] = [];
  if (kernel.dimension === 1 && nOut >= 5) {
    const order = Array.from({ length: nOut }, (_, i) => i).sort((a, b) => pointsOut.data[a]! - pointsOut.data[b]!);
    const w = [1, -4, 6, -4, 1];
    for (let bo = 0; bo < cOut; bo++) for (let bi = 0; bi < cIn; bi++) {
      for (let r = 0; r + 4 < nOut; r += stride) {
        const rowsIdx = order.slice(r, r + 5);
        const lo = pointsOut.data[rowsIdx[0]!]!, hi = pointsOut.data[rowsIdx[4]!]!;
        for (let k = r % stride; k < nIn; k += stride) {
          const s = pointsIn.data[k]!;
          if (s > lo - 1.5 * spacing && s < hi + 1.5 * spacing) continue;
          let d = 0;
          for (let t = 0; t < 5; t++) d += w[t]! * G.data[(bo * nOut + rowsIdx[t]!) * C + bi * nIn + k]!;
          diffs.push(Math.abs(d) / Math.sqrt(70));
        }
      }
    }
    return median(diffs) / 0.6745;
  }
  const nnOut = nearestNeighbours(pointsOut);
  for (let bo = 0; bo < cOut; bo++) for (let bi = 0; bi < cIn; bi++) {
    for (let i = 0; i < nOut; i += stride) {
      const i2 = nnOut[i]!;
      if (i2 < 0) continue;
      for (let k = (i % stride); k < nIn; k += stride) {
        const k2 = nnIn[k]!;
        if (k2 < 0) continue;
        if (distance(pointsOut, i, pointsIn, k) < 2.5 * spacing || distance(pointsOut, i2, pointsIn, k2) < 2.5 * spacing) continue;
        const r = bo * nOut, c = bi * nIn;
        const d = G.data[(r + i) * C + c + k]! - G.data[(r + i2) * C + c + k]! - G.data[(r + i) * C + c + k2]! + G.data[(r + i2) * C + c + k2]!;
        diffs.push(Math.abs(d) / 2);
      }
    }
  }
  return median(diffs) / 0.6745;
}

function vectorNoiseStd(h: Float64Array, points: Mat, components: number): number {
  const n = points.rows;
  const nn = nearestNeighbours(points);
  const d: number[] = [];
  for (let c = 0; c < components; c++) {
    for (let i = 0; i < n; i++) {
      const j = nn[i]!, k = j >= 0 ? nn[j]! : -1;
      // second difference over i's neighbour chain when it is not degenerate
      if (j < 0) continue;
      const m = k >= 0 && k !== i ? k : -1;
      if (m >= 0) d.push(Math.abs(h[c * n + i]! - 2 * h[c * n + j]! + h[c * n + m]!) / Math.sqrt(6));
    }
  }
  return median(d) / 0.6745;
}

export function selfEstimatedNoiseFloor(kernel: Kernel, seed: number, count = 30): NoiseFloor {
  const sigma = entryNoiseStd(kernel);
  let ms = 0;
  for (const v of kernel.G.data) ms += v * v;
  const rms = Math.sqrt(ms / kernel.G.data.length);
  // floor at the precision of stored numbers (float32 files carry ~1e-7 relative)
  const precision = 1e-7 * rms;
  const sd = Math.max(sigma, precision);
  const rng = new Rng(seed ^ 0x5eed);
  const replicates: Mat[] = [];
  for (let r = 0; r < count; r++) {
    const d = new Float64Array(kernel.G.data.length);
    for (let i = 0; i < d.length; i++) d[i] = kernel.G.data[i]! + sd * rng.normal();
    replicates.push({ rows: kernel.G.rows, cols: kernel.G.cols, data: d });
  }
  const homogeneousReplicates: Float64Array[] = [];
  let hsd = 0;
  if (kernel.homogeneous) {
    const h = kernel.homogeneous;
    let hms = 0;
    for (const v of h) hms += v * v;
    hsd = Math.max(vectorNoiseStd(h, kernel.pointsOut, kernel.components.out), 1e-7 * Math.sqrt(hms / h.length));
    for (let r = 0; r < count; r++) homogeneousReplicates.push(Float64Array.from(h, (v) => v + hsd * rng.normal()));
  }
  return {
    replicates,
    homogeneousReplicates,
    source: 'kernel-self-estimate',
    assumption:
      `No experiments came with this kernel, so its uncertainty was estimated from the kernel itself: entry errors are assumed ` +
      `independent with standard deviation ${sd.toPrecision(3)} (${(100 * sd / (rms || 1)).toPrecision(2)} % of the kernel's RMS), ` +
      `read off its smallest-scale variation. Smooth, correlated fitting errors are invisible to this estimate, so verdicts may be ` +
      `more confident than the data behind the kernel justify.`,
  };
}

/**
 * Make a fit's replicates carry its whole predicted error, not only the part resampling sees.
 * Resampling the experiments measures the estimator's variance; at low noise the error is
 * mostly bias (what the forcings cannot identify, truncation), which identical replicates
 * would hide, and every tiny defect would then look significant. When the replicates' mean
 * relative deviation δ_boot falls short of the fit's predicted relative error δ, each replicate
 * gets an extra perturbation of relative size √(δ² − δ_boot²) in the span of the kernel's
 * leading singular vectors (U Z Vᵀ with Z iid Gaussian, not symmetric), so that structural
 * statistics see an error of the size the fit itself claims.
 */
export function withModelError(noise: NoiseFloor, kernel: Kernel, predictedRelErr: number, predictedHomErr: number | null, seed: number): NoiseFloor {
  const G = kernel.G;
  const gNorm = Math.sqrt(G.data.reduce((s, v) => s + v * v, 0));
  if (!(gNorm > 0) || !(predictedRelErr > 0) || noise.replicates.length === 0) return noise;
  // spread about the replicates' own mean: a bias common to all replicates is invisible to the analyses
  const R = noise.replicates.length;
  const mu = new Float64Array(G.data.length);
  for (const r of noise.replicates) for (let i = 0; i < mu.length; i++) mu[i] += r.data[i]! / R;
  let dev = 0;
  for (const r of noise.replicates) {
    let s = 0;
    for (let i = 0; i < G.data.length; i++) { const d = r.data[i]! - mu[i]!; s += d * d; }
    dev += Math.sqrt(s) / gNorm;
  }
  dev /= R;
  const extra = predictedRelErr * predictedRelErr - dev * dev;
  if (!(extra > 0) || Math.sqrt(extra) < 0.25 * dev) return noise;
  const rng = new Rng((seed ^ 0x6d0de1) >>> 0);
  const k = Math.min(12, G.rows, G.cols);
  const { U, V } = leadingSingularVectors(G, k, rng);
  const amp = Math.sqrt(extra) * gNorm / k;
  const replicates = noise.replicates.map((r) => {
    const Z = Float64Array.from({ length: k * k }, () => rng.normal());
    const out = new Float64Array(r.data);
    for (let i = 0; i < G.rows; i++) {
      // row i of U Z: t_j = Σ_a U_ia Z_aj
      const t = new Float64Array(k);
      for (let a = 0; a < k; a++) { const u = U.data[i * k + a]!; if (u !== 0) for (let j = 0; j < k; j++) t[j] += u * Z[a * k + j]!; }
      for (let c = 0; c < G.cols; c++) {
        let s = 0;
        for (let j = 0; j < k; j++) s += t[j]! * V.data[c * k + j]!;
        out[i * G.cols + c] += amp * s;
      }
    }
    return { rows: r.rows, cols: r.cols, data: out };
  });
  let homogeneousReplicates = noise.homogeneousReplicates;
  if (kernel.homogeneous && predictedHomErr && predictedHomErr > 0 && homogeneousReplicates.length) {
    const h = kernel.homogeneous;
    const hNorm = Math.sqrt(h.reduce((s, v) => s + v * v, 0));
    const hmu = new Float64Array(h.length);
    for (const r of homogeneousReplicates) for (let i = 0; i < h.length; i++) hmu[i] += r[i]! / homogeneousReplicates.length;
    let hdev = 0;
    for (const r of homogeneousReplicates) hdev += Math.sqrt(r.reduce((s, v, i) => s + (v - hmu[i]!) ** 2, 0)) / (hNorm || 1);
    hdev /= homogeneousReplicates.length;
    const hextra = predictedHomErr * predictedHomErr - hdev * hdev;
    if (hextra > 0 && hNorm > 0) {
      // smooth perturbation: a random combination of the kernel's leading output vectors
      const hamp = Math.sqrt(hextra) * hNorm / Math.sqrt(k);
      homogeneousReplicates = homogeneousReplicates.map((r) => {
        const out = new Float64Array(r);
        const z = Array.from({ length: k }, () => rng.normal());
        for (let i = 0; i < out.length && i < U.rows; i++) {
          let s = 0;
          for (let a = 0; a < k; a++) s += U.data[i * k + a]! * z[a]!;
          out[i] += hamp * s;
        }
        return out;
      });
    }
  }
  return {
    ...noise,
    replicates,
    homogeneousReplicates,
    assumption: `${noise.assumption.replace(/\s*$/, '').replace(/([^.])$/, '$1.')} The resampled kernels varied less (${dev.toExponential(2)} relative) than the fit's predicted error ` +
      `(${predictedRelErr.toExponential(2)}), which at low noise is mostly bias; each replicate was given an extra error of the predicted size ` +
      `in the span of the kernel's leading modes, so that no verdict rests on a difference smaller than the fit can resolve.`,
  };
}

/** Leading k left/right singular vectors by subspace iteration (Halko, Martinsson & Tropp, SIAM Review 2011). */
function leadingSingularVectors(G: Mat, k: number, rng: Rng): { U: Mat; V: Mat } {
  const m = G.rows, n = G.cols;
  let Q = orthonormal({ rows: m, cols: k, data: Float64Array.from({ length: m * k }, () => rng.normal()) });
  let P: Mat = { rows: n, cols: k, data: new Float64Array(n * k) };
  for (let it = 0; it < 4; it++) {
    P = orthonormal(matmulTN(G, Q));   // Gᵀ Q
    Q = orthonormal(matmul(G, P));     // G P
  }
  return { U: Q, V: P };
}

/** Modified Gram–Schmidt on the columns (twice, for stability). */
function orthonormal(A: Mat): Mat {
  const { rows, cols } = A;
  const d = new Float64Array(A.data);
  for (let pass = 0; pass < 2; pass++) {
    for (let j = 0; j < cols; j++) {
      for (let p = 0; p < j; p++) {
        let s = 0;
        for (let i = 0; i < rows; i++) s += d[i * cols + p]! * d[i * cols + j]!;
        for (let i = 0; i < rows; i++) d[i * cols + j] -= s * d[i * cols + p]!;
      }
      let nrm = 0;
      for (let i = 0; i < rows; i++) nrm += d[i * cols + j]! ** 2;
      nrm = Math.sqrt(nrm) || 1;
      for (let i = 0; i < rows; i++) d[i * cols + j] /= nrm;
    }
  }
  return { rows, cols, data: d };
}
