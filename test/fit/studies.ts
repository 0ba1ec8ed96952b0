/**
 * Synthetic studies for the estimator's tests, built from the closed-form Green's functions of
 * shared/references/greens-functions.md (see test/helpers/closedForms.ts for the source of each):
 * forcings are GP draws (src/design/gp.ts), responses u = G W f + u_h + noise per interface.md §1,
 * noise std = level × mean|u| over all noise-free responses (seeded).
 */
import type { Study } from '../../src/types.js';
import type { Mat } from '../../src/linalg/dense.js';
import { zeros } from '../../src/linalg/dense.js';
import { Rng } from '../../src/linalg/rng.js';
import { gpDraws } from '../../src/design/gp.js';
import { quadratureWeights } from '../../src/quadrature.js';
import { type G1, sampleKernel, uniformGrid } from '../helpers/closedForms.js';

export interface Synthetic {
  study: Study;
  /** exact kernel at (sensor, actuator) points */
  G: Mat;
  homogeneous: Float64Array | null;
  sigma: number;
}

export interface SynthOptions {
  nIn?: number;
  /** sensor positions (default: the actuator points) */
  xOut?: Float64Array;
  xIn?: Float64Array;
  count?: number;
  noise?: number;
  seed?: number;
  lengthScale?: number;
  homogeneous?: (x: number) => number;
  /** per-experiment amplitude range (uniform) */
  amplitudes?: [number, number];
  /** a nonlinear forward map replacing u = G W f (noise added after) */
  forward?: (f: Float64Array) => Float64Array;
  /** forcings to use instead of GP draws (count × nIn) */
  forcings?: Mat;
  /** fraction of response values removed at random (missing) */
  missing?: number;
  stateNoise?: boolean;
}

export function synth1d(g: G1, o: SynthOptions = {}): Synthetic {
  const nIn = o.nIn ?? 200, N = o.count ?? 100, seed = o.seed ?? 1;
  const xIn = o.xIn ?? uniformGrid(nIn);
  const xOut = o.xOut ?? new Float64Array(xIn);
  const pointsIn: Mat = { rows: xIn.length, cols: 1, data: xIn };
  const pointsOut: Mat = { rows: xOut.length, cols: 1, data: xOut };
  const domain = { kind: 'interval' as const, bounds: [0, 1] as [number, number] };
  const w = quadratureWeights(pointsIn, domain);
  const F = o.forcings ?? gpDraws(pointsIn, N, { lengthScale: o.lengthScale ?? 0.03, seed: seed * 7919 + 13 });
  const rng = new Rng(seed * 104729 + 7);
  if (o.amplitudes) {
    const [a, b] = o.amplitudes;
    for (let j = 0; j < N; j++) { const s = a + (b - a) * rng.uniform(); for (let k = 0; k < xIn.length; k++) F.data[j * xIn.length + k] *= s; }
  }
  const G = sampleKernel(g, xOut, xIn);
  const uh = o.homogeneous ? Float64Array.from(xOut, o.homogeneous) : null;
  const U = zeros(N, xOut.length);
  for (let j = 0; j < N; j++) {
    const f = F.data.subarray(j * xIn.length, (j + 1) * xIn.length);
    let u: Float64Array;
    if (o.forward) u = o.forward(f);
    else {
      u = new Float64Array(xOut.length);
      for (let i = 0; i < xOut.length; i++) { let s = 0; for (let k = 0; k < xIn.length; k++) s += G.data[i * xIn.length + k]! * w[k]! * f[k]!; u[i] = s; }
    }
    for (let i = 0; i < xOut.length; i++) U.data[j * xOut.length + i] = u[i]! + (uh ? uh[i]! : 0);
  }
  let meanAbs = 0;
  for (const v of U.data) meanAbs += Math.abs(v);
  meanAbs /= U.data.length;
  const sigma = (o.noise ?? 0) * meanAbs;
  for (let i = 0; i < U.data.length; i++) U.data[i] += sigma * rng.normal();
  if (o.missing) for (let i = 0; i < U.data.length; i++) if (rng.uniform() < o.missing) U.data[i] = NaN;
  const study: Study = {
    dimension: 1,
    inputs: { points: pointsIn, values: F, components: 1 },
    outputs: { points: pointsOut, values: U, components: 1 },
    domain,
    noise: o.stateNoise ? { sigma } : undefined,
  };
  return { study, G, homogeneous: uh, sigma };
}
