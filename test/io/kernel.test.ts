import { describe, it, expect } from 'vitest';
import { writeFileSync, readFileSync, existsSync } from 'node:fs';
import { join } from 'node:path';
import { readKernel, writeKernel } from '../../src/io/kernel.js';
import { withOutput } from '../../src/io/output.js';
import { trapezoidWeights1d } from '../../src/quadrature.js';
import type { Kernel } from '../../src/types.js';
import { scratch, listTree } from './helpers.js';

// -u'' = f on [0, 1], u(0) = u(1) = 0: G(x, s) = x<(1 − x>) (Stakgold & Holst ch. 1; check G(0.2, 0.7) = 0.06)
const G = (x: number, s: number) => Math.min(x, s) * (1 - Math.max(x, s));

function stringKernel(nOut: number, nIn: number): Kernel {
  const xo = Float64Array.from({ length: nOut }, (_, i) => (i + 0.5) / nOut);
  const xi = Float64Array.from({ length: nIn }, (_, i) => i / (nIn - 1));
  const data = new Float64Array(nOut * nIn);
  for (let i = 0; i < nOut; i++) for (let k = 0; k < nIn; k++) data[i * nIn + k] = G(xo[i]!, xi[k]!);
  return {
    dimension: 1, pointsOut: { rows: nOut, cols: 1, data: xo }, pointsIn: { rows: nIn, cols: 1, data: xi },
    weightsIn: trapezoidWeights1d(xi), G: { rows: nOut, cols: nIn, data }, homogeneous: Float64Array.from(xo, (x) => 1 - x),
    components: { in: 1, out: 1 }, domain: { kind: 'interval', bounds: [0, 1] },
  };
}

describe('kernel folder', () => {
  it('round-trips through writeKernel / readKernel exactly (NPY arrays + kernel.json)', async () => {
    const dir = scratch('kernel');
    const k = stringKernel(7, 11);
    await withOutput(join(dir, 'k'), (stage) => writeKernel(stage, k));
    expect(listTree(join(dir, 'k'))).toEqual(['homogeneous.npy', 'kernel.json', 'kernel.npy', 'points_in.csv', 'points_out.csv', 'weights_in.csv']);
    const back = readKernel(join(dir, 'k'));
    expect(Array.from(back.G.data)).toEqual(Array.from(k.G.data));
    expect(Array.from(back.pointsIn.data)).toEqual(Array.from(k.pointsIn.data));
    expect(Array.from(back.weightsIn)).toEqual(Array.from(k.weightsIn));
    expect(Array.from(back.homogeneous!)).toEqual(Array.from(k.homogeneous!));
    expect(back.domain).toEqual(k.domain);
    expect(JSON.parse(readFileSync(join(dir, 'k', 'kernel.json'), 'utf8')).format).toBe('kerneldx-kernel/1');
  });
  it('reads a kernel handed in by another program with CSV and JSON arrays and no weights (trapezoid default)', () => {
    const dir = scratch('kforeign');
    writeFileSync(join(dir, 'xo.csv'), '0.2\n0.5\n0.9\n');
    writeFileSync(join(dir, 'xi.json'), JSON.stringify([0, 0.4, 0.7, 1]));
    const rows = [0.2, 0.5, 0.9].map((x) => [0, 0.4, 0.7, 1].map((s) => G(x, s)));
    writeFileSync(join(dir, 'g.csv'), rows.map((r) => r.join(',')).join('\n') + '\n');
    writeFileSync(join(dir, 'kernel.json'), JSON.stringify({ format: 'kerneldx-kernel/1', dimension: 1, points_out: 'xo.csv', points_in: 'xi.json', kernel: 'g.csv' }));
    const k = readKernel(dir);
    expect(k.G.data[0 * 4 + 2]).toBeCloseTo(0.06, 15); // G(0.2, 0.7) = 0.06 (Stakgold & Holst ch. 1)
    expect(k.G.data[2 * 4 + 1]).toBeCloseTo(0.04, 15); // G(0.9, 0.4) = 0.04
    [0.2, 0.35, 0.3, 0.15].forEach((w, i) => expect(k.weightsIn[i]).toBeCloseTo(w, 15)); // trapezoid on 0, 0.4, 0.7, 1
    expect(k.homogeneous).toBeNull();
    expect(k.domain).toEqual({ kind: 'points' });
  });
  it('rejects a kernel whose shape disagrees with its points, and an unknown manifest format (exit 3)', () => {
    const dir = scratch('kbad');
    writeFileSync(join(dir, 'xo.csv'), '0.2\n0.5\n');
    writeFileSync(join(dir, 'xi.csv'), '0\n1\n');
    writeFileSync(join(dir, 'g.csv'), '1,2,3\n4,5,6\n');
    const man = { format: 'kerneldx-kernel/1', dimension: 1, points_out: 'xo.csv', points_in: 'xi.csv', kernel: 'g.csv' };
    writeFileSync(join(dir, 'kernel.json'), JSON.stringify(man));
    expect(() => readKernel(dir)).toThrow('g.csv: kernel is 2 × 3, expected 2 × 2 (output points × components by input points × components)');
    writeFileSync(join(dir, 'kernel.json'), JSON.stringify({ ...man, format: 'greens/2' }));
    expect(() => readKernel(dir)).toThrow(/kernel\.json: unknown format "greens\/2"/);
    expect(existsSync(join(dir, 'kernel.json'))).toBe(true);
  });
});
