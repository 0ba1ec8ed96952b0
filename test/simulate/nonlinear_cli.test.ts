/**
 * The cubic term (checked by its residual and by mesh refinement), the spec parser's error
 * messages, the expression compiler, and the `simulate` command end to end.
 */
import { describe, it, expect } from 'vitest';
import { mkdtempSync, existsSync, readFileSync, readdirSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parseOperator, simulateStudy, compileExpr, ExprError } from '../../src/simulate/index.js';
import { readStudy } from '../../src/io/study.js';
import { readKernel } from '../../src/io/kernel.js';
import { InputError } from '../../src/errors.js';
import type { Mat } from '../../src/linalg/dense.js';
import { uniformGrid, laplace } from '../helpers/closedForms.js';
import { runSimulate } from './cliHarness.js';

const col = (x: Float64Array): Mat => ({ rows: x.length, cols: 1, data: x });

describe('cubic term ε u³ (Newton)', () => {
  const op = parseOperator('a=1; cubic=30; left=dirichlet(0.5); right=dirichlet(1)');
  const forcing = (x: Float64Array): Mat => ({ rows: 1, cols: x.length, data: Float64Array.from(x, (t) => 20 * Math.sin(3 * t) + 5) });
  const solveAt = (n: number) => {
    const x = uniformGrid(n);
    return { x, u: simulateStudy(op, { pointsIn: col(x), count: 1, forcings: forcing(x) }).study.outputs.values.data };
  };
  it('satisfies its discrete equations u = G W (f − ε u³) + u_h to round-off', () => {
    const { x, u } = solveAt(101);
    const r = simulateStudy(op, { pointsIn: col(x), count: 1, forcings: forcing(x) });
    const sim = r.study.extra!.simulation as { nonlinear: { max_residual: number } };
    expect(sim.nonlinear.max_residual).toBeLessThan(1e-11);
    // independent re-evaluation with the closed-form G of −u″ (entry (a), Stakgold & Holst ch. 1) and u_h = 0.5 + 0.5x
    const w = r.truth.kernel.weightsIn, f = forcing(x).data;
    let res = 0;
    for (let i = 0; i < x.length; i++) {
      let s = 0.5 + 0.5 * x[i]!;
      for (let k = 0; k < x.length; k++) s += laplace()(x[i]!, x[k]!) * w[k]! * (f[k]! - 30 * u[k]! ** 3);
      res = Math.max(res, Math.abs(u[i]! - s));
    }
    expect(res).toBeLessThan(1e-10);
  });
  it('converges at second order under mesh refinement (trapezoid Nyström)', () => {
    const ref = solveAt(801);
    const at = (s: { x: Float64Array; u: Float64Array }, t: number) => s.u[Math.round(t * (s.x.length - 1))]!;
    const probes = [0.25, 0.5, 0.75];
    const errs = [101, 201, 401].map((n) => { const s = solveAt(n); return Math.max(...probes.map((t) => Math.abs(at(s, t) - at(ref, t)))); });
    // Richardson against the finest grid: ratios (e_h/e_{h/2}) of an O(h²) method are 4·(1−1/64)/(1−1/16)… ≈ 4.2–5
    expect(errs[0]! / errs[1]!).toBeGreaterThan(3.5);
    expect(errs[0]! / errs[1]!).toBeLessThan(5.5);
    expect(errs[2]!).toBeLessThan(1e-4 * Math.max(...Array.from(ref.u, Math.abs)));
  });
  it('zero forcing reproduces the collocation-Newton u_h (two independent solvers)', () => {
    const x = uniformGrid(401);
    const r = simulateStudy(op, { pointsIn: col(x), count: 1, forcings: { rows: 1, cols: 401, data: new Float64Array(401) } });
    const u = r.study.outputs.values.data, uh = r.truth.homogeneous!;
    let e = 0;
    for (let i = 0; i < 401; i++) e = Math.max(e, Math.abs(u[i]! - uh[i]!));
    expect(e).toBeLessThan(1e-5); // O(h²) Nyström error, h = 1/400
    expect(r.truth.linearisation).toBe(true);
  });
});

describe('operator spec parser', () => {
  const fail = (spec: string): string => {
    try { parseOperator(spec); } catch (e) { expect(e).toBeInstanceOf(InputError); expect((e as InputError).exitCode).toBe(3); return (e as Error).message; }
    throw new Error(`no error for ${spec}`);
  };
  it('names --operator and the position of an inline error', () => {
    expect(fail('a=1; q=2')).toMatch(/^--operator: position 6: unknown key "q"/);
    expect(fail('a=1+*x')).toMatch(/^--operator: position 5:/);
    expect(fail('a=pw(1, 1.5, 2)')).toMatch(/break 1.5 is not inside/);
    expect(fail('e=1; left=dirichlet(0)')).toMatch(/order 4 and needs 2 condition/);
    expect(fail('left=foo(1)')).toMatch(/unknown boundary condition "foo"/);
  });
  it('names the file for JSON specs', () => {
    try { parseOperator('{"a": "exp(", "domain": [0, 1]}', { label: 'op.json' }); } catch (e) { expect((e as Error).message).toMatch(/^op\.json: "a"/); return; }
    throw new Error('no error');
  });
  it('reads the JSON form equivalently to the inline form', () => {
    const a = parseOperator('a=pw(1,0.4,10); c=-225; left=dirichlet(1); right=robin(1,2,3)');
    const b = parseOperator(JSON.stringify({ a: { breaks: [0.4], values: [1, 10] }, c: -225, left: { type: 'dirichlet', value: 1 }, right: { type: 'robin', alpha: 1, beta: 2, value: 3 } }));
    expect(b.kind).toBe('ode');
    if (a.kind === 'ode' && b.kind === 'ode') {
      expect(b.components[0]!.a).toEqual(a.components[0]!.a);
      expect(b.components[0]!.right[0]!.coefs).toEqual(a.components[0]!.right[0]!.coefs);
      expect(b.components[0]!.right[0]!.value).toBe(3);
    }
    const sys = parseOperator(JSON.stringify({ components: [{ a: 1 }, { a: 0.5, c: 2 }], coupling: [[0, 0.3], [0, 0]] }));
    expect(sys.kind === 'ode' && sys.components.length).toBe(2);
  });
});

