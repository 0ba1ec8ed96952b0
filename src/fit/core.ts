/** Shared shapes between the estimator's paths (1-D kink model, span model) and the driver. */
import type { Mat } from '../linalg/dense.js';
import type { Constraint } from './kink1d.js';

/**
 * Scaling test on held-out residuals, against the size a_j of each experiment's predicted response (RMS of
 * Ĝ W f_j; a nonlinear term acts in proportion to the response, not to the forcing). For a linear system
 * the held-out residual is noise plus the fit's own error, e_j ≈ nσ² + a_j² m_j with m_j unrelated to a_j, so the
 * amplitude-normalised residual e_j / a_j² is flat (noise-free) or falls (noisy) as a_j grows. A nonlinear
 * response makes the best linear fit a compromise between amplitudes: e_j / a_j² then rises again
 * towards the largest amplitudes. Statistic: Spearman's rank correlation ρ between e_j / a_j² and a_j over
 * the experiments above the median amplitude, z = ρ √(n − 1) (its large-sample null distribution under
 * independence; Kendall & Gibbons, Rank Correlation Methods, 1990, ch. 4), one-sided.
 */
export interface ScalingTest {
  /** rank correlation of the relative residual with the response size */
  rho: number;
  /** the test statistic (one-sided, ≈ N(0,1) or below for a linear system); see path1d.ts for the 1-D form */
  t: number;
  experiments: number;
  lowAmplitude: number;
  highAmplitude: number;
}

function ranks(v: number[]): number[] {
  const idx = v.map((_, i) => i).sort((a, b) => v[a]! - v[b]!);
  const r = new Array<number>(v.length);
  for (let k = 0; k < idx.length;) {
    let e = k;
    while (e + 1 < idx.length && v[idx[e + 1]!] === v[idx[k]!]) e++;
    for (let m = k; m <= e; m++) r[idx[m]!] = (k + e) / 2;
    k = e + 1;
  }
  return r;
}

/** RMS of the predicted response per experiment. */
export function responseSize(predE: Float64Array, n: Float64Array): Float64Array {
  return Float64Array.from(predE, (e, j) => (n[j]! > 0 ? Math.sqrt(e / n[j]!) : 0));
}

/** Spearman's rank correlation of two equally long lists. */
export function rankCorrelation(x: number[], y: number[]): number {
  const n = x.length;
  const ra = ranks(x), rq = ranks(y);
  const m = (n - 1) / 2;
  let sab = 0, saa = 0, sbb = 0;
  for (let k = 0; k < n; k++) { sab += (ra[k]! - m) * (rq[k]! - m); saa += (ra[k]! - m) ** 2; sbb += (rq[k]! - m) ** 2; }
  return saa > 0 && sbb > 0 ? sab / Math.sqrt(saa * sbb) : 0;
}

export function scalingTest(amplitude: Float64Array, resE: Float64Array, resN: Float64Array): ScalingTest | null {
  const items: { a: number; q: number }[] = [];
  let lo = Infinity, hi = -Infinity;
  for (let j = 0; j < amplitude.length; j++) {
    const a = amplitude[j]!;
    if (!(a > 0) || !(resN[j]! > 0)) continue;
    items.push({ a, q: resE[j]! / resN[j]! / (a * a) });
    lo = Math.min(lo, a); hi = Math.max(hi, a);
  }
  items.sort((x, y) => x.a - y.a);
  const upper = items.slice(Math.floor(items.length / 2));
  const n = upper.length;
  if (n < 8) return null;
  const ra = ranks(upper.map((x) => x.a)), rq = ranks(upper.map((x) => x.q));
  const m = (n - 1) / 2;
  let sab = 0, saa = 0, sbb = 0;
  for (let k = 0; k < n; k++) { sab += (ra[k]! - m) * (rq[k]! - m); saa += (ra[k]! - m) ** 2; sbb += (rq[k]! - m) ** 2; }
  const rho = saa > 0 && sbb > 0 ? sab / Math.sqrt(saa * sbb) : 0;
  return { rho, t: rho * Math.sqrt(n - 1), experiments: n, lowAmplitude: lo, highAmplitude: hi };
}

export interface CoreFit {
  method: string;
  hyper: Record<string, number | string | boolean>;
  G: Mat;
  uh: Float64Array;
  rss: number;
  dof: number;
  nObs: number;
  /** centred response energy */
  yy: number;
  /** GCV estimate of the mean squared prediction error per value */
  gcvMse: number;
  /** relative residual of held-out experiments (k-fold over experiments), when computed */
  cvRelative?: number | null;
  /** estimated noise std */
  sigma: number;
  replicates: Mat[];
  homogeneousReplicates: Float64Array[];
  scaling: ScalingTest | null;
  notes: string[];
  constraint: Constraint;
  /** false when the path itself can only identify G on the forcings' span */
  complete: boolean;
  /** estimated absolute (Frobenius) truncation error of the model size, already carried by the replicates */
  truncationInReplicates?: number;
  /** input-side degrees of freedom of the model (the data must excite at least this many directions) */
  inputDof: number;
  /**
   * expected squared (Frobenius) kernel error under the fit's own GP prior, when the path has one (span
   * model): `total` at the fitted noise level, `unidentified` in the noise-free limit (the part no data
   * along these forcings determine)
   */
  posteriorError2?: { total: number; unidentified: number };
}
