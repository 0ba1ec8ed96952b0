/**
 * The study folder of interface.md §2: read with full validation (exit code 3 with file,
 * row and column), and written as NPY arrays plus the study.json manifest.
 */
import { readFileSync, existsSync, statSync } from 'node:fs';
import { join, resolve, isAbsolute, relative } from 'node:path';
import { InputError } from '../errors.js';
import type { Study, Domain, Dimension, FieldData, InputFile } from '../types.js';
import type { Mat } from '../linalg/dense.js';
import { readArray, encodeNpy, encodeCsv } from './arrays.js';
import { sha256File, type OutputStage } from './output.js';

export const STUDY_FORMAT = 'kerneldx-study/1';

export function readJsonManifest(path: string, label: string): Record<string, unknown> {
  if (!existsSync(path)) throw new InputError({ file: label }, 'file not found');
  let doc: unknown;
  try { doc = JSON.parse(readFileSync(path, 'utf8')); } catch (e) {
    throw new InputError({ file: label }, `invalid JSON: ${(e as Error).message}`);
  }
  if (!doc || typeof doc !== 'object' || Array.isArray(doc)) throw new InputError({ file: label }, 'expected a JSON object');
  return doc as Record<string, unknown>;
}

export function parseDomain(raw: unknown, dimension: Dimension, label: string): Domain {
  if (raw === undefined) return { kind: 'points' };
  const d = raw as { kind?: unknown; bounds?: unknown; center?: unknown; radius?: unknown };
  const bad = (msg: string) => new InputError({ file: label }, `domain: ${msg}`);
  if (!d || typeof d !== 'object') throw bad('expected an object');
  const isPair = (b: unknown): b is [number, number] => Array.isArray(b) && b.length === 2 && b.every((v) => typeof v === 'number' && Number.isFinite(v)) && (b[0] as number) < (b[1] as number);
  switch (d.kind) {
    case 'interval':
      if (dimension !== 1) throw bad('"interval" needs dimension 1');
      if (!isPair(d.bounds)) throw bad('interval bounds must be [a, b] with a < b');
      return { kind: 'interval', bounds: [d.bounds[0], d.bounds[1]] };
    case 'box':
      if (dimension !== 2) throw bad('"box" needs dimension 2');
      if (!Array.isArray(d.bounds) || d.bounds.length !== 2 || !isPair(d.bounds[0]) || !isPair(d.bounds[1])) throw bad('box bounds must be [[ax, bx], [ay, by]]');
      return { kind: 'box', bounds: [[d.bounds[0][0], d.bounds[0][1]], [d.bounds[1][0], d.bounds[1][1]]] };
    case 'disk':
      if (dimension !== 2) throw bad('"disk" needs dimension 2');
      if (!Array.isArray(d.center) || d.center.length !== 2 || typeof d.radius !== 'number' || !(d.radius > 0)) throw bad('disk needs center [x, y] and radius > 0');
      return { kind: 'disk', center: [Number(d.center[0]), Number(d.center[1])], radius: d.radius };
    case 'points':
      return { kind: 'points' };
    default:
      throw bad(`unknown kind ${JSON.stringify(d.kind)}; use interval, box or points`);
  }
}

function resolveIn(dir: string, p: unknown, label: string, key: string): string {
  if (typeof p !== 'string' || p === '') throw new InputError({ file: label }, `${key} must be a file name`);
  return isAbsolute(p) ? p : join(dir, p);
}

function displayPath(dir: string, p: string): string {
  const rel = relative(dir, p);
  return rel.startsWith('..') ? p : rel;
}

function checkPoints(points: Mat, dimension: Dimension, label: string, rowOf: (i: number) => number): void {
  if (points.cols !== dimension) {
    throw new InputError({ file: label, column: points.cols > dimension ? dimension + 1 : undefined },
      `points have ${points.cols} column(s) but the study's dimension is ${dimension}`);
  }
  // duplicate points (exact, after rounding to 12 significant digits)
  const seen = new Map<string, number>();
  for (let i = 0; i < points.rows; i++) {
    const key = Array.from(points.data.subarray(i * dimension, (i + 1) * dimension), (v) => v.toPrecision(12)).join(',');
    const prev = seen.get(key);
    if (prev !== undefined) throw new InputError({ file: label, row: rowOf(i) }, `duplicate point (same as row ${rowOf(prev)})`);
    seen.set(key, i);
  }
}

