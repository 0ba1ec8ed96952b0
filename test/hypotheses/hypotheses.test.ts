/**
 * Hypotheses from hand-built findings: every branch of the wording and of the confidence
 * combination (product of the claims' confidences, halved by a contradiction of full
 * strength, global caveats). The inputs are invented scenarios; the expected numbers follow
 * from the stated combination rule.
 */
import { describe, it, expect } from 'vitest';
import { buildHypotheses } from '../../src/hypotheses/index.js';
import type { Findings } from '../../src/types.js';

type Base = Omit<Findings, 'hypotheses'>;

function base(over: Partial<Base> = {}): Base {
  return {
    format: 'kerneldx-findings/1', tool: { name: 'kerneldx', version: '0.1.0' }, inputs: [], dimension: 1, components: { in: 1, out: 1 },
    fit: { relative_residual: 0.01, noise_estimate: 0.001, experiments: 100 },
    self_adjoint: { verdict: 'yes', defect: 0.001, noise_floor: 0.01, confidence: 0.95 },
    transport: { verdict: 'none', direction: null, confidence: 0.9 },
    translation_invariant: { verdict: 'yes', defect: 0.01, confidence: 0.9 },
    order: { estimate: 2, decay_exponent: 1.98, confidence: 0.9 },
    locality: { verdict: 'local', confidence: 0.9 },
    oscillation: { verdict: 'no', wavenumber: null, confidence: 0.9 },
    screening: { verdict: 'no', length: null, confidence: 0.9 },
    singularities: [], interfaces: [], regions: [],
    coupling: { verdict: 'not-applicable', matrix: null },
    linearity: { verdict: 'linear' },
    operator: { expression: "-1.00 u'' = f", terms: [{ name: 'diffusion', form: "-(a(x) u')'", x: [0.2, 0.5, 0.8], value: [1, 1.01, 0.99], lower: [0.95, 0.96, 0.94], upper: [1.05, 1.06, 1.04] }], reliable: true, significant: ['diffusion'] },
    evidence: {}, noise_floor: { source: 'bootstrap', assumption: '', replicates: 30 },
    audit: { command: [], options: {}, seed: 1, started: '', seconds: 0, platform: { node: '', os: '', arch: '' }, rerun: '' },
    ...over,
  } as Base;
}

