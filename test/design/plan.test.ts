import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { makePlan, excitedDirections } from '../../src/design/plan.js';
import type { Mat } from '../../src/linalg/dense.js';

// numpy reference eigenvalues: test/fixtures/design_make_fixtures.py
const ref = JSON.parse(readFileSync(fileURLToPath(new URL('../fixtures/design_reference.json', import.meta.url)), 'utf8'));
const grid1d = (n: number): Mat => ({ rows: n, cols: 1, data: Float64Array.from({ length: n }, (_, i) => i / (n - 1)) });

describe('excited directions and the recommended count', () => {
  for (const kind of ['se', 'matern52'] as const) {
    it(`count of covariance directions above the noise matches numpy for ${kind} on a 1-D grid`, () => {
      const g = ref[`grid1d_${kind}`] as { n: number; l: number; eigenvalues_weighted: number[]; 'excited_at_0.01': number; 'excited_at_0.05': number };
      for (const [noise, expected] of [[0.01, g['excited_at_0.01']], [0.05, g['excited_at_0.05']]] as const) {
        const plan = makePlan(grid1d(g.n), { count: 5, covariance: kind, lengthScale: g.l, noise, domain: { kind: 'interval', bounds: [0, 1] } });
        const sp = plan.record.spectrum;
        expect(sp.excited_directions.resolved).toBe(true);
        expect(sp.excited_directions.lower).toBe(expected);
        // leading eigenvalues of the covariance operator (trapezoid-weighted), numpy eigvalsh
        sp.leading.slice(0, 10).forEach((v, i) => expect(Math.abs(v - g.eigenvalues_weighted[i]!)).toBeLessThanOrEqual(sp.eigenvalue_error_bound + 1e-12));
        // Halko, Martinsson & Tropp 2011: k + p with the default p = 10
        expect(plan.record.recommendation.target_rank).toBe(expected);
        expect(plan.record.recommendation.recommended_count).toBe(expected + 10);
      }
    });
  }
  it('a given target rank beyond what the covariance excites is kept but warned about, with a shorter length scale suggested', () => {
    const g = ref.grid1d_se as { n: number; l: number; 'excited_at_0.01': number };
    const plan = makePlan(grid1d(g.n), { count: 80, lengthScale: g.l, targetRank: 60, oversampling: 5, domain: { kind: 'interval', bounds: [0, 1] } });
    const rec = plan.record.recommendation;
    expect(rec.target_rank).toBe(60);
    expect(rec.recommended_count).toBe(65);
    expect(rec.warnings.join(' ')).toMatch(/exceeds the 19 direction/);
    const m = /about ([0-9.e-]+)/.exec(rec.warnings.join(' '));
    expect(Number(m![1])).toBeCloseTo(g.l * 19 / 60, 3);
  });
  it('bounds are honest when the factor does not resolve the threshold (Weyl: μ_i ≤ λ_i ≤ μ_i + e)', () => {
    const mu = Float64Array.from([1, 0.5, 0.01, 1e-5]);
    const sp = excitedDirections(mu, 2e-4, 0.01, 100);
    // threshold 1e-4·λ1: 1e-5 + 2e-4 can reach it; and e ≥ 1e-4 means unseen directions may too
    expect(sp.excited_directions.lower).toBe(3);
    expect(sp.excited_directions.upper).toBe(100);
    expect(sp.excited_directions.resolved).toBe(false);
    const tight = excitedDirections(mu, 1e-9, 0.01, 100);
    expect(tight.excited_directions).toEqual({ lower: 3, upper: 3, resolved: true });
  });
  it('is deterministic in the seed and different across seeds', () => {
    const P = grid1d(60);
    const a = makePlan(P, { count: 4, seed: 3 }), b = makePlan(P, { count: 4, seed: 3 }), c = makePlan(P, { count: 4, seed: 4 });
    expect(Array.from(a.forcings.data)).toEqual(Array.from(b.forcings.data));
    expect(Array.from(a.forcings.data)).not.toEqual(Array.from(c.forcings.data));
  });
});
