import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { trapezoidWeights1d, quadratureWeights, tensorAxes } from '../../src/quadrature.js';
import { parseCsv } from '../../src/io/arrays.js';

const fixture = (name: string) => fileURLToPath(new URL(`../fixtures/${name}`, import.meta.url));

describe('quadrature weights', () => {
  it('trapezoid rule in 1-D, in any point order, integrates linear functions exactly', () => {
    const x = [0.7, 0, 0.2, 1, 0.45];
    const w = trapezoidWeights1d(x);
    // trapezoid weights: half the sum of the neighbouring gaps (any numerical analysis text)
    expect(Array.from(w).map((v) => Number(v.toFixed(14)))).toEqual([0.275, 0.1, 0.225, 0.15, 0.25]);
    const integral = x.reduce((s, xi, i) => s + w[i]! * (3 * xi - 1), 0);
    expect(integral).toBeCloseTo(0.5, 14); // ∫0^1 (3x − 1) dx = 1/2
  });
  it('product trapezoid rule on a tensor grid integrates bilinear functions exactly', () => {
    const xs = [0, 0.5, 1.5, 2], ys = [-1, 0, 1];
    const pts: number[] = [];
    for (const y of ys) for (const x of xs) pts.push(x, y);
    const P = { rows: 12, cols: 2, data: Float64Array.from(pts) };
    expect(tensorAxes(P)).toEqual({ xs, ys });
    const w = quadratureWeights(P, { kind: 'box', bounds: [[0, 2], [-1, 1]] });
    let area = 0, mom = 0;
    for (let i = 0; i < 12; i++) { area += w[i]!; mom += w[i]! * pts[2 * i]! * (pts[2 * i + 1]! + 2); }
    expect(area).toBeCloseTo(4, 14);
    expect(mom).toBeCloseTo(8, 13); // ∫0^2 x dx · ∫-1^1 (y + 2) dy = 2 · 4
  });
  it('Voronoi estimate on scattered points matches the exact cell areas from scipy.spatial.Voronoi within a few %', () => {
    const P = parseCsv(readFileSync(fixture('io_voronoi_points.csv'), 'utf8'), 'pts', false);
    const ref = JSON.parse(readFileSync(fixture('io_voronoi_areas.json'), 'utf8')) as { areas: Record<string, number> };
    const w = quadratureWeights(P, { kind: 'box', bounds: [[0, 1], [0, 1]] });
    let total = 0;
    for (const v of w) total += v;
    expect(total).toBeCloseTo(1, 12); // the cells tile the unit square
    const rel = Object.entries(ref.areas).map(([i, a]) => Math.abs(w[Number(i)]! - a) / a);
    expect(rel.length).toBeGreaterThan(30);
    const mean = rel.reduce((s, v) => s + v, 0) / rel.length;
    expect(mean).toBeLessThan(0.03);
    expect(Math.max(...rel)).toBeLessThan(0.1);
  });
});