describe('buildHypotheses', () => {
  it('uniform diffusion: one statement with the conductivity, most probable first', () => {
    const h = buildHypotheses(base());
    expect(h[0]!.statement).toBe('A diffusion process with uniform conductivity ≈ 1.');
    // product of order, translation_invariant, self_adjoint, oscillation, screening: 0.9·0.9·0.95·0.9·0.9
    expect(h[0]!.confidence).toBeCloseTo(0.9 * 0.9 * 0.95 * 0.9 * 0.9, 2);
    expect(h[0]!.evidence).toEqual(expect.arrayContaining(['order', 'self_adjoint', 'translation_invariant']));
    expect(h.some((x) => x.statement.includes("-1.00 u'' = f"))).toBe(true);
    for (let i = 1; i < h.length; i++) expect(h[i]!.confidence).toBeLessThanOrEqual(h[i - 1]!.confidence);
  });
  it('joined regions name the interface and the Péclet number of the transport region', () => {
    const h = buildHypotheses(base({
      regions: [
        { bounds: [0, 0.55], character: 'diffusion', coefficients: { diffusion: 1.0 } },
        { bounds: [0.55, 1], character: 'advection-diffusion', coefficients: { diffusion: 0.015, advection: 1.0 } },
      ],
      interfaces: [{ location: 0.55, uncertainty: 0.01, confidence: 0.9 }],
      translation_invariant: { verdict: 'no', defect: 0.3, confidence: 0.95 },
    }));
    const s = h.find((x) => x.evidence.includes('regions'))!;
    expect(s.statement).toBe('A diffusion process with conductivity ≈ 1 on [0, 0.55], joined at x ≈ 0.55 (±0.01) to a transport-dominated (advection–diffusion) process with conductivity ≈ 0.015, moving toward +x with Péclet ≈ 30 on [0.55, 1].');
    expect(s.confidence).toBeCloseTo(0.9, 2);
  });
  it('a region whose conductivity band is wider than ±50 % gets no value stated as known, and no Péclet number built on it', () => {
    // invented bands: on [0, 0.55] the half-widths are 1.0 and 2.0 of the value (mean ±150 %); on [0.55, 1] ±5 %
    const operator = { expression: '…', reliable: false, significant: ['diffusion'], terms: [{ name: 'diffusion', form: "-(a(x) u')'", x: [0.2, 0.4, 0.8], value: [1, 1, 0.015], lower: [0, -1, 0.01425], upper: [2, 3, 0.01575] }] };
    const h = buildHypotheses(base({
      operator,
      regions: [
        { bounds: [0, 0.55], character: 'advection-diffusion', coefficients: { diffusion: 1.0, advection: 1.0 } },
        { bounds: [0.55, 1], character: 'advection-diffusion', coefficients: { diffusion: 0.015, advection: 1.0 } },
      ],
      interfaces: [{ location: 0.55, uncertainty: 0.01, confidence: 0.9 }],
      translation_invariant: { verdict: 'no', defect: 0.3, confidence: 0.95 },
    } as Partial<Base>));
    const s = h.find((x) => x.evidence.includes('regions'))!;
    expect(s.statement).toBe('A transport-dominated (advection–diffusion) process with conductivity poorly determined (≈ 1, band ±150 %), moving toward +x on [0, 0.55], joined at x ≈ 0.55 (±0.01) to a transport-dominated (advection–diffusion) process with conductivity ≈ 0.015, moving toward +x with Péclet ≈ 30 on [0.55, 1].');
  });
  it('contradicting evidence lowers confidence and is said', () => {
    const clean = buildHypotheses(base({ transport: { verdict: '+x', direction: [1], confidence: 0.8, peclet: 12 }, self_adjoint: { verdict: 'no', defect: 0.2, noise_floor: 0.01, confidence: 0.9 } }));
    const contra = buildHypotheses(base({ transport: { verdict: '+x', direction: [1], confidence: 0.8, peclet: 12 }, self_adjoint: { verdict: 'yes', defect: 0.001, noise_floor: 0.01, confidence: 0.9 } }));
    const a = clean.find((x) => x.evidence.includes('transport'))!, b = contra.find((x) => x.evidence.includes('transport'))!;
    expect(a.statement).toContain('moving toward +x with Péclet ≈ 12');
    expect(a.caveats).toBeUndefined();
    expect(b.caveats!.join(' ')).toContain('self-adjoint');
    // halved by a contradiction of strength min(0.8, 0.9) = 0.8: factor 1 − 0.4
    expect(b.confidence).toBeCloseTo(a.confidence * 0.6, 2);
  });
  it('inconclusive verdicts become an honest negative', () => {
    const h = buildHypotheses(base({ self_adjoint: { verdict: 'inconclusive', defect: 0.01, noise_floor: 0.01, confidence: 0.3 }, transport: { verdict: 'inconclusive', direction: null, confidence: 0.2 } }));
    const neg = h.find((x) => x.statement.startsWith('The data do not decide'))!;
    expect(neg.statement).toContain('self-adjoint');
    expect(neg.statement).toContain('net transport');
    expect(neg.evidence).toEqual(['self_adjoint', 'transport']);
    expect(neg.confidence).toBeCloseTo(0.7, 2);
  });
  it('a nonlinear study is stated as a local linearisation and lowers the physics statement', () => {
    const lin = buildHypotheses(base());
    const non = buildHypotheses(base({ linearity: { verdict: 'nonlinear', confidence: 0.95 } }));
    expect(non.some((x) => x.statement.includes('local linearisation'))).toBe(true);
    const p0 = lin.find((x) => x.statement.startsWith('A diffusion'))!, p1 = non.find((x) => x.statement.startsWith('A diffusion'))!;
    expect(p1.confidence).toBeCloseTo(p0.confidence * 0.8, 2);
    expect(p1.caveats!.join(' ')).toContain('linearisation');
  });
  it('restricted coverage and a self-estimated noise floor are stated', () => {
    const h = buildHypotheses(base({
      fit: { relative_residual: 0.01, noise_estimate: 0.001, experiments: 20, coverage: { complete: false, identified_energy_fraction: 0.62, identified_rank: 14 } },
      noise_floor: { source: 'kernel-self-estimate', assumption: 'x', replicates: 20 },
    }));
    expect(h.some((x) => x.statement.includes('only part of the kernel (about 62 % of its energy, 14 directions)'))).toBe(true);
    expect(h[0]!.caveats?.some((c) => c.includes('kernel itself')) || h.some((x) => x.caveats?.some((c) => c.includes('kernel itself')))).toBe(true);
  });
  it('a nearly complete coverage is not rounded up to 100 % of the energy', () => {
    const say = (e: number) => buildHypotheses(base({ fit: { relative_residual: 0.01, noise_estimate: 0.001, experiments: 20, coverage: { complete: false, identified_energy_fraction: e, identified_rank: 22 } } }))
      .find((x) => x.statement.includes('only part of the kernel'))!.statement;
    expect(say(0.9968)).toContain('about 99.7 % of its energy');
    expect(say(0.99997)).toContain('(over 99.9 % of its energy');
    expect(say(0.954)).toContain('about 95 % of its energy');
  });
  it('systems: a one-way coupling names who drives whom', () => {
    const h = buildHypotheses(base({ components: { in: 2, out: 2 }, coupling: { verdict: 'one-way', matrix: [[1, 0], [0.3, 1]], confidence: 0.9 } as Base['coupling'] }));
    const c = h.find((x) => x.evidence.includes('coupling'))!;
    expect(c.statement).toBe('A one-way coupled system: field 1 drives field 2 (relative strength 0.3).');
  });
  it('wave, screened, fourth-order and non-local physics', () => {
    expect(buildHypotheses(base({ oscillation: { verdict: 'yes', wavenumber: 15.02, confidence: 0.9 } }))[0]!.statement).toContain('wavenumber ≈ 15');
    expect(buildHypotheses(base({ screening: { verdict: 'yes', length: 0.1, confidence: 0.9 } }))[0]!.statement).toContain('screening length ≈ 0.1');
    const beam = buildHypotheses(base({ order: { estimate: 4, decay_exponent: 3.7, confidence: 0.7 } }));
    expect(beam.some((x) => x.statement.startsWith('A fourth-order'))).toBe(true);
    expect(beam.some((x) => x.statement.startsWith('Alternatively, a second-order'))).toBe(true);
    expect(buildHypotheses(base({ locality: { verdict: 'nonlocal', confidence: 0.9 }, order: { estimate: null, decay_exponent: null, confidence: 0.2 } }))[0]!.statement).toContain('non-local');
  });
  it('an undetermined operator says so', () => {
    const h = buildHypotheses(base({ operator: { expression: 'not determined: the leading coefficient is not separated from zero (…)', terms: [] } }));
    expect(h.some((x) => x.statement.startsWith('The data do not determine the local coefficients'))).toBe(true);
  });
});

