/**
 * The fit with bases broken at an interface (fitStudy { breaks }): on a bar whose conductivity jumps, the
 * Green's function has kinks along x = c and s = c that smooth bases cannot follow; broken there, every piece
 * of G is linear in x and in s (reference (e) below), so the broken model holds G exactly.
 */
import { describe, it, expect } from 'vitest';
import { fitStudy, refit, completeTrial } from '../../src/fit/index.js';
import { relativeError } from '../../src/linalg/dense.js';
import { synth1d } from './studies.js';

// −(a u')' = f, u(0) = u(1) = 0, a = a1 on (0, c), a2 on (c, 1): G = A(x<)(A(1) − A(x>))/A(1), A = ∫ dt/a
// (shared/references/greens-functions.md (e), derived from the two-solution formula; Stakgold & Holst ch. 1)
const a1 = 1, a2 = 10, c = 0.4;
const A = (x: number) => (x <= c ? x / a1 : c / a1 + (x - c) / a2);
const g = (x: number, s: number) => (A(Math.min(x, s)) * (A(1) - A(Math.max(x, s)))) / A(1);

describe('fit with bases broken at interfaces', () => {
  it('closed form (e) check value: G(0.5, 0.5) = 4.456521739130e-02 (reference table)', () => {
    expect(g(0.5, 0.5)).toBeCloseTo(4.456521739130e-2, 12);
    expect(g(0.9, 0.4)).toBeCloseTo(8.695652173913e-3, 12);
  });

  it('noise-free bar a = 1 | 10 at 0.4: broken at 0.4 the kernel error is below 1e-3; the smooth basis cannot reach it', () => {
    const { study, G } = synth1d(g, { seed: 3 });
    const plain = fitStudy(study, { seed: 3, replicates: 4 });
    const broken = fitStudy(study, { seed: 3, replicates: 4, breaks: [c] });
    const ePlain = relativeError(plain.kernel.G, G), eBroken = relativeError(broken.kernel.G, G);
    expect(broken.report.hyperparameters.basis).toBe('piecewise-legendre');
    expect(broken.report.hyperparameters.breaks).toBe('0.4');
    expect(eBroken).toBeLessThan(1e-3);
    // a degree-≤13 polynomial model cannot follow the kink along x = 0.4 (slope ratio 10): percent-level error
    expect(ePlain).toBeGreaterThan(1e-2);
  });

  it('breaks outside the interval are ignored (plain Legendre fit, same kernel)', () => {
    const { study } = synth1d(g, { seed: 4, count: 40, nIn: 60 });
    const plain = fitStudy(study, { seed: 4, replicates: 4 });
    const out = fitStudy(study, { seed: 4, replicates: 4, breaks: [-1, 2] });
    expect(out.report.hyperparameters.basis).toBe('legendre');
    expect(relativeError(out.kernel.G, plain.kernel.G)).toBe(0);
  });

  it('a trial fit (no replicates, no scaling test) has the full fit\u2019s kernel, broken and under symmetry, and the closed-form accuracy', () => {
    const { study, G } = synth1d(g, { seed: 5, noise: 0.01 });
    for (const assume of ['none', 'symmetric'] as const) {
      const full = fitStudy(study, { seed: 5, replicates: 4, breaks: [c], assume });
      const trial = fitStudy(study, { seed: 5, breaks: [c], assume, trial: true });
      expect(relativeError(trial.kernel.G, full.kernel.G)).toBe(0);
      expect(trial.noise.replicates.length).toBe(0);
      expect(trial.report.linearity.verdict).toBe('not-tested');
      expect(trial.report.hyperparameters.constraint).toBe(assume);
      // closed form (e): the noise-0.01 broken fit is within a percent
      expect(relativeError(trial.kernel.G, G)).toBeLessThan(0.01);
    }
  });

  it('a trial fit finished with its replicates (completeTrial) is the refit, bit for bit, and stays within the closed form', () => {
    const { study, G } = synth1d(g, { seed: 7, noise: 0.01 });
    const base = fitStudy(study, { seed: 7, replicates: 6 });
    for (const constraint of ['none', 'symmetric'] as const) {
      const spec = { constraint, breaks: [c] };
      const direct = refit(study, base, spec);
      const trial = fitStudy(study, { seed: 7, breaks: [c], assume: constraint, trial: true });
      const done = completeTrial(study, base, trial, spec);
      expect(relativeError(done.kernel.G, direct.kernel.G)).toBe(0);
      expect(done.noise.replicates.length).toBe(6);
      done.noise.replicates.forEach((R, r) => expect(relativeError(R, direct.noise.replicates[r]!)).toBe(0));
      expect({ ...done.report, seconds: 0 }).toEqual({ ...direct.report, seconds: 0 });
      // closed form (e): the finished fit is the broken fit, within a percent of G at this noise
      expect(relativeError(done.kernel.G, G)).toBeLessThan(0.01);
      // a trial of other breaks is not finished but refitted at the breaks asked for
      const other = completeTrial(study, base, trial, { constraint, breaks: [0.5] });
      expect(other.report.hyperparameters.breaks).toBe('0.5');
    }
  });

  it('a trial fit at fixed hyper-parameters (the moved-break fits) reproduces the fit whose size, penalty and λ it is given', () => {
    const { study } = synth1d(g, { seed: 6, noise: 0.01 });
    const full = fitStudy(study, { seed: 6, replicates: 4, breaks: [c] });
    const h = full.report.hyperparameters as Record<string, number>;
    const fixed = { K: h.basis_size!, order: h.penalty_order!, jump: h.jump_penalty_factor!, lambda: h.lambda! };
    const same = fitStudy(study, { seed: 6, breaks: [c], trial: true, fixed });
    expect(relativeError(same.kernel.G, full.kernel.G)).toBeLessThan(1e-8);
    // the fixed fit's dof is p − λ·tr(P (M + λP)⁻¹) from a Cholesky factor, the searched fit's Σ μ/(μ + λ) from the
    // spectrum: the subtraction (here 450 − 426) loses a few digits, so they agree to about 1e-6 relative, not to ε
    expect(Math.abs(Number(same.report.hyperparameters.effective_parameters) - h.effective_parameters!) / h.effective_parameters!).toBeLessThan(1e-6);
    // moved by two grid cells at the same hyper-parameters: a different, nearby kernel
    const moved = fitStudy(study, { seed: 6, breaks: [c + 0.01], trial: true, fixed });
    const d = relativeError(moved.kernel.G, full.kernel.G);
    expect(d).toBeGreaterThan(1e-6);
    expect(d).toBeLessThan(0.2);
  });
});
