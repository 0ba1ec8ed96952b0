/**
 * The one interface every diagnosis implements. Adding a question = adding one file
 * under src/analyses/ and one line in registry.ts.
 */
import type { Kernel, NoiseFloor, FitReport, Evidence } from '../types.js';
import type { Rng } from '../linalg/rng.js';

export interface Context {
  /** resampled kernels etc.; the spread of a statistic over them is its noise floor */
  noise: NoiseFloor;
  /** the fit's report when the kernel was fitted here (absent for a kernel from elsewhere) */
  fit?: FitReport;
  /** seeded generator; fork it per analysis for independence of order */
  rng: Rng;
  /** user options (free form) */
  options: Record<string, unknown>;
  /** outputs of analyses that ran earlier, by key (see `dependsOn`) */
  results: Record<string, AnalysisOutput<unknown>>;
}

export interface AnalysisOutput<F> {
  /** the value written under the findings key (shape fixed by interface.md §5) */
  finding: F;
  /** the number behind it, its noise floor, an explanation and plot data */
  evidence: Evidence;
}

export interface Analysis<F> {
  /** the findings.json key it fills */
  readonly key: string;
  /** keys of analyses whose outputs it reads from ctx.results */
  readonly dependsOn?: readonly string[];
  /** pure: no file system, no clock, randomness only from ctx.rng */
  run(kernel: Kernel, ctx: Context): AnalysisOutput<F>;
}

/**
 * Confidence that a statistic exceeds its floor, from the ratio r = statistic / floor,
 * treating the floor as one standard deviation of a Gaussian null: Φ(r − 2) style
 * separation. Shared so every analysis states confidence the same way.
 */
export function separationConfidence(statistic: number, floor: number): number {
  if (!(floor > 0)) return statistic > 0 ? 0.99 : 0.5;
  const z = statistic / floor;
  return clamp01(normalCdf(z - 2));
}

export function normalCdf(z: number): number {
  // Abramowitz & Stegun 7.1.26 rational approximation of erf (|error| < 1.5e-7)
  const t = 1 / (1 + 0.3275911 * Math.abs(z) / Math.SQRT2);
  const y = 1 - (((((1.061405429 * t - 1.453152027) * t) + 1.421413741) * t - 0.284496736) * t + 0.254829592) * t * Math.exp(-(z * z) / 2);
  return z >= 0 ? 0.5 * (1 + y) : 0.5 * (1 - y);
}

export function clamp01(x: number): number {
  return Math.min(1, Math.max(0, x));
}
