/**
 * AAA against an independent implementation: scipy.interpolate.AAA (fixtures made by
 * test/fixtures/aaa_make_fixtures.py, scipy version recorded in the JSON), and against
 * poles known in closed form.
 */
import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { aaa, poles, residues, zerosOf, evaluate, aaaSequence, type ComplexArray } from '../../src/rational/aaa.js';

interface Case {
  name: string; options: { max_terms?: number; clean_up?: boolean };
  x: number[]; y: number[]; support: number[]; weights: number[]; errors: number[];
  poles_re: number[]; poles_im: number[]; residues_re: number[]; residues_im: number[];
  zeros_re: number[]; zeros_im: number[]; eval_x: number[]; eval_r: number[];
}
const fx = JSON.parse(readFileSync(fileURLToPath(new URL('../fixtures/aaa_scipy.json', import.meta.url)), 'utf8')) as { cases: Case[] };
const byName = (n: string) => fx.cases.find((c) => c.name === n)!;

function fit(c: Case) {
  return aaa(c.x, c.y, { maxTerms: c.options.max_terms ?? 100, cleanup: c.options.clean_up ?? true });
}

/** max over reference points of the distance to the nearest computed point (and vice versa) */
function setDistance(a: ComplexArray, bre: number[], bim: number[]): number {
  let worst = 0;
  const near = (xr: number, xi: number, yr: ArrayLike<number>, yi: ArrayLike<number>) => {
    let d = Infinity;
    for (let k = 0; k < yr.length; k++) d = Math.min(d, Math.hypot(xr - yr[k]!, xi - yi[k]!));
    return d;
  };
  for (let k = 0; k < bre.length; k++) worst = Math.max(worst, near(bre[k]!, bim[k]!, a.re, a.im));
  for (let k = 0; k < a.re.length; k++) worst = Math.max(worst, near(a.re[k]!, a.im[k]!, bre, bim));
  return worst;
}

