/**
 * `buildDossier(dir)`: DIR/findings.json (+ the kernel it names) → DIR/dossier.html and
 * DIR/dossier.pdf, written atomically. What is read:
 *   - DIR/findings.json (format kerneldx-findings/1);
 *   - the kernel folder: findings.kernel_dir, or findings.kernel.dir / findings.kernel.path
 *     (relative to DIR), else DIR/kernel/ when it holds kernel.json, else DIR itself when it
 *     holds kernel.json; without a kernel the dossier is made from the findings alone.
 *   - the study title and units from findings.study.{title, units} (or findings.title/units);
 *   - the kernel folder's fit.json (kernel.json "fit"), for the predicted error of u_h.
 * Everything but the generation time (and the times the findings carry) is a deterministic
 * function of those files.
 */
import { readFileSync, existsSync } from 'node:fs';
import { join, resolve, isAbsolute, relative, basename, dirname } from 'node:path';
import type { Findings, Kernel, InputFile } from '../types.js';
import { InputError } from '../errors.js';
import { readKernel, isKernelDir } from '../io/kernel.js';
import { withOutput, sha256File } from '../io/output.js';
import { Progress, processIo } from '../cli/common.js';
import { buildModel, type DossierModel } from './model.js';
import { renderChart, type RenderedChart } from './vega.js';
import { heatRaster, rasterises, withRaster, type HeatRaster } from './raster.js';
import { renderHtml } from './html.js';
import { renderPdf } from './pdf.js';

export { buildModel, type DossierModel } from './model.js';
export { renderHtml, safeJson } from './html.js';
export { renderPdf } from './pdf.js';
export { CAUTION } from './text.js';

export const FINDINGS_FORMAT = 'kerneldx-findings/1';

export interface DossierOptions {
  argv?: string[];
  quiet?: boolean;
  /** fixed generation time (ISO 8601); default now */
  generated?: string;
}

export interface LoadedFindings {
  findings: Findings; kernel: Kernel | null; kernelDir: string | null; files: InputFile[];
  /** the fit's predicted relative error of u_h, from the kernel folder's fit.json (null when absent) */
  homogeneousError: number | null;
}

/** Read and check DIR/findings.json and locate its kernel (boundary validation: exit 3 on bad input). */
export function loadFindings(dirArg: string): LoadedFindings {
  const dir = resolve(dirArg);
  const path = join(dir, 'findings.json');
  const label = relative(process.cwd(), path) || path;
  if (!existsSync(path)) throw new InputError({ file: label }, 'file not found (run `kerneldx diagnose` or `kerneldx run` first)');
  const raw = readFileSync(path);
  let doc: unknown;
  try { doc = JSON.parse(raw.toString('utf8')); } catch (e) { throw new InputError({ file: label }, `invalid JSON: ${(e as Error).message}`); }
  if (!doc || typeof doc !== 'object' || Array.isArray(doc)) throw new InputError({ file: label }, 'expected a JSON object');
  const F = doc as Findings & Record<string, unknown>;
  if (F.format !== FINDINGS_FORMAT) throw new InputError({ file: label }, `unknown format ${JSON.stringify(F.format)}; expected "${FINDINGS_FORMAT}"`);
  if (F.dimension !== 1 && F.dimension !== 2) throw new InputError({ file: label }, 'dimension must be 1 or 2');
  for (const key of ['fit', 'components', 'self_adjoint', 'transport', 'order', 'linearity']) {
    if (!F[key] || typeof F[key] !== 'object') throw new InputError({ file: label }, `"${key}" is required (interface §5)`);
  }
  for (const key of ['hypotheses', 'singularities', 'interfaces', 'regions']) {
    if (F[key] !== undefined && !Array.isArray(F[key])) throw new InputError({ file: label }, `"${key}" must be a list`);
  }
  F.hypotheses ??= []; F.singularities ??= []; F.interfaces ??= []; F.regions ??= [];
  F.evidence ??= {};
  const files: InputFile[] = [{ path: 'findings.json', sha256: sha256File(raw) }];
  const kref = F.kernel as { dir?: unknown; path?: unknown } | string | undefined;
  const named = typeof F.kernel_dir === 'string' ? F.kernel_dir
    : typeof kref === 'string' ? kref
      : kref && typeof kref === 'object' ? (typeof kref.dir === 'string' ? kref.dir : typeof kref.path === 'string' ? kref.path : undefined) : undefined;
  if (!(F.study && typeof F.study === 'object')) {
    const st = studyFromAudit(F);
    if (st) (F as Record<string, unknown>).study = st;
  }
  let kernelDir: string | null = null;
  if (named) {
    kernelDir = isAbsolute(named) ? named : join(dir, named);
    if (!isKernelDir(kernelDir)) throw new InputError({ file: label }, `the kernel folder it names (${named}) has no kernel.json`);
  } else if (isKernelDir(join(dir, 'kernel'))) kernelDir = join(dir, 'kernel');
  else if (isKernelDir(dir)) kernelDir = dir;
  let kernel: Kernel | null = null;
  let homogeneousError: number | null = null;
  if (kernelDir) {
    kernel = readKernel(kernelDir);
    const rel = relative(dir, kernelDir);
    for (const f of kernel.files ?? []) files.push({ path: rel ? `${rel}/${f.path}` : f.path, sha256: f.sha256 });
    const fit = fitHomogeneousError(kernelDir);
    homogeneousError = fit.value;
    if (fit.file && !files.some((f) => f.path === (rel ? `${rel}/${fit.file!.path}` : fit.file!.path))) files.push({ path: rel ? `${rel}/${fit.file.path}` : fit.file.path, sha256: fit.file.sha256 });
  }
  return { findings: F, kernel, kernelDir, files, homogeneousError };
}

