import { describe, it, expect } from 'vitest';
import { order, kernelSpectrum, decayFit } from '../../src/analyses/order.js';
import { kernel1d, laplace, advdiff, screened, clampedBeam, simplyBeam } from '../helpers/closedForms.js';
import { noisy } from '../fixtures/anaA_ctx.js';

describe('order', () => {
  it('singular values of W^½GW^½ match the exact spectrum 1/(kπ)² of −u″ (Stakgold & Holst; references §4)', () => {
    const k = kernel1d(laplace(), 200);
    const sp = kernelSpectrum(k, []);
    for (let j = 1; j <= 5; j++) expect(Math.abs(sp.s[j - 1]! * (j * Math.PI) ** 2 - 1)).toBeLessThan(2e-3);
    // simply supported beam: 1/(kπ)⁴ (Butkovskiy; Roark, from memory; references §4)
    const b = kernelSpectrum(kernel1d(simplyBeam, 200), []);
    for (let j = 1; j <= 5; j++) expect(Math.abs(b.s[j - 1]! * (j * Math.PI) ** 4 - 1)).toBeLessThan(2e-3);
    const fb = decayFit(b.s, 5, 20)!;
    expect(Math.abs(fb.exponent - 4)).toBeLessThan(0.05); // Weyl: −4.0000 in the references' Nyström check
  });

  it('second-order kernels → 2, fourth-order → 4, at noise', () => {
    for (const g of [laplace(), advdiff(0.05, 1), screened(10)]) {
      const { kernel, ctx } = noisy(kernel1d(g, 160), 0.001, 31);
      const f = order.run(kernel, ctx).finding;
      expect(f.estimate).toBe(2);
      expect(f.confidence).toBeGreaterThan(0.9);
      expect((f.diagonal_kink as { verdict: string }).verdict).toBe('present');
    }
    const { kernel, ctx } = noisy(kernel1d(clampedBeam, 160), 0.001, 31);
    const f = order.run(kernel, ctx).finding;
    expect(f.estimate).toBe(4);
    expect(Math.abs(f.decay_exponent! - 4)).toBeLessThan(0.5);
    expect((f.diagonal_kink as { verdict: string }).verdict).toBe('absent');
  });

  it('a smooth (Gaussian) integral kernel decays exponentially: no differential order', () => {
    const { kernel, ctx } = noisy(kernel1d((x, s) => Math.exp(-((x - s) ** 2) / 0.02), 160), 0.001, 31);
    const f = order.run(kernel, ctx).finding;
    expect(f.decay).toBe('exponential');
    expect(f.estimate).toBeNull();
  });
});
