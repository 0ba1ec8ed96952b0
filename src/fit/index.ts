/**
 * The estimator's library API (issue 3): forcing/response pairs → kernel G(x, s), homogeneous
 * part u_h, and honest statements of how well the data determine them (fit.json).
 *
 *   fitStudy(study, { seed, assume, replicates, progress }) → FitResult
 *   refit(study, previous, 'symmetric' | 'translation') → FitResult (structure-aware refit)
 *
 * Method and sources: docs/fit-method.md. Pure: no file system; randomness only from the seed.
 */
import type { Study, FitResult, FitReport, Kernel, NoiseFloor } from '../types.js';
import { relativeError, frobenius } from '../linalg/dense.js';
import { Rng } from '../linalg/rng.js';
import { DataError } from '../errors.js';
import { prepare, measured, type Prepared } from './prepare.js';
import { searchPath1d, finishPath1d, type Path1dSearch } from './path1d.js';
import { fitPathSpan } from './span.js';
import { coverage } from './coverage.js';
import type { CoreFit } from './core.js';
import type { Constraint } from './kink1d.js';

export type { Constraint } from './kink1d.js';

export interface FitOptions {
  seed?: number;
  assume?: 'none' | 'symmetric' | 'translation';
  /** number of bootstrap replicates (default 20) */
  replicates?: number;
  progress?: (msg: string) => void;
  /** interior break points (interfaces) for the 1-D bases: piecewise Legendre on the pieces between them */
  breaks?: number[];
  /**
   * A fit for comparing models only (1-D; ignored in 2-D): the kernel and u_h as in a full fit, but no bootstrap
   * replicates (empty noise floor, predicted errors not available), no scaling test, and with `assume` the
   * constrained fit directly. Never a fit to report.
   */
  trial?: boolean;
  /** with `trial` and `breaks` (1-D scalar): fit at these hyper-parameters instead of choosing them */
  fixed?: { K: number; order: number; jump: number; lambda: number };
}

/** z above which the scaling test calls a study nonlinear (one-sided, p ≈ 0.001 under a Gaussian null) */
export const NONLINEAR_Z = 3;
/** z above which the scaling test is inconclusive rather than linear (p ≈ 0.02) */
export const INCONCLUSIVE_Z = 2;

/** 20 replicates: the RMS spread is then known to about ±16 % (1/√(2R)), enough for a noise floor. */
function defaultReplicates(_prep: Prepared): number {
  return 20;
}

function runCore(study: Study, prep: Prepared, constraint: Constraint, seed: number, replicates: number, progress: (m: string) => void, breaks?: readonly number[], scaling = true, fixed?: FitOptions['fixed']): CoreFit {
  return runCoreKeeping(study, prep, constraint, seed, replicates, progress, breaks, scaling, fixed).core;
}

function coreOptions(study: Study, seed: number, replicates: number, progress: (m: string) => void, scaling: boolean) {
  const sigmaKnown = study.noise?.sigma !== undefined && study.noise.sigma > 0 ? study.noise.sigma : undefined;
  return { rng: new Rng(seed), replicates, sigmaKnown, progress, scaling };
}

/** runCore, also handing back a 1-D fit's settled search (to finish a trial fit with replicates later). */
function runCoreKeeping(study: Study, prep: Prepared, constraint: Constraint, seed: number, replicates: number, progress: (m: string) => void, breaks?: readonly number[], scaling = true, fixed?: FitOptions['fixed']): { core: CoreFit; search?: Path1dSearch } {
  const sets = Array.from({ length: prep.nOut * prep.cOut }, (_, c) => measured(prep, c));
  const common = coreOptions(study, seed, replicates, progress, scaling);
  if (prep.dimension !== 1) return { core: fitPathSpan(prep, sets, { ...common, constraint }) };
  const s = searchPath1d(prep, sets, { ...common, constraint, breaks, fixed });
  return 'method' in s ? { core: s } : { core: finishPath1d(s, common), search: s };
}

/**
 * Trial fits whose search can be finished into the full fit (`completeTrial`): keyed by the trial's kernel
 * matrix, held only as long as the trial fit is.
 */
const pendingTrials = new WeakMap<object, { study: Study; prep: Prepared; search: Path1dSearch; constraint: 'none' | 'symmetric'; breaks?: readonly number[] }>();

