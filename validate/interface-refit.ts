/**
 * Measurement for docs/interface-refit.md: kernel error against the simulator's truth of the 1-D fit with
 * plain Legendre bases and with bases broken at the interfaces (true ones, and those located by
 * detectInterfaces on the first fit), on the piecewise cases, with the predicted error beside each.
 *   npx tsx validate/interface-refit.ts [case-substring ...]
 */
import { cases } from './cases.js';
import { studyFor } from './suite.js';
import { fitStudy } from '../src/fit/index.js';
import { detectInterfaces } from '../src/analyses/interfaces.js';
import { relativeError, type Mat } from '../src/linalg/dense.js';
import type { FitResult } from '../src/types.js';

const names = process.argv.slice(2);
const chosen = cases.filter((c) => ['bar-one-interface', 'bar-two-interfaces', 'conveyor-belt'].includes(c.name) && (!names.length || names.some((n) => c.name.includes(n))));
const trueBreaks: Record<string, number[]> = {};
for (const c of chosen) trueBreaks[c.name] = (c.expect.interfaces ?? []) as number[];

const row = (label: string, f: FitResult, G: Mat) => {
  const err = relativeError(f.kernel.G, G), pred = f.report.uncertainty.relative_kernel_error;
  const h = f.report.hyperparameters;
  return { label, err, pred, ratio: err / pred, K: h.basis_size, resid: f.report.relative_residual };
};
for (const c of chosen) for (const noise of [0, 0.01, 0.1]) for (const seed of [1, 2]) {
  const { study, truth } = studyFor(c, noise, seed);
  const t = truth as unknown as { G?: Mat; kernel?: { G?: Mat } | Mat };
  const G = (t.G ?? (t.kernel as { G?: Mat } | undefined)?.G ?? t.kernel) as Mat;
  const c0 = process.cpuUsage();
  const plain = fitStudy(study, { seed });
  const c1 = process.cpuUsage(c0);
  const det = detectInterfaces(plain.kernel, plain.noise.replicates);
  const found = det.interfaces.filter((i) => i.confidence >= 0.9).map((i) => i.location);
  const c2 = process.cpuUsage();
  const brk = fitStudy(study, { seed, breaks: trueBreaks[c.name] });
  const c3 = process.cpuUsage(c2);
  const rows = [row('plain', plain, G), row('true breaks', brk, G)];
  if (found.length) rows.push(row(`found ${found.map((x) => x.toFixed(3)).join(',')}`, fitStudy(study, { seed, breaks: found }), G));
  const sym = fitStudy(study, { seed, assume: 'symmetric' }), symB = fitStudy(study, { seed, assume: 'symmetric', breaks: trueBreaks[c.name] });
  if (c.name.startsWith('bar')) rows.push(row('sym plain', sym, G), row('sym true breaks', symB, G));
  for (const r of rows) console.log([c.name, noise, seed, r.label.padEnd(22), (100 * r.err).toFixed(2) + '%', (100 * r.pred).toFixed(2) + '%', r.ratio.toFixed(2), `K=${r.K}`, `cv=${r.resid.toPrecision(3)}`].join('\t'));
  console.log(`\tcpu plain ${((c1.user + c1.system) / 1e6).toFixed(2)} s, breaks ${((c3.user + c3.system) / 1e6).toFixed(2)} s`);
}
