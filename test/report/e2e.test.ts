/**
 * End to end on the demo scenario (simulated study → fit → diagnose → dossier): two runs with
 * the same seed give identical findings except for the times, and HTML dossiers that differ
 * only in the times; the study itself is simulated identically from its seed.
 */
import { describe, it, expect } from 'vitest';
import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { makeExampleStudy } from '../../src/cli/demo.js';
import { runPipeline } from '../../src/pipeline.js';
import { tmp } from './helpers.js';

function timesOut(F: Record<string, any>): Record<string, any> {
  const c = structuredClone(F);
  delete c.audit.started; delete c.audit.seconds;
  if (c.fit) delete c.fit.seconds;
  return c;
}

describe('demo scenario end to end', () => {
  it('is deterministic given the seed', async () => {
    const root = tmp('kdx-e2e-');
    await makeExampleStudy('conveyor-oven', join(root, 'study'));
    await makeExampleStudy('conveyor-oven', join(root, 'study-again'));
    for (const f of readdirSync(join(root, 'study'))) {
      expect(readFileSync(join(root, 'study-again', f)).equals(readFileSync(join(root, 'study', f)))).toBe(true);
    }
    const a = await runPipeline(join(root, 'study'), join(root, 'run'), { seed: 3, quiet: true });
    const b = await runPipeline(join(root, 'study'), join(root, 'run'), { seed: 3, quiet: true });
    const Fa = JSON.parse(readFileSync(a.findingsPath, 'utf8')), Fb = JSON.parse(readFileSync(b.findingsPath, 'utf8'));
    expect(timesOut(Fb)).toEqual(timesOut(Fa));
    expect(Fa.hypotheses.length).toBeGreaterThan(0);
    // the HTML of both runs, with every ISO time and the duration masked
    const ha = readFileSync(a.dossierHtml, 'utf8'), hb = readFileSync(b.dossierHtml, 'utf8');
    const mask = (h: string) => h.replace(/\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d(\.\d+)?Z/g, 'T').replace(/<th scope="row">duration<\/th><td>[^<]*<\/td>/, '');
    expect(mask(hb) === mask(ha)).toBe(true);
    expect(ha).toContain('Conveyor-oven bar');
  });
});
