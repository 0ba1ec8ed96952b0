/**
 * The folder-level flow behind `diagnose` and `run`:
 *   study folder → fit (→ symmetric refit when self-adjointness is established) → diagnose → findings.json
 *   kernel folder → diagnose (noise floor estimated from the kernel itself) → findings.json
 * and, for `run`, the dossier. Only this file and cli/ touch the file system for these steps.
 */
import { resolve, relative } from 'node:path';
import { existsSync, statSync } from 'node:fs';
import { readStudy } from './io/study.js';
import { readKernel, writeKernel, isKernelDir } from './io/kernel.js';
import { withOutput, type OutputStage } from './io/output.js';
import { fitStudy, refit, refitLabel, completeTrial } from './fit/index.js';
import { detectInterfaces } from './analyses/interfaces.js';
import { comparePredictions, akaikeWeights, upperNormalQuantile } from './analyses/util/a_predictive.js';
import { diagnose } from './diagnose.js';
import { analyses } from './analyses/registry.js';
import { VERSION } from './version.js';
import { InputError } from './errors.js';
import { Rng } from './linalg/rng.js';
import type { Audit, Findings, FitResult, Study, InputFile } from './types.js';

export interface PipelineOptions {
  seed?: number;
  quiet?: boolean;
  /** the command line as typed (for the audit trail) */
  argv?: string[];
  /** `--assume symmetric` etc., passed to the fit */
  assume?: 'none' | 'symmetric' | 'translation';
  /** skip the automatic symmetric refit */
  noRefit?: boolean;
  progress?: (msg: string) => void;
  /** clock, injectable for tests */
  now?: () => Date;
}

export interface DiagnoseOutcome {
  findings: Findings;
  fit?: FitResult;
  study?: Study;
}

function audit(opts: PipelineOptions, started: Date, seconds: number, rerun: string, options: Record<string, unknown>): Audit {
  return {
    command: opts.argv && opts.argv.length ? opts.argv : rerun.split(' ').slice(1),
    options,
    seed: opts.seed ?? 0,
    started: started.toISOString(),
    seconds,
    platform: { node: process.version, os: `${process.platform}`, arch: process.arch },
    rerun,
    cwd: process.cwd(),
  };
}