function readField(dir: string, raw: unknown, side: 'inputs' | 'outputs', dimension: Dimension, manifest: string, files: InputFile[]): FieldData {
  if (!raw || typeof raw !== 'object') throw new InputError({ file: manifest }, `"${side}" must be an object with points, values and components`);
  const f = raw as { points?: unknown; values?: unknown; components?: unknown; todo?: unknown };
  const todo = f.todo === undefined ? undefined : String(f.todo);
  const comps = f.components === undefined ? 1 : f.components;
  if (typeof comps !== 'number' || !Number.isInteger(comps) || comps < 1) throw new InputError({ file: manifest }, `${side}.components must be a positive integer`);
  const pPath = resolveIn(dir, f.points, manifest, `${side}.points`);
  const vPath = resolveIn(dir, f.values, manifest, `${side}.values`);
  const pLabel = displayPath(dir, pPath), vLabel = displayPath(dir, vPath);
  const pRead = readArray(pPath, { label: pLabel });
  const points = pRead.matrix;
  // a 1-D study's points may come as one row
  const asRow = dimension === 1 && points.rows === 1 && points.cols > 1;
  const pts = asRow ? { rows: points.cols, cols: 1, data: points.data } : points;
  checkPoints(pts, dimension, pLabel, asRow ? () => pRead.rowOf(0) : pRead.rowOf);
  if (side === 'outputs' && !existsSync(vPath) && todo !== undefined) {
    throw new InputError({ file: vLabel }, `file not found: this study is a plan written by \`kerneldx design\` and still needs the measured responses. ${todo}`);
  }
  const values = readArray(vPath, { label: vLabel, allowMissing: side === 'outputs' }).matrix;
  if (values.cols % comps !== 0) {
    throw new InputError({ file: vLabel }, `${values.cols} columns do not divide into ${comps} components`);
  }
  if (values.cols !== pts.rows * comps) {
    throw new InputError({ file: vLabel }, `${values.cols} columns, but ${pLabel} has ${pts.rows} point(s)${comps > 1 ? ` × ${comps} components = ${pts.rows * comps}` : ''}`);
  }
  for (const p of [pPath, vPath]) files.push({ path: displayPath(dir, p), sha256: sha256File(readFileSync(p)) });
  return { points: pts, values, components: comps };
}

