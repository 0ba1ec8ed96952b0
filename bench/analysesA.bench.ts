/**
 * Part-A analyses (self_adjoint, transport, order, translation_invariant, locality,
 * oscillation, screening, coupling) on fixed kernels: CPU seconds for all of them together,
 * beside a budget share (half) of the budgets for all analyses: 200 points 2 s,
 * 1,000 points 20 s, 2-D 576 points 10 s. Replicates: 24 stand-ins (perturbed copies). The share
 * is informational: the targets are for the whole diagnosis and are checked in
 * diagnose.bench.ts.
 */
import { cpuSeconds, row } from './util.js';
import { kernel1d, laplace, advdiff, perturbedReplicates } from '../test/helpers/closedForms.js';
import type { Kernel } from '../src/types.js';
import type { Context, AnalysisOutput } from '../src/analyses/analysis.js';
import { Rng } from '../src/linalg/rng.js';
import { selfAdjoint } from '../src/analyses/selfAdjoint.js';
import { transport } from '../src/analyses/transport.js';
import { order } from '../src/analyses/order.js';
import { translation } from '../src/analyses/translation.js';
import { locality } from '../src/analyses/locality.js';
import { oscillation, screening } from '../src/analyses/oscillation.js';
import { coupling } from '../src/analyses/coupling.js';
import { trapezoidWeights1d } from '../src/quadrature.js';

const list = [selfAdjoint, transport, order, translation, locality, oscillation, screening, coupling];

function runAll(k: Kernel): Record<string, number> {
  const reps = perturbedReplicates(k.G, 0.01, 24, 5);
  const ctx: Context = { noise: { replicates: reps, homogeneousReplicates: [], source: 'bootstrap', assumption: 'bench' }, rng: new Rng(1), options: {}, results: {} };
  const t: Record<string, number> = {};
  for (const a of list) {
    const r = cpuSeconds(() => a.run(k, ctx) as AnalysisOutput<unknown>);
    ctx.results[a.key] = r.value;
    t[a.key] = r.cpu;
  }
  return t;
}

function kernel2d(m: number): Kernel {
  const g = Float64Array.from({ length: m }, (_, i) => i / (m - 1));
  const n = m * m;
  const P = new Float64Array(2 * n);
  for (let a = 0; a < m; a++) for (let b = 0; b < m; b++) { P[2 * (a * m + b)] = g[a]!; P[2 * (a * m + b) + 1] = g[b]!; }
  const w1 = trapezoidWeights1d(g);
  const w = Float64Array.from({ length: n }, (_, i) => w1[Math.floor(i / m)]! * w1[i % m]!);
  const G = { rows: n, cols: n, data: new Float64Array(n * n) };
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) {
    const r = Math.hypot(P[2 * i]! - P[2 * j]!, P[2 * i + 1]! - P[2 * j + 1]!);
    // a smooth stand-in with the right size and structure for timing (values do not matter here)
    G.data[i * n + j] = Math.exp(-r / 0.2) * Math.sin(Math.PI * P[2 * i]!) * Math.sin(Math.PI * P[2 * j]!);
  }
  return { dimension: 2, pointsOut: { rows: n, cols: 2, data: P }, pointsIn: { rows: n, cols: 2, data: new Float64Array(P) }, weightsIn: w, G, homogeneous: null, components: { in: 1, out: 1 }, domain: { kind: 'box', bounds: [[0, 1], [0, 1]] } };
}

export async function run(): Promise<boolean> {
  const cases: { name: string; k: Kernel; target: number }[] = [
    { name: '1-D 200 (advection–diffusion)', k: kernel1d(advdiff(0.05, 1), 200), target: 1.0 },
    { name: '1-D 1000 (−u″)', k: kernel1d(laplace(), 1000), target: 10 },
    { name: '2-D 576 (24×24 grid)', k: kernel2d(24), target: 5 },
  ];
  const widths = [32, 10, 10, 8, 60];
  console.log(row(['case', 'cpu s', 'share s', 'ratio', 'slowest parts'], widths));
  let ok = true;
  for (const c of cases) {
    const t = runAll(c.k);
    const tot = Object.values(t).reduce((a, b) => a + b, 0);
    const slow = Object.entries(t).sort((a, b) => b[1] - a[1]).slice(0, 3).map(([k, v]) => `${k} ${v.toFixed(2)}`).join(', ');
    console.log(row([c.name, tot, c.target, tot / c.target, slow], widths));
  }
  return ok;
}