function quoteArg(a: string): string {
  return /^[\w@%+=:,./-]+$/.test(a) ? a : `'${a.replace(/'/g, `'\\''`)}'`;
}

/** Write a fit's kernel folder and fit.json at `at` inside the stage. */
export function writeFit(stage: OutputStage, fit: FitResult, at: string): void {
  writeKernel(stage, fit.kernel, at, { fit: 'fit.json' });
  stage.write(`${at}/fit.json`, JSON.stringify(fit.report, null, 2) + '\n');
}

/** Confidence of a located interface above which the fit is redone with bases broken there. */
const INTERFACE_REFIT_CONFIDENCE = 0.9;
/**
 * One-sided level of the paired per-experiment comparison (util/a_predictive.ts) at which breaks not located
 * with confidence ≥ 0.9 are kept (shared by the trial sets, Bonferroni). The level is small because the
 * costs are unequal: a kept break at no real change lets the refitted kernel carry a jump the interface
 * analysis may then report, while a break wrongly refused only leaves the previous fit in use.
 */
const PROBABLE_BREAK_ALPHA = 0.001;

type RefitEntry = FitResult['report']['refits'][number];

/** The previous fit, with a tried refit recorded as not used and why. */
function declined(previous: FitResult, tried: RefitEntry, reason: string): FitResult {
  const report = { ...previous.report, refits: [...previous.report.refits, { ...tried, used: false, reason }] } as FitResult['report'] & Record<string, unknown>;
  return { ...previous, report };
}

/** Mark the newest refit entry with its breaks and the reason it was used or declined. */
function annotateLast(fit: FitResult, breaks: number[], reason: string): FitResult {
  const refits = fit.report.refits.slice();
  refits[refits.length - 1] = { ...refits[refits.length - 1]!, breaks: breaks.map((t) => Number(t.toPrecision(4))), reason };
  return { ...fit, report: { ...fit.report, refits } };
}

/**
 * Refits with bases broken at interfaces of the kernel in use. Interfaces located with confidence ≥ 0.9
 * first (kept if the refit cross-validates no worse); then trial sets of further breaks — the interfaces
 * that probably exist (existence ≥ 0.5) but are located with less confidence, and the change points of
 * each profile feature whose sharp-change models are not ruled out — each kept only if the paired
 * comparison of prediction errors over the experiments prefers it at one-sided level PROBABLE_BREAK_ALPHA
 * (Bonferroni over the trial sets). Every tried refit is listed in the report's refits with its breaks and
 * the reason it was used or not.
 */
function breakRefits(study: Study, fitIn: FitResult, say: (m: string) => void, seed: number, unconstrained?: FitResult): { fit: FitResult; sides: Sides | null } {
  const located: Located[] = [];
  const sidesOut = { value: null as Sides | null };
  const fit = breakRefitsOn(study, fitIn, say, located, sidesOut, seed, unconstrained);
  return { fit, sides: sidesOut.value };
}

type Located = ReturnType<typeof detectInterfaces>['interfaces'][number];

function breakRefitsOn(study: Study, fitIn: FitResult, say: (m: string) => void, det: Located[], sidesOut: { value: Sides | null }, seed: number, unconstrained?: FitResult): FitResult {
  let fit = fitIn;
  // candidates: the interfaces of the kernel in use and, when a symmetric refit replaced it, of the
  // unconstrained kernel too (a symmetric fit can smooth a weakly seen change away); of two within each
  // other's uncertainty (or 2 % of the length) the better established one is kept
  const [lo, hi] = [Math.min(...fit.kernel.pointsOut.data), Math.max(...fit.kernel.pointsOut.data)];
  const near = (a: { location: number; uncertainty: number }, b: { location: number; uncertainty: number }) => Math.abs(a.location - b.location) <= Math.max(a.uncertainty + b.uncertainty, 0.02 * (hi - lo));
  const results = [detectInterfaces(fit.kernel, fit.noise.replicates, 8, true)];
  if (unconstrained && unconstrained !== fit) results.push(detectInterfaces(unconstrained.kernel, unconstrained.noise.replicates, 8, true));
  for (const res of results) for (const i of res.interfaces) {
    const k = det.findIndex((j) => near(i, j));
    if (k < 0) det.push(i);
    else if (i.confidence > det[k]!.confidence) det[k] = i;
  }
  // changes the profile comparison does not rule out (a feature's sharp-change models inside the 95 % model
  // set): each feature's change points are one proposal, tried as a set; whether the breaks help is for the
  // paired test below to say. Proposals of the two kernels for the same feature and places are one.
  const proposals: { feature: string; at: Located[]; weight: number }[] = [];
  for (const res of results) for (const q of res.proposals) {
    const at = q.locations.map((t): Located => ({ location: t, uncertainty: q.uncertainty, confidence: 0, existence: q.weight, evidence: [q.feature] }));
    const same = proposals.find((p) => p.at.length === at.length && p.at.every((x, k) => near(x, at[k]!)));
    if (same) { same.weight = Math.max(same.weight, q.weight); continue; }
    proposals.push({ feature: q.feature, at, weight: q.weight });
  }
  const symmetric = fit.report.refits.some((r) => r.used && r.constraint === 'symmetric');
  const constraint = symmetric ? 'symmetric' as const : 'none' as const;
  const describe = (i: (typeof det)[number]) => `${i.location.toPrecision(3)} (confidence ${i.confidence.toFixed(2)}, existence ${i.existence.toFixed(2)})`;
  let breaks: number[] = [];
  // every fit with breaks is a trial fit (no replicates; fitStudy `trial`); the one finally in use is finished
  // into the full fit once, at the end (completeTrial: same result as a refit, without redoing the search)
  const trialFit = (at: number[]) => {
    const f = fitStudy(study, { seed, breaks: at, trial: true, assume: constraint });
    return { f, applied: typeof (f.report.hyperparameters as Record<string, unknown>).breaks === 'string' };
  };
  const tryAt = (at: number[], against: FitResult): FitResult => {
    const { f, applied } = trialFit(at);
    const prev = against.report.refits.find((r) => r.used)?.relative_residual ?? against.report.relative_residual;
    const used = applied && f.report.relative_residual <= prev;
    const earlier = against.report.refits.length ? against.report.refits : [{ constraint: 'none', relative_residual: against.report.relative_residual, used: true }];
    const entry = { constraint: refitLabel(constraint, at), relative_residual: applied ? f.report.relative_residual : prev, used };
    const refits = [...earlier.map((r) => ({ ...r, used: r.used && !used })), entry];
    return used ? { ...f, report: { ...f.report, refits } } : { ...against, report: { ...against.report, refits } };
  };
  const confident = det.filter((i) => i.confidence >= INTERFACE_REFIT_CONFIDENCE);
  if (confident.length) {
    const at = confident.map((i) => i.location);
    say(`interfaces at ${at.map((t) => t.toPrecision(3)).join(', ')}: refitting with bases broken there`);
    const r = tryAt(at, fit);
    const used = r.report.refits[r.report.refits.length - 1]!.used;
    if (used) breaks = at;
    fit = annotateLast(r, at, `interface${at.length > 1 ? 's' : ''} at ${confident.map(describe).join(', ')} located with confidence ≥ ${INTERFACE_REFIT_CONFIDENCE}; ${used ? 'used: its cross-validated residual is not larger' : 'not used: its cross-validated residual is larger'}`);
    // a break a grid cell off leaves a truncation error the data see: when the fit with the breaks moved by
    // their location uncertainty to one side has the larger Akaike weight, the breaks are moved there
    const sf = used ? sideFits(study, fit, det, seed, say) : null;
    sidesOut.value = sf;
    if (sf) {
      const to = sf.breaks.map((t, b) => {
        const ms = sf.moves.filter((m) => m.b === b);
        const top = ms.reduce<(typeof ms)[number] | null>((x, m) => (m.p > (x ? x.p : sf.pStay[b]!) ? m : x), null);
        return top ? top.to : t;
      });
      if (to.some((t, b) => t !== sf.breaks[b])) {
        say(`the breaks fit better at ${to.map((t) => t.toPrecision(3)).join(', ')}: refitting there`);
        const m = tryAt(to, fit);
        if (m.report.refits[m.report.refits.length - 1]!.used) {
          const ws = sf.breaks.map((_, b) => [...sf.moves.filter((x) => x.b === b).map((x) => x.p), sf.pStay[b]!].map((w) => w.toPrecision(2)).join(' / '));
          breaks = to;
          fit = annotateLast(m, to, `the breaks at ${sf.breaks.map((t) => t.toPrecision(3)).join(', ')} moved where a fit predicts better: Akaike weights of each break moved down / up / not moved ${ws.join('; ')} (Burnham & Anderson 2002)`);
        }
      }
    }
  }
  // the fit in use finished with its replicates (a no-op for the fit handed in), its refit entries kept
  const finish = (f: FitResult, at: number[]): FitResult => {
    if (f.noise.replicates.length >= fitIn.noise.replicates.length) return f;
    const full = completeTrial(study, fitIn, f, { constraint, breaks: at });
    return { ...full, report: { ...full.report, refits: f.report.refits } };
  };
  const probable = det.filter((i) => i.confidence < INTERFACE_REFIT_CONFIDENCE && i.existence >= 0.5);
  const sets: { at: Located[]; why: string }[] = [];
  if (probable.length) sets.push({ at: probable, why: `interface${probable.length > 1 ? 's' : ''} probably at ${probable.map(describe).join(', ')}, located with confidence below ${INTERFACE_REFIT_CONFIDENCE}` });
  for (const p of proposals) {
    // a proposal near a break in use or a probable interface adds nothing; near a weaker record it is tried
    const at = p.at.filter((x) => !breaks.some((t) => near(x, { location: t, uncertainty: 0 })) && !probable.some((j) => near(x, j)));
    if (!at.length || sets.some((q) => q.at.length === at.length && q.at.every((x, k) => near(x, at[k]!)))) continue;
    sets.push({ at, why: `sharp change${at.length > 1 ? 's' : ''} of ${p.feature} not ruled out at ${at.map((x) => x.location.toPrecision(3)).join(', ')} (weight of the sharp-change models ${p.weight.toFixed(2)})` });
  }
  if (!sets.length) return finish(fit, breaks);
  const alpha = PROBABLE_BREAK_ALPHA / sets.length, zMin = upperNormalQuantile(alpha);
  const level = `one-sided level ${alpha.toPrecision(2)}${sets.length > 1 ? ` (0.001 over ${sets.length} trial sets)` : ''}`;
  const testText = (c: ReturnType<typeof comparePredictions>) => `paired comparison of the prediction errors over ${c.experiments} experiments: z = ${c.z.toFixed(2)}, cross-validated loss ${c.relativeGain >= 0 ? 'lower' : 'higher'} by ${(100 * Math.abs(c.relativeGain)).toPrecision(2)} %`;
  const all = (extra: number[]) => [...breaks, ...extra].sort((p, q) => p - q);
  // the sets' trial fits carry their entry after the refits so far (the flags of the earlier ones are set at the end)
  const current = fit.report.refits.find((r) => r.used)?.relative_residual ?? fit.report.relative_residual;
  const tryBreaks = (at: number[]): FitResult => {
    const { f, applied } = trialFit(at);
    const entry = { constraint: refitLabel(constraint, at), relative_residual: f.report.relative_residual, used: applied && f.report.relative_residual <= current };
    return { ...f, report: { ...f.report, refits: [...fit.report.refits, entry] } };
  };
  let best: { set: (typeof sets)[number]; fit: FitResult; z: number; cmp: ReturnType<typeof comparePredictions> } | null = null;
  const refused: { entry: RefitEntry; reason: string }[] = [];
  for (const set of sets) {
    const extra = set.at.map((i) => i.location);
    say(`trying bases broken at ${all(extra).map((t) => t.toPrecision(3)).join(', ')}`);
    const trial = tryBreaks(all(extra));
    const last = trial.report.refits[trial.report.refits.length - 1]!;
    const entry = { ...last, breaks: all(extra).map((t) => Number(t.toPrecision(4))) };
    if (!last.used) { refused.push({ entry, reason: `${set.why}; not used: its cross-validated residual is larger` }); continue; }
    const cmp = comparePredictions(study, fit, trial);
    if (cmp.z >= zMin && (!best || cmp.z > best.z)) {
      if (best) refused.push({ entry: { ...best.fit.report.refits[best.fit.report.refits.length - 1]!, breaks: all(best.set.at.map((i) => i.location)).map((t) => Number(t.toPrecision(4))) }, reason: `${best.set.why}; not used: ${testText(best.cmp)}, another set predicts better` });
      best = { set, fit: trial, z: cmp.z, cmp };
    } else refused.push({ entry, reason: `${set.why}; not used: ${testText(cmp)} (${cmp.z >= zMin ? 'another set predicts better' : `< ${zMin.toFixed(2)}, ${level}`})` });
  }
  const withRefused = (f: FitResult) => {
    let out = f;
    for (const r of refused) out = declined(out, r.entry, r.reason);
    return out;
  };
  if (!best) return finish(withRefused(fit), breaks);
  for (const x of best.set.at) if (!det.includes(x)) det.push(x);
  // backward elimination over the added breaks (each removal a refit; at most as many rounds as breaks)
  let added = best.set.at.map((i) => i.location), trial = best.fit, cmp = best.cmp;
  const dropped: number[] = [];
  while (added.length > 1) {
    let weakest: { k: number; fit: FitResult; z: number } | null = null;
    for (let k = 0; k < added.length; k++) {
      const without = tryBreaks(all(added.filter((_, q) => q !== k)));
      const c = without.report.refits[without.report.refits.length - 1]!.used ? comparePredictions(study, without, trial).z : Infinity;
      if (!weakest || c < weakest.z) weakest = { k, fit: without, z: c };
    }
    if (!weakest || weakest.z >= zMin) break;
    say(`the break at ${added[weakest.k]!.toPrecision(3)} is not needed (z = ${weakest.z.toFixed(2)})`);
    dropped.push(added[weakest.k]!);
    added = added.filter((_, q) => q !== weakest!.k);
    trial = weakest.fit;
    cmp = comparePredictions(study, fit, trial);
  }
  if (trial.noise.replicates.length < fitIn.noise.replicates.length) {
    const full = completeTrial(study, fitIn, trial, { constraint, breaks: all(added) });
    if (!full.report.refits[full.report.refits.length - 1]!.used) return finish(withRefused(fit), breaks);
    trial = full;
  }
  // the refused trials are listed before the one used
  const used = trial.report.refits[trial.report.refits.length - 1]!;
  const base = withRefused(fit);
  const refits = [...base.report.refits.map((r) => ({ ...r, used: false })), { ...used, breaks: all(added).map((t) => Number(t.toPrecision(4))), reason: `${best.set.why}; used at ${added.map((t) => t.toPrecision(3)).join(', ')}: ${testText(cmp)} (≥ ${zMin.toFixed(2)}, ${level})` +
    (dropped.length ? `; dropped ${dropped.map((t) => t.toPrecision(3)).join(', ')}: the fit without predicts as well` : '') }];
  return { ...trial, report: { ...trial.report, refits } };
}

/**
 * A fit with bases broken at located interfaces treats the break points as known; its bootstrap replicates
 * then miss the error of a slightly misplaced break (a truncation error, not noise). Two more fits move
 * every break by its location uncertainty u_b, one to each side; the three positions are weighed by their
 * Akaike weights p (util/a_predictive.ts), and replicate r gets Σ_side √p_side ξ_r,side (G_side − G) added,
 * ξ ~ N(0, 1): its expected squared distance from the fit is then the model-averaged one over the break
 * positions (Burnham & Anderson 2002, §4.2, variance of a model-averaged estimate). Predicted errors are
 * recomputed from the widened replicates.
 */
/** Fits with one break moved by ∓ or ± its location uncertainty (the others kept), per break; Akaike weights of each break's three positions. */
interface Sides { ref: FitResult; breaks: number[]; u: number[]; moves: { b: number; to: number; fit: FitResult; p: number }[]; pStay: number[] }

function sideFits(study: Study, fit: FitResult, located: Located[], seed: number, say: (m: string) => void): Sides | null {
  const spec = (fit.report.hyperparameters as Record<string, unknown>).breaks;
  if (typeof spec !== 'string' || !spec.length) return null;
  if (fit.kernel.components.in !== 1 || fit.kernel.components.out !== 1) return null;
  const breaks = spec.split(',').map(Number);
  const [lo, hi] = [Math.min(...fit.kernel.pointsOut.data), Math.max(...fit.kernel.pointsOut.data)];
  const u = breaks.map((t) => {
    const rec = located.reduce<Located | null>((b, i) => (!b || Math.abs(i.location - t) < Math.abs(b.location - t) ? i : b), null);
    return rec && Number.isFinite(rec.uncertainty) ? rec.uncertainty : 0;
  });
  if (!u.some((d) => d > 0)) return null;
  say(`break locations uncertain by ±${u.map((d) => d.toPrecision(2)).join(', ')}: fits with each moved either way`);
  const symmetric = fit.report.hyperparameters.constraint === 'symmetric';
  // the moved fits keep the reference fit's hyper-parameters, so that the three positions differ only in the break
  const h = fit.report.hyperparameters as Record<string, unknown>;
  const fx = { K: Number(h.basis_size), order: Number(h.penalty_order), jump: Number(h.jump_penalty_factor), lambda: Number(h.lambda) };
  const fixed = Object.values(fx).every(Number.isFinite) ? fx : undefined;
  const moves: Sides['moves'] = [], pStay: number[] = [];
  breaks.forEach((t, b) => {
    if (!(u[b]! > 0)) { pStay.push(1); return; }
    const fits = [-1, 1].map((sg) => {
      const to = Math.min(hi, Math.max(lo, t + sg * u[b]!));
      return { to, fit: fitStudy(study, { seed, breaks: breaks.map((x, q) => (q === b ? to : x)).sort((p, q) => p - q), trial: true, fixed, assume: symmetric ? 'symmetric' : 'none' }) };
    }).filter((m) => typeof (m.fit.report.hyperparameters as Record<string, unknown>).breaks === 'string');
    const w = akaikeWeights(study, [...fits.map((m) => m.fit), fit], fit.report.noise_estimate);
    fits.forEach((m, q) => moves.push({ b, to: m.to, fit: m.fit, p: w[q]! }));
    pStay.push(w[fits.length]!);
  });
  return { ref: fit, breaks, u, moves, pStay };
}

/**
 * The replicates widened by the break-location uncertainty: replicate r gets Σ_moves √p ξ (G_move − G_ref),
 * ξ ~ N(0, 1), over the moves of the breaks the fit still has where the side fits were made.
 */
function withBreakUncertainty(fit: FitResult, sf: Sides | null, seed: number): FitResult {
  const spec = (fit.report.hyperparameters as Record<string, unknown>).breaks;
  if (!sf || typeof spec !== 'string' || !fit.noise.replicates.length) return fit;
  const now = spec.split(',').map(Number);
  const kept = sf.moves.filter((m) => now.some((t) => Math.abs(t - sf.breaks[m.b]!) < 1e-12));
  if (!kept.length) return fit;
  const idx = kept.map((m) => m.b).filter((b, k, a) => a.indexOf(b) === k);
  const breaks = idx.map((b) => sf.breaks[b]!), u = idx.map((b) => sf.u[b]!);
  const sides = kept.map((m) => m.fit), p = kept.map((m) => m.p);
  const rng = new Rng(seed).fork(0x6b72);
  const G = fit.kernel.G.data, uh = fit.kernel.homogeneous, G0 = sf.ref.kernel.G.data, uh0 = sf.ref.kernel.homogeneous;
  const coef = fit.noise.replicates.map(() => sides.map((_, q) => Math.sqrt(p[q]!) * rng.normal()));
  const replicates = fit.noise.replicates.map((R, r) => {
    const d = Float64Array.from(R.data);
    sides.forEach((f, q) => { const c = coef[r]![q]!, Ga = f.kernel.G.data; for (let k = 0; k < d.length; k++) d[k] += c * (Ga[k]! - G0[k]!); });
    return { rows: R.rows, cols: R.cols, data: d };
  });
  const homogeneousReplicates = uh && uh0 && sides.every((f) => f.kernel.homogeneous) && fit.noise.homogeneousReplicates.length === replicates.length
    ? fit.noise.homogeneousReplicates.map((v, r) => {
      const d = Float64Array.from(v);
      sides.forEach((f, q) => { const c = coef[r]![q]!, ua = f.kernel.homogeneous!; for (let i = 0; i < d.length; i++) d[i] += c * (ua[i]! - uh0![i]!); });
      return d;
    })
    : fit.noise.homogeneousReplicates;
  // predicted errors as the fit states them: RMS over replicates of the relative distance to the fit
  const rms = (vs: ArrayLike<number>[], ref: ArrayLike<number>) => {
    let n2 = 0; for (let i = 0; i < ref.length; i++) n2 += ref[i]! * ref[i]!;
    let s = 0;
    for (const v of vs) { let d = 0; for (let i = 0; i < ref.length; i++) d += (v[i]! - ref[i]!) ** 2; s += d; }
    return n2 > 0 && vs.length ? Math.sqrt(s / vs.length / n2) : NaN;
  };
  const unc = fit.report.uncertainty;
  const kernelError = rms(replicates.map((R) => R.data), G);
  const uhError = uh && homogeneousReplicates.length ? rms(homogeneousReplicates, uh) : unc.relative_homogeneous_error;
  const note = `; the break points (${breaks.map((t) => t.toPrecision(3)).join(', ')}) are located, not known: refitted with each moved by ∓/± its location uncertainty (${u.map((d) => d.toPrecision(2)).join(', ')}), Akaike weights of the moves ${p.map((w) => w.toPrecision(2)).join(' / ')}; each replicate also carries N(0, weight) times each move's change of the fit`;
  const report = {
    ...fit.report,
    uncertainty: { ...unc, relative_kernel_error: kernelError, relative_homogeneous_error: uhError, method: unc.method + note, relative_kernel_error_fixed_breaks: unc.relative_kernel_error } as FitResult['report']['uncertainty'],
  };
  return { ...fit, report, noise: { ...fit.noise, replicates, homogeneousReplicates, assumption: fit.noise.assumption + note } };
}

