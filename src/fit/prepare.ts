/**
 * Validation at the boundary of the estimator and the common preparation of a study:
 * weighted forcings, per-sensor masks of measured values, amplitudes. Pure (no fs).
 * Bad data raise DataError (exit code 4) with a sentence that says what more data is needed.
 */
import type { Study } from '../types.js';
import type { Mat } from '../linalg/dense.js';
import { zeros } from '../linalg/dense.js';
import { DataError } from '../errors.js';
import { quadratureWeights } from '../quadrature.js';

export interface Prepared {
  dimension: 1 | 2;
  N: number;
  nIn: number;
  nOut: number;
  cIn: number;
  cOut: number;
  pointsIn: Mat;
  pointsOut: Mat;
  weights: Float64Array;
  /** N × (nIn·cIn): f_j(s_k) w_k, component-major columns */
  FW: Mat;
  /** N × (nOut·cOut) responses, NaN where not measured */
  U: Mat;
  /** number of measured values */
  nMeasured: number;
  /** ‖f_j‖ in the quadrature norm (all components), per experiment */
  amplitude: Float64Array;
  /** bounding interval/box used for bases: [lo, hi] per coordinate */
  box: [number, number][];
  /** notes for fit.json (points dropped from consideration etc.) */
  notes: string[];
}

export const MIN_EXPERIMENTS = 3;

function bounds(points: Mat): [number, number][] {
  const d = points.cols;
  const out: [number, number][] = [];
  for (let c = 0; c < d; c++) {
    let lo = Infinity, hi = -Infinity;
    for (let i = 0; i < points.rows; i++) { const v = points.data[i * d + c]!; lo = Math.min(lo, v); hi = Math.max(hi, v); }
    out.push([lo, hi]);
  }
  return out;
}

function insideDomain(study: Study, points: Mat): boolean[] {
  const dom = study.domain, d = points.cols;
  const res: boolean[] = [];
  for (let i = 0; i < points.rows; i++) {
    const x = points.data[i * d]!, y = d > 1 ? points.data[i * d + 1]! : 0;
    let ok = true;
    if (dom.kind === 'interval') {
      const [a, b] = dom.bounds, tol = 1e-9 * (b - a);
      ok = x >= a - tol && x <= b + tol;
    } else if (dom.kind === 'box') {
      const [[ax, bx], [ay, by]] = dom.bounds, tol = 1e-9 * Math.max(bx - ax, by - ay);
      ok = x >= ax - tol && x <= bx + tol && y >= ay - tol && y <= by + tol;
    } else if (dom.kind === 'disk') {
      const [cx, cy] = dom.center;
      ok = Math.hypot(x - cx, y - cy) <= dom.radius * (1 + 1e-9);
    }
    res.push(ok);
  }
  return res;
}

