import { describe, it, expect } from 'vitest';
import { entryNoiseStd, selfEstimatedNoiseFloor } from '../../src/noiseFloor.js';
import { kernel1d, laplace, helmholtz } from '../helpers/closedForms.js';
import { Rng } from '../../src/linalg/rng.js';
import type { Kernel } from '../../src/types.js';

function withNoise(k: Kernel, sd: number, seed: number): Kernel {
  const rng = new Rng(seed);
  return { ...k, G: { ...k.G, data: Float64Array.from(k.G.data, (v) => v + sd * rng.normal()) } };
}

describe('noise floor estimated from a kernel alone', () => {
  // G of −u'' (Stakgold & Holst ch. 1) and of −u'' − 225u (Duffy; Butkovskiy, from memory),
  // with iid Gaussian entry noise of a known standard deviation added: the estimator must return it.
  for (const [name, g] of [['laplace', laplace()], ['helmholtz k=15', helmholtz(15)]] as const) {
    for (const sd of [1e-4, 1e-3, 1e-2]) {
      it(`recovers an iid entry noise std of ${sd} on ${name} within 10 %`, () => {
        const k = withNoise(kernel1d(g, 200), sd, 7);
        expect(entryNoiseStd(k) / sd).toBeGreaterThan(0.9);
        expect(entryNoiseStd(k) / sd).toBeLessThan(1.1);
      });
    }
  }

  it('is at the stored-number precision for an exact piecewise-linear kernel', () => {
    // the mixed difference of a piecewise-linear G vanishes away from the diagonal
    const k = kernel1d(laplace(), 100);
    expect(entryNoiseStd(k)).toBeLessThan(1e-12);
    const f = selfEstimatedNoiseFloor(k, 1, 5);
    expect(f.source).toBe('kernel-self-estimate');
    expect(f.replicates).toHaveLength(5);
    expect(f.assumption).toMatch(/independent/);
  });

  it('is deterministic for a seed', () => {
    const k = withNoise(kernel1d(laplace(), 80), 1e-3, 3);
    const a = selfEstimatedNoiseFloor(k, 11, 3), b = selfEstimatedNoiseFloor(k, 11, 3);
    expect(Array.from(a.replicates[2]!.data)).toEqual(Array.from(b.replicates[2]!.data));
  });
});