/** uncertainty.relative_homogeneous_error of the kernel folder's fit report (kernel.json "fit"), when there is one. */
function fitHomogeneousError(kernelDir: string): { value: number | null; file: InputFile | null } {
  try {
    const manifest = JSON.parse(readFileSync(join(kernelDir, 'kernel.json'), 'utf8')) as { fit?: unknown };
    if (typeof manifest.fit !== 'string') return { value: null, file: null };
    const p = join(kernelDir, manifest.fit);
    if (!existsSync(p)) return { value: null, file: null };
    const buf = readFileSync(p);
    const file = { path: manifest.fit, sha256: sha256File(buf) };
    const fit = JSON.parse(buf.toString('utf8')) as { uncertainty?: { relative_homogeneous_error?: unknown } };
    const v = fit.uncertainty?.relative_homogeneous_error;
    return { value: typeof v === 'number' && Number.isFinite(v) && v >= 0 ? v : null, file };
  } catch { return { value: null, file: null }; }
}

/**
 * Findings without a `study` block: look for the study folder among the audit's command-line
 * arguments and take its title, units and domain — only when its study.json has the SHA-256
 * the findings recorded, so a different study is never mistaken for the one analysed.
 */
function studyFromAudit(F: Findings): Record<string, unknown> | null {
  const want = (F.inputs ?? []).find((f) => f.path === 'study.json')?.sha256;
  if (!want) return null;
  const args = [...(F.audit?.command ?? []), ...(typeof F.audit?.rerun === 'string' ? F.audit.rerun.split(/\s+/).map((a) => a.replace(/^'(.*)'$/, '$1')) : [])];
  for (const arg of args) {
    if (typeof arg !== 'string' || arg.startsWith('-')) continue;
    const p = join(resolve(arg), 'study.json');
    try {
      if (!existsSync(p)) continue;
      const buf = readFileSync(p);
      if (sha256File(buf) !== want) continue;
      const m = JSON.parse(buf.toString('utf8')) as Record<string, unknown>;
      return { title: typeof m.title === 'string' ? m.title : undefined, units: m.units, domain: m.domain };
    } catch { continue; }
  }
  return null;
}

/** A figure as the PDF draws it: the chart's scenegraph, and the raster of a heat map's cells (drawn under its frame). */
export interface PdfFigure { chart: RenderedChart; raster: HeatRaster | null }

/**
 * Render the model's figures once each, shared by both documents: the SVG for the HTML and the
 * scenegraph for the PDF. A heat map without cell text is rendered as its frame (axes, legend,
 * border) plus one raster of its cells (src/report/raster.ts), in both documents.
 */
export async function renderFigures(model: DossierModel): Promise<{ svg: Map<string, string>; pdf: Map<string, PdfFigure> }> {
  const svg = new Map<string, string>(), pdf = new Map<string, PdfFigure>();
  for (const f of model.figures) {
    if (f.chart.kind === 'heat' && rasterises(f.chart.heat)) {
      const chart = await renderChart(f.chart.heat.frame, f.id), raster = heatRaster(f.chart.heat);
      svg.set(f.id, withRaster(chart.svg, raster));
      pdf.set(f.id, { chart, raster });
    } else {
      const chart = await renderChart(f.chart.kind === 'heat' ? f.chart.heat.spec : f.chart.spec, f.id);
      svg.set(f.id, chart.svg);
      pdf.set(f.id, { chart, raster: null });
    }
  }
  return { svg, pdf };
}

/** The dossier's two documents in memory (no file system). */
export async function renderDossier(findings: Findings, kernel: Kernel | null, files: InputFile[], opts: { rebuild: string; generated: string; homogeneousError?: number | null }):
  Promise<{ html: string; pdf: Buffer; model: DossierModel }> {
  const model = buildModel({ findings, kernel, dossierInputs: files, rebuild: opts.rebuild, generated: opts.generated, homogeneousError: opts.homogeneousError ?? null });
  const svgs = await renderFigures(model);
  const html = renderHtml(model, svgs.svg);
  const pdf = await renderPdf(model, svgs.pdf);
  return { html, pdf, model };
}

/** A dossier built inside an output stage (src/io/output.ts) names the folder it will become. */
export function finalDir(dir: string): string {
  const m = /^\.(.+)\.kdx-partial-[0-9a-f]{8}$/.exec(basename(dir));
  return m ? join(dirname(dir), m[1]!) : dir;
}

function shellQuote(s: string): string {
  return /^[\w@%+=:,./-]+$/.test(s) ? s : `'${s.replace(/'/g, `'\\''`)}'`;
}

export async function buildDossier(dir: string, opts: DossierOptions = {}): Promise<{ html: string; pdf: string }> {
  const progress = new Progress(processIo, !!opts.quiet);
  const loaded = loadFindings(dir);
  progress.say(`read findings${loaded.kernelDir ? ' and kernel' : ' (no kernel folder found: figures of the kernel are left out)'}`);
  const rebuild = `kerneldx report ${shellQuote(relative(process.cwd(), finalDir(resolve(dir))) || '.')}`;
  const generated = opts.generated ?? new Date().toISOString();
  const { html, pdf } = await renderDossier(loaded.findings, loaded.kernel, loaded.files, { rebuild, generated, homogeneousError: loaded.homogeneousError });
  progress.say(`rendered dossier (HTML ${(html.length / 1e6).toFixed(2)} MB, PDF ${(pdf.length / 1e6).toFixed(2)} MB)`);
  await withOutput(dir, (stage) => {
    stage.write('dossier.html', html);
    stage.write('dossier.pdf', pdf);
  });
  return { html: join(resolve(dir), 'dossier.html'), pdf: join(resolve(dir), 'dossier.pdf') };
}
