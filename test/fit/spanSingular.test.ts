/**
 * The span model's singular part (src/fit/spanSingular.ts) and its predicted error, against outside
 * references:
 *  - the diagonal cell values against a direct polar quadrature of the disk average (calculus);
 *  - −Δ on the unit square (Dirichlet), 24×24 points, 150 GP forcings (l = 0.1): truth from the
 *    simulator's eigenfunction series (greens-functions.md entry (l): Polyanin 2002 ch. 7; Duffy 2001;
 *    Stakgold & Holst — checked in test/simulate); targets from issue 3: kernel within 1.25× of the error
 *    of G restricted to the forcings' span, predicted error within [0.5, 2] of the actual one;
 *  - a non-symmetric operator −Δu + b·∇u on the same square: G_b(x, s) = e^{b·(x−s)/2} G_c(x, s) with
 *    G_c the Green's function of −Δ + |b|²/4 (substitution u = e^{b·x/2} v; Evans, PDE §2.2 style,
 *    standard — from memory), so no symmetry is assumed anywhere;
 *  - the fitted coefficient of −ln r/(2π) is 1/a for −a Δ (fundamental solution: Evans §2.2.1), on a disk
 *    (closed form by inversion: greens-functions.md entry (j), Evans §2.2.4).
 */
import { describe, it, expect } from 'vitest';
import { parseOperator, simulateStudy } from '../../src/simulate/index.js';
import { fitStudy } from '../../src/fit/index.js';
import { parseGrid } from '../../src/cli/common.js';
import { zeros, matmulNT, type Mat } from '../../src/linalg/dense.js';
import { Rng } from '../../src/linalg/rng.js';
import { prepare } from '../../src/fit/prepare.js';
import { singularKernel } from '../../src/fit/spanSingular.js';
import { spanOracleBound } from './spanBound.js';
import type { Study } from '../../src/types.js';

/** relative error in the W^{1/2}-weighted Frobenius norm (the norm of spanBound.ts) */
function weightedError(G: Mat, Gt: Mat, w: Float64Array): number {
  const n = G.cols, sw = Float64Array.from(w, Math.sqrt);
  let num = 0, den = 0;
  for (let i = 0; i < G.rows; i++) for (let k = 0; k < n; k++) { const t = Gt.data[i * n + k]! * sw[k]!; num += (G.data[i * n + k]! * sw[k]! - t) ** 2; den += t * t; }
  return Math.sqrt(num / den);
}

function relErr(a: Mat, b: Mat): number {
  let num = 0, den = 0;
  for (let i = 0; i < a.data.length; i++) { num += (a.data[i]! - b.data[i]!) ** 2; den += b.data[i]! ** 2; }
  return Math.sqrt(num / den);
}

const square = () => parseGrid('0:1:24,0:1:24');

describe('singular kernel cell values', () => {
  it('the diagonal holds the disk average of −ln r/(2π) and of r² ln r/(8π) (polar midpoint quadrature)', () => {
    const w = 0.0031, rho = Math.sqrt(w / Math.PI);
    const p: Mat = { rows: 1, cols: 2, data: Float64Array.from([0.3, 0.4]) };
    const avg = (f: (r: number) => number) => { let s = 0; const M = 200000; for (let k = 0; k < M; k++) { const r = ((k + 0.5) / M) * rho; s += f(r) * 2 * Math.PI * r * (rho / M); } return s / (Math.PI * rho * rho); };
    expect(singularKernel('log', p, p, Float64Array.from([w])).data[0]!).toBeCloseTo(avg((r) => -Math.log(r) / (2 * Math.PI)), 8);
    expect(singularKernel('r2log', p, p, Float64Array.from([w])).data[0]!).toBeCloseTo(avg((r) => (r * r * Math.log(r)) / (8 * Math.PI)), 10);
  });
});