/** Read and validate a study folder. */
export function readStudy(dirArg: string): Study {
  const dir = resolve(dirArg);
  if (!existsSync(dir)) throw new InputError({ file: dirArg }, 'study folder not found');
  const manifestPath = statSync(dir).isDirectory() ? join(dir, 'study.json') : dir;
  const root = statSync(dir).isDirectory() ? dir : resolve(dir, '..');
  const mLabel = displayPath(process.cwd(), manifestPath);
  const m = readJsonManifest(manifestPath, mLabel);
  if (m.format !== STUDY_FORMAT) {
    throw new InputError({ file: mLabel }, `unknown format ${JSON.stringify(m.format)}; expected "${STUDY_FORMAT}"`);
  }
  if (m.dimension !== 1 && m.dimension !== 2) throw new InputError({ file: mLabel }, 'dimension must be 1 or 2');
  const dimension = m.dimension as Dimension;
  const files: InputFile[] = [{ path: 'study.json', sha256: sha256File(readFileSync(manifestPath)) }];
  const domain = parseDomain(m.domain, dimension, mLabel);
  const inputs = readField(root, m.inputs, 'inputs', dimension, mLabel, files);
  const outputs = readField(root, m.outputs, 'outputs', dimension, mLabel, files);
  // files: study.json, input points, forcings, output points, responses
  const fLabel = files[2]!.path, rLabel = files[4]!.path;
  if (inputs.values.rows !== outputs.values.rows) {
    throw new InputError({ file: rLabel },
      `${outputs.values.rows} experiment row(s) of responses but ${inputs.values.rows} of forcings in ${fLabel}; row j of each must be the same experiment`);
  }
  // an experiment whose responses are all missing carries nothing
  let anyMeasured = false;
  for (let i = 0; i < outputs.values.data.length && !anyMeasured; i++) if (!Number.isNaN(outputs.values.data[i]!)) anyMeasured = true;
  if (!anyMeasured) throw new InputError({ file: rLabel }, 'empty study: no response value is measured');
  let noise: Study['noise'];
  if (m.noise !== undefined) {
    const s = (m.noise as { sigma?: unknown }).sigma;
    if (s !== undefined && (typeof s !== 'number' || !(s >= 0) || !Number.isFinite(s))) throw new InputError({ file: mLabel }, 'noise.sigma must be a finite number ≥ 0');
    if (typeof s === 'number') noise = { sigma: s };
  }
  const known = new Set(['format', 'title', 'dimension', 'inputs', 'outputs', 'domain', 'units', 'noise']);
  const extra: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(m)) if (!known.has(k)) extra[k] = v;
  return {
    title: typeof m.title === 'string' ? m.title : undefined,
    dimension, inputs, outputs, domain,
    units: (m.units && typeof m.units === 'object') ? m.units as Study['units'] : undefined,
    noise, files, extra,
  };
}

export interface StudyWriteOptions {
  /** relative folder inside the stage (default: the stage root) */
  at?: string;
  /** array format for values (default npy); points are always CSV for readability */
  format?: 'npy' | 'csv';
  /** write only the forcing side (plus response points, if any) and a half-filled manifest (design) */
  forcingsOnly?: boolean;
  /** forcingsOnly: the responses file the manifest expects (default responses.csv) */
  responsesFile?: string;
  /** forcingsOnly: the note left in outputs.todo for the experimenter */
  todo?: string;
}

export function studyManifest(study: Study, opts: StudyWriteOptions = {}): Record<string, unknown> {
  const ext = opts.format ?? 'npy';
  const man: Record<string, unknown> = {
    format: STUDY_FORMAT,
    title: study.title ?? '',
    dimension: study.dimension,
    inputs: { points: 'forcing_points.csv', values: `forcings.${ext}`, components: study.inputs.components },
    outputs: opts.forcingsOnly
      ? { points: 'response_points.csv', values: opts.responsesFile ?? 'responses.csv', components: study.outputs.components, ...(opts.todo ? { todo: opts.todo } : {}) }
      : { points: 'response_points.csv', values: `responses.${ext}`, components: study.outputs.components },
    domain: study.domain,
  };
  if (study.units) man.units = study.units;
  if (study.noise) man.noise = study.noise;
  if (study.extra) Object.assign(man, study.extra);
  return man;
}

function pointsHeader(dimension: Dimension): string[] {
  return dimension === 1 ? ['x'] : ['x', 'y'];
}

/** Write a study folder (arrays + study.json) into an output stage. */
export function writeStudy(stage: OutputStage, study: Study, opts: StudyWriteOptions = {}): void {
  const at = opts.at ?? '.';
  const ext = opts.format ?? 'npy';
  const put = (name: string, m: Mat) => stage.write(join(at, name), ext === 'npy' ? encodeNpy(m) : encodeCsv(m));
  stage.write(join(at, 'forcing_points.csv'), encodeCsv(study.inputs.points, pointsHeader(study.dimension)));
  put(`forcings.${ext}`, study.inputs.values);
  if (!opts.forcingsOnly || study.outputs.points.rows > 0) {
    stage.write(join(at, 'response_points.csv'), encodeCsv(study.outputs.points, pointsHeader(study.dimension)));
  }
  if (!opts.forcingsOnly) put(`responses.${ext}`, study.outputs.values);
  stage.write(join(at, 'study.json'), JSON.stringify(studyManifest(study, opts), null, 2) + '\n');
}
