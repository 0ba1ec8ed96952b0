/**
 * Speed of the singularities, interfaces and regions analyses (CPU seconds) on modal stand-ins
 * for fitted kernels with 8 replicates, against a budget share of the whole-diagnosis
 * targets (< 0.7 s at 200 points, < 8 s at 1,000 points, all three together). The share is
 * informational: the targets are for the whole diagnosis and are checked in
 * diagnose.bench.ts, so a part may take more than its share when the others take less. The first
 * call in a process also pays for compiling the code (one-time, shown as "cold").
 */
import { cpuSeconds, row } from './util.js';
import { singularities } from '../src/analyses/singularities.js';
import { interfacesAnalysis } from '../src/analyses/interfaces.js';
import { regions } from '../src/analyses/regions.js';
import { piecewise } from '../test/helpers/closedForms.js';
import { modalKernel } from '../test/analyses/anaB_helpers.js';
import { Rng } from '../src/linalg/rng.js';
import type { Context } from '../src/analyses/analysis.js';

function once(n: number): { a: number; b: number; c: number } {
  const m = modalKernel(piecewise(1, 10, 0.4), { n, rel: 0.01, reps: 8, seed: 1, homogeneous: (t) => Math.tanh((t - 0.45) / 0.02), hNoise: 0.005 });
  const ctx: Context = { noise: { replicates: m.replicates, homogeneousReplicates: m.homogeneousReplicates, source: 'bootstrap', assumption: 'bench' }, rng: new Rng(1), options: {}, results: {} };
  const a = cpuSeconds(() => singularities.run(m.kernel, ctx));
  const b = cpuSeconds(() => interfacesAnalysis.run(m.kernel, ctx));
  ctx.results['interfaces'] = b.value;
  const c = cpuSeconds(() => regions.run(m.kernel, ctx));
  return { a: a.cpu, b: b.cpu, c: c.cpu };
}

export async function run(): Promise<boolean> {
  const widths = [12, 14, 14, 14, 12, 10];
  console.log(row(['points', 'singular. s', 'interfaces s', 'regions s', 'total s', 'share s'], widths));
  let ok = true;
  const cold = once(200);
  console.log(row(['200 (cold)', cold.a, cold.b, cold.c, cold.a + cold.b + cold.c, '-'], widths));
  for (const [n, target] of [[200, 0.7], [1000, 8]] as const) {
    const t = once(n);
    const total = t.a + t.b + t.c;
    console.log(row([n, t.a, t.b, t.c, total, target], widths));
  }
  return ok;
}
