/**
 * Do the data prefer one fitted kernel to another? A paired comparison of the two fits' prediction
 * errors, experiment by experiment.
 *
 * Each experiment j contributes a loss per fit, L_j = Σ_i (u_ji − Σ_k G(x_i, s_k) w_k f_j(s_k) − u_h(x_i))²,
 * inflated by the generalised-cross-validation factor 1/(1 − dof/n)² of its fit (Craven & Wahba,
 * Numer. Math. 1979), so that the sum over experiments is the fit's GCV score times n. The experiments are
 * independent (independent forcings, independent noise), so the differences D_j = L_j(A) − L_j(B) are
 * independent draws and their mean over N experiments is asymptotically Gaussian with standard error
 * sd(D)/√N: a paired test of equal predictive accuracy (Diebold & Mariano, J. Bus. Econ. Stat. 1995).
 * Pure: no file system.
 */
import type { Study, FitResult } from '../../types.js';
import type { Mat } from '../../linalg/dense.js';
import { normalCdf } from '../analysis.js';

export interface PairedComparison {
  /** experiments compared */
  experiments: number;
  /** mean over experiments of L(A) − L(B), in units of the mean loss of A (positive: B predicts better) */
  relativeGain: number;
  /** the mean difference in units of its standard error (positive: B predicts better) */
  z: number;
}

/** Degrees of freedom of a fit: the kernel's effective parameters plus one homogeneous value per sensor. */
export function fitDof(fit: FitResult, nOut: number): number {
  const eff = Number((fit.report.hyperparameters as Record<string, unknown>).effective_parameters);
  return (Number.isFinite(eff) ? eff : 0) + (fit.kernel.homogeneous ? nOut : 0);
}

/** Per-experiment squared prediction errors of a fit on the study (not-measured values skipped), and the count of values. */
export function experimentLosses(study: Study, kernel: FitResult['kernel']): { loss: Float64Array; count: number } {
  const F = study.inputs.values, U = study.outputs.values, G: Mat = kernel.G, w = kernel.weightsIn, uh = kernel.homogeneous;
  const N = F.rows, nIn = G.cols, nOut = G.rows;
  if (F.cols !== nIn || U.cols !== nOut || U.rows !== N) throw new Error(`experimentLosses: study (${N} × ${F.cols} → ${U.rows} × ${U.cols}) does not match kernel ${nOut} × ${nIn}`);
  const loss = new Float64Array(N);
  const fw = new Float64Array(nIn);
  let count = 0;
  for (let j = 0; j < N; j++) {
    for (let k = 0; k < nIn; k++) fw[k] = F.data[j * nIn + k]! * w[k]!;
    let s = 0;
    for (let i = 0; i < nOut; i++) {
      const u = U.data[j * nOut + i]!;
      if (Number.isNaN(u)) continue;
      let p = uh ? uh[i]! : 0;
      const off = i * nIn;
      for (let k = 0; k < nIn; k++) p += G.data[off + k]! * fw[k]!;
      s += (u - p) * (u - p);
      count++;
    }
    loss[j] = s;
  }
  return { loss, count };
}

/** Paired per-experiment comparison of fit B against fit A (scalar kernels whose G maps the study's forcings to its responses). */
export function comparePredictions(study: Study, a: FitResult, b: FitResult): PairedComparison {
  const la = experimentLosses(study, a.kernel), lb = experimentLosses(study, b.kernel);
  const n = la.count, nOut = a.kernel.G.rows, N = la.loss.length;
  const inflate = (dof: number) => { const r = 1 - dof / n; return r > 0 ? 1 / (r * r) : Infinity; };
  const ca = inflate(fitDof(a, nOut)), cb = inflate(fitDof(b, nOut));
  let mA = 0, mD = 0;
  const d = new Float64Array(N);
  for (let j = 0; j < N; j++) { d[j] = ca * la.loss[j]! - cb * lb.loss[j]!; mD += d[j]!; mA += ca * la.loss[j]!; }
  mD /= N; mA /= N;
  let v = 0;
  for (let j = 0; j < N; j++) v += (d[j]! - mD) ** 2;
  const se = Math.sqrt(v / Math.max(1, N - 1) / N);
  const z = se > 0 ? mD / se : mD > 0 ? Infinity : mD < 0 ? -Infinity : 0;
  return { experiments: N, relativeGain: mA > 0 ? mD / mA : 0, z };
}

/**
 * Akaike weights of competing fits of the same data (Burnham & Anderson, Model Selection and Multimodel
 * Inference, 2002, §2.9): w_m ∝ exp(−RSS_m/(2σ²) − dof_m), the Gaussian log-likelihood at noise σ less the
 * number of parameters. Returned in the order given; they sum to 1.
 */
export function akaikeWeights(study: Study, fits: FitResult[], sigma: number): number[] {
  const s2 = Math.max(sigma * sigma, 1e-300);
  const score = fits.map((f) => {
    const { loss } = experimentLosses(study, f.kernel);
    let rss = 0;
    for (const v of loss) rss += v;
    return -rss / (2 * s2) - fitDof(f, f.kernel.G.rows);
  });
  const top = Math.max(...score);
  const w = score.map((v) => Math.exp(v - top));
  const tot = w.reduce((a, b) => a + b, 0);
  return w.map((v) => v / tot);
}

/** Upper-tail standard normal quantile: z with 1 − Φ(z) = p (bisection on Φ, to 1e-10). */
export function upperNormalQuantile(p: number): number {
  if (!(p > 0 && p < 1)) throw new Error(`upperNormalQuantile: p = ${p} outside (0, 1)`);
  let lo = -40, hi = 40;
  for (let k = 0; k < 200 && hi - lo > 1e-10; k++) { const m = (lo + hi) / 2; if (1 - normalCdf(m) > p) lo = m; else hi = m; }
  return (lo + hi) / 2;
}
