/**
 * Regions: character of each region from local evidence. Kernels from
 * shared/references/greens-functions.md: (a) −u″ (Stakgold & Holst ch. 1), (b) k = 15 and
 * (c) κ = 10 (Duffy; Butkovskiy, from memory), (d) −εu″ + bu′ (derived there from (i)).
 */
import { describe, it, expect } from 'vitest';
import { regions } from '../../src/analyses/regions.js';
import { interfacesAnalysis } from '../../src/analyses/interfaces.js';
import { laplace, helmholtz, screened, advdiff, piecewise, type G1 } from '../helpers/closedForms.js';
import { modalKernel } from './anaB_helpers.js';
import { Rng } from '../../src/linalg/rng.js';
import type { Context } from '../../src/analyses/analysis.js';

function runRegions(g: G1, rel: number, seed = 5) {
  const m = modalKernel(g, { rel, reps: 8, seed });
  const ctx: Context = { noise: { replicates: m.replicates, homogeneousReplicates: [], source: 'bootstrap', assumption: 'test' }, rng: new Rng(1), options: {}, results: {} };
  ctx.results['interfaces'] = interfacesAnalysis.run(m.kernel, ctx);
  return regions.run(m.kernel, ctx).finding;
}

describe('regions', () => {
  const cases: [string, G1, string][] = [
    ['−u″', laplace(), 'diffusion'],
    ['−u″ − 225u', helmholtz(15), 'wave'],
    ['−u″ + 100u', screened(10), 'reaction-diffusion'],
    ['−0.05u″ + u′', advdiff(0.05, 1), 'advection-diffusion'],
    ['−0.1u″ − 2u′', advdiff(0.1, -2), 'advection-diffusion'],
  ];
  for (const [name, g, want] of cases) {
    it(`${name}: one region [0, 1] of character ${want} at fit noise 0.01`, () => {
      const f = runRegions(g, 0.01);
      expect(f.length).toBe(1);
      expect(f[0]!.bounds).toEqual([0, 1]);
      expect(f[0]!.character).toBe(want);
    });
  }
  it('the advection coefficient has the sign of the transport (own estimate)', () => {
    for (const [eps, b] of [[0.05, 1], [0.1, -2]] as const) {
      const f = runRegions(advdiff(eps, b), 0.01)[0]!;
      expect(Math.sign(f.coefficients['advection']!)).toBe(Math.sign(b));
      // b/ε from the local recurrence: measured 7–12 % low through the modal fit (reported, not a target here)
      const ratio = f.coefficients['advection']! / f.coefficients['diffusion']!;
      expect(ratio / (b / eps)).toBeGreaterThan(0.5);
      expect(ratio / (b / eps)).toBeLessThan(1.5);
    }
  });
  it('regions tile the domain at the interface of a = 1 | 10 (noise-free fit)', () => {
    const f = runRegions(piecewise(1, 10, 0.4), 0);
    expect(f.length).toBe(2);
    expect(f[0]!.bounds[0]).toBe(0);
    expect(f[1]!.bounds[1]).toBe(1);
    expect(f[0]!.bounds[1]).toBe(f[1]!.bounds[0]);
    expect(f.every((r) => r.character === 'diffusion')).toBe(true);
    // own diffusion estimates are ordered like the truth (1 then 10)
    expect(f[1]!.coefficients['diffusion']!).toBeGreaterThan(5 * f[0]!.coefficients['diffusion']!);
  });
  it('at fit noise 0.1 no region character is wrong with confidence ≥ 0.8', () => {
    for (const [, g, want] of cases) {
      for (const r of runRegions(g, 0.1, 9)) if (r.character !== want) expect(r.confidence as number).toBeLessThan(0.8);
    }
  });
});
