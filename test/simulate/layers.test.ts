/**
 * 1-D kernels of operators whose homogeneous solutions span many orders of magnitude (turning
 * points, thin layers), where the basis construction loses all digits and the simulator must solve
 * each column directly, and the refusal of an operator no double-precision solve can resolve.
 * Accuracy target as in accuracy.test.ts (issue item 8): max |G_sim − G| / max |G| ≤ 1e-4.
 */
import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { parseOperator, greensKernel } from '../../src/simulate/index.js';
import { buildOdeModel, odeKernel } from '../../src/simulate/green1d.js';
import type { OdeSpec } from '../../src/simulate/spec.js';
import type { Mat } from '../../src/linalg/dense.js';
import { DataError } from '../../src/errors.js';
import * as cf from '../helpers/closedForms.js';

const TOL = 1e-4;
const col = (x: Float64Array): Mat => ({ rows: x.length, cols: 1, data: x });

interface LayerFixture {
  operator: string; sources: number[]; sensors: number[]; G: number[][];
  repelling: { operator: string; x_s_G: [number, number, number][] };
}
// closed form via the integrating factor, erf, mpmath at 60 digits (test/fixtures/sim_layer_make_fixtures.py;
// cross-checked there against a 400,001-point central-difference solve to ≤ 5e-8)
const ref = JSON.parse(readFileSync(new URL('../fixtures/sim_layer_reference.json', import.meta.url), 'utf8')) as LayerFixture;

/** Per source: max over sensors |G − G_ref| / max |G_ref(·, s)|. */
function perSource(G: Mat, xs: number[], ss: number[], g: (i: number, k: number) => number): number[] {
  return ss.map((_, k) => {
    let e = 0, mx = 0;
    xs.forEach((_, i) => { const r = g(i, k); e = Math.max(e, Math.abs(G.data[i * ss.length + k]! - r)); mx = Math.max(mx, Math.abs(r)); });
    return e / mx;
  });
}

describe('turning-point operator −0.0005u″ + 2(0.45 − x)u′ (internal layer)', () => {
  const xs = Float64Array.from(ref.sensors), ss = Float64Array.from(ref.sources);
  it('every column, on both sides of the turning point, against the closed form (mpmath)', () => {
    const K = greensKernel(parseOperator(ref.operator), col(xs), col(ss));
    const errs = perSource(K.G, ref.sensors, ref.sources, (i, k) => ref.G[k]![i]!);
    for (const e of errs) expect(e).toBeLessThan(TOL);
  });
  it('the basis construction alone is wrong there (why the direct solve exists)', () => {
    const m = buildOdeModel(parseOperator(ref.operator) as OdeSpec);
    const errs = perSource(odeKernel(m, xs, ss, 'basis'), ref.sensors, ref.sources, (i, k) => ref.G[k]![i]!);
    // sources 0.1 and 0.9, far from the turning point: the integrating factor spans ~e^300
    expect(errs[0]!).toBeGreaterThan(0.1);
    expect(errs[ref.sources.length - 1]!).toBeGreaterThan(0.1);
  });
  it('reproducible: the same inputs give the same kernel bit for bit', () => {
    const op = parseOperator(ref.operator);
    const a = greensKernel(op, col(xs), col(ss)).G.data, b = greensKernel(parseOperator(ref.operator), col(xs), col(ss)).G.data;
    expect(a.every((v, i) => Object.is(v, b[i]))).toBe(true);
  });
});

describe('thin layers against closed forms (the automatic choice)', () => {
  const check = (spec: string, g: cf.G1, n = 101) => {
    const x = cf.uniformGrid(n);
    const K = greensKernel(parseOperator(spec), col(x), col(x));
    const arr = Array.from(x);
    return Math.max(...perSource(K.G, arr, arr, (i, k) => g(x[i]!, x[k]!)).filter(Number.isFinite));
  };
  // (d) advection–diffusion at cell Péclet numbers 100 and 500 — derived in shared/references from (i); Stakgold & Holst ch. 1
  it('(d) −0.01u″ + u′ and −0.002u″ + u′', () => {
    expect(check('a=0.01; b=1', cf.advdiff(0.01, 1))).toBeLessThan(TOL);
    expect(check('a=0.002; b=1', cf.advdiff(0.002, 1))).toBeLessThan(TOL);
  });
  // (c) screened, −0.001u″ + u = δ: G = G_κ / 0.001 with κ² = 1000 — Duffy; Butkovskiy (from memory)
  it('(c) −0.001u″ + u', () => {
    const kap = Math.sqrt(1000);
    expect(check('a=0.001; c=1', (x, s) => cf.screened(kap)(x, s) / 0.001)).toBeLessThan(TOL);
  });
});

describe('direct column solves against closed forms (forced)', () => {
  const direct = (spec: string, g: cf.G1, n = 101) => {
    const x = cf.uniformGrid(n);
    const G = odeKernel(buildOdeModel(parseOperator(spec) as OdeSpec), x, x, 'direct');
    let e = 0, mx = 0;
    for (let i = 0; i < n; i++) for (let k = 0; k < n; k++) { const r = g(x[i]!, x[k]!); e = Math.max(e, Math.abs(G.data[i * n + k]! - r)); mx = Math.max(mx, Math.abs(r)); }
    return e / mx;
  };
  // (a) Stakgold & Holst ch. 1; (b) Duffy; (e) derived in the reference from (i); (f1) Butkovskiy, Roark (from memory)
  it('(a) −u″, (b) k = 15, (e) a = 1 | 10 at 0.4, (f1) clamped beam', () => {
    expect(direct('a=1', cf.laplace())).toBeLessThan(TOL);
    expect(direct('c=-225', cf.helmholtz(15))).toBeLessThan(TOL);
    expect(direct('a=pw(1,0.4,10)', cf.piecewise(1, 10, 0.4))).toBeLessThan(TOL);
    expect(direct('e=1', cf.clampedBeam)).toBeLessThan(TOL);
  });
  // (h) G = min(x, s): the column of the source at the Neumann end x = 1 is G(x, 1) = x — Stakgold & Holst; Duffy (from memory)
  it('(h) a source on a Neumann end enters through the boundary row', () => {
    expect(direct('right=neumann(0)', cf.mixed)).toBeLessThan(TOL);
  });
});

describe('refusal', () => {
  // The repelling mirror image has G of order 1e121 to 1e175 (closed form, fixture script): an
  // exponentially small eigenvalue that no double-precision solve resolves.
  it('a repelling turning point is refused with a DataError (exit code 4), not written', () => {
    expect(Math.min(...ref.repelling.x_s_G.map((r) => r[2]))).toBeGreaterThan(1e100);
    const x = cf.uniformGrid(60);
    let err: unknown;
    try { greensKernel(parseOperator(ref.repelling.operator), col(x), col(x)); } catch (e) { err = e; }
    expect(err).toBeInstanceOf(DataError);
    expect((err as DataError).exitCode).toBe(4);
    expect((err as Error).message).toMatch(/cannot be computed accurately/);
  });
});
