/**
 * The diagnosis inside `kerneldx run` on the demo study (conveyor oven, 200 points, piecewise belt):
 * what src/pipeline.ts diagnoseStudy spends in the analyses — the self_adjoint pre-pass on the first
 * fit plus the full diagnosis of the final fit — CPU seconds warm (the best of two repeats on fresh
 * copies of the kernels, after a cold first call), every analysis's time beside it. Informational: the
 * issue's targets are for the whole `run` (report.bench.ts) and the diagnosis of a 200-point kernel
 * (diagnose.bench.ts); this shows the diagnosis's share of the demo's `run`. The fits are not counted.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { row } from './util.js';
import { makeExampleStudy } from '../src/cli/demo.js';
import { readStudy } from '../src/io/study.js';
import { fitStudy } from '../src/fit/index.js';
import { diagnoseStudy } from '../src/pipeline.js';
import { diagnose } from '../src/diagnose.js';
import type { FitResult } from '../src/types.js';
import type { Mat } from '../src/linalg/dense.js';

const copyMat = (m: Mat): Mat => ({ rows: m.rows, cols: m.cols, data: Float64Array.from(m.data) });
/** fresh matrices, so that the analyses' per-matrix caches do not carry over between repeats */
const fresh = (f: FitResult): FitResult => ({ ...f, kernel: { ...f.kernel, G: copyMat(f.kernel.G) }, noise: { ...f.noise, replicates: f.noise.replicates.map(copyMat) } });
const audit = { command: [], options: {}, seed: 1, started: '', seconds: 0, platform: { node: '', os: '', arch: '' }, rerun: '' };

export async function run(): Promise<boolean> {
  const dir = mkdtempSync(join(tmpdir(), 'kdx-bench-demo-'));
  try {
    await makeExampleStudy('conveyor-oven', join(dir, 'study'));
    const study = readStudy(join(dir, 'study'));
    const first = fitStudy(study, { seed: 1, assume: 'none' });
    const final = diagnoseStudy(study, { seed: 1 }).fit;
    const runs: { pre: number; diag: number; times: Record<string, number> }[] = [];
    for (let rep = 0; rep < 3; rep++) {
      const a = fresh(first), b = fresh(final);
      const c0 = process.cpuUsage();
      diagnose({ kernel: a.kernel, noise: a.noise, fit: a.report, inputs: [] }, { seed: 1, only: ['self_adjoint'], audit });
      const cp = process.cpuUsage(c0);
      const times: Record<string, number> = {};
      let last = process.cpuUsage(), lastKey = '';
      const tick = (msg: string) => {
        const now = process.cpuUsage(last);
        if (lastKey) times[lastKey] = (now.user + now.system) / 1e6;
        last = process.cpuUsage();
        lastKey = msg.replace(/^analysis: /, '');
      };
      const c1 = process.cpuUsage();
      diagnose({ kernel: b.kernel, noise: b.noise, fit: b.report, inputs: [] }, { seed: 1, progress: tick, audit });
      tick('end');
      const cd = process.cpuUsage(c1);
      runs.push({ pre: (cp.user + cp.system) / 1e6, diag: (cd.user + cd.system) / 1e6, times });
    }
    const warm = runs.slice(1).sort((p, q) => p.pre + p.diag - (q.pre + q.diag))[0]!;
    const total = warm.pre + warm.diag;
    const widths = [44, 10, 10, 10, 8];
    console.log(row(['demo diagnosis (conveyor oven, 200 points)', 'cold s', 'warm s', 'target s', ''], widths));
    console.log(row(['self_adjoint pre-pass + final diagnosis', runs[0]!.pre + runs[0]!.diag, total, '-', 'info'], widths));
    console.log(`    pre-pass ${warm.pre.toFixed(2)} · ` + Object.entries(warm.times).filter(([, v]) => v >= 0.005).map(([k, v]) => `${k} ${v.toFixed(2)}`).join(' · '));
    return true;
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
