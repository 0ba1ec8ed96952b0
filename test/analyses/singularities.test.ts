/**
 * Singularities from AAA poles. References: the closed-form kernels of
 * shared/references/greens-functions.md (entries named beside each case) and exact pole
 * positions of tanh (poles of tanh(t/δ) at t = iπδ(k + 1/2)).
 */
import { describe, it, expect } from 'vitest';
import { scanPoles, singularities } from '../../src/analyses/singularities.js';
import { laplace, piecewise, advdiff, helmholtz, screened, uniformGrid } from '../helpers/closedForms.js';
import { modalKernel } from './anaB_helpers.js';
import { Rng } from '../../src/linalg/rng.js';
import type { Context } from '../../src/analyses/analysis.js';
import type { Mat } from '../../src/linalg/dense.js';

const ctxOf = (replicates: Mat[], homogeneousReplicates: Float64Array[] = []): Context => ({
  noise: { replicates, homogeneousReplicates, source: 'bootstrap', assumption: 'test' },
  rng: new Rng(1), options: {}, results: {},
});

describe('scanPoles on a function with an internal layer', () => {
  const x = uniformGrid(200);
  it('tanh((x − 0.37)/0.01): nearest poles at 0.37 ± iπ·0.01/2 (exact), noise-free', () => {
    const f = Float64Array.from(x, (t) => Math.tanh((t - 0.37) / 0.01));
    const s = scanPoles(x, f, { lo: 0, hi: 1 });
    expect(s.clusters.length).toBe(1);
    expect(Math.abs(s.clusters[0]!.location - 0.37)).toBeLessThan(1e-4);
    expect(s.clusters[0]!.width).toBeCloseTo((Math.PI * 0.01) / 2, 4);
  });
  // target of the issue: within 0.02 of the domain length; here noise 1 % of the layer height
  it('layer tanh((x − 0.62)/0.02) located within 0.01 at noise 0.01 (3 seeds)', () => {
    for (const seed of [1, 2, 3]) {
      const rng = new Rng(seed);
      const f = Float64Array.from(x, (t) => Math.tanh((t - 0.62) / 0.02) + 0.01 * rng.normal());
      const s = scanPoles(x, f, { lo: 0, hi: 1 });
      expect(s.clusters.length).toBe(1);
      expect(Math.abs(s.clusters[0]!.location - 0.62)).toBeLessThan(0.01);
      // cross-validated noise estimate is of the order of the true noise
      expect(s.noise).toBeGreaterThan(0.005);
      expect(s.noise).toBeLessThan(0.03);
    }
  });
  it('a smooth function and pure noise give no clusters', () => {
    const rng = new Rng(9);
    const smooth = Float64Array.from(x, (t) => Math.sin(3 * t) + 0.01 * rng.normal());
    expect(scanPoles(x, smooth, { lo: 0, hi: 1 }).clusters).toEqual([]);
    const noise = Float64Array.from(x, () => rng.normal());
    expect(scanPoles(x, noise, { lo: 0, hi: 1 }).clusters).toEqual([]);
  });
});

describe('singularities analysis on kernels', () => {
  it('internal layer in u_h is reported with its location and width, confidence from replicates', () => {
    // G of −u'' (entry (a), Stakgold & Holst ch. 1) with a layered homogeneous part
    const m = modalKernel(laplace(), { rel: 0.01, reps: 8, seed: 3, homogeneous: (t) => Math.tanh((t - 0.45) / 0.015), hNoise: 0.005 });
    const out = singularities.run(m.kernel, ctxOf(m.replicates, m.homogeneousReplicates));
    expect(out.finding.length).toBe(1);
    const s = out.finding[0]!;
    expect(Math.abs((s.location as number) - 0.45)).toBeLessThan(0.02);
    expect(s.width).toBeGreaterThan(0.5 * Math.PI * 0.015 / 2);
    expect(s.width).toBeLessThan(2 * Math.PI * 0.015 / 2);
    expect(s.confidence).toBeGreaterThan(0.8);
    expect(s.source).toBe('homogeneous');
  });

  it('the moving diagonal kink is never reported (uniform media, all noise levels)', () => {
    // (a) −u''; (d) −0.05u'' + u'; (b) k = 15; (c) κ = 10 — Stakgold & Holst; Duffy (from memory)
    for (const g of [laplace(), advdiff(0.05, 1), helmholtz(15), screened(10)]) {
      for (const rel of [0, 0.01, 0.1, 1]) {
        const m = modalKernel(g, { rel, reps: 4, seed: 11 });
        const out = singularities.run(m.kernel, ctxOf(m.replicates));
        expect(out.finding).toEqual([]);
      }
    }
  });

  it('a coefficient jump (entry (e), a = 1 | 10 at 0.4) shows as a fixed kink in rows and columns', () => {
    // exact kernel: the kink of each column at x = 0.4 (slope ratio a1/a2) recurs in every slice
    const m = modalKernel(piecewise(1, 10, 0.4), { rel: 0, reps: 4, seed: 1, K: 80 });
    const out = singularities.run(m.kernel, ctxOf(m.replicates));
    expect(out.finding.length).toBe(1);
    expect(Math.abs((out.finding[0]!.location as number) - 0.4)).toBeLessThan(0.02);
  });
});

