/**
 * An excitation plan: Gaussian-process forcing patterns on the actuator points, the spectrum of
 * their covariance (how many input directions they excite above a relative noise level), and the
 * number of experiments to run for a target rank. Pure: no file system (the CLI writes it).
 */
import type { Mat } from '../linalg/dense.js';
import type { Domain } from '../types.js';
import { quadratureWeights } from '../quadrature.js';
import {
  gpSample, covarianceFn, defaultLengthScale, medianSpacing, meanSpacing, SPACINGS_PER_LENGTH_SCALE, DENSE_LIMIT,
  type Covariance, type SampleInfo,
} from './gp.js';
import { pivotedCholesky, gramRows } from './lowrank.js';
import { symmetricEigenvalues } from './spectrum.js';

export interface PlanOptions {
  count: number;
  covariance?: Covariance;
  lengthScale?: number;
  seed?: number;
  /** target rank k of the kernel to identify (default: the excitable rank) */
  targetRank?: number;
  /** oversampling p (default 10) */
  oversampling?: number;
  /** expected relative noise of the responses (default 0.01): sets which directions count as excited */
  noise?: number;
  /** sampler: auto | dense | low-rank */
  method?: 'auto' | 'dense' | 'low-rank';
  /** low-rank tolerance on the missed variance fraction (default 1e-3) */
  tolerance?: number;
  /** low-rank cap on the rank (default 2000) */
  maxRank?: number;
  domain?: Domain;
  /** progress callback (CLI) */
  say?: (msg: string) => void;
}

export interface Spectrum {
  /** weighted: eigenvalues of W^{1/2} K W^{1/2}, i.e. of the covariance operator (Nyström) */
  weighted: true;
  /** leading eigenvalues of the factor's covariance (lower bounds of the true ones), descending, at most 50 */
  leading: number[];
  /** bound on how far any eigenvalue of the factor can be from the true one (weighted residual trace) */
  eigenvalue_error_bound: number;
  /** rank of the factor the spectrum was computed from */
  factor_rank: number;
  /** relative amplitude threshold: a direction counts as excited if sqrt(λ_i / λ_1) ≥ noise */
  noise: number;
  /** bounds on the number of excited directions (equal when resolved) */
  excited_directions: { lower: number; upper: number; resolved: boolean };
}

export interface Recommendation {
  target_rank: number;
  target_rank_source: 'given' | 'excited directions';
  oversampling: number;
  recommended_count: number;
  rule: string;
  warnings: string[];
}

export interface DesignRecord {
  format: 'kerneldx-design/1';
  points: { count: number; dimension: number; median_nn_distance: number; mean_spacing: number };
  covariance: { kind: Covariance; length_scale: number; length_scale_rule: string; amplitude: 1 };
  sampling: {
    method: SampleInfo['method'];
    rank: number;
    captured_variance_fraction: number;
    tolerance: number | null;
    converged: boolean;
    jitter: number;
    explanation: string;
  };
  draws: { count: number; seed: number };
  spectrum: Spectrum;
  recommendation: Recommendation;
}

export interface Plan {
  forcings: Mat;
  weights: Float64Array;
  record: DesignRecord;
}

const HALKO_RULE =
  'recommended = k + p: the randomized range finder with k + p Gaussian test vectors captures a rank-k range ' +
  'to within a small factor of the best rank-k error with high probability, p ≈ 5–10 being enough ' +
  '(Halko, Martinsson & Tropp, SIAM Review 53 (2011), §1.5 and §10). Here the experiments play the test vectors: ' +
  'each forcing probes the hidden operator once.';

