/**
 * Coupling of a system's fields: which input component drives which output component.
 *
 * G is block-structured (component-major); block (i, j) maps input field j to output field i.
 * The matrix entry M_ij = ‖G_ij‖_W / ‖G_ii‖_W (each row scaled by its diagonal block, as
 * interface.md §5 asks; with c_in ≠ c_out rows are scaled by their largest block). An
 * off-diagonal block counts when its norm clears 3× the replicates' spread of the same norm
 * (the shared decision rule); it is absent within 1.5×. Symmetry of the block structure:
 * ‖G_ij − G_jiᵀ‖ against its floor, i.e. whether G_ij(x, s) = G_ji(s, x).
 */
import type { Analysis, AnalysisOutput, Context } from './analysis.js';
import type { Findings, Kernel, YesNo } from '../types.js';
import type { Mat } from '../linalg/dense.js';
import { zeros } from '../linalg/dense.js';
import { replicates, deviations, weightsOut, weightedNorm, rms, decide, sig, squareView } from './util/a_common.js';
import { numberOption } from './selfAdjoint.js';

type F = Findings['coupling'];

export function block(G: Mat, i: number, j: number, nOut: number, nIn: number): Mat {
  const B = zeros(nOut, nIn);
  for (let a = 0; a < nOut; a++) for (let b = 0; b < nIn; b++) B.data[a * nIn + b] = G.data[(i * nOut + a) * G.cols + j * nIn + b]!;
  return B;
}

export interface CouplingTable {
  matrix: number[][];
  floor: number[][];
  present: ('present' | 'absent' | 'inconclusive')[][];
  confidence: number[][];
}

export function couplingTable(kernel: Kernel, reps: Mat[], resolution = 0.05): CouplingTable {
  const co = kernel.components.out, ci = kernel.components.in;
  const nOut = kernel.pointsOut.rows, nIn = kernel.pointsIn.rows;
  const wo = weightsOut(kernel), wi = kernel.weightsIn;
  const devs = deviations(reps);
  const norms = Array.from({ length: co }, (_, i) => Array.from({ length: ci }, (_, j) => weightedNorm(block(kernel.G, i, j, nOut, nIn), wo, wi)));
  const matrix: number[][] = [], floor: number[][] = [], present: CouplingTable['present'] = [], confidence: number[][] = [];
  for (let i = 0; i < co; i++) {
    const ref = i < ci && norms[i]![i]! > 0 ? norms[i]![i]! : Math.max(...norms[i]!);
    matrix.push([]); floor.push([]); present.push([]); confidence.push([]);
    for (let j = 0; j < ci; j++) {
      const m = ref > 0 ? norms[i]![j]! / ref : NaN;
      const f = devs.length ? rms(devs.map((d) => weightedNorm(block(d, i, j, nOut, nIn), wo, wi))) / ref : NaN;
      const d = i === j ? { decision: 'present' as const, confidence: 1 } : decide(m, f, resolution);
      matrix[i]!.push(sig(m, 4) ?? NaN); floor[i]!.push(sig(f, 3) ?? NaN); present[i]!.push(d.decision); confidence[i]!.push(d.confidence);
    }
  }
  return { matrix, floor, present, confidence };
}