function assemble(study: Study, prep: Prepared, core: CoreFit, seed: number, t0: number): FitResult {
  const kernel: Kernel = {
    dimension: study.dimension,
    pointsOut: study.outputs.points,
    pointsIn: study.inputs.points,
    weightsIn: prep.weights,
    G: core.G,
    homogeneous: core.uh,
    components: { in: prep.cIn, out: prep.cOut },
    domain: study.domain,
    files: study.files,
  };
  const normG = frobenius(core.G);
  let spread = 0;
  for (const Gr of core.replicates) { const d = relativeError(Gr, core.G); spread += d * d; }
  const predBoot = core.replicates.length ? Math.sqrt(spread / core.replicates.length) : NaN;
  // a path with a prior (span model) also predicts the error from the posterior: the in-span part is the
  // larger of the bootstrap and posterior estimates, the unidentified part (noise-free posterior) adds to it
  let predG = predBoot, predIdentified = predBoot, predUnidentified: number | null = null;
  if (core.posteriorError2 && normG > 0) {
    const un2 = core.posteriorError2.unidentified / (normG * normG);
    const id2 = Math.max(0, core.posteriorError2.total - core.posteriorError2.unidentified) / (normG * normG);
    predIdentified = Math.sqrt(Math.max(Number.isFinite(predBoot) ? predBoot * predBoot : 0, id2));
    predUnidentified = Math.sqrt(un2);
    predG = Math.sqrt(predIdentified * predIdentified + un2);
  }
  let normUh = 0;
  for (const v of core.uh) normUh += v * v;
  normUh = Math.sqrt(normUh);
  let predUh: number | null = null;
  if (core.homogeneousReplicates.length && normUh > 0) {
    let s = 0;
    for (const u of core.homogeneousReplicates) { let d = 0; for (let i = 0; i < u.length; i++) d += (u[i]! - core.uh[i]!) ** 2; s += d; }
    predUh = Math.sqrt(s / core.homogeneousReplicates.length) / normUh;
  }
  const sigma = study.noise?.sigma !== undefined ? study.noise.sigma : core.sigma;
  const cov = coverage(prep, core.G, sigma, !core.complete);
  const unidentified = 1 - cov.identified_energy_fraction;
  // complete: the model is not confined to the span, every input point is forced, and the data excite at
  // least as many input directions as the model has input-side degrees of freedom
  const complete = core.complete && cov.unexcited_inputs === 0 && cov.identified_rank >= core.inputDof;
  const covNote: string[] = [];
  if (!core.complete) covNote.push(`the kernel is identified only on the ${cov.identified_rank} input directions the forcings excite above the noise (of ${cov.input_dimension}); it is G restricted to the forcings' span, not the whole Green's function`);
  else if (cov.identified_rank < core.inputDof) covNote.push(`the forcings excite only ${cov.identified_rank} input directions above the noise, fewer than the ${core.inputDof} input-side functions of the model: the kernel's dependence on the source point is partly set by the model's smoothness prior, not by the data`);
  if (core.complete && unidentified > 0) covNote.push(`${(100 * unidentified).toPrecision(2)}% of the fitted kernel's energy lies in input directions not excited above the noise (filled in by the model)`);
  if (cov.unexcited_inputs > 0) covNote.push(`${cov.unexcited_inputs} input point(s) are never forced: their kernel columns are extrapolated, not measured`);
  if (complete) covNote.push(`the forcings excite ${cov.identified_rank} input directions above the noise, at least the ${core.inputDof} the model needs`);
  // linearity verdict (scaling test, core.ts)
  let linearity: FitReport['linearity'];
  const sc = core.scaling;
  if (!sc) {
    linearity = { verdict: 'not-tested', statistic: null, threshold: null, note: 'the scaling test needs at least 16 experiments' };
  } else {
    const verdict = sc.t > NONLINEAR_Z ? 'nonlinear' : sc.t > INCONCLUSIVE_Z ? 'inconclusive' : 'linear';
    const ratio = sc.highAmplitude / Math.max(sc.lowAmplitude, 1e-300);
    linearity = {
      verdict,
      statistic: sc.t,
      threshold: NONLINEAR_Z,
      note: `a kernel fitted to the experiments with the smaller responses predicts the ${sc.experiments} others (response RMS ${sc.lowAmplitude.toPrecision(3)}–${sc.highAmplitude.toPrecision(3)}); their residual beyond the noise grows with the response size faster than a linear system allows (t = ${Number.isFinite(sc.t) ? sc.t.toFixed(2) : String(sc.t)}, rank correlation ${sc.rho.toFixed(2)}; nonlinear above t = ${NONLINEAR_Z}, inconclusive above ${INCONCLUSIVE_Z})` +
        (verdict === 'nonlinear' ? '. The kernel is a local linearisation around the forcing amplitudes used, not a Green\'s function.' : '') +
        (ratio < 1.5 ? '. The response sizes vary little, so the scaling test has little power.' : ''),
    };
  }
  const relResidual = core.cvRelative ?? Math.sqrt(core.gcvMse * core.nObs / Math.max(core.yy, 1e-300));
  const report: FitReport = {
    format: 'kerneldx-fit/1',
    method: core.method,
    hyperparameters: core.hyper,
    experiments: prep.N,
    relative_residual: relResidual,
    noise_estimate: sigma,
    noise_source: study.noise?.sigma !== undefined ? 'study' : 'estimated',
    uncertainty: {
      relative_kernel_error: predG,
      relative_homogeneous_error: predUh,
      method: `parametric bootstrap: ${core.replicates.length} refits with fixed hyper-parameters to Ĝ W f + û_h + N(0, σ²) noise; spread about the fit (variance and shrinkage bias; in 1-D each replicate also carries a random multiple of the basis-size truncation error, extrapolated from the fits at the two next smaller sizes)` +
        (predUnidentified !== null ? `; span model: the identified part is the larger of that spread and the GP posterior's in-span error, and the posterior spread in the noise-free limit (what the forcings do not determine) is added to it` : ''),
      replicates: core.replicates.length,
    },
    coverage: {
      identified_energy_fraction: cov.identified_energy_fraction,
      identified_rank: cov.identified_rank,
      complete,
      note: covNote.join('; '),
    },
    linearity,
    refits: [{ constraint: core.constraint, relative_residual: relResidual, used: true }],
    seconds: (Date.now() - t0) / 1000,
    seed,
  };
  const extra = report as FitReport & Record<string, unknown>;
  extra.noise_estimated = core.sigma;
  extra.coverage_detail = { excited_directions: cov.excited_directions, input_dimension: cov.input_dimension, unexcited_inputs: cov.unexcited_inputs };
  extra.notes = [...prep.notes, ...core.notes];
  extra.kernel_norm = normG;
  if (predUnidentified !== null) {
    const u = report.uncertainty as FitReport['uncertainty'] & Record<string, unknown>;
    u.relative_kernel_error_identified = predIdentified;
    u.relative_kernel_error_unidentified = predUnidentified;
    u.relative_kernel_error_bootstrap = predBoot;
  }
  const noise: NoiseFloor = {
    replicates: core.replicates,
    homogeneousReplicates: core.homogeneousReplicates,
    source: 'bootstrap',
    assumption: `responses carry independent Gaussian noise of std ${sigma.toPrecision(3)} (${report.noise_source}); the replicates are refits of the fitted kernel to data with fresh noise of that size`,
  };
  return { kernel, report, noise };
}

