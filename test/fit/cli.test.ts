/**
 * `kerneldx fit` end to end: the kernel folder and fit.json, and the bad inputs of issue item 8
 * (exit code 4 with a sentence saying what more data is needed, nothing half-written under --out).
 */
import { describe, it, expect } from 'vitest';
import { mkdtempSync, existsSync, readFileSync, readdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../../src/cli/main.js';
import { writeStudy } from '../../src/io/study.js';
import { readKernel } from '../../src/io/kernel.js';
import { withOutput } from '../../src/io/output.js';
import { relativeError } from '../../src/linalg/dense.js';
import type { Study } from '../../src/types.js';
import { synth1d } from './studies.js';
import { laplace } from '../helpers/closedForms.js';

function capture() {
  let out = '', err = '';
  return { io: { stdout: (s: string) => { out += s; }, stderr: (s: string) => { err += s; } }, out: () => out, err: () => err };
}

async function save(study: Study): Promise<string> {
  const dir = join(mkdtempSync(join(tmpdir(), 'kdx-fit-')), 'study');
  await withOutput(dir, (st) => writeStudy(st, study));
  return dir;
}

describe('kerneldx fit', () => {
  it('writes kernel.json (readable by readKernel) and fit.json; --json prints a summary', async () => {
    // −u'' (Stakgold & Holst ch. 1), noise 0.1
    const s = synth1d(laplace(1), { noise: 0.1, seed: 3, count: 60 });
    const dir = await save(s.study);
    const out = join(dir, '..', 'kernel');
    const c = capture();
    expect(await main(['node', 'kerneldx', 'fit', dir, '--out', out, '--json', '--quiet', '--replicates', '5'], c.io)).toBe(0);
    const k = readKernel(out);
    expect(relativeError(k.G, s.G)).toBeLessThan(0.02);
    const rep = JSON.parse(readFileSync(join(out, 'fit.json'), 'utf8'));
    for (const key of ['method', 'hyperparameters', 'relative_residual', 'noise_estimate', 'uncertainty', 'coverage', 'linearity', 'seconds', 'seed']) expect(rep).toHaveProperty(key);
    expect(rep.uncertainty.replicates).toBe(5);
    const summary = JSON.parse(c.out());
    expect(summary.out).toBe(out);
    expect(c.err()).toBe('');
  });

  const bad: { name: string; edit: (s: Study) => void; says: RegExp }[] = [
    { name: 'fewer than 3 experiments', says: /at least 3/, edit: (s) => {
      s.inputs.values = { rows: 2, cols: 200, data: s.inputs.values.data.slice(0, 400) };
      s.outputs.values = { rows: 2, cols: 200, data: s.outputs.values.data.slice(0, 400) };
    } },
    { name: 'all forcings zero', says: /forcings are zero/, edit: (s) => { s.inputs.values.data.fill(0); } },
    { name: 'all forcings identical', says: /identical/, edit: (s) => {
      const F = s.inputs.values;
      for (let j = 1; j < F.rows; j++) F.data.copyWithin(j * F.cols, 0, F.cols);
    } },
    { name: 'constant responses', says: /constant/, edit: (s) => { s.outputs.values.data.fill(0.5); } },
    { name: 'no overlap with the domain', says: /no overlap/, edit: (s) => { s.domain = { kind: 'interval', bounds: [2, 3] }; } },
  ];
  for (const b of bad) {
    it(`${b.name} → exit 4, a sentence, nothing under --out`, async () => {
      const s = synth1d(laplace(1), { noise: 0.01, seed: 1, count: 10 });
      b.edit(s.study);
      const dir = await save(s.study);
      const out = join(dir, '..', 'kernel');
      const c = capture();
      expect(await main(['node', 'kerneldx', 'fit', dir, '--out', out, '--quiet'], c.io)).toBe(4);
      expect(c.err()).toMatch(b.says);
      expect(existsSync(out)).toBe(false);
      expect(readdirSync(join(dir, '..')).filter((f) => f.includes('kdx-partial'))).toEqual([]);
    });
  }
  it('a wrong --assume is a usage error (exit 2)', async () => {
    const s = synth1d(laplace(1), { noise: 0.01, seed: 1, count: 10 });
    const dir = await save(s.study);
    const c = capture();
    expect(await main(['node', 'kerneldx', 'fit', dir, '--out', join(dir, '..', 'k'), '--assume', 'round'], c.io)).toBe(2);
  });
});
