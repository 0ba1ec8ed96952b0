/**
 * Local operator coefficients by the weak form, checked against the coefficients of operators
 * whose Green's functions are known in closed form (shared/references/greens-functions.md;
 * the book is named beside each check), exact and through a band-limited noisy stand-in of
 * the fit with the error sizes the prototype measured (shared/feasibility-1d.md).
 */
import { describe, it, expect } from 'vitest';
import { kernel1d, laplace, helmholtz, screened, advdiff, piecewise, clampedBeam } from '../helpers/closedForms.js';
import { fitStandIn } from './op_fitStandIn.js';
import { coefficientProfiles, localCoefficients, operatorAnalysis, jumpDiffusion, simultaneousZ, simultaneousT, studentAbsCdf, piecewiseProfiles } from '../../src/analyses/operator.js';
import { Rng } from '../../src/linalg/rng.js';
import type { Kernel, NoiseFloor } from '../../src/types.js';
import { quadratureWeights } from '../../src/quadrature.js';

const none: NoiseFloor = { replicates: [], homogeneousReplicates: [], source: 'none', assumption: '' };
const ctxOf = (noise: NoiseFloor, results: Record<string, unknown> = {}) =>
  ({ noise, rng: new Rng(1), options: {}, results: results as never });
const mean = (v: number[]) => v.reduce((s, x) => s + x, 0) / v.length;
const term = (p: ReturnType<typeof coefficientProfiles>, n: string) => p.terms.find((t) => t.name === n)!;
const covered = (t: { lower: number[]; upper: number[] }, truth: number) => t.lower.every((l, i) => l <= truth && truth <= t.upper[i]!);

describe('weak-form coefficients of exact kernels (noise 0)', () => {
  it('−u″: a = 1, no advection, no reaction — Stakgold & Holst ch. 1 (entry a)', () => {
    const p = coefficientProfiles(kernel1d(laplace(1), 200), [], { order: 2, advection: true });
    for (const v of term(p, 'diffusion').value) expect(Math.abs(v - 1)).toBeLessThan(0.01);
    expect(covered(term(p, 'advection'), 0)).toBe(true);
  });
  it('−u″ − 225u: c = −225 — Duffy, ODE chapter (entry b, from memory)', () => {
    const p = coefficientProfiles(kernel1d(helmholtz(15), 200), [], { order: 2, advection: false });
    expect(Math.abs(mean(term(p, 'reaction').value) + 225) / 225).toBeLessThan(0.01);
    expect(covered(term(p, 'reaction'), -225)).toBe(true);
  });
  it('−u″ + 100u: c = 100 — Duffy; Butkovskiy (entry c, from memory)', () => {
    const p = coefficientProfiles(kernel1d(screened(10), 200), [], { order: 2, advection: false });
    expect(Math.abs(mean(term(p, 'reaction').value) - 100) / 100).toBeLessThan(0.02);
  });
  it('−0.05u″ ± u′: ε and the sign of b — entry d (derived in the reference from the general construction)', () => {
    for (const b of [1, -1]) {
      const p = coefficientProfiles(kernel1d(advdiff(0.05, b), 200), [], { order: 2, advection: true });
      expect(Math.abs(mean(term(p, 'diffusion').value) - 0.05) / 0.05).toBeLessThan(0.02);
      expect(Math.abs(mean(term(p, 'advection').value) - b)).toBeLessThan(0.02);
    }
  });
  it('clamped beam u⁗: e = 1 — Butkovskiy; Roark (entry f1, from memory)', () => {
    const p = coefficientProfiles(kernel1d(clampedBeam, 200), [], { order: 4, advection: false });
    for (const v of term(p, 'fourth-order').value) expect(Math.abs(v - 1)).toBeLessThan(0.02);
  });
  it('jump cross-check −1/[∂xG] = a on −u″ — Stakgold & Holst ch. 1 (jump −1)', () => {
    const j = jumpDiffusion(kernel1d(laplace(1), 200));
    expect(j.a.length).toBeGreaterThan(50);
    for (const a of j.a) expect(Math.abs(a - 1)).toBeLessThan(1e-6);
  });
  it('piecewise bar a = 1 | 3 at 0.55: constant coefficients per side — entry e (derived from (i))', () => {
    const k = kernel1d(piecewise(1, 3, 0.55), 200);
    const ctx = ctxOf(none);
    const left = localCoefficients(k, ctx, [0, 0.55], { order: 2, advection: false });
    const right = localCoefficients(k, ctx, [0.55, 1], { order: 2, advection: false });
    expect(Math.abs(left.diffusion!.value - 1)).toBeLessThan(0.05);
    expect(Math.abs(right.diffusion!.value - 3) / 3).toBeLessThan(0.05);
  });
});

