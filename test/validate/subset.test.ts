/**
 * The fast subset of the validation suite (validate/cases.ts, cases marked `fast`): studies
 * simulated from known operators — expected verdicts follow from the operators, and the
 * wavenumber/coefficients from shared/references/greens-functions.md entries (a), (b), (d), (f1).
 */
import { describe, it, expect } from 'vitest';
import { cases } from '../../validate/cases.js';
import { runCase } from '../../validate/suite.js';

const isBand = (what: string) => what.endsWith('band covers truth');

describe('validation subset at noise 0.01', () => {
  for (const c of cases.filter((x) => x.fast)) {
    it(`${c.name}: every verdict right`, () => {
      const r = runCase(c, 0.01, 1);
      expect(r.error).toBeUndefined();
      const misses = r.checks.filter((k) => k.outcome !== 'right').map((k) => `${k.what}: got ${k.got}, want ${k.want}`);
      expect(misses).toEqual([]);
      expect(r.checks.length).toBeGreaterThan(0);
    });
  }
});

describe('validation subset at noise 1.0', () => {
  const fast = cases.filter((x) => x.fast);
  for (const c of fast) {
    it(`${c.name}: no wrong verdict given with confidence ≥ 0.8`, () => {
      const r = runCase(c, 1.0, 1);
      expect(r.error).toBeUndefined();
      const confidentWrong = r.checks.filter((k) => !isBand(k.what) && k.outcome === 'wrong' && k.confidence >= 0.8)
        .map((k) => `${k.what}: got ${k.got} (${k.confidence.toFixed(2)}), want ${k.want}`);
      expect(confidentWrong).toEqual([]);
    });
  }
  // Coefficient bands must cover the truth at every noise level (issue 4). Known miss, recorded in
  // docs/validation.md: helmholtz-k15 at noise 1 — the fit's replicates (refits with the
  // hyper-parameters held fixed) underestimate the kernel's error, and a localised excursion of the
  // fitted kernel puts c = −225 1.32× the band's half-width away (Student-t/bootstrap-bias bands).
  // uniform-diffusion covers with the working tree's fit (it missed by 1 % with the previous fit:
  // a measured margin, not a safe one). helmholtz-k15 covers since the fit's replicates re-choose basis size and λ
  // (model-selection variance); its predicted kernel error on seed 1 is still 1.55 % vs 3.71 % actual, so the margin is small.
  const knownMiss = new Set<string>([]);
  for (const c of fast.filter((x) => x.expect.coefficients)) {
    const t = knownMiss.has(c.name) ? it.fails : it;
    t(`${c.name}: coefficient bands cover the truth${knownMiss.has(c.name) ? ' (known miss)' : ''}`, () => {
      const r = runCase(c, 1.0, 1);
      const missed = r.checks.filter((k) => isBand(k.what) && k.outcome !== 'right').map((k) => `${k.what}: ${k.got}`);
      expect(missed).toEqual([]);
    });
  }
});
