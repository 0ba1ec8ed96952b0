/**
 * The estimator against closed-form Green's functions (shared/references/greens-functions.md):
 *   (a) −u'' Dirichlet on [0,1]: G = x<(1 − x>) — Stakgold & Holst ch. 1; Courant–Hilbert I ch. V (from memory)
 *   (b) −u'' − 225u (k = 15): G = sin(k x<) sin(k(1 − x>))/(k sin k) — Duffy; Butkovskiy (from memory)
 *   (d) −0.05u'' + u': derived in the reference from the general construction (i) (Stakgold & Holst; Duffy)
 * Targets are the issue's accuracy table (relative Frobenius error of G), not values tuned here.
 */
import { describe, it, expect } from 'vitest';
import { synth1d } from './studies.js';
import { laplace, helmholtz, advdiff, screened, uniformGrid } from '../helpers/closedForms.js';
import { fitStudy, refit } from '../../src/fit/index.js';
import { relativeError } from '../../src/linalg/dense.js';
import { Rng } from '../../src/linalg/rng.js';

const relVec = (a: Float64Array, b: Float64Array) => {
  let n = 0, d = 0;
  for (let i = 0; i < a.length; i++) { n += (a[i]! - b[i]!) ** 2; d += b[i]! ** 2; }
  return Math.sqrt(n / d);
};

describe('standard case: 200 co-located points, 100 GP forcings (l = 0.03)', () => {
  const cases = [
    { name: '−u\'\' (a)', g: laplace(1), t0: 0.001, t1: 0.012 },
    { name: '−0.05u\'\' + u\' (d)', g: advdiff(0.05, 1), t0: 0.003, t1: 0.025 },
  ];
  for (const c of cases) {
    it(`${c.name}: noise 0 within ${c.t0}, noise 0.1 within ${c.t1}`, () => {
      const s0 = synth1d(c.g, { noise: 0, seed: 1 });
      expect(relativeError(fitStudy(s0.study, { seed: 1 }).kernel.G, s0.G)).toBeLessThanOrEqual(c.t0);
      const s1 = synth1d(c.g, { noise: 0.1, seed: 1 });
      const f1 = fitStudy(s1.study, { seed: 1 });
      const err = relativeError(f1.kernel.G, s1.G);
      expect(err).toBeLessThanOrEqual(c.t1);
      // honest uncertainty (issue item 4): predicted / actual within [0.5, 2]
      const ratio = f1.report.uncertainty.relative_kernel_error / err;
      expect(ratio).toBeGreaterThanOrEqual(0.5);
      expect(ratio).toBeLessThanOrEqual(2);
      // noise estimated without being told: within 5 % of the injected std
      expect(Math.abs(f1.report.noise_estimate / s1.sigma - 1)).toBeLessThan(0.05);
      expect(f1.report.noise_source).toBe('estimated');
      expect(f1.report.coverage.complete).toBe(true);
    });
  }
  it('(b) Helmholtz k = 15, noise 0 within 0.002', () => {
    const s0 = synth1d(helmholtz(15), { noise: 0, seed: 1 });
    expect(relativeError(fitStudy(s0.study, { seed: 1 }).kernel.G, s0.G)).toBeLessThanOrEqual(0.002);
  });
  it('(b) Helmholtz k = 15 and (d) at noise 1.0: within the issue targets 0.06 and 0.08, honest', () => {
    for (const [g, target] of [[helmholtz(15), 0.06], [advdiff(0.05, 1), 0.08]] as const) {
      const s = synth1d(g, { noise: 1, seed: 2 });
      const f = fitStudy(s.study, { seed: 2 });
      const err = relativeError(f.kernel.G, s.G);
      expect(err).toBeLessThanOrEqual(target);
      const ratio = f.report.uncertainty.relative_kernel_error / err;
      expect(ratio).toBeGreaterThanOrEqual(0.5);
      expect(ratio).toBeLessThanOrEqual(2);
    }
  });
  it('(b) with k = 10 (not a benchmark case): the oscillatory basis is chosen and its frequency is the wavenumber', () => {
    // Duffy; Butkovskiy (from memory): G = sin(k x<) sin(k(1 − x>))/(k sin k); columns off the diagonal ∝ sin, cos(kx)
    const s = synth1d(helmholtz(10), { noise: 0.1, seed: 4 });
    const f = fitStudy(s.study, { seed: 4 });
    expect(f.report.hyperparameters.basis).toBe('legendre+cos/sin');
    expect(Math.abs((f.report.hyperparameters.frequency as number) / 10 - 1)).toBeLessThan(0.01);
    expect(relativeError(f.kernel.G, s.G)).toBeLessThanOrEqual(0.018);
  });
  it('(a) −u\'\' keeps the plain Legendre basis at noise 0 (nothing oscillates)', () => {
    const s = synth1d(laplace(1), { noise: 0, seed: 5 });
    expect(fitStudy(s.study, { seed: 5 }).report.hyperparameters.basis).toBe('legendre');
  });
  it('(a) at noise 1.0 within 0.04, and within 0.03 with the symmetric refit', () => {
    const s = synth1d(laplace(1), { noise: 1, seed: 1 });
    const f = fitStudy(s.study, { seed: 1 });
    expect(relativeError(f.kernel.G, s.G)).toBeLessThanOrEqual(0.04);
    const r = refit(s.study, f, 'symmetric');
    expect(relativeError(r.kernel.G, s.G)).toBeLessThanOrEqual(0.03);
    expect(r.report.refits.map((x) => x.constraint)).toEqual(['none', 'symmetric']);
    expect(r.report.refits.filter((x) => x.used)).toHaveLength(1);
    // self-adjoint by construction: G(x,s) = G(s,x) on co-located points
    const G = r.kernel.G, n = G.rows;
    let asym = 0;
    for (let i = 0; i < n; i++) for (let k = 0; k < n; k++) asym = Math.max(asym, Math.abs(G.data[i * n + k]! - G.data[k * n + i]!));
    expect(asym).toBeLessThan(1e-10);
  });
});