describe('buildHypotheses: structural verdicts are not hidden by one physics statement', () => {
  it('a non-local verdict does not hide confident transport and non-uniformity, and a matching diagonal slope jump contradicts it', () => {
    const f = base({
      locality: { verdict: 'nonlocal', confidence: 0.85 },
      order: { estimate: null, decay_exponent: 1.25, confidence: 0.5 },
      self_adjoint: { verdict: 'no', defect: 1.1, noise_floor: 0.06, confidence: 1 },
      transport: { verdict: '+x', direction: [1], confidence: 1, peclet: 4.1, peclet_uncertainty: 0.18 },
      translation_invariant: { verdict: 'no', defect: 0.065, confidence: 1, change_points: [0.324, 0.616] },
      operator: { expression: "not determined: the order is open (order-2 reading: -0.0328 u'' = f)", terms: [], reliable: false, residual: 0.51, jump_check: { median_ratio: 1.36 } },
    });
    const h = buildHypotheses(f);
    const t = h.find((x) => x.evidence.includes('transport'))!;
    expect(t.statement).toBe('Something carries the quantity toward +x, as a flow or a moving medium would: the kernel is not symmetric and its skew part points that way; Péclet ≈ 4.1 ± 0.18.');
    expect(t.confidence).toBeCloseTo(1, 2);
    const u = h.find((x) => x.evidence.includes('translation_invariant'))!;
    expect(u.statement).toContain('near x ≈ 0.324 and 0.616');
    const nl = h.find((x) => x.evidence.includes('locality'))!;
    // halved by a contradiction of strength 0.5: 0.85 · (1 − 0.25)
    expect(nl.confidence).toBeCloseTo(0.85 * 0.75, 2);
    expect(nl.caveats!.join(' ')).toContain('slope jumps across its diagonal');
    expect(h[0]!.evidence).toContain('transport');
    const op = h.find((x) => x.evidence.includes('operator'))!;
    expect(op.statement).toContain('second- and fourth-order local models fit the kernel about equally (the best local model leaves 51 %');
  });
});

describe('buildHypotheses: systems wording', () => {
  it('a one-way coupled system is not contradicted by its own asymmetry, and no empty conductivity is written', () => {
    const h = buildHypotheses(base({
      components: { in: 2, out: 2 },
      coupling: { verdict: 'one-way', matrix: [[1, 0], [0.26, 1]], confidence: 0.9 },
      self_adjoint: { verdict: 'no', defect: 0.3, noise_floor: 0.01, confidence: 0.95 },
      transport: { verdict: 'none', direction: null, confidence: 0.9 },
      translation_invariant: { verdict: 'inconclusive', defect: 0.01, confidence: 0.5 },
      operator: { expression: 'not estimated: local coefficients are fitted for scalar kernels only (this is a coupled system)', terms: [], reliable: false },
    }));
    for (const x of h) expect(x.caveats ?? []).not.toContain('Contradicting evidence: the kernel is not self-adjoint, yet no net transport direction was found.');
    expect(h.some((x) => /with conductivity\.$/.test(x.statement))).toBe(false);
    expect(h.find((x) => x.evidence.includes('coupling'))!.statement).toBe('A one-way coupled system: field 1 drives field 2 (relative strength 0.26).');
  });
});
