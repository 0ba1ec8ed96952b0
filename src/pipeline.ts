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
import { fitStudy, refit } from './fit/index.js';
import { detectInterfaces } from './analyses/interfaces.js';
import { comparePredictions } from './analyses/util/a_predictive.js';
import { diagnose } from './diagnose.js';
import { analyses } from './analyses/registry.js';
import { VERSION } from './version.js';
import { InputError } from './errors.js';
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
 * z of the paired per-experiment comparison (util/a_predictive.ts) above which a break at an interface that
 * is only probably present (existence ≥ 0.5, confidence < 0.9) is kept: one-sided level 0.001. The level is
 * small because the costs are unequal: a kept break at no real change lets the refitted kernel carry a
 * jump the interface analysis may then report, while a break wrongly refused only leaves the old fit.
 */
const PROBABLE_BREAK_Z = 3.09;

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
 * first (kept if the refit cross-validates no worse); then, one at a time in order of their probability,
 * interfaces that probably exist (existence ≥ 0.5) but are located with less confidence, each kept only if
 * the paired comparison of prediction errors over the experiments prefers the fit with the added break
 * at z ≥ PROBABLE_BREAK_Z. Every tried refit is listed in the report's refits with its breaks and reason.
 */
function breakRefits(study: Study, fitIn: FitResult, say: (m: string) => void, unconstrained?: FitResult): FitResult {
  let fit = fitIn;
  const scalar = fit.kernel.components.in === 1 && fit.kernel.components.out === 1;
  // candidates: the interfaces of the kernel in use and, when a symmetric refit replaced it, of the
  // unconstrained kernel too (a symmetric fit can smooth a weakly seen change away); of two within each
  // other's uncertainty (or 2 % of the length) the better established one is kept
  const det = detectInterfaces(fit.kernel, fit.noise.replicates).interfaces;
  if (unconstrained && unconstrained !== fit) {
    const [lo, hi] = [Math.min(...fit.kernel.pointsOut.data), Math.max(...fit.kernel.pointsOut.data)];
    for (const i of detectInterfaces(unconstrained.kernel, unconstrained.noise.replicates).interfaces) {
      const k = det.findIndex((j) => Math.abs(j.location - i.location) <= Math.max(j.uncertainty + i.uncertainty, 0.02 * (hi - lo)));
      if (k < 0) det.push(i);
      else if (i.confidence > det[k]!.confidence) det[k] = i;
    }
  }
  const symmetric = fit.report.refits.some((r) => r.used && r.constraint === 'symmetric');
  const constraint = symmetric ? 'symmetric' as const : 'none' as const;
  const describe = (i: (typeof det)[number]) => `${i.location.toPrecision(3)} (confidence ${i.confidence.toFixed(2)}, existence ${i.existence.toFixed(2)})`;
  let breaks: number[] = [];
  const confident = det.filter((i) => i.confidence >= INTERFACE_REFIT_CONFIDENCE);
  if (confident.length) {
    const at = confident.map((i) => i.location);
    say(`interfaces at ${at.map((t) => t.toPrecision(3)).join(', ')}: refitting with bases broken there`);
    const r = refit(study, fit, { constraint, breaks: at });
    const used = r.report.refits[r.report.refits.length - 1]!.used;
    if (used) breaks = at;
    fit = annotateLast(r, at, `interface${at.length > 1 ? 's' : ''} at ${confident.map(describe).join(', ')} located with confidence ≥ ${INTERFACE_REFIT_CONFIDENCE}; ${used ? 'used: its cross-validated residual is not larger' : 'not used: its cross-validated residual is larger'}`);
  }
  // interfaces that probably exist but are located with less confidence: tried all together (one change
  // left unresolved spoils a fit broken at the other), then backward elimination: a break is dropped when
  // the fit without it predicts as well (the paired test does not reach PROBABLE_BREAK_Z)
  const probable = scalar ? det.filter((i) => i.confidence < INTERFACE_REFIT_CONFIDENCE && i.existence >= 0.5) : [];
  if (!probable.length) return fit;
  const what = `interface${probable.length > 1 ? 's' : ''} probably at ${probable.map(describe).join(', ')}, located with confidence below ${INTERFACE_REFIT_CONFIDENCE}`;
  const level = `one-sided level 0.001`;
  const testText = (c: ReturnType<typeof comparePredictions>) => `paired comparison of the prediction errors over ${c.experiments} experiments: z = ${c.z.toFixed(2)}, cross-validated loss ${c.relativeGain >= 0 ? 'lower' : 'higher'} by ${(100 * Math.abs(c.relativeGain)).toPrecision(2)} %`;
  let added = probable.map((i) => i.location);
  const all = (extra: number[]) => [...breaks, ...extra].sort((p, q) => p - q);
  say(`interface${added.length > 1 ? 's' : ''} probably at ${added.map((t) => t.toPrecision(3)).join(', ')}: trying bases broken there`);
  let trial = refit(study, fit, { constraint, breaks: all(added) });
  let last = trial.report.refits[trial.report.refits.length - 1]!;
  if (!last.used) return annotateLast(trial, all(added), `${what}; not used: its cross-validated residual is larger`);
  let cmp = comparePredictions(study, fit, trial);
  if (!(cmp.z >= PROBABLE_BREAK_Z)) return declined(fit, { ...last, breaks: all(added).map((t) => Number(t.toPrecision(4))) }, `${what}; not used: ${testText(cmp)} (< ${PROBABLE_BREAK_Z}, ${level})`);
  // backward elimination over the added breaks (each removal a refit; at most as many rounds as breaks)
  while (added.length > 1) {
    let weakest: { k: number; fit: FitResult; z: number } | null = null;
    for (let k = 0; k < added.length; k++) {
      const without = refit(study, fit, { constraint, breaks: all(added.filter((_, q) => q !== k)) });
      const c = without.report.refits[without.report.refits.length - 1]!.used ? comparePredictions(study, without, trial).z : Infinity;
      if (!weakest || c < weakest.z) weakest = { k, fit: without, z: c };
    }
    if (!weakest || weakest.z >= PROBABLE_BREAK_Z) break;
    say(`the break at ${added[weakest.k]!.toPrecision(3)} is not needed (z = ${weakest.z.toFixed(2)})`);
    added = added.filter((_, q) => q !== weakest!.k);
    trial = weakest.fit;
    last = trial.report.refits[trial.report.refits.length - 1]!;
    cmp = comparePredictions(study, fit, trial);
  }
  return annotateLast(trial, all(added), `${what}; used at ${added.map((t) => t.toPrecision(3)).join(', ')}: ${testText(cmp)} (≥ ${PROBABLE_BREAK_Z}, ${level})` +
    (added.length < probable.length ? `; the other${probable.length - added.length > 1 ? 's' : ''} dropped: the fit without predicts as well` : ''));
  return fit;
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
  if (!opts.noRefit && study.dimension === 1 && analyses.some((a) => a.key === 'interfaces')) fit = breakRefits(study, fit, say, unconstrained);
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