/** Fit a study and diagnose the kernel, refitting under symmetry when the data establish it, then with bases broken at confidently located interfaces. */
export function diagnoseStudy(study: Study, opts: PipelineOptions): { findings: Findings; fit: FitResult } {
  const seed = opts.seed ?? 0;
  const say = opts.progress ?? (() => {});
  say(`fitting ${study.inputs.values.rows} experiments`);
  let fit = fitStudy(study, { seed, assume: opts.assume ?? 'none', progress: say });
  const unconstrained = fit;
  const inputs: InputFile[] = study.files ?? [];
  const auditStub = audit(opts, new Date(0), 0, '', {});
  if (!opts.noRefit && (opts.assume ?? 'none') === 'none' && analyses.some((a) => a.key === 'self_adjoint')) {
    const pre = diagnose({ kernel: fit.kernel, noise: fit.noise, fit: fit.report, inputs }, { seed, only: ['self_adjoint'], audit: auditStub });
    const sa = pre.findings.self_adjoint;
    if (sa.verdict === 'yes' && sa.confidence >= 0.9) {
      say('self-adjointness established: refitting under symmetry');
      fit = refit(study, fit, 'symmetric');
    }
  }
  // interfaces located with confidence, or probably present and preferred by the data: refit with the bases
  // broken there (1-D scalar studies only, a no-op otherwise)
  if (!opts.noRefit && study.dimension === 1 && analyses.some((a) => a.key === 'interfaces')) {
    const r = breakRefits(study, fit, say, seed, unconstrained);
    fit = withBreakUncertainty(r.fit, r.sides, seed);
  }
  say('diagnosing the kernel');
  const { findings } = diagnose({ kernel: fit.kernel, noise: fit.noise, fit: fit.report, inputs }, { seed, progress: say, audit: auditStub });
  return { findings, fit };
}