describe('honest floor where the basis cannot resolve the kernel', () => {
  for (const c of [0.4, 0.5]) it(`bar with a = 1 on (0, ${c}), 10 on (${c}, 1), noise 0: predicted / actual kernel error within [0.5, 2]`, () => {
    // −(a u')' = f, Dirichlet: G = R(x<)(R(1) − R(x>))/R(1), R(x) = ∫_0^x dt/a — the Wronskian construction of
    // Stakgold & Holst ch. 1 (from memory). G has a kink along x = c (and s = c) that a polynomial basis of
    // size ≤ 14 does not converge on: the floor must come from the model-size term, not the (tiny) noise.
    const R = (x: number) => (x < c ? x : c + (x - c) / 10);
    const bar = (x: number, s: number) => (R(Math.min(x, s)) * (R(1) - R(Math.max(x, s)))) / R(1);
    const sy = synth1d(bar, { noise: 0, seed: 1 });
    const f = fitStudy(sy.study, { seed: 1 });
    const err = relativeError(f.kernel.G, sy.G);
    const ratio = f.report.uncertainty.relative_kernel_error / err;
    expect(err).toBeGreaterThan(0.01); // the case is truncation-limited (else it tests nothing)
    expect(ratio).toBeGreaterThanOrEqual(0.5);
    expect(ratio).toBeLessThanOrEqual(2);
  });
});

describe('homogeneous part, distinct sensors, missing values', () => {
  it('u_h fitted jointly: relative error ≤ 0.01 noise-free (a, with u_h = 0.3 + 0.5x)', () => {
    const s = synth1d(laplace(1), { noise: 0, seed: 2, homogeneous: (x) => 0.3 + 0.5 * x });
    const f = fitStudy(s.study, { seed: 2 });
    expect(relVec(f.kernel.homogeneous!, s.homogeneous!)).toBeLessThanOrEqual(0.01);
    expect(relativeError(f.kernel.G, s.G)).toBeLessThanOrEqual(0.001);
  });
  it('150 random sensors ≠ 120 uniform actuators: within 1.5× of the co-located figure (d, noise 0.1)', () => {
    const rng = new Rng(5);
    const xOut = Float64Array.from({ length: 150 }, () => rng.uniform()).sort();
    const sep = synth1d(advdiff(0.05, 1), { noise: 0.1, seed: 3, nIn: 120, xIn: uniformGrid(120), xOut });
    const col = synth1d(advdiff(0.05, 1), { noise: 0.1, seed: 3 });
    const eSep = relativeError(fitStudy(sep.study, { seed: 3 }).kernel.G, sep.G);
    const eCol = relativeError(fitStudy(col.study, { seed: 3 }).kernel.G, col.G);
    expect(eSep).toBeLessThanOrEqual(1.5 * eCol);
  });
  it('20 % of the responses missing (a, noise 0.1): still within the 0.012 target', () => {
    const s = synth1d(laplace(1), { noise: 0.1, seed: 4, missing: 0.2 });
    const f = fitStudy(s.study, { seed: 4 });
    expect(relativeError(f.kernel.G, s.G)).toBeLessThanOrEqual(0.012);
    for (const v of f.kernel.G.data) expect(Number.isFinite(v)).toBe(true);
  });
});