export function fitStudy(study: Study, opts: FitOptions = {}): FitResult {
  const t0 = Date.now();
  const seed = opts.seed ?? 0;
  const progress = opts.progress ?? (() => {});
  const prep = prepare(study);
  const assume = opts.assume ?? 'none';
  if (opts.trial && prep.dimension === 1) {
    const { core, search } = runCoreKeeping(study, prep, assume, seed, 0, progress, opts.breaks, false, opts.fixed);
    const res = assemble(study, prep, core, seed, t0);
    if (search && !opts.fixed && assume !== 'translation') pendingTrials.set(res.kernel.G, { study, prep, search, constraint: assume, breaks: opts.breaks });
    res.report.uncertainty.method = 'none (a trial fit for model comparison: no bootstrap replicates)';
    res.report.linearity = { verdict: 'not-tested', statistic: null, threshold: null, note: 'not tested in a trial fit' };
    return res;
  }
  const R = opts.replicates ?? defaultReplicates(prep);
  if (!Number.isInteger(R) || R < 2) throw new DataError('replicates must be an integer ≥ 2');
  const base = assemble(study, prep, runCore(study, prep, 'none', seed, R, progress, opts.breaks), seed, t0);
  if (assume === 'none') return base;
  const other = refitFrom(study, prep, base, assume, seed, R, progress, true, opts.breaks);
  other.report.seconds = (Date.now() - t0) / 1000;
  return other;
}

/** Whether a constrained refit exists for this study (1-D, one component); otherwise the refit is a no-op. */
function refitApplies(prep: Prepared): boolean {
  return prep.dimension === 1 && prep.cIn === 1 && prep.cOut === 1;
}