describe('one site, one entry', () => {
  it('a layer in u_h and a fixed kink of G at the same point are one singularity (entry (e) a = 1 | 10 at 0.45; tanh poles at x0 ± iπδ/2)', () => {
    const m = modalKernel(piecewise(1, 10, 0.45), { rel: 0, reps: 4, seed: 5, K: 80, homogeneous: (t) => Math.tanh((t - 0.45) / 0.015), hNoise: 0.002 });
    const out = singularities.run(m.kernel, ctxOf(m.replicates, m.homogeneousReplicates));
    expect(out.finding.length).toBe(1);
    const f = out.finding[0]!;
    expect(Math.abs((f.location as number) - 0.45)).toBeLessThan(0.02);
    expect([f.source, f.also_in].sort()).toEqual(['homogeneous', 'kernel']);
  });
  it('two sites farther apart than their widths stay two (kink at 0.4 as above, layer at 0.75)', () => {
    const m = modalKernel(piecewise(1, 10, 0.4), { rel: 0, reps: 4, seed: 1, K: 80, homogeneous: (t) => Math.tanh((t - 0.75) / 0.015), hNoise: 0.002 });
    const out = singularities.run(m.kernel, ctxOf(m.replicates, m.homogeneousReplicates));
    const xs = out.finding.map((f) => f.location as number).sort((a, b) => a - b);
    expect(xs.length).toBe(2);
    expect(Math.abs(xs[0]! - 0.4)).toBeLessThan(0.02);
    expect(Math.abs(xs[1]! - 0.75)).toBeLessThan(0.02);
  });
});

describe('singularity verdicts: numerically zero u_h, undecided at high noise', () => {
  const ctxOf = (m: ReturnType<typeof modalKernel>) => ({ noise: { replicates: m.replicates, homogeneousReplicates: m.homogeneousReplicates, source: 'bootstrap' as const, assumption: 'test' }, rng: new Rng(1), options: {}, results: {} });
  it('a homogeneous part at round-off level (1e-12 of the response) is not scanned', () => {
    // −u″ (entry (a), Stakgold & Holst) with u_h = 0 up to round-off, shaped like a smooth bump
    const m = modalKernel(laplace(), { rel: 0, reps: 6, seed: 2, homogeneous: (t) => 1e-12 * Math.sin(7 * t) ** 3 });
    const out = singularities.run(m.kernel, ctxOf(m));
    expect(out.finding).toEqual([]);
    expect(out.evidence.verdict).toBe('none');
  });
  it('a layer tanh((x − 0.45)/0.02) drowned in noise is never reported absent', () => {
    // noise sd 0.5 on a unit-amplitude layer (pole pair at 0.45 ± iπ·0.02/2, exact)
    for (const seed of [1, 2, 3]) {
      const m = modalKernel(laplace(), { rel: 0.3, reps: 6, seed, homogeneous: (t) => Math.tanh((t - 0.45) / 0.02), hNoise: 0.5 });
      const out = singularities.run(m.kernel, ctxOf(m));
      const right = out.finding.length === 1 && Math.abs((out.finding[0]!.location as number) - 0.45) < 0.02;
      if (!right) expect(out.evidence.verdict).toBe('inconclusive');
    }
  });
});