describe('span model with a singular part (2-D)', () => {
  it('−Δ, unit square, noise 0.1 (seed 3): kernel within 1.25× of G restricted to the span; predicted error honest', () => {
    const pts = square();
    const sim = simulateStudy(parseOperator('domain=box(0,1,0,1); a=1'), { pointsIn: pts, count: 150, noise: 0.1, seed: 3, lengthScale: 0.1 });
    const f = fitStudy(sim.study, { seed: 3, replicates: 4 });
    const b = spanOracleBound(sim.truth.kernel.G, prepare(sim.study).FW, f.kernel.weightsIn, 1);
    const e = weightedError(f.kernel.G, sim.truth.kernel.G, f.kernel.weightsIn);
    expect(e / b.spanRestricted).toBeLessThanOrEqual(1.25); // issue 3 target
    const actual = relErr(f.kernel.G, sim.truth.kernel.G), pred = f.report.uncertainty.relative_kernel_error;
    expect(actual / pred).toBeGreaterThanOrEqual(0.5); // issue 3 (c): honest within [0.5, 2]
    expect(actual / pred).toBeLessThanOrEqual(2);
    const u = f.report.uncertainty as unknown as Record<string, number>;
    expect(u.relative_kernel_error_identified! ** 2 + u.relative_kernel_error_unidentified! ** 2).toBeCloseTo(pred ** 2, 12);
  });

  it('−Δ, unit square, noise 0: the predicted error is honest against the full kernel (was 1.7e-5 vs 8 %)', () => {
    const pts = square();
    const sim = simulateStudy(parseOperator('domain=box(0,1,0,1); a=1'), { pointsIn: pts, count: 150, noise: 0, seed: 2, lengthScale: 0.1 });
    const f = fitStudy(sim.study, { seed: 2, replicates: 4 });
    const actual = relErr(f.kernel.G, sim.truth.kernel.G), pred = f.report.uncertainty.relative_kernel_error;
    expect(actual / pred).toBeGreaterThanOrEqual(0.5);
    expect(actual / pred).toBeLessThanOrEqual(2);
    expect(f.report.coverage.complete).toBe(false);
  });

  it('non-symmetric −Δu + 8 ∂ₓu at noise 0.1: within 1.25× of the span restriction, no symmetry assumed', () => {
    const pts = square(), n = pts.rows, bx = 8;
    const sim = simulateStudy(parseOperator(`domain=box(0,1,0,1); a=1; c=${(bx * bx) / 4}`), { pointsIn: pts, count: 150, noise: 0, seed: 5, lengthScale: 0.1 });
    const G = sim.truth.kernel.G;
    for (let i = 0; i < n; i++) for (let k = 0; k < n; k++) G.data[i * n + k] *= Math.exp((bx * (pts.data[2 * i]! - pts.data[2 * k]!)) / 2);
    const w = sim.truth.kernel.weightsIn, F = sim.study.inputs.values, N = F.rows;
    const FW = zeros(N, n);
    for (let j = 0; j < N; j++) for (let k = 0; k < n; k++) FW.data[j * n + k] = F.data[j * n + k]! * w[k]!;
    const U = matmulNT(FW, G);
    let mean = 0;
    for (const v of U.data) mean += Math.abs(v) / U.data.length;
    const rng = new Rng(55);
    for (let i = 0; i < U.data.length; i++) U.data[i] += 0.1 * mean * rng.normal();
    const study: Study = { ...sim.study, outputs: { ...sim.study.outputs, values: U }, noise: undefined };
    const f = fitStudy(study, { seed: 5, replicates: 4 });
    const b = spanOracleBound(G, prepare(study).FW, f.kernel.weightsIn, 1);
    expect(weightedError(f.kernel.G, G, f.kernel.weightsIn) / b.spanRestricted).toBeLessThanOrEqual(1.25);
  });

  it('−2Δ on a disk, noise 0: the fitted coefficient of −ln r/(2π) is 1/a = 0.5', () => {
    const g = parseGrid('0:1:25,0:1:25'), keep: number[] = [];
    for (let i = 0; i < g.rows; i++) { const x = g.data[2 * i]!, y = g.data[2 * i + 1]!; if (Math.hypot(x - 0.5, y - 0.5) < 0.49) keep.push(x, y); }
    const pts: Mat = { rows: keep.length / 2, cols: 2, data: Float64Array.from(keep) };
    const sim = simulateStudy(parseOperator('domain=disk(0.5,0.5,0.5); a=2'), { pointsIn: pts, count: 150, noise: 0, seed: 4, lengthScale: 0.1 });
    const f = fitStudy(sim.study, { seed: 4, replicates: 2 });
    const h = f.report.hyperparameters as Record<string, number | string>;
    expect(String(h.singular_part)).toMatch(/^log/);
    expect(Number(h.singular_coefficient_median)).toBeCloseTo(0.5, 2);
  });
});