describe('expression compiler', () => {
  it('evaluates with the usual precedence', () => {
    const f = compileExpr('-x^2 + 2*max(x, 1)/4 + exp(0) - sqrt(abs(x - 5))', ['x']);
    expect(f({ x: 3 })).toBeCloseTo(-9 + 1.5 + 1 - Math.SQRT2, 14);
    expect(compileExpr('2^3^2', [])({})).toBe(512);
  });
  it('rejects unknown names and non-finite values', () => {
    expect(() => compileExpr('process.exit(1)', ['x'])).toThrow(ExprError);
    expect(() => compileExpr('log(x)', ['x'])({ x: 0 })).toThrow(/not finite/);
  });
});

describe('kerneldx simulate (CLI)', () => {
  const tmp = mkdtempSync(join(tmpdir(), 'kdx-sim-'));
  it('--help shows the spec summary', async () => {
    const r = await runSimulate(['--help']);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/Operator spec/);
    expect(r.stdout).toMatch(/dirichlet\(g\)/);
  });
  it('writes a readable study and truth/, deterministic with --seed', async () => {
    const args = (out: string) => ['--operator', 'a=1; c=-225; left=dirichlet(1)', '--grid', '0:1:60', '--sensor-grid', '0.01:0.99:45', '--count', '12', '--noise', '0.05', '--seed', '7', '--out', out, '--quiet', '--json'];
    const r1 = await runSimulate(args(join(tmp, 's1')));
    const r2 = await runSimulate(args(join(tmp, 's2')));
    expect(r1.code).toBe(0);
    expect(JSON.parse(r1.stdout).sensors).toBe(45);
    const st = readStudy(join(tmp, 's1'));
    expect(st.outputs.values.rows).toBe(12);
    expect(st.outputs.points.rows).toBe(45);
    const k = readKernel(join(tmp, 's1', 'truth'));
    expect(k.G.rows).toBe(45);
    expect(k.G.cols).toBe(60);
    for (const f of ['responses.npy', 'forcings.npy', 'truth/kernel.npy']) {
      expect(readFileSync(join(tmp, 's1', f)).equals(readFileSync(join(tmp, 's2', f)))).toBe(true);
    }
    const truth = JSON.parse(readFileSync(join(tmp, 's1', 'truth', 'truth.json'), 'utf8'));
    expect(truth.format).toBe('kerneldx-truth/1');
  });
  it('bad inline spec → exit 3 naming --operator and the position; nothing written', async () => {
    const out = join(tmp, 'bad');
    const r = await runSimulate(['--operator', 'a=1; zz=3', '--grid', '0:1:20', '--count', '3', '--out', out, '--quiet']);
    expect(r.code).toBe(3);
    expect(r.stderr).toMatch(/--operator: position 6/);
    expect(existsSync(out)).toBe(false);
  });
  it('points outside the domain → exit 3 naming the file and row; no partial output left', async () => {
    const pts = join(tmp, 'pts.csv');
    writeFileSync(pts, 'x\n0.1\n0.5\n1.5\n');
    const out = join(tmp, 'outside');
    const r = await runSimulate(['--operator', 'a=1', '--points', pts, '--count', '3', '--out', out, '--quiet']);
    expect(r.code).toBe(3);
    expect(r.stderr).toMatch(/pts\.csv, row 3/);
    expect(existsSync(out)).toBe(false);
    expect(readdirSync(tmp).some((f) => f.includes('kdx-partial'))).toBe(false);
  });
  it('a JSON spec file is read; usage errors exit 2', async () => {
    const spec = join(tmp, 'op.json');
    writeFileSync(spec, JSON.stringify({ e: 1, left: 'supported', right: 'supported' }));
    expect((await runSimulate(['--operator', spec, '--grid', '0:1:30', '--count', '3', '--out', join(tmp, 'j'), '--quiet'])).code).toBe(0);
    expect((await runSimulate(['--operator', 'a=1', '--grid', '0:1:30', '--points', spec, '--count', '3', '--out', join(tmp, 'u')])).code).toBe(2);
    expect((await runSimulate(['--operator', 'a=1', '--grid', '0:1:30', '--count', '0', '--out', join(tmp, 'u')])).code).toBe(2);
  });
});
