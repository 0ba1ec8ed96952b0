/**
 * Test helpers for the dossier: a folder holding the hand-written findings fixture and a
 * kernel folder written from a closed-form Green's function (test/helpers/closedForms.ts).
 */
import { readFileSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { withOutput } from '../../src/io/output.js';
import { writeKernel } from '../../src/io/kernel.js';
import type { Findings, Kernel } from '../../src/types.js';
import { kernel1d, advdiff, type G1 } from '../helpers/closedForms.js';

export const FIXTURE = join(import.meta.dirname, '..', 'fixtures', 'rep_findings_1d.json');

export function fixtureFindings(): Findings {
  return JSON.parse(readFileSync(FIXTURE, 'utf8')) as Findings;
}

export function tmp(prefix = 'kdx-rep-'): string {
  return mkdtempSync(join(tmpdir(), prefix));
}

/** −0.05 u'' + u' on [0, 1], Dirichlet (reference entry (d)), with a linear u_h. */
export const OVEN_G: G1 = advdiff(0.05, 1);

export function ovenKernel(n = 200, g: G1 = OVEN_G): Kernel {
  const x = Float64Array.from({ length: n }, (_, i) => i / (n - 1));
  return kernel1d(g, n, Float64Array.from(x, (v) => 300 + 40 * v));
}

/** A dossier folder: findings.json (the fixture, patched) + kernel/ from `kernel`. */
export async function dossierDir(opts: { findings?: Findings; kernel?: Kernel | null; dir?: string } = {}): Promise<string> {
  const dir = opts.dir ?? tmp();
  const F = opts.findings ?? fixtureFindings();
  const K = opts.kernel === undefined ? ovenKernel() : opts.kernel;
  await withOutput(dir, (stage) => {
    stage.write('findings.json', JSON.stringify(F, null, 2) + '\n');
    if (K) writeKernel(stage, K, 'kernel');
  });
  return dir;
}
