import { describe, it, expect } from 'vitest';
import { readFileSync, writeFileSync, existsSync } from 'node:fs';
import { join } from 'node:path';
import { runCli, scratch, listTree } from '../io/helpers.js';
import { readStudy } from '../../src/io/study.js';
import { readMatrix, encodeCsv } from '../../src/io/arrays.js';
import { InputError } from '../../src/errors.js';

describe('kerneldx design', () => {
  it('writes the forcing side of a study, design.json, and a JSON summary; the study reads once responses are added', async () => {
    const dir = scratch('design');
    const out = join(dir, 'plan');
    const r = await runCli(['design', '--grid', '0:1:101', '--count', '40', '--seed', '7', '--out', out, '--json', '--quiet']);
    expect(r.code).toBe(0);
    expect(r.stderr).toBe('');
    const summary = JSON.parse(r.stdout);
    expect(summary.count).toBe(40);
    expect(summary.method).toBe('dense-cholesky');
    expect(summary.captured_variance_fraction).toBe(1);
    expect(summary.length_scale).toBeCloseTo(0.06, 12); // 6 grid steps
    expect(summary.recommended_count).toBe(summary.target_rank + 10);
    expect(listTree(out)).toEqual(['design.json', 'forcing_points.csv', 'forcings.npy', 'response_points.csv', 'study.json']);
    const manifest = JSON.parse(readFileSync(join(out, 'study.json'), 'utf8'));
    expect(manifest.format).toBe('kerneldx-study/1');
    expect(manifest.outputs.values).toBe('responses.csv');
    expect(typeof manifest.outputs.todo).toBe('string');
    expect(manifest.domain).toEqual({ kind: 'interval', bounds: [0, 1] });
    // before the responses exist: a helpful exit-3 message
    try { readStudy(out); expect.unreachable(); } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      expect((e as Error).message).toMatch(/responses\.csv: file not found: this study is a plan written by `kerneldx design`/);
      expect((e as Error).message).toMatch(/Run the 40 experiment/);
    }
    // the experimenter measures u = G W f for -u'' = f, u(0) = u(1) = 0: G = x<(1 - x>) (Stakgold & Holst ch. 1)
    const F = readMatrix(join(out, 'forcings.npy'));
    const x = readMatrix(join(out, 'forcing_points.csv')).data;
    const n = x.length, h = 1 / (n - 1);
    const U = { rows: F.rows, cols: n, data: new Float64Array(F.rows * n) };
    for (let j = 0; j < F.rows; j++) for (let i = 0; i < n; i++) {
      let s = 0;
      for (let k = 0; k < n; k++) s += Math.min(x[i]!, x[k]!) * (1 - Math.max(x[i]!, x[k]!)) * (k === 0 || k === n - 1 ? h / 2 : h) * F.data[j * n + k]!;
      U.data[j * n + i] = s;
    }
    writeFileSync(join(out, 'responses.csv'), encodeCsv(U));
    const study = readStudy(out);
    expect(study.inputs.values.rows).toBe(40);
    expect(study.outputs.values.cols).toBe(101);
    const design = JSON.parse(readFileSync(join(out, 'design.json'), 'utf8'));
    expect(design.format).toBe('kerneldx-design/1');
    expect(design.sampling.explanation).toMatch(/Cholesky/);
    expect(design.recommendation.rule).toMatch(/Halko, Martinsson & Tropp/);
  });
  it('is reproducible with --seed and covers 2-D grids, Matérn and scattered points from a file', async () => {
    const dir = scratch('design2');
    const a = await runCli(['design', '--grid', '0:1:12,0:2:9', '--count', '3', '--covariance', 'matern52', '--seed', '1', '--out', join(dir, 'a'), '--quiet']);
    const b = await runCli(['design', '--grid', '0:1:12,0:2:9', '--count', '3', '--covariance', 'matern52', '--seed', '1', '--out', join(dir, 'b'), '--quiet']);
    expect(a.code).toBe(0); expect(b.code).toBe(0);
    expect(readFileSync(join(dir, 'a', 'forcings.npy')).equals(readFileSync(join(dir, 'b', 'forcings.npy')))).toBe(true);
    expect(JSON.parse(readFileSync(join(dir, 'a', 'study.json'), 'utf8')).domain).toEqual({ kind: 'box', bounds: [[0, 1], [0, 2]] });
    const pts = join(dir, 'pts.csv');
    writeFileSync(pts, 'x,y\n0,0\n1,0\n0,1\n1,1\n0.5,0.5\n0.25,0.75\n');
    const c = await runCli(['design', '--points', pts, '--count', '2', '--length-scale', '0.4', '--out', join(dir, 'c'), '--json']);
    expect(c.code).toBe(0);
    expect(JSON.parse(c.stdout).length_scale).toBe(0.4);
    expect(c.stderr).toMatch(/drawing 2 forcing pattern/);
    expect(readMatrix(join(dir, 'c', 'forcings.npy')).cols).toBe(6);
  });
  it('wrong usage exits 2, a bad points file exits 3 naming file and row, and nothing is left under --out', async () => {
    const dir = scratch('design3');
    expect((await runCli(['design', '--grid', '0:1:10', '--points', 'p.csv', '--count', '2', '--out', join(dir, 'x')])).code).toBe(2);
    expect((await runCli(['design', '--grid', '0:1:10', '--out', join(dir, 'x')])).code).toBe(2);
    expect((await runCli(['design', '--grid', '0:1:10', '--count', '2', '--covariance', 'cubic', '--out', join(dir, 'x')])).code).toBe(2);
    const pts = join(dir, 'dup.csv');
    writeFileSync(pts, 'x\n0\n0.5\n0.5\n1\n');
    const r = await runCli(['design', '--points', pts, '--count', '2', '--out', join(dir, 'x')]);
    expect(r.code).toBe(3);
    expect(r.stderr).toMatch(/dup\.csv, row 4: duplicate point \(same as row 3\)/);
    expect(existsSync(join(dir, 'x'))).toBe(false);
    expect(listTree(dir)).toEqual(['dup.csv']);
  });
});
