/**
 * Numeric array files: CSV (comma, optional header, empty field or NaN = not measured),
 * NPY (float32/float64, little or big endian, C or Fortran order, 1-D or 2-D) and JSON
 * ({"values": [[...]]} or a bare array of rows). The format is chosen by the file ending.
 * Every error names the file and, where it applies, the row and column (1-based).
 */
import { readFileSync, existsSync, statSync } from 'node:fs';
import { extname } from 'node:path';
import { InputError } from '../errors.js';
import type { Mat } from '../linalg/dense.js';

export interface ReadOptions {
  /** allow NaN / empty cells (missing values); otherwise they are errors */
  allowMissing?: boolean;
  /** name shown in messages (defaults to the path) */
  label?: string;
}

export type ArrayFormat = 'csv' | 'npy' | 'json';

export function formatOf(path: string, label = path): ArrayFormat {
  const ext = extname(path).toLowerCase();
  if (ext === '.csv') return 'csv';
  if (ext === '.npy') return 'npy';
  if (ext === '.json') return 'json';
  throw new InputError({ file: label }, `unknown array format "${ext || '(no extension)'}"; use .csv, .npy or .json`);
}

export interface ArrayRead {
  matrix: Mat;
  format: ArrayFormat;
  /** the location to report for data row i (0-based): CSV line numbers (header included), else i + 1 */
  rowOf: (i: number) => number;
}

/** Read a numeric matrix with the information needed to point at its rows in messages. */
export function readArray(path: string, opts: ReadOptions = {}): ArrayRead {
  const label = opts.label ?? path;
  const fmt = formatOf(path, label);
  if (!existsSync(path)) throw new InputError({ file: label }, 'file not found');
  if (statSync(path).isDirectory()) throw new InputError({ file: label }, 'is a directory, expected a file');
  let m: Mat;
  let first = 1;
  if (fmt === 'csv') {
    const r = parseCsvLines(readFileSync(path, 'utf8'), label, opts.allowMissing ?? false);
    m = r.matrix; first = r.firstDataLine;
  } else if (fmt === 'npy') m = parseNpy(readFileSync(path), label);
  else m = parseJsonArray(readFileSync(path, 'utf8'), label);
  checkValues(m, label, fmt, opts.allowMissing ?? false);
  return { matrix: m, format: fmt, rowOf: (i) => first + i };
}

/** Read a numeric matrix. A 1-D NPY or JSON array becomes one column. */
export function readMatrix(path: string, opts: ReadOptions = {}): Mat {
  return readArray(path, opts).matrix;
}

/** Read a vector: a 1-D array, or a 2-D array with one row or one column. */
export function readVector(path: string, opts: ReadOptions = {}): Float64Array {
  const label = opts.label ?? path;
  const m = readMatrix(path, opts);
  if (m.rows === 1 || m.cols === 1) return new Float64Array(m.data);
  throw new InputError({ file: label }, `expected a vector, found a ${m.rows} × ${m.cols} array`);
}

function isNumericToken(t: string): boolean {
  const s = t.trim();
  if (s === '') return true;
  return NUMBER_RE.test(s) || /^[+-]?(nan|inf|infinity)$/i.test(s);
}

export function parseCsv(text: string, label: string, allowMissing: boolean): Mat {
  return parseCsvLines(text, label, allowMissing).matrix;
}

