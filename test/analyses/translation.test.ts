import { describe, it, expect } from 'vitest';
import { translation, invarianceTest, jointSlopeJump } from '../../src/analyses/translation.js';
import { kernel1d, laplace, advdiff, helmholtz, screened, clampedBeam, piecewise, uniformGrid } from '../helpers/closedForms.js';
import { squareView } from '../../src/analyses/util/a_common.js';
import { noisy } from '../fixtures/anaA_ctx.js';

describe('translation_invariant', () => {
  it('uniform media are "offset + low rank" exactly: zero defect at noise 0', () => {
    // (a) Stakgold & Holst; (b), (c) Duffy; (d) derived in the references; (f1) Roark — all constant-coefficient
    for (const g of [laplace(), helmholtz(15), screened(10), advdiff(0.05, 1), clampedBeam]) {
      const k = kernel1d(g, 120);
      const t = invarianceTest(k, squareView(k)!, []);
      expect(t).not.toBeNull();
      expect(t!.defect).toBeLessThan(1e-9);
    }
  });

  it('slope jump across the diagonal is −1/a(s) (jump condition, shared/references entry (i))', () => {
    const x = uniformGrid(200);
    // (d) −εu″ + bu′ with ε = 0.05: jump −1/ε = −20 everywhere, boundary layer and all
    const adv = jointSlopeJump(kernel1d(advdiff(0.05, 1), 200).G, x);
    for (const j of adv.jump) expect(Math.abs(j + 20)).toBeLessThan(0.2);
    // (e) a = 1 | 10 at 0.4: −1 left of the interface, −0.1 right of it (away from the window)
    const pw = jointSlopeJump(kernel1d(piecewise(1, 10, 0.4), 200).G, x);
    pw.s.forEach((s, q) => {
      if (s < 0.3) expect(Math.abs(pw.jump[q]! + 1)).toBeLessThan(1e-6);
      if (s > 0.5) expect(Math.abs(pw.jump[q]! + 0.1)).toBeLessThan(1e-6);
    });
  });

  it('uniform media with a floor well below the factor-2 yardstick: yes; two-layer media: no, changing near the interface', () => {
    for (const g of [laplace(), screened(10), advdiff(0.05, -1)]) {
      const { kernel, ctx } = noisy(kernel1d(g, 120), 0.0003, 21);
      const f = translation.run(kernel, ctx).finding;
      expect(Number(f.noise_floor)).toBeLessThan(Number(f.resolution) / 3);
      expect(f.verdict).toBe('yes');
    }
    // (e) a = 1 on (0, 0.4), 10 on (0.4, 1): derived in the references from (i)
    const { kernel, ctx } = noisy(kernel1d(piecewise(1, 10, 0.4), 120), 0.002, 21);
    const f = translation.run(kernel, ctx).finding;
    expect(f.verdict).toBe('no');
    expect(f.confidence).toBeGreaterThan(0.95);
    expect(f.change_points!.length).toBeGreaterThan(0);
    const nearest = Math.min(...(f.change_points as number[]).map((c) => Math.abs(c - 0.4)));
    expect(nearest).toBeLessThan(0.05);
  });

  it('a floor as large as the yardstick: not "yes" for a uniform medium, not confident either way', () => {
    const { kernel, ctx } = noisy(kernel1d(laplace(), 120), 0.02, 21);
    const f = translation.run(kernel, ctx).finding;
    expect(Number(f.noise_floor)).toBeGreaterThan(Number(f.resolution) / 2);
    expect(f.verdict).toBe('inconclusive');
  });
});

describe('a located interface is evidence of a non-uniform medium', () => {
  it('−(a u′)′ with a = 1 | 10 at 0.4: the verdict is no once the interfaces analysis has run', async () => {
    const { interfacesAnalysis } = await import('../../src/analyses/interfaces.js');
    const { translation } = await import('../../src/analyses/translation.js');
    const { piecewise } = await import('../helpers/closedForms.js');
    const { modalKernel } = await import('./anaB_helpers.js');
    const { Rng } = await import('../../src/linalg/rng.js');
    // entry (e) of shared/references: piecewise a, closed form (Stakgold & Holst construction, from memory)
    const m = modalKernel(piecewise(1, 10, 0.4), { rel: 0.01, reps: 8, seed: 5 });
    const noise = { replicates: m.replicates, homogeneousReplicates: [], source: 'bootstrap' as const, assumption: 'test' };
    const results: Record<string, any> = {};
    results['interfaces'] = interfacesAnalysis.run(m.kernel, { noise, rng: new Rng(1), options: {}, results });
    const found = results['interfaces'].finding as { location: number }[];
    expect(found.length).toBe(1);
    const t = translation.run(m.kernel, { noise, rng: new Rng(2), options: {}, results });
    expect(t.finding.verdict).toBe('no');
    expect(t.finding.confidence).toBeGreaterThanOrEqual(0.5);
    // the change point is the interface of the closed form, within the 0.02
    const cps = (t.finding as { change_points: number[] }).change_points;
    expect(cps.length).toBe(1);
    expect(Math.abs(cps[0]! - 0.4)).toBeLessThan(0.02);
  });
});