export const coupling: Analysis<F> = {
  key: 'coupling',
  run(kernel: Kernel, ctx: Context): AnalysisOutput<F> {
    const explanation =
      'For a system of several fields, the kernel splits into blocks: block (i, j) says how strongly forcing field j moves response field i. ' +
      'Each row is divided by its own diagonal block, so an entry of 0.3 means field j drives field i with 30 % of the strength of field i\'s own forcing. ' +
      'An off-diagonal block counts as a coupling when it clearly exceeds the size that resampling noise alone gives it.';
    const co = kernel.components.out, ci = kernel.components.in;
    if (co === 1 && ci === 1) {
      return {
        finding: { verdict: 'not-applicable', matrix: null },
        evidence: { statistic: null, noise_floor: null, summary: 'A single field: coupling does not apply.', explanation },
      };
    }
    const t = couplingTable(kernel, replicates(ctx), numberOption(ctx, 'couplingResolution', 0.05));
    // verdict over pairs of fields
    let anyPresent = false, anyInconclusive = false, twoWay = false;
    let conf = 1;
    const c = Math.min(co, ci);
    for (let i = 0; i < co; i++) for (let j = 0; j < ci; j++) {
      if (i === j) continue;
      const p = t.present[i]![j]!;
      if (p === 'present') anyPresent = true;
      if (p === 'inconclusive') anyInconclusive = true;
      conf = Math.min(conf, t.confidence[i]![j]!);
      if (i < c && j < c && p === 'present' && t.present[j]![i] === 'present') twoWay = true;
    }
    let verdict: F['verdict'];
    if (twoWay) verdict = 'two-way';
    else if (anyInconclusive) verdict = 'inconclusive';
    else verdict = anyPresent ? 'one-way' : 'none';
    if (twoWay) {
      conf = 1;
      for (let i = 0; i < c; i++) for (let j = 0; j < c; j++) if (i !== j && t.present[i]![j] === 'present' && t.present[j]![i] === 'present') conf = Math.min(conf, Math.max(t.confidence[i]![j]!, 0));
    }
    // symmetry of the block structure: G_ij(x, s) against G_ji(s, x)
    let symmetric: YesNo = 'inconclusive';
    let symStat: number | null = null, symFloor: number | null = null;
    const view = squareView(kernel);
    if (view && co === ci) {
      const G = view.map(kernel.G);
      const n = view.w.length;
      const devs = deviations(replicates(ctx).map(view.map));
      const skewOff = (M: Mat) => {
        let s = 0;
        for (let i = 0; i < co; i++) for (let j = i + 1; j < co; j++) for (let a = 0; a < n; a++) for (let b = 0; b < n; b++) {
          const v = M.data[(i * n + a) * M.cols + j * n + b]! - M.data[(j * n + b) * M.cols + i * n + a]!;
          s += view.w[a]! * view.w[b]! * v * v;
        }
        return Math.sqrt(s);
      };
      let den = 0;
      for (let i = 0; i < co; i++) for (let j = 0; j < co; j++) if (i !== j) den += weightedNorm(block(G, i, j, n, n), view.w, view.w) ** 2;
      den = Math.sqrt(den);
      if (den > 0) {
        symStat = skewOff(G) / den;
        symFloor = devs.length ? rms(devs.map((d) => skewOff(d) / den)) : NaN;
        const d = decide(symStat, symFloor, 0.2);
        symmetric = d.decision === 'present' ? 'no' : d.decision === 'absent' ? 'yes' : 'inconclusive';
      }
    }
    const fmt = (m: number[][]) => m.map((r) => `[${r.map((v) => v.toPrecision(2)).join(', ')}]`).join(' ');
    return {
      finding: {
        verdict,
        matrix: t.matrix,
        confidence: verdict === 'inconclusive' ? 0.5 : sig(conf, 3),
        noise_floor: t.floor,
        drives: t.present,
        symmetric,
        symmetry_defect: sig(symStat, 3),
      },
      evidence: {
        statistic: sig(Math.max(...t.matrix.flatMap((r, i) => r.filter((_, j) => j !== i))), 4),
        noise_floor: sig(Math.max(...t.floor.flatMap((r, i) => r.filter((_, j) => j !== i))), 3),
        summary: `Block strengths ${fmt(t.matrix)} against floors ${fmt(t.floor)}: coupling ${verdict}; block structure symmetric: ${symmetric}.`,
        explanation,
        plot: { kind: 'matrix', matrix: t.matrix, floor: t.floor, drives: t.present },
      },
    };
  },
};