const NUMBER_RE = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/** CSV parse that also returns the 1-based line number of the first data row. */
export function parseCsvLines(text: string, label: string, allowMissing: boolean): { matrix: Mat; firstDataLine: number } {
  const lines = (text.charCodeAt(0) === 0xfeff ? text.slice(1) : text).split(/\r?\n/);
  // drop trailing empty lines
  let end = lines.length;
  while (end > 0 && lines[end - 1]!.trim() === '') end--;
  let start = 0;
  while (start < end && lines[start]!.trim() === '') start++;
  if (start >= end) throw new InputError({ file: label }, 'file is empty');
  // a first line that is not numeric is a header
  const first = lines[start]!.split(',');
  if (!first.every(isNumericToken) || first.every((t) => t.trim() === '')) start++;
  if (start >= end) throw new InputError({ file: label }, 'file has a header but no data rows');
  let cols = -1;
  const firstDataLine = start + 1;
  const nRows = end - start;
  let data: Float64Array | null = null;
  for (let li = start; li < end; li++) {
    const line = lines[li]!;
    const rowNo = li + 1;
    if (line.trim() === '') throw new InputError({ file: label, row: rowNo }, 'empty line inside the data');
    const fields = line.split(',');
    if (cols < 0) {
      cols = fields.length;
      data = new Float64Array(nRows * cols);
    } else if (fields.length !== cols) {
      throw new InputError({ file: label, row: rowNo }, `ragged rows: ${fields.length} fields, but the first data row has ${cols}`);
    }
    const o = (li - start) * cols;
    for (let j = 0; j < cols; j++) {
      const raw = fields[j]!.trim();
      let v: number;
      if (raw === '' || /^[+-]?nan$/i.test(raw)) {
        if (!allowMissing) throw new InputError({ file: label, row: rowNo, column: j + 1 }, raw === '' ? 'empty field (missing values are allowed only in responses)' : 'NaN (missing values are allowed only in responses)');
        v = NaN;
      } else if (NUMBER_RE.test(raw)) {
        v = Number(raw);
        if (!Number.isFinite(v)) throw new InputError({ file: label, row: rowNo, column: j + 1 }, `infinite value "${truncate(raw)}" (overflows float64)`);
      } else if (/^[+-]?inf(inity)?$/i.test(raw)) {
        throw new InputError({ file: label, row: rowNo, column: j + 1 }, `infinite value "${truncate(raw)}"`);
      } else {
        throw new InputError({ file: label, row: rowNo, column: j + 1 }, `not a number: "${truncate(raw)}"${allowMissing ? ' (write a missing value as an empty field or NaN)' : ''}`);
      }
      data![o + j] = v;
    }
  }
  return { matrix: { rows: nRows, cols, data: data! }, firstDataLine };
}

function truncate(s: string): string {
  return s.length > 30 ? s.slice(0, 27) + '...' : s;
}

// NPY format 1.0/2.0/3.0: https://numpy.org/doc/stable/reference/generated/numpy.lib.format.html
export function parseNpy(buf: Buffer, label: string): Mat {
  if (buf.length < 10 || buf[0] !== 0x93 || buf.toString('latin1', 1, 6) !== 'NUMPY') {
    throw new InputError({ file: label }, 'not an NPY file (bad magic string)');
  }
  const major = buf[6]!;
  let headerLen: number, offset: number;
  if (major === 1) { headerLen = buf.readUInt16LE(8); offset = 10; }
  else if (major === 2 || major === 3) { headerLen = buf.readUInt32LE(8); offset = 12; }
  else throw new InputError({ file: label }, `unsupported NPY version ${major}`);
  const header = buf.toString(major === 3 ? 'utf8' : 'latin1', offset, offset + headerLen);
  const descr = /'descr'\s*:\s*'([^']+)'/.exec(header)?.[1];
  const fortran = /'fortran_order'\s*:\s*(True|False)/.exec(header)?.[1];
  const shapeTxt = /'shape'\s*:\s*\(([^)]*)\)/.exec(header)?.[1];
  if (!descr || !fortran || shapeTxt === undefined) throw new InputError({ file: label }, 'malformed NPY header');
  const shape = shapeTxt.split(',').map((t) => t.trim()).filter((t) => t !== '').map(Number);
  if (shape.length === 0 || shape.length > 2) throw new InputError({ file: label }, `expected a 1-D or 2-D array, found ${shape.length}-D`);
  const rows = shape.length === 1 ? shape[0]! : shape[0]!;
  const cols = shape.length === 1 ? 1 : shape[1]!;
  const m = /^([<>|=])([fi])(\d)$/.exec(descr);
  if (!m || m[2] !== 'f' || (m[3] !== '8' && m[3] !== '4')) {
    throw new InputError({ file: label }, `unsupported NPY dtype "${descr}"; use float64 or float32`);
  }
  const size = Number(m[3]);
  const little = m[1] !== '>';
  const body = offset + headerLen;
  const n = rows * cols;
  if (buf.length < body + n * size) throw new InputError({ file: label }, `NPY data truncated: expected ${n} values`);
  const flat = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const p = body + i * size;
    flat[i] = size === 8 ? (little ? buf.readDoubleLE(p) : buf.readDoubleBE(p)) : (little ? buf.readFloatLE(p) : buf.readFloatBE(p));
  }
  if (fortran === 'True' && shape.length === 2) {
    const out = new Float64Array(n);
    for (let j = 0; j < cols; j++) for (let i = 0; i < rows; i++) out[i * cols + j] = flat[j * rows + i]!;
    return { rows, cols, data: out };
  }
  return { rows, cols, data: flat };
}