/** `diagnose (KERNEL_DIR | STUDY_DIR) --out DIR`: writes DIR/findings.json (and DIR/kernel/ when it fitted). */
export async function diagnoseDir(inputDir: string, outDir: string, opts: PipelineOptions, withReport = false): Promise<DiagnoseOutcome & { html?: string; pdf?: string }> {
  const now = opts.now ?? (() => new Date());
  const started = now();
  const t0 = performance.now();
  const seed = opts.seed ?? 0;
  const src = resolve(inputDir);
  if (!existsSync(src)) throw new InputError({ file: inputDir }, 'folder not found');
  const dir = statSync(src).isDirectory() ? src : resolve(src, '..');
  const say = opts.progress ?? (() => {});
  const isKernel = isKernelDir(dir) && !existsSync(`${dir}/study.json`);
  const options: Record<string, unknown> = {
    input: inputDir, out: outDir, seed, assume: opts.assume ?? 'none', refit: !opts.noRefit, report: withReport,
  };
  const rerunCmd = ['kerneldx', withReport ? 'run' : 'diagnose', relative(process.cwd(), dir) || '.', '--out', relative(process.cwd(), resolve(outDir)) || '.', '--seed', String(seed)]
    .concat(opts.assume && opts.assume !== 'none' ? ['--assume', opts.assume] : [])
    .concat(opts.noRefit ? ['--no-refit'] : []).map(quoteArg).join(' ');
  return withOutput(outDir, async (stage) => {
    let outcome: DiagnoseOutcome;
    if (isKernel) {
      say(`reading kernel folder ${dir}`);
      const kernel = readKernel(dir);
      const { findings } = diagnose({ kernel, inputs: kernel.files ?? [] }, { seed, progress: say, audit: audit(opts, started, 0, rerunCmd, options) });
      writeKernel(stage, kernel, 'kernel');
      outcome = { findings };
    } else {
      say(`reading study folder ${dir}`);
      const study = readStudy(dir);
      const r = diagnoseStudy(study, { ...opts, progress: say });
      writeFit(stage, r.fit, 'kernel');
      outcome = { findings: r.findings, fit: r.fit, study };
    }
    const findings = outcome.findings as Findings & { kernel_dir?: string; study?: Record<string, unknown> };
    findings.kernel_dir = 'kernel';
    if (outcome.study) {
      findings.study = { title: outcome.study.title ?? null, units: outcome.study.units ?? null, domain: outcome.study.domain };
    }
    findings.audit = audit(opts, started, (performance.now() - t0) / 1000, rerunCmd, options);
    stage.write('findings.json', JSON.stringify(findings, null, 2) + '\n');
    if (!withReport) return outcome;
    say('writing the dossier');
    // the report modules (vega, pdfkit, handlebars: ~1 s CPU to load) are imported only when a dossier is written
    const { buildDossier } = await import('./report/index.js');
    const rep = await buildDossier(stage.stage, { argv: opts.argv, quiet: opts.quiet });
    findings.audit.seconds = (performance.now() - t0) / 1000;
    return { ...outcome, html: resolve(outDir, relative(stage.stage, rep.html)), pdf: resolve(outDir, relative(stage.stage, rep.pdf)) };
  });
}

/** `run STUDY --out DIR`: fit + diagnose + report into DIR. */
export async function runPipeline(studyDir: string, outDir: string, opts: PipelineOptions = {}): Promise<{ findingsPath: string; dossierHtml: string; dossierPdf: string; findings: Findings }> {
  const r = await diagnoseDir(studyDir, outDir, opts, true);
  return { findingsPath: resolve(outDir, 'findings.json'), dossierHtml: r.html!, dossierPdf: r.pdf!, findings: r.findings };
}

export { VERSION };
