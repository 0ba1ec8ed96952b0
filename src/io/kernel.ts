/**
 * The kernel folder of interface.md §3: kernel.json + arrays (CSV, NPY or JSON on read;
 * NPY for matrices and CSV for points on write).
 */
import { readFileSync, existsSync, statSync } from 'node:fs';
import { join, resolve, isAbsolute, relative } from 'node:path';
import { InputError } from '../errors.js';
import type { Kernel, Dimension, InputFile } from '../types.js';
import { readMatrix, readVector, encodeNpy, encodeCsv } from './arrays.js';
import { sha256File, type OutputStage } from './output.js';
import { readJsonManifest, parseDomain } from './study.js';
import { quadratureWeights } from '../quadrature.js';

export const KERNEL_FORMAT = 'kerneldx-kernel/1';

export function isKernelDir(dir: string): boolean {
  return existsSync(join(dir, 'kernel.json'));
}

export function readKernel(dirArg: string): Kernel {
  const dir = resolve(dirArg);
  if (!existsSync(dir)) throw new InputError({ file: dirArg }, 'kernel folder not found');
  const manifestPath = statSync(dir).isDirectory() ? join(dir, 'kernel.json') : dir;
  const root = statSync(dir).isDirectory() ? dir : resolve(dir, '..');
  const mLabel = relative(process.cwd(), manifestPath) || manifestPath;
  const m = readJsonManifest(manifestPath, mLabel);
  if (m.format !== KERNEL_FORMAT) throw new InputError({ file: mLabel }, `unknown format ${JSON.stringify(m.format)}; expected "${KERNEL_FORMAT}"`);
  if (m.dimension !== 1 && m.dimension !== 2) throw new InputError({ file: mLabel }, 'dimension must be 1 or 2');
  const dimension = m.dimension as Dimension;
  const files: InputFile[] = [{ path: 'kernel.json', sha256: sha256File(readFileSync(manifestPath)) }];
  const file = (key: string, required: boolean): string | null => {
    const v = m[key];
    if (v === undefined || v === null) {
      if (required) throw new InputError({ file: mLabel }, `"${key}" is required`);
      return null;
    }
    if (typeof v !== 'string') throw new InputError({ file: mLabel }, `"${key}" must be a file name`);
    const p = isAbsolute(v) ? v : join(root, v);
    files.push({ path: v, sha256: existsSync(p) ? sha256File(readFileSync(p)) : '' });
    return p;
  };
  const label = (p: string) => relative(root, p) || p;
  const pOut = file('points_out', true)!, pIn = file('points_in', true)!, kPath = file('kernel', true)!;
  const wPath = file('weights_in', false), hPath = file('homogeneous', false);
  const comps = (m.components ?? { in: 1, out: 1 }) as { in?: unknown; out?: unknown };
  const cIn = comps.in ?? 1, cOut = comps.out ?? 1;
  if (typeof cIn !== 'number' || typeof cOut !== 'number' || !Number.isInteger(cIn) || !Number.isInteger(cOut) || cIn < 1 || cOut < 1) {
    throw new InputError({ file: mLabel }, 'components.in and components.out must be positive integers');
  }
  const asPoints = (p: string) => {
    const pts = readMatrix(p, { label: label(p) });
    const fixed = dimension === 1 && pts.rows === 1 && pts.cols > 1 ? { rows: pts.cols, cols: 1, data: pts.data } : pts;
    if (fixed.cols !== dimension) throw new InputError({ file: label(p) }, `points have ${fixed.cols} column(s) but the kernel's dimension is ${dimension}`);
    return fixed;
  };
  const pointsOut = asPoints(pOut), pointsIn = asPoints(pIn);
  const G = readMatrix(kPath, { label: label(kPath) });
  if (G.rows !== pointsOut.rows * cOut || G.cols !== pointsIn.rows * cIn) {
    throw new InputError({ file: label(kPath) }, `kernel is ${G.rows} × ${G.cols}, expected ${pointsOut.rows * cOut} × ${pointsIn.rows * cIn} (output points × components by input points × components)`);
  }
  const domain = parseDomain(m.domain, dimension, mLabel);
  let weightsIn: Float64Array;
  if (wPath) {
    weightsIn = readVector(wPath, { label: label(wPath) });
    if (weightsIn.length !== pointsIn.rows) throw new InputError({ file: label(wPath) }, `${weightsIn.length} weights for ${pointsIn.rows} input points`);
    const bad = weightsIn.findIndex((w) => !(w > 0));
    if (bad >= 0) throw new InputError({ file: label(wPath), row: bad + 1 }, 'weights must be positive');
  } else {
    weightsIn = quadratureWeights(pointsIn, domain);
  }
  let homogeneous: Float64Array | null = null;
  if (hPath) {
    homogeneous = readVector(hPath, { label: label(hPath) });
    if (homogeneous.length !== pointsOut.rows * cOut) throw new InputError({ file: label(hPath) }, `${homogeneous.length} values, expected ${pointsOut.rows * cOut}`);
  }
  return { dimension, pointsOut, pointsIn, weightsIn, G, homogeneous, components: { in: cIn, out: cOut }, domain, files };
}

/** Write a kernel folder at `at` (relative path inside the stage). */
export function writeKernel(stage: OutputStage, kernel: Kernel, at = '.', extra: Record<string, unknown> = {}): void {
  const hdr = kernel.dimension === 1 ? ['x'] : ['x', 'y'];
  stage.write(join(at, 'points_out.csv'), encodeCsv(kernel.pointsOut, hdr));
  stage.write(join(at, 'points_in.csv'), encodeCsv(kernel.pointsIn, hdr));
  stage.write(join(at, 'weights_in.csv'), encodeCsv({ rows: kernel.weightsIn.length, cols: 1, data: kernel.weightsIn }, ['w']));
  stage.write(join(at, 'kernel.npy'), encodeNpy(kernel.G));
  const man: Record<string, unknown> = {
    format: KERNEL_FORMAT,
    dimension: kernel.dimension,
    points_out: 'points_out.csv',
    points_in: 'points_in.csv',
    weights_in: 'weights_in.csv',
    kernel: 'kernel.npy',
  };
  if (kernel.homogeneous) {
    stage.write(join(at, 'homogeneous.npy'), encodeNpy(kernel.homogeneous));
    man.homogeneous = 'homogeneous.npy';
  }
  man.components = kernel.components;
  man.domain = kernel.domain;
  Object.assign(man, extra);
  stage.write(join(at, 'kernel.json'), JSON.stringify(man, null, 2) + '\n');
}