export function makePlan(points: Mat, opts: PlanOptions): Plan {
  const n = points.rows, dim = points.cols;
  const say = opts.say ?? (() => {});
  const kind = opts.covariance ?? 'se';
  const seed = opts.seed ?? 0;
  const noise = opts.noise ?? 0.01;
  const p = opts.oversampling ?? 10;
  const tol = opts.tolerance ?? 1e-3;
  const maxRank = opts.maxRank ?? 2000;
  const nn = medianSpacing(points), ms = meanSpacing(points);
  const l = opts.lengthScale ?? defaultLengthScale(points);
  const lRule = opts.lengthScale !== undefined
    ? 'given (--length-scale)'
    : `default: ${SPACINGS_PER_LENGTH_SCALE} × max(median nearest-neighbour distance ${fmt(nn)}, mean spacing ${fmt(ms)}) — several points per correlation length (common practice)`;
  say(`drawing ${opts.count} forcing pattern(s) on ${n} point(s), ${kind} covariance, length scale ${fmt(l)}`);
  const { draws, info } = gpSample(points, opts.count, { covariance: kind, lengthScale: l, seed, method: opts.method, tolerance: tol, maxRank });
  say(info.method === 'dense-cholesky'
    ? `dense Cholesky of the ${n} × ${n} covariance (exact draws)`
    : `pivoted-Cholesky factor of rank ${info.rank}, capturing ${(100 * info.capturedVariance).toFixed(3)} % of the variance`);
  const weights = quadratureWeights(points, opts.domain ?? { kind: 'points' });

  // spectrum of the covariance operator from a low-rank factor (the sampling one when there is one)
  let factor = info.factor, resid = info.residualDiagonal;
  if (!factor || !resid) {
    const f = pivotedCholesky(points, covarianceFn(kind, l), { tolerance: Math.min(tol, 1e-6), maxRank: Math.min(n, 800) });
    factor = f.factor; resid = f.residualDiagonal;
  }
  say(`spectrum of the covariance from a rank-${factor.rows} factor`);
  const mu = symmetricEigenvalues(gramRows(factor, weights));
  let errBound = 0;
  for (let i = 0; i < n; i++) errBound += weights[i]! * resid[i]!;
  const spectrum = excitedDirections(mu, errBound, noise, n);

  const warnings: string[] = [];
  let k: number, src: Recommendation['target_rank_source'];
  if (opts.targetRank !== undefined) {
    k = opts.targetRank; src = 'given';
    if (k > spectrum.excited_directions.upper) {
      const shorter = l * Math.pow(Math.max(1, spectrum.excited_directions.upper) / k, 1 / dim);
      warnings.push(`target rank ${k} exceeds the ${spectrum.excited_directions.upper} direction(s) this covariance excites above relative noise ${noise}; ` +
        `the fit cannot identify the rest. A shorter length scale excites more: about ${fmt(shorter)} ` +
        `(rough: the count of excited directions scales like length_scale^-${dim}, Weyl's law).`);
    }
    if (k > n) warnings.push(`target rank ${k} exceeds the number of points ${n}; at most ${n} directions exist.`);
  } else {
    k = Math.max(1, spectrum.excited_directions.lower); src = 'excited directions';
  }
  const recommended = k + p;
  if (opts.count < recommended) warnings.push(`this plan has ${opts.count} experiment(s), fewer than the ${recommended} recommended.`);
  if (info.method === 'pivoted-cholesky' && !info.converged) {
    warnings.push(`the low-rank factor stopped at its rank cap ${info.rank} and carries ${(100 * info.capturedVariance).toFixed(2)} % of the variance (asked ${(100 * (1 - tol)).toFixed(2)} %); raise --max-rank or the length scale.`);
  }

  const explanation = info.method === 'dense-cholesky'
    ? `Exact draws: Cholesky factor of the full ${n} × ${n} covariance matrix (diagonal jitter ${info.jitter.toExponential(0)} for round-off), one standard normal per point and draw.`
    : `Low-rank draws: a pivoted-Cholesky factor F (rank ${info.rank}) of the covariance, built from ${info.rank} covariance rows without forming the ${n} × ${n} matrix; ` +
      `each draw is F z with z standard normal. The left-out part K − F Fᵀ is positive semi-definite with trace ${(100 * (1 - info.capturedVariance)).toFixed(3)} % of the total variance, ` +
      `so the draws carry ${(100 * info.capturedVariance).toFixed(3)} % of it (the missed part is the finest-scale content). Dense Cholesky is used up to ${DENSE_LIMIT} points.`;

  const record: DesignRecord = {
    format: 'kerneldx-design/1',
    points: { count: n, dimension: dim, median_nn_distance: nn, mean_spacing: ms },
    covariance: { kind, length_scale: l, length_scale_rule: lRule, amplitude: 1 },
    sampling: {
      method: info.method, rank: info.rank, captured_variance_fraction: info.capturedVariance,
      tolerance: info.method === 'pivoted-cholesky' ? tol : null, converged: info.converged, jitter: info.jitter, explanation,
    },
    draws: { count: opts.count, seed },
    spectrum,
    recommendation: {
      target_rank: k, target_rank_source: src, oversampling: p, recommended_count: recommended,
      rule: HALKO_RULE + (src === 'excited directions'
        ? ` With no --target-rank, k is the number of covariance directions whose amplitude sqrt(λ_i/λ_1) is at least the relative noise ${noise}: directions below it are not excited above the noise and the fit cannot identify the kernel there.`
        : ''),
      warnings,
    },
  };
  return { forcings: draws, weights, record };
}

/**
 * Bounds on #{i : sqrt(λ_i/λ_1) ≥ noise} from the factor's eigenvalues μ (μ_i ≤ λ_i ≤ μ_i + e,
 * Weyl's inequality, e = weighted residual trace).
 */
export function excitedDirections(mu: Float64Array, e: number, noise: number, n: number): Spectrum {
  const t2 = noise * noise;
  const mu1 = mu.length ? mu[0]! : 0;
  let lower = 0, upper = 0;
  for (const m of mu) {
    if (m >= t2 * (mu1 + e)) lower++;
    if (m + e >= t2 * mu1) upper++;
  }
  // directions outside the factor have λ ≤ e: they may count if e reaches the threshold
  if (e >= t2 * mu1) upper = n;
  return {
    weighted: true,
    leading: Array.from(mu.subarray(0, Math.min(50, mu.length))),
    eigenvalue_error_bound: e,
    factor_rank: mu.length,
    noise,
    excited_directions: { lower, upper, resolved: lower === upper },
  };
}

function fmt(v: number): string {
  return Number(v.toPrecision(4)).toString();
}
