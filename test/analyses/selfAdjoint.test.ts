import { describe, it, expect } from 'vitest';
import { selfAdjoint, adjointTest, adjointDefect, driftTest } from '../../src/analyses/selfAdjoint.js';
import { transport } from '../../src/analyses/transport.js';
import { kernel1d, laplace, advdiff, helmholtz, sampleKernel, uniformGrid, piecewise, perturbedReplicates } from '../helpers/closedForms.js';
import { Rng } from '../../src/linalg/rng.js';
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

  it('the resolution is the defect a Péclet-1 drift causes: ≈ that of −u″ + u′ on [0, 1] (closed form (d), derived in the references)', () => {
    const k = kernel1d(laplace(), 200);
    const drift = kernel1d(advdiff(1, 1), 200);
    const ref = adjointDefect(drift.G, drift.weightsIn);
    // e^{r(x−s)/2}·G_lap is the kernel of −u″ + r u′ − (r²/4) u: the reaction shift 1/4 ≪ π² moves the defect by ~1 %
    expect(Math.abs(adjointTest(k, []).resolution - ref)).toBeLessThan(0.02 * ref);
  });

  it('a drift far below Péclet 1 counts as reciprocal; a floor comparable to the Péclet-1 defect leaves it undecided', () => {
    // weak drift b = 0.05 with ε = 1: (d) with Péclet number 0.05, noise about its own defect
    const k = kernel1d(advdiff(1, 0.05), 100);
    const clean = adjointTest(k, []).defect;
    const weak = noisy(k, clean * 1.2, 5);
    const out = selfAdjoint.run(weak.kernel, weak.ctx);
    expect(out.finding.verdict).toBe('yes');
    // Péclet 1 at a noise that makes the floor about half the defect: neither a claim of reciprocity nor a confident "no"
    const k1 = kernel1d(advdiff(1, 1), 100);
    const d1 = adjointTest(k1, []).defect;
    const loud = noisy(k1, d1 * 0.35, 5);
    const t1 = adjointTest(loud.kernel, loud.ctx.noise.replicates);
    expect(t1.floor).toBeGreaterThan(0.3 * d1);
    const o1 = selfAdjoint.run(loud.kernel, loud.ctx);
    expect(o1.finding.verdict).not.toBe('yes');
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

describe('self_adjoint drift profile (P = ∫|b/a| dx from log G(x,s)/G(s,x))', () => {
  // replicates spread far wider than the kernel's own error, as when the fit's predicted model
  // error is added in random directions: the Frobenius floor then exceeds the Péclet-1 resolution
  const wide = (g: Parameters<typeof kernel1d>[0], rel: number) => {
    const kernel = kernel1d(g, 120);
    const reps = perturbedReplicates(kernel.G, rel, 24, 5);
    const ctx = { noise: { replicates: reps, homogeneousReplicates: [], source: 'bootstrap' as const, assumption: 'test stand-in' }, rng: new Rng(5), options: {}, results: {} };
    return { kernel, ctx, reps };
  };

  it('−εu″ + bu′: P equals the Péclet number |b|L/ε exactly (log-ratio identity of closed form (d))', () => {
    // (d) shared/references: G(x,s) = e^{−rs}·(symmetric), so log G(x,s)/G(s,x) = (b/ε)(x − s)
    for (const [eps, b] of [[0.1, 1], [0.1, -1], [0.5, 2]] as const) {
      const t = driftTest(kernel1d(advdiff(eps, b), 120), [])!;
      expect(t.covered).toBe(true);
      expect(Math.abs(t.peclet - Math.abs(b) / eps)).toBeLessThan(1e-8 * Math.abs(b) / eps);
      for (const v of t.profile) expect(v).toBeCloseTo(b / eps, 6);
    }
  });

  it('piecewise bar a = 1 | 10 (self-adjoint, closed form (e)): P vanishes to rounding', () => {
    // (e) −(a u′)′ piecewise, derived in shared/references from (i): G symmetric
    const t = driftTest(kernel1d(piecewise(1, 10, 0.4), 120), [])!;
    expect(t.peclet).toBeLessThan(1e-9);
  });

  it('when the Frobenius floor is too wide to decide, the drift profile decides: bar → yes, Péclet-20 drift → no', () => {
    const bar = wide(piecewise(1, 10, 0.4), 0.15);
    const tb = adjointTest(bar.kernel, bar.reps);
    // the equivalence branch cannot hold: 1.645 × floor exceeds the Péclet-1 resolution
    expect(tb.defect + 1.6449 * tb.floor).toBeGreaterThan(tb.resolution);
    const fb = selfAdjoint.run(bar.kernel, bar.ctx).finding;
    expect(fb.verdict).toBe('yes');
    expect(fb.drift_peclet as number).toBeLessThan(1e-9);
    // transport follows: no net skew mass and self-adjoint ⇒ none
    (bar.ctx.results as Record<string, unknown>)['self_adjoint'] = selfAdjoint.run(bar.kernel, bar.ctx);
    expect(transport.run(bar.kernel, bar.ctx).finding.verdict).toBe('none');

    // Péclet-20 drift (closed form (d)) with smooth errors of the leading modes, relative to |G|
    // (a stand-in for the fit's model error): the Frobenius defect saturates near √2 and its floor is wide
    const kd = kernel1d(advdiff(0.05, 1), 120);
    const xd = Float64Array.from({ length: 120 }, (_, i) => kd.pointsIn.data[i]!);
    const repsD = modeReplicates(kd.G, xd, 0.6, 24, 5);
    const ad = { kernel: kd, ctx: { noise: { replicates: repsD, homogeneousReplicates: [], source: 'bootstrap' as const, assumption: 'test stand-in' }, rng: new Rng(5), options: {}, results: {} } };
    const ta = adjointTest(kd, repsD);
    expect(ta.defect / ta.floor).toBeLessThan(3); // the Frobenius test alone is inconclusive here
    const fa = selfAdjoint.run(ad.kernel, ad.ctx).finding;
    expect(fa.verdict).toBe('no');
    expect(fa.drift_peclet as number).toBeCloseTo(20, 4);
  });
});

/** G·(1 + Σ_{k,l≤4} z_kl sin kπx sin lπs · rel/4), z ~ N(0, 1): smooth relative errors of the leading modes. */
function modeReplicates(G: { rows: number; cols: number; data: Float64Array }, x: Float64Array, rel: number, count: number, seed: number) {
  const rng = new Rng(seed), n = x.length;
  return Array.from({ length: count }, () => {
    const d = Float64Array.from(G.data);
    for (let k = 1; k <= 4; k++) for (let l = 1; l <= 4; l++) {
      const z = rel * rng.normal() / 4;
      for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) d[i * n + j] += z * Math.sin(k * Math.PI * x[i]!) * Math.sin(l * Math.PI * x[j]!) * G.data[i * n + j]!;
    }
    return { rows: n, cols: n, data: d };
  });
}
