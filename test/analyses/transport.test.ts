import { describe, it, expect } from 'vitest';
import { selfAdjoint } from '../../src/analyses/selfAdjoint.js';
import { transport } from '../../src/analyses/transport.js';
import { kernel1d, laplace, advdiff } from '../helpers/closedForms.js';
import { noisy } from '../fixtures/anaA_ctx.js';

function run(g: Parameters<typeof kernel1d>[0], rel: number, seed = 3) {
  const { kernel, ctx } = noisy(kernel1d(g, 120), rel, seed);
  ctx.results['self_adjoint'] = selfAdjoint.run(kernel, ctx);
  return transport.run(kernel, ctx).finding;
}

describe('transport', () => {
  it('direction of −εu″ + bu′ follows the sign of b, Péclet bL/ε = 20', () => {
    // (d) shared/references: G(x,s)/G(s,x) = e^{(b/ε)(x−s)} (from the self-adjoint form there)
    for (const [b, dir] of [[1, '+x'], [-1, '-x']] as const) {
      const f0 = run(advdiff(0.05, b), 0);
      expect(f0.verdict).toBe(dir);
      expect(f0.peclet!).toBeCloseTo(20, 3);
      const f1 = run(advdiff(0.05, b), 0.003, 8);
      expect(f1.verdict).toBe(dir);
      expect(f1.direction).toEqual([b]);
      expect(Math.abs(f1.peclet! - 20) / 20).toBeLessThan(0.05);
    }
  });

  it('Péclet of a weaker drift: −u″ + 3u′ gives 3', () => {
    const f = run(advdiff(1, 3), 0.001, 4);
    expect(f.verdict).toBe('+x');
    expect(Math.abs(f.peclet! - 3) / 3).toBeLessThan(0.05);
  });

  it('a symmetric kernel has no transport', () => {
    // (a) Stakgold & Holst ch. 1 (from memory)
    const f = run(laplace(), 0.003);
    expect(f.verdict).toBe('none');
    expect(f.direction).toBeNull();
  });
});
