/**
 * The numbers the dossier draws are the kernel's and the analyses' own numbers: heat-map
 * entries, symmetric and antisymmetric parts, and the order analysis' singular values drawn by
 * the spectrum figure, checked against closed-form Green's functions and their known spectra
 * (shared/references/greens-functions.md).
 */
import { describe, it, expect } from 'vitest';
import * as vega from 'vega';
import { heatGrid, symParts, spreadIndices } from '../../src/report/display.js';
import { spectrumFigure, polesFigure, interfacesFigure, couplingFigure } from '../../src/report/figures.js';
import { order } from '../../src/analyses/order.js';
import { Rng } from '../../src/linalg/rng.js';
import type { Findings } from '../../src/types.js';
import { rampColor, DIVERGING } from '../../src/report/palette.js';
import { fmt } from '../../src/report/text.js';
import { kernel1d, advdiff, laplace, perturbedReplicates } from '../helpers/closedForms.js';

describe('display reductions of a kernel', () => {
  // (d) −εu'' + bu', ε = 0.05, b = 1, Dirichlet — derived in the reference from (i); Duffy (from memory)
  const g = advdiff(0.05, 1);
  const k = kernel1d(g, 300);

  it('heat-map entries are the kernel at the displayed points (no smoothing), ≤ 56 per side', () => {
    const h = heatGrid(k.G, k.pointsOut.data, k.pointsIn.data, 56);
    expect(h.rowCoord.length).toBe(56);
    expect(h.colCoord[0]).toBe(0);
    expect(h.colCoord[55]).toBe(1);
    let worst = 0;
    h.rowCoord.forEach((x, i) => h.colCoord.forEach((s, j) => { worst = Math.max(worst, Math.abs(h.values[i]![j]! - g(x, s))); }));
    expect(worst).toBeLessThan(1e-12);
  });

  it('antisymmetric part matches (g(x,s) − g(s,x))/2 of the closed form', () => {
    const { sym, anti } = symParts(k.G);
    const x = k.pointsIn.data;
    let worstA = 0, worstS = 0;
    for (const i of [3, 77, 150, 299]) for (const j of [0, 40, 151, 260]) {
      worstA = Math.max(worstA, Math.abs(anti.data[i * 300 + j]! - (g(x[i]!, x[j]!) - g(x[j]!, x[i]!)) / 2));
      worstS = Math.max(worstS, Math.abs(sym.data[i * 300 + j]! - (g(x[i]!, x[j]!) + g(x[j]!, x[i]!)) / 2));
    }
    expect(worstA).toBeLessThan(1e-12);
    expect(worstS).toBeLessThan(1e-12);
  });

  it('the spectrum figure draws the order analysis\' singular values of −u\'\' (Dirichlet): 1/(kπ)², with its decay line', () => {
    // (a) eigenvalues 1/(kπ)² — Stakgold & Holst; Courant–Hilbert I (reference §4)
    const k = kernel1d(laplace(1), 200);
    const ctx = { noise: { replicates: perturbedReplicates(k.G, 0.001, 20, 5), homogeneousReplicates: [], source: 'bootstrap' as const, assumption: '' }, rng: new Rng(1), options: {}, results: {} };
    const out = order.run(k, ctx as never);
    const F = { order: out.finding, evidence: { order: out.evidence } } as unknown as Findings;
    const fig = spectrumFigure(F).figures[0]!;
    expect(fig).toBeDefined();
    const d = fig.data as { k: number[]; sigma: number[]; fitted_line: { k: number[]; sigma: number[] } | null; trusted: number };
    for (let q = 1; q <= 8; q++) expect(Math.abs(d.sigma[q - 1]! * (q * Math.PI) ** 2 - 1)).toBeLessThan(0.01);
    expect(d.trusted).toBe(out.finding.trustworthy_values);
    // the drawn decay line has the analysis' slope: log-ratio over its range = −exponent
    const line = d.fitted_line!;
    const slope = Math.log(line.sigma.at(-1)! / line.sigma[0]!) / Math.log(line.k.at(-1)! / line.k[0]!);
    expect(Math.abs(slope + (out.finding.decay_exponent as number))).toBeLessThan(1e-3);
  });

  it('sections whose plot data are missing get a note, not a stand-in chart', () => {
    const F = { order: { estimate: null, decay_exponent: null, confidence: 0 }, evidence: {}, singularities: [], interfaces: [], regions: [], dimension: 1, coupling: { verdict: 'not-applicable', matrix: null } } as unknown as Findings;
    for (const s of [spectrumFigure(F), polesFigure(F, [0, 1], { x: 'm', u: 'K', f: 'W' }), interfacesFigure(F, [0, 1], { x: 'm', u: 'K', f: 'W' }), couplingFigure(F)]) {
      expect(s.figures.length).toBe(0);
      expect(s.note).toMatch(/\w{4,}/);
    }
  });

  it('index spreading keeps both ends and never repeats', () => {
    const idx = spreadIndices(1000, 56);
    expect(idx[0]).toBe(0);
    expect(idx.at(-1)).toBe(999);
    expect(new Set(idx).size).toBe(56);
  });
});

describe('colours and numbers', () => {
  it('native PDF cell colours equal vega\'s piecewise RGB scale used in the HTML', () => {
    const s = (vega.scale('linear') as () => any)().domain([-2, 0, 2]).range([...DIVERGING]).interpolate(vega.interpolate('rgb'));
    for (const v of [-2, -1.3, -0.2, 0, 0.7, 1.999, 2]) {
      const ref = vega.rgb?.(s(v)) ?? null;
      const m = /rgb\((\d+), ?(\d+), ?(\d+)\)/.exec(String(s(v)));
      const got = rampColor(DIVERGING, (v + 2) / 4);
      const want = m ? [Number(m[1]), Number(m[2]), Number(m[3])] : [ref.r, ref.g, ref.b];
      for (let c = 0; c < 3; c++) expect(Math.abs(got[c]! - want[c]!)).toBeLessThanOrEqual(1);
    }
  });

  it('formats numbers for people', () => {
    expect(fmt(0.000123)).toBe('1.23×10⁻⁴');
    expect(fmt(-2.5)).toBe('−2.5');
    expect(fmt(null)).toBe('—');
    expect(fmt(123456)).toBe('1.23×10⁵');
  });
});
