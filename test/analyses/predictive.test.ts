/**
 * The paired per-experiment comparison of two fits' prediction errors (src/analyses/util/a_predictive.ts)
 * on data simulated from closed-form Green's functions (shared/references/greens-functions.md):
 * entry (a) −u″ = f, Dirichlet, G = x<(1 − x>) (Stakgold & Holst ch. 1) and entry (c) −u″ + κ²u = f,
 * G = sinh(κx<) sinh(κ(1 − x>))/(κ sinh κ) (Duffy, from memory). References for the statistics: the
 * χ² law of a sum of squared N(0, σ²) noises (mean n σ², variance 2n σ⁴) and the standard normal law of
 * the z statistic under equal predictive accuracy (Diebold & Mariano 1995).
 */
import { describe, it, expect } from 'vitest';
import { comparePredictions, experimentLosses, akaikeWeights, upperNormalQuantile } from '../../src/analyses/util/a_predictive.js';
import { Rng } from '../../src/linalg/rng.js';
import { laplace, screened, kernel1d, type G1 } from '../helpers/closedForms.js';
import type { FitResult, Kernel, Study } from '../../src/types.js';
import type { Mat } from '../../src/linalg/dense.js';

const n = 60, N = 100;

/** N random forcings (smoothed white noise) and the responses of kernel `truth` with noise σ. */
function simulate(truth: Kernel, sigma: number, rng: Rng): Study {
  const F: Mat = { rows: N, cols: n, data: new Float64Array(N * n) };
  const U: Mat = { rows: N, cols: n, data: new Float64Array(N * n) };
  for (let j = 0; j < N; j++) {
    const z = rng.normals(n + 4);
    for (let k = 0; k < n; k++) F.data[j * n + k] = (z[k]! + z[k + 1]! + z[k + 2]! + z[k + 3]! + z[k + 4]!) / Math.sqrt(5);
    for (let i = 0; i < n; i++) {
      let u = 0;
      for (let k = 0; k < n; k++) u += truth.G.data[i * n + k]! * truth.weightsIn[k]! * F.data[j * n + k]!;
      U.data[j * n + i] = u + sigma * rng.normal();
    }
  }
  return {
    dimension: 1, domain: truth.domain,
    inputs: { points: truth.pointsIn, values: F, components: 1 },
    outputs: { points: truth.pointsOut, values: U, components: 1 },
  };
}

/** A FitResult wrapper around a kernel (only the fields the comparison reads). */
function asFit(kernel: Kernel, effectiveParameters = 0): FitResult {
  return { kernel, report: { hyperparameters: { effective_parameters: effectiveParameters } }, noise: { replicates: [] } } as unknown as FitResult;
}

function scaled(g: G1, c: number): G1 { return (x, s) => c * g(x, s); }

describe('per-experiment losses', () => {
  it('with the true kernel, the summed loss follows the χ² law of the noise (mean n σ², sd √(2n) σ²)', () => {
    const truth = kernel1d(laplace(), n);
    const sigma = 0.01;
    const study = simulate(truth, sigma, new Rng(11));
    const { loss, count } = experimentLosses(study, truth);
    expect(count).toBe(N * n);
    const total = loss.reduce((a, b) => a + b, 0) / (sigma * sigma);
    // χ²_{6000}: mean 6000, sd 110; 4 sd
    expect(Math.abs(total - count)).toBeLessThan(4 * Math.sqrt(2 * count));
  });

  it('skips values marked as not measured (NaN)', () => {
    const truth = kernel1d(laplace(), n);
    const study = simulate(truth, 0.01, new Rng(12));
    for (let j = 0; j < N; j += 2) study.outputs.values.data[j * n + 7] = NaN;
    const { loss, count } = experimentLosses(study, truth);
    expect(count).toBe(N * n - N / 2);
    expect(loss.every(Number.isFinite)).toBe(true);
  });
});

