/**
 * Which part of G the forcings identify. The centred, quadrature-weighted forcings
 * S = F̃ W^{1/2} (N × n_in) have right singular vectors v_m (input directions) and singular values
 * s_m. Direction m is identified when the response energy it produces over all experiments,
 * s_m² ‖Ĝ W^{1/2} v_m‖², exceeds the noise energy of its projection, n_out σ² (signal-to-noise ≥ 1,
 * common practice). The identified energy fraction is ‖Ĝ W^{1/2} P‖²_F / ‖Ĝ W^{1/2}‖²_F with P the
 * projector on the identified directions; for a kernel that is itself confined to the span
 * (the span model) the energy outside is extrapolated from the decay of the per-direction energies.
 */
import type { Mat } from '../linalg/dense.js';
import { zeros, matmul, matmulNT } from '../linalg/dense.js';
import { eigSym } from '../linalg/decomp.js';
import { symmetricEigen } from './spectral.js';
import type { Prepared } from './prepare.js';

export interface Coverage {
  identified_energy_fraction: number;
  identified_rank: number;
  excited_directions: number;
  unexcited_inputs: number;
  input_dimension: number;
  energy_outside_model: boolean;
}

/** The forcings' input directions: S, its column weights √w, the unexcited count and the eigen-decomposition of S Sᵀ. */
interface InputDirections { sw: Float64Array; S: Mat; unexcited: number; e: { values: Float64Array | number[]; vectors: Mat } }

/**
 * The directions of the last forcings seen, kept for the next fit of the same experiments (a pipeline fits one
 * study several times): reused only when the weighted forcings and the weights are equal entry for entry.
 */
let lastDirections: { FW: Float64Array; weights: Float64Array; N: number; n: number; value: InputDirections } | null = null;

function inputDirections(prep: Prepared): InputDirections {
  const { N, nIn, cIn } = prep;
  const n = nIn * cIn;
  const hit = lastDirections;
  if (hit && hit.N === N && hit.n === n && sameEntries(hit.FW, prep.FW.data) && sameEntries(hit.weights, prep.weights)) return hit.value;
  const sw = new Float64Array(n);
  for (let q = 0; q < cIn; q++) for (let k = 0; k < nIn; k++) sw[q * nIn + k] = Math.sqrt(prep.weights[k]!);
  // S = F̃ W^{1/2}: FW holds f·w, so divide by sqrt(w)
  const S = zeros(N, n);
  for (let c = 0; c < n; c++) {
    let m = 0;
    for (let j = 0; j < N; j++) m += prep.FW.data[j * n + c]!;
    m /= N;
    const s = sw[c]! > 0 ? 1 / sw[c]! : 0;
    for (let j = 0; j < N; j++) S.data[j * n + c] = (prep.FW.data[j * n + c]! - m) * s;
  }
  // unexcited inputs: no variation of the forcing at that point
  let maxVar = 0;
  const vars = new Float64Array(n);
  for (let c = 0; c < n; c++) { let v = 0; for (let j = 0; j < N; j++) v += S.data[j * n + c]! ** 2; vars[c] = v; maxVar = Math.max(maxVar, v); }
  let unexcited = 0;
  for (let c = 0; c < n; c++) if (vars[c]! <= 1e-8 * maxVar) unexcited++;
  // S Sᵀ = U diag(s²) Uᵀ, v_m = Sᵀ u_m / s_m
  const SSt = matmulNT(S, S);
  const e = symmetricEigen(SSt) ?? eigSym(SSt);
  const value = { sw, S, unexcited, e };
  lastDirections = { FW: Float64Array.from(prep.FW.data), weights: Float64Array.from(prep.weights), N, n, value };
  return value;
}

function sameEntries(a: ArrayLike<number>, b: ArrayLike<number>): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}

export function coverage(prep: Prepared, G: Mat, sigma: number, extrapolate: boolean): Coverage {
  const { N, nIn, cIn } = prep;
  const n = nIn * cIn;
  const { sw, S, unexcited, e } = inputDirections(prep);
  const top = Math.max(e.values[0]!, 1e-300);
  const rows = G.rows;
  // GW^{1/2}
  const GW = zeros(rows, n);
  for (let i = 0; i < rows; i++) for (let c = 0; c < n; c++) GW.data[i * n + c] = G.data[i * n + c]! * sw[c]!;
  let total = 0;
  for (const v of GW.data) total += v * v;
  const energies: number[] = [];
  let identified = 0, excited = 0, idEnergy = 0;
  // ĜW^{1/2} v_m = (ĜW^{1/2} Sᵀ) u_m / s_m for all m at once: two matrix products
  const GU = matmul(matmulNT(GW, S), e.vectors);
  for (let m = 0; m < N; m++) {
    const s2 = e.values[m]!;
    if (!(s2 > 1e-12 * top)) break;
    excited++;
    let en = 0;
    for (let i = 0; i < rows; i++) { const t = GU.data[i * N + m]!; en += t * t; }
    en /= s2;
    energies.push(en);
    if (s2 * en >= rows * sigma * sigma) { identified++; idEnergy += en; }
  }
  let fraction: number;
  if (!extrapolate) fraction = total > 0 ? Math.min(1, idEnergy / total) : 0;
  else {
    // extrapolate the energies of the identified directions (power law over their upper half) to all n directions
    const m0 = Math.max(1, Math.floor(identified / 2));
    const xs: number[] = [], ys: number[] = [];
    for (let m = m0; m < identified; m++) if (energies[m]! > 0) { xs.push(Math.log(m + 1)); ys.push(Math.log(energies[m]!)); }
    let tail = 0;
    if (xs.length >= 3) {
      const mx = xs.reduce((a, b) => a + b, 0) / xs.length, my = ys.reduce((a, b) => a + b, 0) / ys.length;
      let sxy = 0, sxx = 0;
      for (let k = 0; k < xs.length; k++) { sxy += (xs[k]! - mx) * (ys[k]! - my); sxx += (xs[k]! - mx) ** 2; }
      const slope = Math.min(-1.0001, sxx > 0 ? sxy / sxx : -2);
      const c0 = my - slope * mx;
      for (let m = identified; m < n; m++) tail += Math.exp(c0 + slope * Math.log(m + 1));
    }
    fraction = idEnergy / Math.max(idEnergy + tail, 1e-300);
  }
  return { identified_energy_fraction: fraction, identified_rank: identified, excited_directions: excited, unexcited_inputs: unexcited, input_dimension: n, energy_outside_model: !extrapolate };
}
