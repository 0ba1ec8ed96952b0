/**
 * Speed of the dossier. Targets (issue 5): report alone on the standard 200-point study under
 * 2 s; `run` (fit + diagnose + HTML + PDF) on the standard 200-point study under 5 s. CPU
 * seconds (process.cpuUsage) of the warm second call; the first (cold) call is printed too.
 * Also prints the HTML size for a 1,000-point kernel (target < 5 MB).
 */
import { readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { buildDossier, buildModel, loadFindings, renderFigures, renderHtml, renderPdf } from '../src/report/index.js';
import { dossierDir, ovenKernel, tmp } from '../test/report/helpers.js';
import { row } from './util.js';

async function cpu<T>(fn: () => Promise<T>): Promise<{ value: T; cpu: number; wall: number }> {
  const c0 = process.cpuUsage(), w0 = performance.now();
  const value = await fn();
  const c = process.cpuUsage(c0);
  return { value, cpu: (c.user + c.system) / 1e6, wall: (performance.now() - w0) / 1000 };
}

export async function run(): Promise<boolean> {
  const W = [44, 10, 10, 10, 8];
  console.log(row(['case', 'cpu s', 'wall s', 'target s', 'ok'], W));
  let ok = true;
  const dir = await dossierDir({ kernel: ovenKernel(200) });
  const cold = await cpu(() => buildDossier(dir, { quiet: true }));
  const warm = await cpu(() => buildDossier(dir, { quiet: true }));
  console.log(row(['report, 200 points (cold, first call)', cold.cpu, cold.wall, '-', '-'], W));
  const pass = warm.cpu < 2;
  ok &&= pass;
  console.log(row(['report, 200 points (warm)', warm.cpu, warm.wall, 2, pass ? 'yes' : 'NO'], W));
  {
    // where the warm time goes: figures (vega, once for both documents), HTML, PDF
    const L = loadFindings(dir);
    const model = buildModel({ findings: L.findings, kernel: L.kernel, dossierInputs: L.files, rebuild: 'kerneldx report x', generated: '2024-01-01T00:00:00Z', homogeneousError: L.homogeneousError });
    const figs = await cpu(() => renderFigures(model));
    const html = await cpu(async () => renderHtml(model, figs.value.svg));
    const pdf = await cpu(() => renderPdf(model, figs.value.pdf));
    console.log(`  warm split (CPU s): figures ${figs.cpu.toFixed(3)}, HTML ${html.cpu.toFixed(3)}, PDF ${pdf.cpu.toFixed(3)}; HTML ${(html.value.length / 1e6).toFixed(2)} MB, PDF ${(pdf.value.length / 1e6).toFixed(2)} MB`);
  }

  const big = await dossierDir({ kernel: ovenKernel(1000) });
  const b = await cpu(() => buildDossier(big, { quiet: true }));
  const mb = readFileSync(join(big, 'dossier.html')).length / 1e6;
  const pdfMb = readFileSync(join(big, 'dossier.pdf')).length / 1e6;
  const sizeOk = mb < 5;
  ok &&= sizeOk;
  console.log(row(['report, 1,000 points', b.cpu, b.wall, '-', '-'], W));
  console.log(`  HTML ${mb.toFixed(2)} MB (target < 5 MB: ${sizeOk ? 'yes' : 'NO'}), PDF ${pdfMb.toFixed(2)} MB`);

  // the whole pipeline on the standard 200-point study (the demo scenario)
  try {
    const { makeExampleStudy } = await import('../src/cli/demo.js');
    const { runPipeline } = await import('../src/pipeline.js');
    const out = tmp('kdx-bench-run-');
    await makeExampleStudy('conveyor-oven', join(out, 'study'));
    await cpu(() => runPipeline(join(out, 'study'), join(out, 'warm'), { seed: 1, quiet: true }));
    const r = await cpu(() => runPipeline(join(out, 'study'), join(out, 'run'), { seed: 1, quiet: true }));
    const p = r.cpu < 5;
    ok &&= p;
    console.log(row(['run (fit+diagnose+report), 200 points', r.cpu, r.wall, 5, p ? 'yes' : 'NO'], W));
    rmSync(out, { recursive: true, force: true });
  } catch (e) {
    ok = false;
    console.log(`run (fit+diagnose+report): could not run — ${(e as Error).message.split('\n')[0]}`);
  }
  console.log(`  ratio warm report / target: ${(warm.cpu / 2).toFixed(2)}`);
  return ok;
}
