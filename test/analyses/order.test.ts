import { describe, it, expect } from 'vitest';
import { order, kernelSpectrum, decayFit, thirdJumpStatistic, kinkStatistic, kinkCuts } from '../../src/analyses/order.js';
import { kernel1d, laplace, advdiff, screened, clampedBeam, simplyBeam, piecewise, sampleKernel, uniformGrid } from '../helpers/closedForms.js';
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

  it('the pooled slope jump skips windows that contain a cut: a = 1 | 10 at 0.4 gives the mean of −1/a(s) over the clear columns (Stakgold & Holst; references (e))', () => {
    const n = 241;
    const x = uniformGrid(n);
    const G = sampleKernel(piecewise(1, 10, 0.4), x); // G bends at x = 0.4 for every source (a u′ continuous)
    const fn = slopeJumpFunctionals(x);
    const clear = fn.s.filter((s) => Math.abs(s - 0.4) > fn.halfWidth);
    const want = clear.reduce((t, s) => t + 1 / (s < 0.4 ? 1 : 10), 0) / clear.length;
    const ones = new Array(clear.length).fill(1);
    const cut = kinkStatistic(G, x, ones, [{ at: 0.4, margin: 0 }]);
    expect(Math.abs(cut.value - want)).toBeLessThan(1e-9);
    // without the cut the windows across 0.4 add the interface's bend to the diagonal's jump
    const all = kinkStatistic(G, x, new Array(fn.s.length).fill(1));
    const wantAll = fn.s.reduce((t, s) => t + 1 / (s < 0.4 ? 1 : 10), 0) / fn.s.length;
    expect(Math.abs(all.value - wantAll)).toBeGreaterThan(1e-3);
    // no clear column: no statistic
    expect(kinkStatistic(G, x, undefined, [{ at: 0.5, margin: 1 }]).value).toBeNaN();
  });

  it('the cuts: a kernel fitted here has its basis breaks; one from elsewhere has the interfaces located with even odds', () => {
    const k = kernel1d(laplace(), 101);
    const fitted = { noise: { replicates: [], homogeneousReplicates: [], source: 'bootstrap', assumption: '' }, rng: analysisRng(1), options: {}, results: { interfaces: { finding: [{ location: 0.2, uncertainty: 0.01, confidence: 0.9 }], evidence: {} } }, fit: { hyperparameters: { basis: 'piecewise-legendre', breaks: '0.3,0.7' } } } as unknown as Parameters<typeof kinkCuts>[1];
    expect(kinkCuts(k, fitted).map((c) => c.at)).toEqual([0.3, 0.7]);
    expect(kinkCuts(k, fitted)[0]!.margin).toBeCloseTo(0.02, 12); // two grid cells
    const outside = { ...fitted, fit: undefined, results: { interfaces: { finding: [{ location: 0.2, uncertainty: 0.02, confidence: 0.9 }, { location: 0.6, uncertainty: 0.01, confidence: 0.3 }], evidence: {} } } } as unknown as Parameters<typeof kinkCuts>[1];
    const c = kinkCuts(k, outside);
    expect(c.map((q) => q.at)).toEqual([0.2]);
    expect(c[0]!.margin).toBeCloseTo(0.04, 12);
  });

  it('third-derivative functionals give [∂x³G] = 1/e = 1 for both beams (u″″ = δ; references §2 (f1) clamped, (f2) simply supported; Roark, Butkovskiy, from memory)', () => {
    const x = uniformGrid(201);
    for (const g of [clampedBeam, simplyBeam]) {
      const fn = slopeJumpFunctionals(x, undefined, 3);
      const J = applyJumpFunctionals(sampleKernel(g, x), fn);
      expect(J.length).toBeGreaterThan(150);
      for (const v of J) expect(Math.abs(v - 1)).toBeLessThan(1e-6); // piecewise cubic: exact in the basis
      // the pooled statistic is the same at the doubled window (a jump is scale-free)
      const t = thirdJumpStatistic(sampleKernel(g, x), x, []);
      expect(Math.abs(t.value - 1)).toBeLessThan(1e-6);
      expect(Math.abs(t.wide - 1)).toBeLessThan(1e-6);
    }
    // a second-order kernel has its jump in the slope, none in ∂x³G: −u″ (references (a), piecewise linear)
    const fn = slopeJumpFunctionals(x, undefined, 3);
    for (const v of applyJumpFunctionals(sampleKernel(laplace(), x), fn)) expect(Math.abs(v)).toBeLessThan(1e-6);
  });

  it('with too few trustworthy singular values the diagonal decides alone only on a positive signature: beam → 4, Gaussian (smooth, non-local) → none', () => {
    // identified rank 4 caps the trustworthy count below the 6 a decay fit needs
    const at = (g: Parameters<typeof kernel1d>[0]) => {
      const { kernel, ctx } = noisy(kernel1d(g, 160), 0.001, 41);
      ctx.fit = { coverage: { identified_rank: 4 } } as unknown as typeof ctx.fit;
      return order.run(kernel, ctx).finding;
    };
    const beam = at(clampedBeam); // references (f1)
    expect(beam.trustworthy_values).toBe(4);
    expect(beam.estimate).toBe(4);
    expect((beam.third_derivative_jump as { verdict: string }).verdict).toBe('present');
    const lap = at(laplace()); // references (a): slope jump −1
    expect(lap.estimate).toBe(2);
    // exp(−((x−s)/0.15)²): no kink, no third-derivative jump; its fitted |u|u² coefficient is smoothness bias (grows ~w³)
    const gauss = at((x, s) => Math.exp(-(((x - s) / 0.15) ** 2)));
    expect((gauss.diagonal_kink as { verdict: string }).verdict).toBe('absent');
    expect(gauss.estimate).toBeNull();
    expect((gauss.third_derivative_jump as { at_double_window: number }).at_double_window).toBeGreaterThan(3.5 * (gauss.third_derivative_jump as { statistic: number }).statistic);
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
