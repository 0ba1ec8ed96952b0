/** Bad input gets exit code 3 with file, row and column (interface.md §4), one test per case. */
import { describe, it, expect } from 'vitest';
import { writeFileSync, mkdirSync, existsSync } from 'node:fs';
import { join } from 'node:path';
import { readStudy } from '../../src/io/study.js';
import { InputError } from '../../src/errors.js';
import { scratch, runCli } from './helpers.js';

interface StudySpec {
  manifest?: Record<string, unknown>;
  files?: Record<string, string>;
}

const goodFiles = (): Record<string, string> => ({
  'fp.csv': 'x\n0\n0.5\n1\n',
  'f.csv': '1,2,3\n4,5,6\n',
  'rp.csv': 'x\n0.25\n0.75\n',
  'r.csv': 'u1,u2\n0.1,0.2\n0.3,\n',
});
const goodManifest = (): Record<string, unknown> => ({
  format: 'kerneldx-study/1', dimension: 1,
  inputs: { points: 'fp.csv', values: 'f.csv', components: 1 },
  outputs: { points: 'rp.csv', values: 'r.csv', components: 1 },
  domain: { kind: 'interval', bounds: [0, 1] },
});

function makeStudy(spec: StudySpec = {}): string {
  const dir = scratch('study');
  const files = { ...goodFiles(), ...spec.files };
  for (const [name, text] of Object.entries(files)) writeFileSync(join(dir, name), text);
  writeFileSync(join(dir, 'study.json'), JSON.stringify({ ...goodManifest(), ...spec.manifest }));
  return dir;
}

function inputError(dir: string): InputError {
  try { readStudy(dir); } catch (e) {
    expect(e).toBeInstanceOf(InputError);
    expect((e as InputError).exitCode).toBe(3);
    return e as InputError;
  }
  throw new Error('readStudy accepted a bad study');
}

describe('a valid study', () => {
  it('reads with headers skipped and a missing response (empty field) as NaN, never zero', () => {
    const s = readStudy(makeStudy());
    expect(Array.from(s.inputs.points.data)).toEqual([0, 0.5, 1]);
    expect(Array.from(s.inputs.values.data)).toEqual([1, 2, 3, 4, 5, 6]);
    expect(s.outputs.values.data[3]).toBeNaN();
    expect(s.outputs.values.data[2]).toBe(0.3);
    expect(s.files!.map((f) => f.path)).toEqual(['study.json', 'fp.csv', 'f.csv', 'rp.csv', 'r.csv']);
    expect(s.files![0]!.sha256).toMatch(/^[0-9a-f]{64}$/);
  });
});

