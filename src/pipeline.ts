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

/** Fit a study and diagnose the kernel, refitting under symmetry when the data establish it, then with bases broken at confidently located interfaces. */
export function diagnoseStudy(study: Study, opts: PipelineOptions): { findings: Findings; fit: FitResult } {
  const seed = opts.seed ?? 0;
  const say = opts.progress ?? (() => {});
  say(`fitting ${study.inputs.values.rows} experiments`);
  let fit = fitStudy(study, { seed, assume: opts.assume ?? 'none', progress: say });
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
  // interfaces located with confidence: refit with the bases broken there (kept only if it cross-validates
  // no worse; 1-D scalar studies only, a no-op otherwise)
  if (!opts.noRefit && study.dimension === 1 && analyses.some((a) => a.key === 'interfaces')) {
    const found = detectInterfaces(fit.kernel, fit.noise.replicates).interfaces.filter((i) => i.confidence >= INTERFACE_REFIT_CONFIDENCE).map((i) => i.location);
    if (found.length) {
      say(`interfaces at ${found.map((t) => t.toPrecision(3)).join(', ')}: refitting with bases broken there`);
      const symmetric = fit.report.refits.some((r) => r.used && r.constraint === 'symmetric');
      fit = refit(study, fit, { constraint: symmetric ? 'symmetric' : 'none', breaks: found });
    }
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
