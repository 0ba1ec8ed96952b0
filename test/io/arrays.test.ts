import { describe, it, expect } from 'vitest';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { readMatrix, readVector, encodeNpy, encodeCsv, parseCsv, parseJsonArray } from '../../src/io/arrays.js';
import { InputError } from '../../src/errors.js';
import { scratch } from './helpers.js';

const fixture = (name: string) => fileURLToPath(new URL(`../fixtures/${name}`, import.meta.url));
// files written by numpy.save and the values numpy.load reads back: test/fixtures/io_make_fixtures.py
const expected = JSON.parse(readFileSync(fixture('io_arrays_expected.json'), 'utf8')) as Record<string, { shape: number[]; values: number[] | number[][]; dtype: string; fortran_order: boolean }>;

describe('NPY files written by numpy', () => {
  for (const [name, e] of Object.entries(expected)) {
    it(`${name} (${e.dtype}, ${e.shape.length}-D${e.fortran_order ? ', Fortran order' : ''}) reads as numpy reads it`, () => {
      const m = readMatrix(fixture(name));
      const flat = (e.values as (number | number[])[]).flat();
      expect(m.rows).toBe(e.shape[0]);
      expect(m.cols).toBe(e.shape.length === 2 ? e.shape[1] : 1);
      // exact: float32 widened to float64 is exact, as in numpy's astype(float64)
      expect(Array.from(m.data)).toEqual(flat);
    });
  }
  it('1-D arrays read as vectors', () => {
    expect(Array.from(readVector(fixture('io_1d_f64.npy')))).toEqual([0, 0.25, 0.5, 0.75, 1]);
  });
  it('our writer produces NPY that round-trips, and that python numpy reads (checked by the header layout)', () => {
    const dir = scratch('npy');
    const m = { rows: 2, cols: 3, data: Float64Array.from([1 / 3, -2, 1e-300, Math.PI, 0, -0.5]) };
    const p = join(dir, 'm.npy');
    const buf = encodeNpy(m);
    writeFileSync(p, buf);
    expect(Array.from(readMatrix(p).data)).toEqual(Array.from(m.data));
    // NPY 1.0: magic, version, little-endian header length; header + preamble a multiple of 64 bytes (numpy format spec)
    expect(buf.subarray(0, 8).toString('latin1')).toBe('\x93NUMPY\x01\x00');
    const hlen = buf.readUInt16LE(8);
    expect((10 + hlen) % 64).toBe(0);
    expect(buf.toString('latin1', 10, 10 + hlen)).toMatch(/^\{'descr': '<f8', 'fortran_order': False, 'shape': \(2, 3\), \}\s*\n$/);
  });
  it('refuses integer dtypes and truncated data with exit 3', () => {
    const dir = scratch('npybad');
    const good = readFileSync(fixture('io_f64_c.npy'));
    writeFileSync(join(dir, 't.npy'), good.subarray(0, good.length - 8));
    expect(() => readMatrix(join(dir, 't.npy'))).toThrow(/NPY data truncated/);
    writeFileSync(join(dir, 'i.npy'), Buffer.from(good.toString('latin1').replace("'<f8'", "'<i8'"), 'latin1'));
    expect(() => readMatrix(join(dir, 'i.npy'))).toThrow(/unsupported NPY dtype "<i8"/);
    writeFileSync(join(dir, 'x.npy'), 'not numpy');
    expect(() => readMatrix(join(dir, 'x.npy'))).toThrow(InputError);
  });
});

describe('CSV', () => {
  it('with and without a header give the same matrix', () => {
    const a = parseCsv('x,y\n1,2\n3,4\n', 'a.csv', false), b = parseCsv('1,2\r\n3,4\r\n\r\n', 'b.csv', false);
    expect(a).toEqual(b);
    expect(Array.from(a.data)).toEqual([1, 2, 3, 4]);
  });
  it('missing values (empty field, NaN, nan) read as NaN — never zero — where allowed', () => {
    const m = parseCsv('u1,u2,u3\n,NaN,1\nnan,2,\n', 'r.csv', true);
    const d = Array.from(m.data);
    expect([0, 1, 3, 5].every((i) => Number.isNaN(d[i]!))).toBe(true);
    expect(d[2]).toBe(1); expect(d[4]).toBe(2);
    expect(d.filter((v) => v === 0)).toEqual([]);
  });
  it('numbers in every usual notation; nothing that only looks like one', () => {
    expect(Array.from(parseCsv('-1.5e-3, +2 ,.5,7.\n', 'n.csv', false).data)).toEqual([-0.0015, 2, 0.5, 7]);
    expect(() => parseCsv('1,2\n0x10,3\n', 'h.csv', false)).toThrow('h.csv, row 2, column 1: not a number: "0x10"');
  });
  it('writer puts NaN as an empty field and reads back bit for bit', () => {
    const m = { rows: 2, cols: 2, data: Float64Array.from([0.1 + 0.2, NaN, -1e-17, 12345.678]) };
    const back = parseCsv(encodeCsv(m, ['a', 'b']), 'w.csv', true);
    expect(back.data[0]).toBe(0.1 + 0.2);
    expect(back.data[1]).toBeNaN();
    expect(back.data[2]).toBe(-1e-17);
  });
});

describe('JSON arrays', () => {
  it('both forms, {"values": rows} and a bare array of rows, and 1-D as a column', () => {
    expect(parseJsonArray('{"values": [[1, 2], [3, 4]]}', 'a.json')).toEqual(parseJsonArray('[[1, 2], [3, 4]]', 'b.json'));
    const v = parseJsonArray('[1, 2, 3]', 'c.json');
    expect([v.rows, v.cols]).toEqual([3, 1]);
    const nanM = parseJsonArray('[[1, null], ["NaN", 2]]', 'd.json');
    expect(Number.isNaN(nanM.data[1]!) && Number.isNaN(nanM.data[2]!)).toBe(true);
  });
  it('bad JSON arrays name file, row and column', () => {
    expect(() => parseJsonArray('[[1, 2], [3]]', 'r.json')).toThrow('r.json, row 2: ragged rows: 1 entries, but the first row has 2');
    expect(() => parseJsonArray('[[1, "x"]]', 's.json')).toThrow('s.json, row 1, column 2: not a number: "x"');
    expect(() => parseJsonArray('{"data": []}', 't.json')).toThrow(/expected \{"values"/);
    expect(() => parseJsonArray('[[1,', 'u.json')).toThrow(/u\.json: invalid JSON/);
  });
});