describe('bad input → InputError (exit 3) naming file, row, column', () => {
  it('missing file', () => {
    const e = inputError(makeStudy({ manifest: { inputs: { points: 'fp.csv', values: 'nope.csv' } } }));
    expect(e.message).toBe('nope.csv: file not found');
  });
  it('unknown array format', () => {
    const e = inputError(makeStudy({ files: { 'f.txt': '1,2,3\n' }, manifest: { inputs: { points: 'fp.csv', values: 'f.txt' } } }));
    expect(e.message).toMatch(/^f\.txt: unknown array format "\.txt"/);
  });
  it('ragged rows', () => {
    const e = inputError(makeStudy({ files: { 'f.csv': 'a,b,c\n1,2,3\n4,5\n' } }));
    expect(e.message).toMatch(/^f\.csv, row 3: ragged rows: 2 fields, but the first data row has 3/);
  });
  it('non-numeric cell', () => {
    const e = inputError(makeStudy({ files: { 'f.csv': '1,2,3\n4,five,6\n' } }));
    expect(e.message).toBe('f.csv, row 2, column 2: not a number: "five"');
  });
  it('Inf', () => {
    const e = inputError(makeStudy({ files: { 'r.csv': '0.1,0.2\n0.3,-Inf\n' } }));
    expect(e.message).toMatch(/^r\.csv, row 2, column 2: infinite value "-Inf"/);
    const e2 = inputError(makeStudy({ files: { 'f.csv': '1,2,3\n4,1e999,6\n' } }));
    expect(e2.message).toMatch(/^f\.csv, row 2, column 2: infinite value/);
  });
  it('row counts of forcings and responses differ', () => {
    const e = inputError(makeStudy({ files: { 'r.csv': '0.1,0.2\n0.3,0.4\n0.5,0.6\n' } }));
    expect(e.message).toMatch(/^r\.csv: 3 experiment row\(s\) of responses but 2 of forcings in f\.csv/);
  });
  it('points and values column counts disagree', () => {
    const e = inputError(makeStudy({ files: { 'f.csv': '1,2,3,4\n5,6,7,8\n' } }));
    expect(e.message).toBe('f.csv: 4 columns, but fp.csv has 3 point(s)');
  });
  it('duplicate points (the row is the file\'s line, header included)', () => {
    const e = inputError(makeStudy({ files: { 'fp.csv': 'x\n0\n0.5\n0.5\n' } }));
    expect(e.message).toBe('fp.csv, row 4: duplicate point (same as row 3)');
  });
  it('2-D points in a 1-D study', () => {
    const e = inputError(makeStudy({ files: { 'rp.csv': 'x,y\n0.25,0\n0.75,0\n' } }));
    expect(e.message).toMatch(/^rp\.csv, column 2: points have 2 column\(s\) but the study's dimension is 1/);
  });
  it('components that do not divide the column count', () => {
    const e = inputError(makeStudy({ manifest: { inputs: { points: 'fp.csv', values: 'f.csv', components: 2 } } }));
    expect(e.message).toBe('f.csv: 3 columns do not divide into 2 components');
  });
  it('empty study: no measured response, or no experiment rows', () => {
    const e = inputError(makeStudy({ files: { 'r.csv': 'u1,u2\nNaN,\n,nan\n' } }));
    expect(e.message).toBe('r.csv: empty study: no response value is measured');
    const e2 = inputError(makeStudy({ files: { 'f.csv': 'a,b,c\n' } }));
    expect(e2.message).toBe('f.csv: file has a header but no data rows');
  });
  it('a manifest with unknown format', () => {
    const e = inputError(makeStudy({ manifest: { format: 'kerneldx-study/9' } }));
    expect(e.message).toMatch(/study\.json: unknown format "kerneldx-study\/9"; expected "kerneldx-study\/1"/);
  });
  it('missing values in forcings are refused (only responses may have gaps)', () => {
    const e = inputError(makeStudy({ files: { 'f.csv': '1,,3\n4,5,6\n' } }));
    expect(e.message).toMatch(/^f\.csv, row 1, column 2: empty field/);
  });
  it('through the CLI: exit code 3, the message on stderr, nothing under --out', async () => {
    const dir = makeStudy({ files: { 'f.csv': '1,2,3\n4,five,6\n' } });
    const out = join(dir, 'result');
    const r = await runCli(['diagnose', dir, '--out', out, '--quiet']);
    expect(r.code).toBe(3);
    expect(r.stderr).toMatch(/f\.csv, row 2, column 2: not a number/);
    expect(r.stdout).toBe('');
    expect(existsSync(out)).toBe(false);
  });
});

describe('2-D and multi-component studies', () => {
  it('reads component-major values and checks them against points × components', () => {
    const dir = scratch('study2d');
    mkdirSync(join(dir, 'data'));
    writeFileSync(join(dir, 'data', 'p.csv'), 'x,y\n0,0\n1,0\n0,1\n');
    writeFileSync(join(dir, 'data', 'f.json'), JSON.stringify({ values: [[1, 2, 3, 4, 5, 6]] }));
    writeFileSync(join(dir, 'data', 'u.json'), JSON.stringify([[1, null, 3, 4, 5, 6]]));
    writeFileSync(join(dir, 'study.json'), JSON.stringify({
      format: 'kerneldx-study/1', dimension: 2, domain: { kind: 'points' },
      inputs: { points: 'data/p.csv', values: 'data/f.json', components: 2 },
      outputs: { points: 'data/p.csv', values: 'data/u.json', components: 2 },
    }));
    const s = readStudy(dir);
    expect(s.inputs.components).toBe(2);
    expect(s.outputs.values.data[1]).toBeNaN();
    writeFileSync(join(dir, 'data', 'f.json'), JSON.stringify({ values: [[1, 2, 3, 4, 5, 6, 7, 8]] }));
    const e = inputError(dir);
    expect(e.message).toBe('data/f.json: 8 columns, but data/p.csv has 3 point(s) × 2 components = 6');
  });
});