function refitFrom(study: Study, prep: Prepared, previous: FitResult, constraint: 'none' | 'symmetric' | 'translation', seed: number, R: number, progress: (m: string) => void, forced: boolean, breaks?: readonly number[], settled?: Path1dSearch): FitResult {
  const t0 = Date.now();
  if (!refitApplies(prep)) {
    // nothing to refit (the span model and block kernels have no constrained form): say so, keep the fit
    const prevResidual = previous.report.refits.find((r) => r.constraint === 'none')?.relative_residual ?? previous.report.relative_residual;
    const report = {
      ...previous.report,
      refits: [{ constraint: 'none', relative_residual: prevResidual, used: true }, { constraint, relative_residual: prevResidual, used: false }],
    } as FitReport & Record<string, unknown>;
    report.refit_note = `a ${constraint} refit is implemented for scalar 1-D studies only (this one is ${prep.dimension}-D${prep.cIn > 1 || prep.cOut > 1 ? ' with several components' : ''}); the unconstrained kernel is used`;
    return { kernel: previous.kernel, noise: previous.noise, report };
  }
  const core = settled ? finishPath1d(settled, coreOptions(study, seed, R, progress, true)) : runCore(study, prep, constraint, seed, R, progress, breaks);
  const res = assemble(study, prep, core, seed, t0);
  const label = refitLabel(constraint, breaks);
  // compared with the fit in use (the unconstrained one unless an earlier refit replaced it)
  const prevEntry = previous.report.refits.find((r) => r.used) ?? previous.report.refits.find((r) => r.constraint === 'none') ?? { constraint: 'none', relative_residual: previous.report.relative_residual, used: true };
  const applied = core.constraint === constraint && (!breaks?.length || core.hyper.breaks !== undefined);
  const useRefit = applied && (forced || res.report.relative_residual <= prevEntry.relative_residual);
  const earlier = previous.report.refits.length ? previous.report.refits : [prevEntry];
  const refits = [
    ...earlier.map((r) => ({ ...r, used: r.used && !useRefit })),
    { constraint: label, relative_residual: applied ? res.report.relative_residual : prevEntry.relative_residual, used: useRefit },
  ];
  const chosen = useRefit ? res : previous;
  // the scaling test belongs to the data, not to the constraint: keep the unconstrained fit's verdict
  const linearity = chosen.report.linearity.verdict === 'not-tested' ? previous.report.linearity : chosen.report.linearity;
  const out: FitResult = { kernel: chosen.kernel, noise: chosen.noise, report: { ...chosen.report, linearity, refits } };
  const extra = out.report as FitReport & Record<string, unknown>;
  extra.refit_note = !applied
    ? `the ${label} refit could not be applied to this study; the previous kernel is used`
    : useRefit
      ? `the ${label} refit is used${forced ? ' (assumed by the user)' : ' (its cross-validated residual is not larger)'}`
      : `the ${label} refit fits worse (cross-validated residual ${res.report.relative_residual.toPrecision(3)} vs ${prevEntry.relative_residual.toPrecision(3)}); the unconstrained kernel is used`;
  return out;
}

/** How a refit is named in `refits[]`: its constraint, and the break points of a piecewise basis. */
export function refitLabel(constraint: string, breaks?: readonly number[]): string {
  return breaks?.length ? `${constraint === 'none' ? 'piecewise' : `${constraint}, piecewise`} (breaks at ${breaks.map((t) => t.toPrecision(3)).join(', ')})` : constraint;
}

/** A refit with bases broken at given points (interfaces), optionally also under symmetry. */
export interface RefitSpec {
  constraint?: 'none' | 'symmetric';
  /** interior break points: piecewise Legendre bases on the pieces between them (1-D scalar studies) */
  breaks: number[];
}

/**
 * The refit `refit(study, previous, { constraint, breaks })` would give, for a trial fit made with those
 * (fitStudy `trial`, no `fixed`): the trial's hyper-parameter search is finished with the bootstrap replicates
 * and the scaling test instead of being run again. The result is the same; a trial of another study or one
 * with fixed hyper-parameters is refitted from scratch.
 */
export function completeTrial(study: Study, previous: FitResult, trial: FitResult, spec: RefitSpec): FitResult {
  const p = pendingTrials.get(trial.kernel.G);
  const same = p && p.study === study && p.constraint === (spec.constraint ?? 'none') && sameBreaks(p.breaks, spec.breaks);
  if (!same || !refitApplies(p.prep)) return refit(study, previous, spec);
  const R = previous.noise.replicates.length || defaultReplicates(p.prep);
  return refitFrom(study, p.prep, previous, p.constraint, previous.report.seed, R, () => {}, false, spec.breaks, p.search);
}

function sameBreaks(a?: readonly number[], b?: readonly number[]): boolean {
  const x = a ?? [], y = b ?? [];
  return x.length === y.length && x.every((t, k) => t === y[k]);
}

/**
 * Structure-aware refit (the diagnosis calls it once it has established the structure). The refit is kept
 * only if its cross-validated residual is not larger than the previous fit's.
 */
export function refit(study: Study, previous: FitResult, constraint: 'symmetric' | 'translation' | RefitSpec): FitResult {
  const prep = prepare(study);
  const R = previous.noise.replicates.length || defaultReplicates(prep);
  if (typeof constraint === 'string') return refitFrom(study, prep, previous, constraint, previous.report.seed, R, () => {}, false);
  return refitFrom(study, prep, previous, constraint.constraint ?? 'none', previous.report.seed, R, () => {}, false, constraint.breaks);
}