describe('paired comparison of two fits', () => {
  it('prefers the true operator (entry (c), κ = 3) to the neighbouring one (entry (a)) at z ≫ 3, antisymmetric in its arguments', () => {
    const truth = kernel1d(screened(3), n), other = kernel1d(laplace(), n);
    const study = simulate(truth, 0.002, new Rng(13));
    const ab = comparePredictions(study, asFit(other), asFit(truth));
    const ba = comparePredictions(study, asFit(truth), asFit(other));
    expect(ab.z).toBeGreaterThan(3.09);
    expect(ab.relativeGain).toBeGreaterThan(0);
    expect(ba.z).toBeCloseTo(-ab.z, 10);
  });

  it('under equal predictive accuracy z is standard normal: 200 seeded studies, two kernels 2 % too large and too small', () => {
    // A = (1 + δ) G, B = (1 − δ) G: E L(A) = E L(B) exactly (loss = δ²‖G W f‖² + noise, cross terms of mean 0)
    const truth = kernel1d(laplace(), n);
    const A = asFit(kernel1d(scaled(laplace(), 1.02), n)), B = asFit(kernel1d(scaled(laplace(), 0.98), n));
    const zs: number[] = [];
    const rng = new Rng(2024);
    for (let r = 0; r < 200; r++) zs.push(comparePredictions(simulate(truth, 0.002, rng), A, B).z);
    const mean = zs.reduce((a, b) => a + b, 0) / zs.length;
    const sd = Math.sqrt(zs.reduce((a, b) => a + (b - mean) ** 2, 0) / (zs.length - 1));
    const above = zs.filter((z) => z > 1.645).length;
    // mean of 200 N(0,1): sd 0.071 (4 sd: 0.28); sample sd of 200: sd ≈ 0.05 (±0.2 is 4 sd);
    // count above the 95 % point: Binomial(200, 0.05), mean 10, sd 3.1 (4 sd: ≤ 22)
    expect(Math.abs(mean)).toBeLessThan(0.28);
    expect(Math.abs(sd - 1)).toBeLessThan(0.2);
    expect(above).toBeLessThanOrEqual(22);
  });

  it('charges a fit its degrees of freedom: GCV factor 1/(1 − dof/n)² (Craven & Wahba 1979)', () => {
    const truth = kernel1d(laplace(), n);
    const study = simulate(truth, 0.01, new Rng(14));
    const p = 600; // of n = 6000 values: factor 1/0.81
    const c = comparePredictions(study, asFit(truth, p), asFit(truth, 0));
    expect(c.relativeGain).toBeCloseTo(1 - 0.81, 12);
    expect(c.z).toBeGreaterThan(3.09);
  });
});

describe('Bonferroni levels and Akaike weights', () => {
  it('upper normal quantiles match the tables (Abramowitz & Stegun, table 26.1)', () => {
    expect(upperNormalQuantile(0.025)).toBeCloseTo(1.959964, 5);
    // Φ here is A&S 7.1.26 (|error| < 1.5e-7), so in the tail the quantile is good to 1.5e-7/φ(z) ≈ 5e-5
    expect(upperNormalQuantile(0.001)).toBeCloseTo(3.090232, 3);
    expect(upperNormalQuantile(0.001 / 4)).toBeCloseTo(3.480756, 3);
    expect(upperNormalQuantile(0.5)).toBeCloseTo(0, 8);
  });

  it('weigh the true kernel against a 2 % scaled one by exp(−ΔRSS/2σ²) (Burnham & Anderson 2002, §2.9)', () => {
    // with RSS difference Δ between the fits the weight of the worse one is 1/(1 + e^{Δ/2σ²});
    // Δ is computed here directly from the closed form (entry (a)), independently of the module
    const truth = kernel1d(laplace(), n), off = kernel1d(scaled(laplace(), 1.002), n);
    const sigma = 0.002;
    const study = simulate(truth, sigma, new Rng(15));
    let d = 0;
    for (let j = 0; j < N; j++) for (let i = 0; i < n; i++) {
      let gt = 0, go = 0;
      for (let k = 0; k < n; k++) { const fw = study.inputs.values.data[j * n + k]! * truth.weightsIn[k]!; gt += truth.G.data[i * n + k]! * fw; go += off.G.data[i * n + k]! * fw; }
      const u = study.outputs.values.data[j * n + i]!;
      d += (u - go) ** 2 - (u - gt) ** 2;
    }
    const w = akaikeWeights(study, [asFit(truth), asFit(off)], sigma);
    expect(w[0]! + w[1]!).toBeCloseTo(1, 12);
    expect(w[1]!).toBeCloseTo(1 / (1 + Math.exp(d / (2 * sigma * sigma))), 8);
    expect(w[1]!).toBeLessThan(0.5);
  });
});
