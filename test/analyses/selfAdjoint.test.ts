import { describe, it, expect } from 'vitest';
import { selfAdjoint, adjointTest } from '../../src/analyses/selfAdjoint.js';
import { kernel1d, laplace, advdiff, helmholtz, sampleKernel, uniformGrid } from '../helpers/closedForms.js';
import { weightedNorm } from '../../src/analyses/util/a_common.js';
import { noisy } from '../fixtures/anaA_ctx.js';

describe('self_adjoint', () => {
  it('a symmetric kernel: verdict yes, defect/floor ratio near 1 (noise-calibrated floor)', () => {
    // (a) −u'' Dirichlet, Stakgold & Holst ch. 1 (from memory); (b) Helmholtz k = 15, Duffy (from memory)
    for (const g of [laplace(), helmholtz(15)]) {
      const { kernel, ctx } = noisy(kernel1d(g, 120), 0.003);
      const out = selfAdjoint.run(kernel, ctx);
      expect(out.finding.verdict).toBe('yes');
      const ratio = out.finding.defect / out.finding.noise_floor;
      expect(ratio).toBeGreaterThan(0.7);
      expect(ratio).toBeLessThan(1.4);
    }
  });

  it('advection–diffusion: defect equals ‖G_b − G_{−b}‖_W/‖G_b‖_W from the adjoint relation G_b(x,s) = G_{−b}(s,x)', () => {
    // (d) −εu'' + bu', relation checked to 8.9e-16 in shared/references (derived there from (i))
    const n = 120;
    const k = kernel1d(advdiff(0.05, 1), n);
    const x = uniformGrid(n);
    const Gm = sampleKernel(advdiff(0.05, -1), x);
    // G_b(s, x) = G_{−b}(x, s): the adjoint kernel sampled directly from the closed form
    const diff = { rows: n, cols: n, data: k.G.data.map((v, q) => v - Gm.data[q]!) };
    const ref = weightedNorm(diff, k.weightsIn, k.weightsIn) / weightedNorm(k.G, k.weightsIn, k.weightsIn);
    const t = adjointTest(k, []);
    expect(Math.abs(t.defect - ref)).toBeLessThan(1e-12 * ref);
    const { kernel, ctx } = noisy(k, 0.01);
    const out = selfAdjoint.run(kernel, ctx);
    expect(out.finding.verdict).toBe('no');
    expect(out.finding.confidence).toBeGreaterThan(0.99);
  });

  it('at noise where the floor reaches the defect of a weak drift, it says inconclusive rather than yes', () => {
    // weak drift b = 0.05 with ε = 1: (d) with small Péclet number 0.05
    const k = kernel1d(advdiff(1, 0.05), 100);
    const clean = adjointTest(k, []).defect;
    const { kernel, ctx } = noisy(k, clean * 1.2, 5);
    const out = selfAdjoint.run(kernel, ctx);
    expect(out.finding.verdict).not.toBe('no');
    expect(out.finding.verdict === 'yes' ? out.finding.confidence : 0).toBeLessThan(0.99);
  });

  it('distinct sensors in 1-D: compared on the common support by interpolation', () => {
    const n = 101, m = 77;
    const xi = uniformGrid(n), xo = uniformGrid(m, 0.05, 0.95);
    const base = kernel1d(laplace(), n);
    const k = { ...base, pointsOut: { rows: m, cols: 1, data: xo }, G: sampleKernel(laplace(), xo, xi) };
    const t = adjointTest(k, []);
    expect(t.applicable).toBe(true);
    expect(t.interpolated).toBe(true);
    // linear interpolation of a piecewise-linear kernel in x: exact except next to the kink, O(h) there
    expect(t.defect).toBeLessThan(0.02);
  });
});
