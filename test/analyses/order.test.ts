import { describe, it, expect } from 'vitest';
import { order, kernelSpectrum, decayFit } from '../../src/analyses/order.js';
import { kernel1d, laplace, advdiff, screened, clampedBeam, simplyBeam, piecewise, sampleKernel } from '../helpers/closedForms.js';
import { slopeJumpFunctionals, applyJumpFunctionals, spectralNorm, sqrtWeighted, analysisRng } from '../../src/analyses/util/a_common.js';
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

  it('slope-jump functionals give [∂xG] = −1/a(s) at the diagonal, for points in any order (Stakgold & Holst; references entries (e), (i))', () => {
    // a shuffled point list: the functionals sort internally and index the original points
    const n = 241;
    const perm = Array.from({ length: n }, (_, i) => (i * 97) % n);
    const x = Float64Array.from(perm, (i) => i / (n - 1));
    const G = sampleKernel(piecewise(1, 10, 0.4), x);
    const fn = slopeJumpFunctionals(x);
    const J = applyJumpFunctionals(G, fn);
    const w = fn.halfWidth;
    let checked = 0;
    fn.s.forEach((s, q) => {
      if (Math.abs(s - 0.4) <= w + 1e-9) return; // the window straddles the interface
      expect(Math.abs(J[q]! + 1 / (s < 0.4 ? 1 : 10))).toBeLessThan(1e-9); // piecewise linear: exact in the basis
      checked++;
    });
    expect(checked).toBeGreaterThan(100);
    // screened −u″ + 25u (smooth off the diagonal): the same jump −1, to the quartic's accuracy
    const Gs = sampleKernel(screened(5), x);
    for (const v of applyJumpFunctionals(Gs, fn)) expect(Math.abs(v + 1)).toBeLessThan(1e-4);
  });

  it('weighted spectral norm = largest singular value 1/π² of the Green\'s operator of −u″ (Stakgold & Holst; references §4)', () => {
    const k = kernel1d(laplace(), 200);
    const sw = Float64Array.from(k.weightsIn, Math.sqrt);
    const implicit = spectralNorm(k.G, analysisRng(3), 200, sw, sw);
    const explicit = spectralNorm(sqrtWeighted(k.G, k.weightsIn, k.weightsIn), analysisRng(3), 200);
    expect(Math.abs(implicit * Math.PI ** 2 - 1)).toBeLessThan(2e-3);
    expect(Math.abs(implicit - explicit)).toBeLessThan(1e-12 * explicit);
  });
});
