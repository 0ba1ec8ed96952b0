import { describe, it, expect } from 'vitest';
import { oscillation, screening, localWaveNumber } from '../../src/analyses/oscillation.js';
import { kernel1d, laplace, helmholtz, screened, clampedBeam, piecewise, advdiff } from '../helpers/closedForms.js';
import type { Kernel } from '../../src/types.js';
import { selfAdjoint } from '../../src/analyses/selfAdjoint.js';
import { noisy } from '../fixtures/anaA_ctx.js';

describe('oscillation and screening', () => {
  it('Helmholtz −u″ − 225u: wavenumber 15 (Duffy; Butkovskiy, from memory)', () => {
    for (const rel of [0, 0.003]) {
      const { kernel, ctx } = noisy(kernel1d(helmholtz(15), 160), rel, 51);
      const o = oscillation.run(kernel, ctx).finding;
      expect(o.verdict).toBe('yes');
      expect(Math.abs(o.wavenumber! - 15) / 15).toBeLessThan(0.005);
      expect(screening.run(kernel, ctx).finding.verdict).toBe('no');
    }
  });
  it('screened −u″ + 100u: screening length 0.1 (Duffy; Butkovskiy, from memory)', () => {
    const { kernel, ctx } = noisy(kernel1d(screened(10), 160), 0.003, 52);
    const s = screening.run(kernel, ctx).finding;
    expect(s.verdict).toBe('yes');
    expect(Math.abs(s.length! - 0.1) / 0.1).toBeLessThan(0.02);
    expect(oscillation.run(kernel, ctx).finding.verdict).toBe('no');
  });
  it('plain diffusion: neither', () => {
    const { kernel, ctx } = noisy(kernel1d(laplace(), 160), 0.003, 53);
    expect(oscillation.run(kernel, ctx).finding.verdict).toBe('no');
    expect(screening.run(kernel, ctx).finding.verdict).toBe('no');
  });
  it('localWaveNumber on a sub-interval', () => {
    const k = kernel1d(helmholtz(15), 160);
    const lw = localWaveNumber(k, [0.5, 1])!;
    expect(Math.abs(lw.wavenumber! - 15)).toBeLessThan(0.05);
    expect(lw.adequate).toBe(true);
  });
  it('clamped beam u⁗ (Butkovskiy; Roark, from memory): no oscillation — cubic columns, positive spectrum', () => {
    const { kernel, ctx } = noisy(kernel1d(clampedBeam, 160), 0.001, 54);
    ctx.results['self_adjoint'] = selfAdjoint.run(kernel, ctx);
    const o = oscillation.run(kernel, ctx).finding;
    expect(o.verdict).toBe('no');
    expect(o.negative_eigenvalues).toBe(0);
    // a second-order model cannot explain the beam's columns
    expect(o.model_adequate).toBe(false);
  });
  it('clamped beam with only 4 trustworthy singular values (no sign test): the fourth-order column fit alone says no oscillation (references (f1); Roark, from memory)', () => {
    const { kernel, ctx } = noisy(kernel1d(clampedBeam, 160), 0.001, 55);
    ctx.fit = { coverage: { identified_rank: 4 } } as unknown as typeof ctx.fit;
    ctx.results['self_adjoint'] = selfAdjoint.run(kernel, ctx);
    const o = oscillation.run(kernel, ctx).finding;
    expect(o.trustworthy_values).toBe(4);
    expect(o.negative_eigenvalues).toBeNull(); // the sign test needs 6
    // the columns are cubics (θ = 0 explains them), and θ's replicate spread keeps it below the lowest mode π²
    expect(o.fourth_order_adequate).toBe(true);
    expect(o.k_squared_fourth_order as number).toBeLessThan(Math.PI ** 2);
    expect(o.verdict).toBe('no');
  });
  it('the fourth-order column family does not vote once order 2 is established: on the clamped beam (references (f1)) with only the column fits, a stated order 2 leaves the verdict undecided', () => {
    const { kernel, ctx } = noisy(kernel1d(clampedBeam, 160), 0.001, 55);
    ctx.fit = { coverage: { identified_rank: 4 } } as unknown as typeof ctx.fit;
    ctx.results['self_adjoint'] = selfAdjoint.run(kernel, ctx);
    // the beam's columns are cubics: the second-order family cannot explain them, the fourth-order one can; told
    // (wrongly) that the operator is of second order, the analysis has no applicable model left and must not decide
    ctx.results['order'] = { finding: { estimate: 2, confidence: 0.99 } } as unknown as (typeof ctx.results)[string];
    const o = oscillation.run(kernel, ctx).finding;
    expect(o.model_adequate).toBe(false);
    expect(o.fourth_order_adequate).toBe(true);
    expect(o.verdict).toBe('inconclusive');
    expect((o as { votes: { by: string }[] }).votes.some((v) => v.by === 'fourth-order fit')).toBe(false);
    // order 4 established: the family votes again (no oscillation, as above; a new matrix object, since the column fit is cached per kernel)
    ctx.results['order'] = { finding: { estimate: 4, confidence: 0.99 } } as unknown as (typeof ctx.results)[string];
    const again = oscillation.run({ ...kernel, G: { ...kernel.G } }, ctx).finding;
    expect(again.verdict).toBe('no');
  });
  it('with interfaces the column fits are made per region: the bar a = 1 | 10 at 0.4 (references (e)) has no oscillation, Helmholtz k = 15 cut at 0.5 keeps it in both halves', () => {
    const stated = (at: number) => ({ finding: [{ location: at, uncertainty: 0.005, confidence: 1 }] }) as unknown as Parameters<typeof oscillation.run>[1]['results'][string];
    const bar = noisy(kernel1d(piecewise(1, 10, 0.4), 160), 0.003, 56);
    bar.ctx.results['self_adjoint'] = selfAdjoint.run(bar.kernel, bar.ctx);
    bar.ctx.results['interfaces'] = stated(0.4);
    const b = oscillation.run(bar.kernel, bar.ctx).finding;
    expect(b.verdict).toBe('no');
    expect((b as { votes: { by: string }[] }).votes[0]!.by).toContain('per region');
    const wave = noisy(kernel1d(helmholtz(15), 160), 0.003, 57);
    wave.ctx.results['interfaces'] = stated(0.5);
    const w = oscillation.run(wave.kernel, wave.ctx).finding;
    expect(w.verdict).toBe('yes');
    // Duffy; Butkovskiy (from memory): the wavenumber of −u″ − 225u, from one half's columns
    expect(Math.abs(w.wavenumber! - 15) / 15).toBeLessThan(0.01);
  });
  it('a located internal layer cuts the column fits like an interface: Helmholtz k = 15 with a layer stated at 0.6 keeps k from both sides', () => {
    const wave = noisy(kernel1d(helmholtz(15), 160), 0.003, 59);
    wave.ctx.results['singularities'] = { finding: [{ location: 0.6, width: 0.01, confidence: 0.9 }] } as unknown as Parameters<typeof oscillation.run>[1]['results'][string];
    const w = oscillation.run(wave.kernel, wave.ctx).finding;
    expect((w as { votes: { by: string }[] }).votes[0]!.by).toContain('per region');
    expect(w.verdict).toBe('yes');
    // Duffy; Butkovskiy (from memory)
    expect(Math.abs(w.wavenumber! - 15) / 15).toBeLessThan(0.01);
  });
  it('advection–diffusion −0.05u″ + u′ (references (d)): without interfaces the drifted second-order fit decides, no oscillation', () => {
    const { kernel, ctx } = noisy(kernel1d(advdiff(0.05, 1), 160), 0.003, 58);
    ctx.results['self_adjoint'] = selfAdjoint.run(kernel, ctx);
    expect(oscillation.run(kernel, ctx).finding.verdict).toBe('no');
  });
  it('2-D: the sign of the spectrum separates −Δ − k² (k² above the lowest mode) from −Δ on the unit square', () => {
    // bilinear eigenfunction series G = Σ φ_mn(x) φ_mn(s) / (π²(m² + n²) − k²), φ_mn = 2 sin mπx sin nπy
    // (Courant–Hilbert I ch. V; Stakgold & Holst, from memory), truncated at m, n ≤ 24
    const kernel2d = (k2: number): Kernel => {
      const m = 14, n = m * m, P = new Float64Array(2 * n);
      for (let a = 0; a < m; a++) for (let b = 0; b < m; b++) { P[2 * (a * m + b)] = (a + 1) / (m + 1); P[2 * (a * m + b) + 1] = (b + 1) / (m + 1); }
      const G = { rows: n, cols: n, data: new Float64Array(n * n) };
      for (let p = 1; p <= 24; p++) for (let q = 1; q <= 24; q++) {
        const lam = Math.PI ** 2 * (p * p + q * q) - k2;
        const phi = Float64Array.from({ length: n }, (_, i) => 2 * Math.sin(p * Math.PI * P[2 * i]!) * Math.sin(q * Math.PI * P[2 * i + 1]!));
        for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) G.data[i * n + j] += phi[i]! * phi[j]! / lam;
      }
      const w = new Float64Array(n).fill(1 / (m + 1) ** 2);
      return { dimension: 2, pointsOut: { rows: n, cols: 2, data: P }, pointsIn: { rows: n, cols: 2, data: P }, weightsIn: w, G, homogeneous: null, components: { in: 1, out: 1 }, domain: { kind: 'box', bounds: [[0, 1], [0, 1]] } };
    };
    for (const [k2, want] of [[0, 'no'], [30, 'yes']] as const) {
      // λ_11 = 2π² ≈ 19.7 < 30 < λ_12 = 5π² ≈ 49.3: exactly one negative eigenvalue
      const { kernel, ctx } = noisy(kernel2d(k2), 0.001, 55);
      ctx.results['self_adjoint'] = selfAdjoint.run(kernel, ctx);
      const o = oscillation.run(kernel, ctx).finding;
      expect(o.verdict).toBe(want);
      expect(o.negative_eigenvalues).toBe(k2 === 0 ? 0 : 1);
    }
  });
});