// prototype's relative kernel errors (shared/feasibility-1d.md, "Fitting" table) per noise level
const ERR = {
  lap: [0.0014, 0.0053, 0.014, 0.049],
  scr: [0.010, 0.024, 0.049, 0.12],
  adv: [0.0051, 0.015, 0.029, 0.089],
};
const LEVELS = [0, 0.01, 0.1, 1];

describe('through a noisy band-limited stand-in of the fit', () => {
  it('−u″: a within 5 % at noise 0, 10 % at 0.01; band covers a = 1 at every level (Stakgold & Holst ch. 1)', () => {
    LEVELS.forEach((noise, i) => {
      const fit = fitStandIn(kernel1d(laplace(1), 200), { noise, err: ERR.lap[i]!, seed: 11 });
      const a = term(coefficientProfiles(fit.kernel, fit.noise.replicates, { order: 2, advection: false }), 'diffusion');
      if (noise === 0) expect(Math.abs(mean(a.value) - 1)).toBeLessThan(0.05);
      if (noise === 0.01) expect(Math.abs(mean(a.value) - 1)).toBeLessThan(0.10);
      expect(covered(a, 1)).toBe(true);
    });
  });
  it('−u″ + 100u: c within 5 % / 10 %, band covers c = 100 up to noise 1 (Duffy, from memory)', () => {
    LEVELS.forEach((noise, i) => {
      const fit = fitStandIn(kernel1d(screened(10), 200), { noise, err: ERR.scr[i]!, seed: 12 });
      const c = term(coefficientProfiles(fit.kernel, fit.noise.replicates, { order: 2, advection: false }), 'reaction');
      if (noise === 0) expect(Math.abs(mean(c.value) - 100) / 100).toBeLessThan(0.05);
      if (noise === 0.01) expect(Math.abs(mean(c.value) - 100) / 100).toBeLessThan(0.10);
      expect(covered(c, 100)).toBe(true);
    });
  });
  it('the analysis writes an expression with the advection sign for −0.05u″ − u′ (entry d)', () => {
    const fit = fitStandIn(kernel1d(advdiff(0.05, -1), 200), { noise: 0.01, err: ERR.adv[1]!, seed: 13 });
    const out = operatorAnalysis.run(fit.kernel, ctxOf(fit.noise, { order: { finding: { estimate: 2, decay_exponent: 2, confidence: 0.9 } } }) as never);
    const m = /^-([\d.]+) u'' - ([\d.]+) u' = f/.exec(out.finding.expression);
    expect(m).not.toBeNull();
    expect(Math.abs(Number(m![1]) - 0.05) / 0.05).toBeLessThan(0.1);
    expect(Math.abs(Number(m![2]) - 1)).toBeLessThan(0.1);
    const b = out.finding.terms.find((t) => t.name === 'advection')!;
    expect(b.value.every((v) => v < 0)).toBe(true);
    for (const t of out.finding.terms) for (const arr of [t.value, t.lower, t.upper]) for (const v of arr) expect(Number.isFinite(v)).toBe(true);
    expect(out.evidence.noise_floor).toBeGreaterThan(0);
  });
  it('picks order 4 by the weak-form residual for the clamped beam when no order is known (Roark, from memory)', () => {
    const fit = fitStandIn(kernel1d(clampedBeam, 200), { noise: 0, err: 0.0002, seed: 14 });
    const out = operatorAnalysis.run(fit.kernel, ctxOf(fit.noise) as never);
    expect(out.finding.order).toBe(4);
    const m = /^([\d.]+) u'''' = f/.exec(out.finding.expression);
    expect(m).not.toBeNull();
    expect(Math.abs(Number(m![1]) - 1)).toBeLessThan(0.05);
  });
});

describe('2-D: −Δu on the unit square — Polyanin (2002) ch. 7; Duffy (entry l, from memory)', () => {
  it('recovers a = 1 and a negligible reaction term from the eigenfunction series', () => {
    const n = 24, M = 20;
    const pts = new Float64Array(2 * n * n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) { pts[2 * (i * n + j)] = (j + 1) / (n + 1); pts[2 * (i * n + j) + 1] = (i + 1) / (n + 1); }
    const N = n * n;
    const S = new Float64Array(N * M * M);
    for (let p = 0; p < N; p++) for (let a = 0; a < M; a++) for (let b = 0; b < M; b++)
      S[(p * M + a) * M + b] = 2 * Math.sin((a + 1) * Math.PI * pts[2 * p]!) * Math.sin((b + 1) * Math.PI * pts[2 * p + 1]!);
    const lam = Float64Array.from({ length: M * M }, (_, q) => 1 / (Math.PI ** 2 * ((Math.floor(q / M) + 1) ** 2 + ((q % M) + 1) ** 2)));
    const G = new Float64Array(N * N);
    for (let p = 0; p < N; p++) for (let q = 0; q < N; q++) { let s = 0; for (let k = 0; k < M * M; k++) s += S[p * M * M + k]! * lam[k]! * S[q * M * M + k]!; G[p * N + q] = s; }
    const P = { rows: N, cols: 2, data: pts };
    const domain = { kind: 'box' as const, bounds: [[0, 1], [0, 1]] as [[number, number], [number, number]] };
    const k: Kernel = { dimension: 2, pointsOut: P, pointsIn: P, weightsIn: quadratureWeights(P, domain), G: { rows: N, cols: N, data: G }, homogeneous: null, components: { in: 1, out: 1 }, domain };
    const out = operatorAnalysis.run(k, ctxOf(none, { self_adjoint: { finding: { verdict: 'yes', confidence: 0.95, defect: 0, noise_floor: 0 } } }) as never);
    const a = out.finding.terms.find((t) => t.name === 'diffusion')!;
    expect(Math.abs(a.value[0]! - 1)).toBeLessThan(0.05);
    const c = out.finding.terms.find((t) => t.name === 'reaction')!;
    // a spurious reaction term must shift the lowest eigenvalue 2π² (Polyanin ch. 7) by < 2 %
    expect(Math.abs(c.value[0]!)).toBeLessThan(0.02 * 2 * Math.PI ** 2);
  });
});

describe('bands, variable and piecewise coefficients', () => {
  it('simultaneous band multiplier: Šidák quantiles against scipy.stats.norm.ppf(0.5 + 0.5·0.95^(1/m))', () => {
    // python3: from scipy.stats import norm; norm.ppf(0.5 + 0.5 * 0.95 ** (1 / m))
    const ref: [number, number][] = [[1, 1.959963984540054], [2, 2.2364766445577895], [4, 2.4909151310191397], [8, 2.727007896719966]];
    // the shared normal CDF is Abramowitz & Stegun 7.1.26 (|error| < 1.5e-7), hence 1e-5 in z
    for (const [m, z] of ref) expect(Math.abs(simultaneousZ(m) - z)).toBeLessThan(1e-5);
  });
  it('Student-t simultaneous multiplier: against scipy.stats.t.ppf(0.5 + 0.5·0.95^(1/m), ν)', () => {
    // python3: from scipy.stats import t; t.ppf(0.5 + 0.5 * 0.95 ** (1 / m), nu)
    const ref: [number, number, number][] = [
      [1, 1, 12.706204736174694], [1, 4, 49.95777654111926], [2, 2, 6.164414002968955], [5, 1, 2.5705818356363146],
      [5, 8, 4.501423521773298], [19, 1, 2.0930240544083087], [19, 2, 2.427340223528273], [19, 4, 2.7497650182882065], [29, 8, 2.9395252841531616],
    ];
    for (const [nu, m, t] of ref) expect(Math.abs(simultaneousT(m, nu) - t) / t).toBeLessThan(1e-9);
    // P(|T_ν| ≤ t) in closed form (Abramowitz & Stegun 26.7.3/4) against scipy: 2·t.cdf(1.5, ν) − 1
    expect(Math.abs(studentAbsCdf(1.5, 3) - 0.7694161347551771)).toBeLessThan(1e-12);
    expect(Math.abs(studentAbsCdf(1.5, 4) - 0.792)).toBeLessThan(1e-12);
    expect(simultaneousT(2, Infinity)).toBe(simultaneousZ(2));
  });
  it('a band includes the bootstrap bias: replicates centred on 0.9·G of −u″ are the kernel of −u″/0.9, a = 1/0.9 (Stakgold & Holst ch. 1: G scales as 1/a)', () => {
    const k = kernel1d(laplace(1), 200);
    const rng = new Rng(5);
    const reps = Array.from({ length: 20 }, () => ({ ...k.G, data: k.G.data.map((v) => 0.9 * v + 1e-6 * rng.normal()) }));
    const a = term(coefficientProfiles(k, reps, { order: 2, advection: false, radius: 0.2 }), 'diffusion');
    a.value.forEach((v, i) => {
      expect(Math.abs(v - 1)).toBeLessThan(0.01);
      // the replicates' estimate 1/0.9 lies inside the band of the estimate from G
      expect(a.lower[i]! <= 1 / 0.9 && 1 / 0.9 <= a.upper[i]!).toBe(true);
    });
  });
  it('a(x) = 1 + x²: the profile follows a pointwise and no reaction term is claimed — G = atan(min)(π/4 − atan(max))/(π/4), the Green\'s function of −(p u′)′ with u(0) = u(1) = 0 built from the solutions atan x and π/4 − atan x (Stakgold & Holst ch. 1)', () => {
    const g = (x: number, s: number) => Math.atan(Math.min(x, s)) * (Math.PI / 4 - Math.atan(Math.max(x, s))) / (Math.PI / 4);
    const p = coefficientProfiles(kernel1d(g, 200), [], { order: 2, advection: false });
    const a = term(p, 'diffusion');
    a.x.forEach((x, i) => {
      expect(Math.abs(a.value[i]! - (1 + x * x)) / (1 + x * x)).toBeLessThan(0.05);
      expect(a.lower[i]! <= 1 + x * x && 1 + x * x <= a.upper[i]!).toBe(true);
    });
    expect(covered(term(p, 'reaction'), 0)).toBe(true);
  });
  it('piecewise bar a = 1 | 3 at 0.55: per-side profiles cover the truth and no bump straddles the interface — entry e (derived from (i))', () => {
    const p = piecewiseProfiles(kernel1d(piecewise(1, 3, 0.55), 200), [], { order: 2, advection: false }, [0.55], [0.01])!;
    expect(p.segments.length).toBe(2);
    const a = term(p, 'diffusion');
    a.x.forEach((x, i) => {
      const want = x < 0.55 ? 1 : 3;
      const seg = p.segments.find((sg) => x >= sg.bounds[0] && x <= sg.bounds[1])!;
      expect(x - seg.radius >= seg.bounds[0] - 1e-12 && x + seg.radius <= seg.bounds[1] + 1e-12).toBe(true);
      expect(Math.abs(a.value[i]! - want) / want).toBeLessThan(0.05);
      expect(a.lower[i]! <= want && want <= a.upper[i]!).toBe(true);
    });
  });
  it('piecewise bar a = 1 | 10 at 0.4 through the noisy stand-in: each side within 5 % at noise 0 and 10 % at 0.01, bands cover 1 and 10 at every level — entry e (derived from (i))', () => {
    LEVELS.forEach((noise, i) => {
      const fit = fitStandIn(kernel1d(piecewise(1, 10, 0.4), 200), { noise, err: ERR.lap[i]!, seed: 21 });
      const p = piecewiseProfiles(fit.kernel, fit.noise.replicates, { order: 2, advection: false }, [0.4], [0.008])!;
      const a = term(p, 'diffusion');
      expect(a.x.some((x) => x > 0.4)).toBe(true);
      a.x.forEach((x, k) => {
        const want = x < 0.4 ? 1 : 10;
        if (noise <= 0.01) expect(Math.abs(a.value[k]! - want) / want).toBeLessThan(noise === 0 ? 0.05 : 0.10);
        expect(a.lower[k]! <= want && want <= a.upper[k]!).toBe(true);
      });
    });
  });
  it('the analysis writes one expression per side when the interfaces analysis reports an interface (entry e)', () => {
    const k = kernel1d(piecewise(1, 3, 0.55), 200);
    const out = operatorAnalysis.run(k, ctxOf(none, {
      self_adjoint: { finding: { verdict: 'yes', confidence: 0.95 } },
      order: { finding: { estimate: 2, confidence: 0.9 } },
      interfaces: { finding: [{ location: 0.55, uncertainty: 0.01, confidence: 0.9 }] },
    }) as never);
    const m = /^-([\d.]+) u'' = f on \[0, ([\d.]+)\]; -([\d.]+) u'' = f on \[([\d.]+), ([\d.]+)\]$/.exec(out.finding.expression);
    expect(m, out.finding.expression).not.toBeNull();
    expect(Math.abs(Number(m![1]) - 1)).toBeLessThan(0.05);
    expect(Math.abs(Number(m![3]) - 3) / 3).toBeLessThan(0.05);
    // the pieces stop short of the interface by its stated uncertainty
    expect(Number(m![2])).toBeCloseTo(0.54, 6);
    expect(Number(m![4])).toBeCloseTo(0.56, 6);
    expect(Number(m![5])).toBe(1);
  });
});
