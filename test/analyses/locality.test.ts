import { describe, it, expect } from 'vitest';
import { order } from '../../src/analyses/order.js';
import { locality } from '../../src/analyses/locality.js';
import { kernel1d, laplace, helmholtz, clampedBeam } from '../helpers/closedForms.js';
import { noisy } from '../fixtures/anaA_ctx.js';

function run(g: Parameters<typeof kernel1d>[0], rel: number) {
  const { kernel, ctx } = noisy(kernel1d(g, 160), rel, 41);
  ctx.results['order'] = order.run(kernel, ctx);
  return locality.run(kernel, ctx).finding;
}

describe('locality', () => {
  it('differential operators are local: (a) Stakgold & Holst, (b) Duffy, (f1) Roark (from memory)', () => {
    for (const g of [laplace(), helmholtz(15), clampedBeam]) {
      const f = run(g, 0.001);
      expect(f.verdict).toBe('local');
      expect(f.spread_index as number).toBeLessThan(0.2);
    }
  });
  it('a Gaussian integral kernel is non-local', () => {
    const f = run((x, s) => Math.exp(-((x - s) ** 2) / 0.02), 0.001);
    expect(f.verdict).toBe('nonlocal');
  });
});