describe('AAA vs scipy.interpolate.AAA (fixtures from test/fixtures/aaa_make_fixtures.py)', () => {
  for (const name of ['tanh_layer', 'near_pole', 'runge', 'kink', 'noisy_tanh']) {
    it(`${name}: same greedy support points, error history and values`, () => {
      const c = byName(name);
      const r = fit(c);
      expect(Array.from(r.support).sort()).toEqual([...c.support].sort());
      expect(r.errors.length).toBe(c.errors.length);
      for (let k = 0; k < c.errors.length; k++) {
        // both codes do the same arithmetic up to round-off; once the error nears the
        // conditioning limit (~1e-10 of max|f|) only the size must agree
        const ref = c.errors[k]!;
        expect(Math.abs(r.errors[k]! - ref)).toBeLessThan(1e-6 * ref + 1e-10 * Math.max(...c.y.map(Math.abs)));
      }
      const ev = evaluate(r, c.eval_x);
      const scale = Math.max(...c.y.map(Math.abs));
      for (let i = 0; i < ev.length; i++) expect(Math.abs(ev[i]! - c.eval_r[i]!)).toBeLessThan(1e-7 * scale);
    });
  }

  it('tanh_layer: poles near the segment, residues and zeros agree', () => {
    const c = byName('tanh_layer');
    const r = fit(c);
    const p = poles(r);
    const res = residues(r, p);
    // poles close to the samples are well conditioned, far ones less so: tolerance by distance
    const sel = (re: ArrayLike<number>, im: ArrayLike<number>, band: number) => {
      const out = { re: [] as number[], im: [] as number[] };
      for (let k = 0; k < re.length; k++) if (Math.abs(im[k]!) < band && re[k]! > -0.2 && re[k]! < 1.2) { out.re.push(re[k]!); out.im.push(im[k]!); }
      return out;
    };
    for (const [band, tol] of [[0.1, 1e-9], [0.25, 1e-6]] as const) {
      const mine = sel(p.re, p.im, band), ref = sel(c.poles_re, c.poles_im, band);
      expect(mine.re.length).toBe(ref.re.length);
      expect(setDistance({ re: Float64Array.from(mine.re), im: Float64Array.from(mine.im) }, ref.re, ref.im)).toBeLessThan(tol);
    }
    // residues of the two poles nearest the axis: exact value 1/50 (tanh(50 t) ~ 1/(50 (t − t_k)))
    let k0 = 0;
    for (let k = 0; k < p.re.length; k++) if (p.im[k]! > 0 && Math.abs(p.im[k]!) < Math.abs(p.im[k0]!) || p.im[k0]! <= 0) k0 = k;
    expect(p.re[k0]!).toBeCloseTo(0.3, 7);
    expect(p.im[k0]!).toBeCloseTo(Math.PI / 100, 7); // π/(2·50)
    expect(Math.hypot(res.re[k0]! - 0.02, res.im[k0]!)).toBeLessThan(1e-6);
    const z = zerosOf(r);
    const zin: number[] = [];
    for (let k = 0; k < z.re.length; k++) if (Math.abs(z.im[k]!) < 1e-8 && z.re[k]! > 0 && z.re[k]! < 1) zin.push(z.re[k]!);
    expect(zin.length).toBe(1);
    expect(zin[0]!).toBeCloseTo(0.3, 9); // the only real zero of tanh(50(x − 0.3)) in [0, 1]
  });

  it('near_pole and runge: exact poles and residues (closed form) and scipy agree', () => {
    const a = fit(byName('near_pole'));
    const pa = poles(a);
    expect(setDistance(pa, [0.5, 0.5], [0.01, -0.01])).toBeLessThan(1e-10);
    const ra = residues(a, pa);
    for (let k = 0; k < 2; k++) expect(Math.hypot(ra.re[k]! - 0.5, ra.im[k]!)).toBeLessThan(1e-9);
    const c = byName('runge');
    const b = fit(c);
    const pb = poles(b);
    expect(setDistance(pb, c.poles_re, c.poles_im)).toBeLessThan(1e-10);
    expect(setDistance(pb, [0, 0], [0.2, -0.2])).toBeLessThan(1e-10);
    const rb = residues(b, pb);
    for (let k = 0; k < 2; k++) {
      // 1/(1 + 25x²) has residue ∓0.1i at ±0.2i
      expect(Math.abs(rb.re[k]!)).toBeLessThan(1e-10);
      expect(rb.im[k]! * Math.sign(pb.im[k]!)).toBeCloseTo(-0.1, 9);
    }
  });

  it('kink |x − 0.4|: same pole cluster as scipy (fixed 14 terms)', () => {
    const c = byName('kink');
    const p = poles(fit(c));
    // poles within 0.2 of the kink
    const near = (re: ArrayLike<number>, im: ArrayLike<number>) => {
      const o = { re: [] as number[], im: [] as number[] };
      for (let k = 0; k < re.length; k++) if (Math.hypot(re[k]! - 0.4, im[k]!) < 0.2) { o.re.push(re[k]!); o.im.push(im[k]!); }
      return o;
    };
    const mine = near(p.re, p.im), ref = near(c.poles_re, c.poles_im);
    expect(mine.re.length).toBe(ref.re.length);
    expect(mine.re.length).toBeGreaterThanOrEqual(4);
    expect(setDistance({ re: Float64Array.from(mine.re), im: Float64Array.from(mine.im) }, ref.re, ref.im)).toBeLessThan(1e-6);
  });

  it('aaaSequence reproduces the greedy steps of aaa', () => {
    const c = byName('noisy_tanh');
    const seq = aaaSequence(c.x, c.y, 8);
    expect(seq.length).toBe(8);
    expect(Array.from(seq[7]!.support).sort()).toEqual([...c.support].sort());
    for (let j = 0; j < 6; j++) expect(seq[j]!.support.length).toBe(j + 1);
  });

  it('rejects non-finite values and repeated points with a message', () => {
    expect(() => aaa([0, 1, 2], [1, NaN, 3])).toThrow(/not finite/);
    expect(() => aaa([0, 1, 1], [1, 2, 3])).toThrow(/repeated/);
  });
});
