import { describe, it, expect } from 'vitest';
import { translation, invarianceTest } from '../../src/analyses/translation.js';
import { kernel1d, laplace, advdiff, helmholtz, screened, clampedBeam, piecewise } from '../helpers/closedForms.js';
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

  it('uniform media at noise: verdict yes; a two-layer medium: verdict no', () => {
    for (const g of [laplace(), screened(10), advdiff(0.05, -1)]) {
      const { kernel, ctx } = noisy(kernel1d(g, 120), 0.002, 21);
      const f = translation.run(kernel, ctx).finding;
      expect(f.verdict).toBe('yes');
    }
    // (e) a = 1 on (0, 0.4), 10 on (0.4, 1): derived in the references from (i)
    const { kernel, ctx } = noisy(kernel1d(piecewise(1, 10, 0.4), 120), 0.002, 21);
    const f = translation.run(kernel, ctx).finding;
    expect(f.verdict).toBe('no');
    expect(f.confidence).toBeGreaterThan(0.95);
    // the slope jump −1/a(s) changes from −1 to −0.1 near s = 0.4
    expect(f.change_points!.length).toBeGreaterThan(0);
    const nearest = Math.min(...(f.change_points as number[]).map((c) => Math.abs(c - 0.4)));
    expect(nearest).toBeLessThan(0.1);
  });
});