describe('coverage, determinism, replicates', () => {
  it('forcings on half of the actuators only: incomplete, with the unforced points counted', () => {
    const s = synth1d(laplace(1), { noise: 0.01, seed: 6 });
    const F = s.study.inputs.values;
    for (let j = 0; j < F.rows; j++) for (let k = 100; k < 200; k++) F.data[j * 200 + k] = 0;
    // recompute responses for the changed forcings: u = G W f
    const w = fitStudy(s.study, { seed: 6, replicates: 4 }).kernel.weightsIn;
    const U = s.study.outputs.values;
    for (let j = 0; j < F.rows; j++) for (let i = 0; i < 200; i++) { let v = 0; for (let k = 0; k < 200; k++) v += s.G.data[i * 200 + k]! * w[k]! * F.data[j * 200 + k]!; U.data[j * 200 + i] = v; }
    const f = fitStudy(s.study, { seed: 6, replicates: 4 });
    expect(f.report.coverage.complete).toBe(false);
    expect((f.report as unknown as { coverage_detail: { unexcited_inputs: number } }).coverage_detail.unexcited_inputs).toBe(100);
  });
  it('too few, too smooth forcings (4 experiments): flagged incomplete', () => {
    const s = synth1d(helmholtz(15), { noise: 0.01, seed: 7, count: 4, lengthScale: 0.3 });
    expect(fitStudy(s.study, { seed: 7, replicates: 4 }).report.coverage.complete).toBe(false);
  });
  it('same inputs and seed ⇒ same kernel, replicates and report numbers', () => {
    const s = synth1d(laplace(1), { noise: 0.1, seed: 8, count: 40 });
    const a = fitStudy(s.study, { seed: 11, replicates: 5 }), b = fitStudy(s.study, { seed: 11, replicates: 5 });
    expect(Array.from(a.kernel.G.data)).toEqual(Array.from(b.kernel.G.data));
    expect(Array.from(a.noise.replicates[4]!.data)).toEqual(Array.from(b.noise.replicates[4]!.data));
    expect(a.report.uncertainty).toEqual(b.report.uncertainty);
    expect(a.noise.replicates).toHaveLength(5);
    expect(a.noise.replicates[0]!.rows).toBe(200);
    expect(a.noise.homogeneousReplicates).toHaveLength(5);
  });
});

describe('linearity: no false alarms on linear studies', () => {
  it('−u\'\' with amplitudes over [0.2, 5], noise 0.1: at most 1 of 20 seeds flagged nonlinear', () => {
    let alarms = 0;
    for (let seed = 1; seed <= 20; seed++) {
      const s = synth1d(laplace(1), { noise: 0.1, seed, amplitudes: [0.2, 5], count: 60 });
      if (fitStudy(s.study, { seed, replicates: 3 }).report.linearity.verdict === 'nonlinear') alarms++;
    }
    expect(alarms).toBeLessThanOrEqual(1);
  });
});

describe('linearity: the cubic case is flagged', () => {
  it('−u\'\' + 30u³ = f (simulator, Newton), amplitudes over [0.2, 5], noise 0.1: nonlinear, kernel labelled a linearisation', async () => {
    const { parseOperator, simulateStudy } = await import('../../src/simulate/index.js');
    const { parseGrid } = await import('../../src/cli/common.js');
    const sim = simulateStudy(parseOperator('a=1; cubic=30'), { pointsIn: parseGrid('0:1:200'), count: 100, noise: 0.1, seed: 4, amplitudes: [0.2, 5], lengthScale: 0.03 });
    const f = fitStudy(sim.study, { seed: 4, replicates: 3 });
    expect(f.report.linearity.verdict).toBe('nonlinear');
    expect(f.report.linearity.note).toMatch(/linearisation/);
    expect(f.kernel.G.rows).toBe(200);
  });
});

describe('translation-invariant refit', () => {
  // free-space Green's function of −u'' + κ²u on the line, e^{−κ|x−s|}/(2κ), κ = 10 (Duffy, ODE chapter;
  // the 1-D analogue of entry (k) — from memory), sampled on [0, 1]: a pure convolution kernel
  const free = (x: number, s: number) => Math.exp(-10 * Math.abs(x - s)) / 20;
  it('a convolution kernel: the refit is used and is more accurate (noise 0.1)', () => {
    const s = synth1d(free, { noise: 0.1, seed: 1 });
    const f = fitStudy(s.study, { seed: 1, replicates: 5 });
    const t = refit(s.study, f, 'translation');
    expect(t.report.refits.find((r) => r.constraint === 'translation')!.used).toBe(true);
    expect(relativeError(t.kernel.G, s.G)).toBeLessThan(0.7 * relativeError(f.kernel.G, s.G));
    expect(t.noise.replicates).toHaveLength(5);
  });
  it('(c) screened Dirichlet kernel (not translation invariant near the ends): the refit is not used', () => {
    // (c) −u'' + κ²u, Dirichlet, κ = 10 — Duffy; Butkovskiy (from memory)
    const s = synth1d(screened(10), { noise: 0.1, seed: 1 });
    const f = fitStudy(s.study, { seed: 1, replicates: 5 });
    const t = refit(s.study, f, 'translation');
    expect(t.report.refits.find((r) => r.constraint === 'translation')!.used).toBe(false);
    expect(Array.from(t.kernel.G.data)).toEqual(Array.from(f.kernel.G.data));
  });
});