export function parseJsonArray(text: string, label: string): Mat {
  let doc: unknown;
  try { doc = JSON.parse(text); } catch (e) {
    throw new InputError({ file: label }, `invalid JSON: ${(e as Error).message}`);
  }
  const arr = Array.isArray(doc) ? doc : (doc && typeof doc === 'object' && Array.isArray((doc as { values?: unknown }).values)) ? (doc as { values: unknown[] }).values : null;
  if (!arr) throw new InputError({ file: label }, 'expected {"values": [[...], ...]} or an array of rows');
  if (arr.length === 0) throw new InputError({ file: label }, 'array is empty');
  const oneD = arr.every((v) => !Array.isArray(v));
  const rowsArr: unknown[][] = oneD ? arr.map((v) => [v]) : (arr as unknown[][]);
  const cols = Array.isArray(rowsArr[0]) ? rowsArr[0].length : -1;
  const data = new Float64Array(rowsArr.length * Math.max(cols, 0));
  rowsArr.forEach((r, i) => {
    if (!Array.isArray(r)) throw new InputError({ file: label, row: i + 1 }, 'row is not an array');
    if (r.length !== cols) throw new InputError({ file: label, row: i + 1 }, `ragged rows: ${r.length} entries, but the first row has ${cols}`);
    r.forEach((v, j) => {
      if (v === null) { data[i * cols + j] = NaN; return; }
      if (typeof v === 'string' && /^[+-]?nan$/i.test(v)) { data[i * cols + j] = NaN; return; }
      if (typeof v !== 'number') throw new InputError({ file: label, row: i + 1, column: j + 1 }, `not a number: ${truncate(JSON.stringify(v))}`);
      data[i * cols + j] = v;
    });
  });
  return { rows: rowsArr.length, cols, data };
}

function checkValues(m: Mat, label: string, fmt: ArrayFormat, allowMissing: boolean): void {
  if (m.rows === 0 || m.cols === 0) throw new InputError({ file: label }, 'array is empty');
  if (fmt === 'csv') return; // checked while parsing, with the header-aware row numbers
  for (let i = 0; i < m.data.length; i++) {
    const v = m.data[i]!;
    if (Number.isFinite(v)) continue;
    const row = Math.floor(i / m.cols) + 1, column = (i % m.cols) + 1;
    if (Number.isNaN(v)) {
      if (!allowMissing) throw new InputError({ file: label, row, column }, 'NaN (missing values are allowed only in responses)');
    } else {
      throw new InputError({ file: label, row, column }, 'infinite value');
    }
  }
}

// ---------------------------------------------------------------- writers

/** NPY v1.0, little-endian float64, C order. A vector is written 1-D. */
export function encodeNpy(m: Mat | Float64Array): Buffer {
  const isVec = m instanceof Float64Array;
  const data = isVec ? m : m.data;
  const shape = isVec ? `(${m.length},)` : `(${m.rows}, ${m.cols})`;
  let header = `{'descr': '<f8', 'fortran_order': False, 'shape': ${shape}, }`;
  const total = 10 + header.length + 1;
  header += ' '.repeat((64 - (total % 64)) % 64) + '\n';
  const hbuf = Buffer.alloc(10);
  hbuf[0] = 0x93; hbuf.write('NUMPY', 1, 'latin1'); hbuf[6] = 1; hbuf[7] = 0; hbuf.writeUInt16LE(header.length, 8);
  const body = Buffer.alloc(data.length * 8);
  for (let i = 0; i < data.length; i++) body.writeDoubleLE(data[i]!, i * 8);
  return Buffer.concat([hbuf, Buffer.from(header, 'latin1'), body]);
}

/** CSV with an optional header; numbers in shortest round-trip form; NaN written as empty. */
export function encodeCsv(m: Mat, header?: string[]): string {
  const out: string[] = [];
  if (header) out.push(header.join(','));
  for (let i = 0; i < m.rows; i++) {
    const r: string[] = [];
    for (let j = 0; j < m.cols; j++) {
      const v = m.data[i * m.cols + j]!;
      r.push(Number.isNaN(v) ? '' : String(v));
    }
    out.push(r.join(','));
  }
  return out.join('\n') + '\n';
}
