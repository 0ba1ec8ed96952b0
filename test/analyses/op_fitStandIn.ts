/**
 * A stand-in for the project's fit in the operator tests: a resolution-limited, noisy kernel
 * with the error sizes the prototype measured (shared/feasibility-1d.md, table "Fitting").
 *   Ĝ = P_K G P_K + E,   E = Σ_{m,n ≤ K} ε_mn φ_m(x) φ_n(s),  φ_m = √2 sin(mπx),
 * with ε iid Gaussian scaled so that ‖E‖ = err · ‖G‖ (L² norms). Replicates are Ĝ plus fresh
 * draws of E, like bootstrap kernels spread around the estimate. K falls with the noise
 * (the forcings identify ~40 modes at noise 0, fewer as the noise rises: our assumption).
 * The errors are correlated and band-limited like a real fit's, unlike iid perturbations.
 */
import type { Kernel, NoiseFloor } from '../../src/types.js';
import type { Mat } from '../../src/linalg/dense.js';
import { zeros, matmul, matmulTN, matmulNT } from '../../src/linalg/dense.js';
import { Rng } from '../../src/linalg/rng.js';

export interface StandIn { kernel: Kernel; noise: NoiseFloor; K: number; err: number }

/** modes kept per noise level (assumption stated above) */
export const MODES: Record<string, number> = { '0': 40, '0.01': 30, '0.1': 20, '1': 12 };

function sineBasis(x: ArrayLike<number>, K: number): Mat {
  const B = zeros(x.length, K);
  for (let i = 0; i < x.length; i++) for (let m = 0; m < K; m++) B.data[i * K + m] = Math.SQRT2 * Math.sin((m + 1) * Math.PI * x[i]!);
  return B;
}

/** err: relative L² kernel error (prototype table); noise: the study noise level it belongs to. */
export function fitStandIn(truth: Kernel, opts: { noise: number; err: number; seed: number; replicates?: number; modes?: number }): StandIn {
  const K = opts.modes ?? MODES[String(opts.noise)] ?? 20;
  const xo = truth.pointsOut.data, xi = truth.pointsIn.data;
  const Bo = sineBasis(xo, K), Bi = sineBasis(xi, K);
  const wo = truth.weightsIn, wi = truth.weightsIn;
  // coefficients C = Boᵀ W G W Bi
  const WBo = zeros(Bo.rows, K), WBi = zeros(Bi.rows, K);
  for (let i = 0; i < Bo.rows; i++) for (let m = 0; m < K; m++) WBo.data[i * K + m] = wo[i]! * Bo.data[i * K + m]!;
  for (let i = 0; i < Bi.rows; i++) for (let m = 0; m < K; m++) WBi.data[i * K + m] = wi[i]! * Bi.data[i * K + m]!;
  const C = matmul(matmulTN(WBo, truth.G), WBi);
  let l2 = 0;
  for (let i = 0; i < truth.G.rows; i++) for (let k = 0; k < truth.G.cols; k++) l2 += wo[i]! * wi[k]! * truth.G.data[i * truth.G.cols + k]! ** 2;
  const sd = (opts.err * Math.sqrt(l2)) / K;
  const rng = new Rng(opts.seed);
  const draw = (base: Mat): Mat => {
    const c = { rows: K, cols: K, data: new Float64Array(base.data) };
    for (let i = 0; i < c.data.length; i++) c.data[i] += sd * rng.normal();
    return c;
  };
  const toG = (c: Mat): Mat => matmulNT(matmul(Bo, c), Bi);
  const Chat = draw(C);
  const reps = Array.from({ length: opts.replicates ?? 20 }, () => toG(draw(Chat)));
  return {
    kernel: { ...truth, G: toG(Chat), homogeneous: null }, K, err: opts.err,
    noise: { replicates: reps, homogeneousReplicates: [], source: 'bootstrap', assumption: 'test stand-in: band-limited Gaussian kernel error' },
  };
}