export function prepare(study: Study): Prepared {
  const N = study.inputs.values.rows;
  const cIn = study.inputs.components, cOut = study.outputs.components;
  const nIn = study.inputs.points.rows, nOut = study.outputs.points.rows;
  const notes: string[] = [];
  if (N < MIN_EXPERIMENTS) {
    throw new DataError(`the study has ${N} experiment(s); fitting a kernel needs at least ${MIN_EXPERIMENTS} (and in practice tens): run more experiments with different forcing patterns`);
  }
  if (study.outputs.values.rows !== N) throw new DataError(`forcings have ${N} experiments but responses ${study.outputs.values.rows}; row j of each must be the same experiment`);
  for (const v of study.inputs.values.data) if (!Number.isFinite(v)) throw new DataError('a forcing value is missing or not finite; every forcing must be fully known');
  const inIn = insideDomain(study, study.inputs.points), inOut = insideDomain(study, study.outputs.points);
  const nInInside = inIn.filter(Boolean).length, nOutInside = inOut.filter(Boolean).length;
  if (nInInside === 0 || nOutInside === 0) {
    throw new DataError(`no overlap between the data and the domain: ${nInInside === 0 ? 'none of the forcing points' : 'none of the response points'} lie inside the study's domain; give points inside the domain or correct the domain bounds`);
  }
  if (nInInside < nIn) notes.push(`${nIn - nInInside} forcing point(s) lie outside the stated domain`);
  if (nOutInside < nOut) notes.push(`${nOut - nOutInside} response point(s) lie outside the stated domain`);
  const weights = quadratureWeights(study.inputs.points, study.domain);
  for (let k = 0; k < nIn; k++) if (!(weights[k]! > 0)) weights[k] = 0;
  const FW = zeros(N, nIn * cIn);
  const F = study.inputs.values.data;
  const amplitude = new Float64Array(N);
  for (let j = 0; j < N; j++) {
    let a = 0;
    for (let q = 0; q < cIn; q++) for (let k = 0; k < nIn; k++) {
      const idx = j * nIn * cIn + q * nIn + k;
      const f = F[idx]!;
      FW.data[idx] = f * weights[k]!;
      a += f * f * weights[k]!;
    }
    amplitude[j] = Math.sqrt(a);
  }
  // forcings all zero / all identical: nothing varies across experiments
  let maxAbs = 0, maxDev = 0;
  const cols = nIn * cIn;
  for (let c = 0; c < cols; c++) {
    let mean = 0;
    for (let j = 0; j < N; j++) mean += F[j * cols + c]!;
    mean /= N;
    for (let j = 0; j < N; j++) { maxAbs = Math.max(maxAbs, Math.abs(F[j * cols + c]!)); maxDev = Math.max(maxDev, Math.abs(F[j * cols + c]! - mean)); }
  }
  if (maxAbs === 0) throw new DataError('all forcings are zero, so the responses carry no information about the kernel: apply nonzero forcing patterns (e.g. from `kerneldx design`)');
  if (maxDev <= 1e-12 * maxAbs) throw new DataError(`all ${N} forcings are identical, so only one forcing pattern is observed: apply at least ${MIN_EXPERIMENTS} different forcing patterns`);
  const U = study.outputs.values;
  let nMeasured = 0;
  let uMin = Infinity, uMax = -Infinity;
  const colsOut = nOut * cOut;
  for (let c = 0; c < colsOut; c++) {
    let m = 0;
    for (let j = 0; j < N; j++) {
      const v = U.data[j * colsOut + c]!;
      if (Number.isNaN(v)) continue;
      if (!Number.isFinite(v)) throw new DataError('a response value is infinite; remove it or mark it as not measured (empty or NaN)');
      m++; uMin = Math.min(uMin, v); uMax = Math.max(uMax, v);
    }
    if (m === 0) {
      const p = Math.floor(c / nOut), i = c % nOut;
      throw new DataError(`response point ${i + 1}${cOut > 1 ? ` (component ${p + 1})` : ''} has no measured value in any experiment; measure it in some experiments or remove it from the study`);
    }
    nMeasured += m;
  }
  if (!(uMax > uMin)) throw new DataError('the responses are constant (every measured value is the same), so they do not reveal how the system reacts to the forcing: check the sensors and record responses that vary with the forcing');
  // responses must vary across experiments somewhere (a constant-per-sensor response carries only u_h)
  let varies = false;
  for (let c = 0; c < colsOut && !varies; c++) {
    let first: number | null = null;
    for (let j = 0; j < N; j++) {
      const v = U.data[j * colsOut + c]!;
      if (Number.isNaN(v)) continue;
      if (first === null) first = v;
      else if (Math.abs(v - first) > 1e-12 * Math.max(Math.abs(uMax), Math.abs(uMin))) { varies = true; break; }
    }
  }
  if (!varies) throw new DataError('the responses do not change from one experiment to the next, so they do not depend on the forcing: check that the forcings were applied and the sensors record the response');
  const allPts = { rows: nIn + nOut, cols: study.dimension, data: new Float64Array([...study.inputs.points.data, ...study.outputs.points.data]) };
  let box = bounds(allPts);
  const dom = study.domain;
  if (dom.kind === 'interval') box = [[Math.min(dom.bounds[0], box[0]![0]), Math.max(dom.bounds[1], box[0]![1])]];
  else if (dom.kind === 'box') box = dom.bounds.map((b, c) => [Math.min(b[0], box[c]![0]), Math.max(b[1], box[c]![1])] as [number, number]);
  for (const b of box) if (!(b[1] > b[0])) { b[0] -= 0.5; b[1] += 0.5; }
  return {
    dimension: study.dimension, N, nIn, nOut, cIn, cOut,
    pointsIn: study.inputs.points, pointsOut: study.outputs.points,
    weights, FW, U, nMeasured, amplitude, box, notes,
  };
}

/** Indices of measured experiments for output column c (component-major). */
export function measured(prep: Prepared, c: number): number[] {
  const cols = prep.nOut * prep.cOut;
  const J: number[] = [];
  for (let j = 0; j < prep.N; j++) if (!Number.isNaN(prep.U.data[j * cols + c]!)) J.push(j);
  return J;
}
