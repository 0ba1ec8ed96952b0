/**
 * The span model, for 2-D and scattered points (and any study where the diagonal-kink form does not
 * apply): each kernel row g_i is estimated as the posterior mean of a Gaussian-process prior
 * g_i ~ GP(0, τ² K) given ũ_i = F̃ W g_i + noise (kriging of the row; Rasmussen & Williams, GPML 2006,
 * §2.2 and §6.2 for the equivalent regularised least squares):
 *     g_i = K W F̃ᵀ (F̃ W K W F̃ᵀ + λ I)⁻¹ ũ_i.
 * The prior K is chosen by GCV (Golub, Heath & Wahba 1979) among the white prior K = W⁻¹ (which gives
 * the minimum-norm kernel, G restricted to the forcings' span) and squared-exponential and
 * Matérn-5/2 covariances with length scales of 1, 2 and 4 point spacings; λ by GCV for each.
 * The kernel is confined to what the forcings identify and is reported as a restricted kernel.
 */
import type { Mat } from '../linalg/dense.js';
import { zeros, matmul, matmulNT } from '../linalg/dense.js';
import { eigSym, cholesky, choleskySolve } from '../linalg/decomp.js';
import type { Rng } from '../linalg/rng.js';
import { covarianceMatrix, medianSpacing, type Covariance } from '../design/gp.js';
import type { Prepared } from './prepare.js';
import type { Constraint } from './kink1d.js';
import { type CoreFit, scalingTest, responseSize } from './core.js';

interface Prior { name: string; kind: 'white' | Covariance; lengthScale: number }

/** K W F̃ᵀ for the prior (nIn·cIn × N), with F̃W given (N × nIn·cIn). */
function priorTimes(prep: Prepared, prior: Prior, FWc: Mat, Kcache: Map<string, Mat>): Mat {
  const n = prep.nIn, cIn = prep.cIn, N = FWc.rows;
  const out = zeros(n * cIn, N);
  if (prior.kind === 'white') {
    // K = W⁻¹: K W F̃ᵀ = F̃ᵀ
    for (let j = 0; j < N; j++) for (let q = 0; q < cIn; q++) for (let k = 0; k < n; k++) {
      const w = prep.weights[k]!;
      out.data[(q * n + k) * N + j] = w > 0 ? FWc.data[j * n * cIn + q * n + k]! / w : 0;
    }
    return out;
  }
  const key = `${prior.kind}:${prior.lengthScale}`;
  let K = Kcache.get(key);
  if (!K) { K = covarianceMatrix(prep.pointsIn, prior.kind, prior.lengthScale); Kcache.set(key, K); }
  for (let q = 0; q < cIn; q++) {
    const blk = zeros(n, N);
    for (let j = 0; j < N; j++) for (let k = 0; k < n; k++) blk.data[k * N + j] = FWc.data[j * n * cIn + q * n + k]!;
    const KB = matmul(K, blk);
    out.data.set(KB.data, q * n * N);
  }
  return out;
}

function centred(prep: Prepared, J: number[]): Mat {
  const cols = prep.nIn * prep.cIn;
  const out = zeros(J.length, cols);
  for (let c = 0; c < cols; c++) {
    let m = 0;
    for (const j of J) m += prep.FW.data[j * cols + c]!;
    m /= J.length;
    J.forEach((j, r) => { out.data[r * cols + c] = prep.FW.data[j * cols + c]! - m; });
  }
  return out;
}

interface SpanSolve {
  /** T = K W F̃ᵀ V (D + λ)⁻¹ Vᵀ (nIn·cIn × N): g_i = T ũ_i */
  T: Mat;
  lambda: number;
  dof: number;
  rss: number;
  gcv: number;
}

/** GCV over λ for complete rows Ũ (rows × N) given A = F̃ W K W F̃ᵀ. */
function gcvRows(A: Mat, KWF: Mat, Uc: Mat, nObs: number, fixedLambda?: number): SpanSolve {
  const N = A.rows, rows = Uc.rows;
  const e = eigSym(A);
  const d = Float64Array.from(e.values, (v) => Math.max(v, 0));
  const C = matmul(Uc, e.vectors); // rows × N: c_im
  const c2 = new Float64Array(N);
  for (let i = 0; i < rows; i++) for (let m = 0; m < N; m++) c2[m] += C.data[i * N + m]! ** 2;
  let yy = 0;
  for (const v of Uc.data) yy += v * v;
  const evalAt = (lam: number) => {
    let rss = 0, dof = 0;
    for (let m = 0; m < N; m++) { const f = lam / (d[m]! + lam); rss += f * f * c2[m]!; dof += d[m]! / (d[m]! + lam); }
    // directions with d = 0 are unfittable: their energy stays in the residual (included via f = 1)
    const used = c2.reduce((a, b) => a + b, 0);
    rss += Math.max(0, yy - used);
    dof *= rows;
    const den = nObs - dof;
    return { rss, dof, gcv: den > 0 ? (nObs * rss) / (den * den) : Infinity };
  };
  let lambda = fixedLambda ?? 0;
  if (fixedLambda === undefined) {
    const top = Math.max(d[0]!, 1e-300);
    let best = Infinity;
    for (let k = 0; k <= 80; k++) {
      const lam = top * Math.pow(10, -15 + (16 * k) / 80);
      const g = evalAt(lam).gcv;
      if (g < best) { best = g; lambda = lam; }
    }
  }
  const g = evalAt(lambda);
  // T = KWF V diag(1/(d+λ)) Vᵀ
  const Vs = zeros(N, N);
  for (let a = 0; a < N; a++) for (let m = 0; m < N; m++) Vs.data[a * N + m] = e.vectors.data[a * N + m]! / (d[m]! + lambda);
  const T = matmulNT(matmul(KWF, Vs), e.vectors);
  return { T, lambda, ...g };
}

export function fitPathSpan(prep: Prepared, sets: number[][], o: {
  constraint: Constraint; rng: Rng; replicates: number; sigmaKnown?: number; progress: (m: string) => void; scaling: boolean;
}): CoreFit {
  const { N, nOut, cOut, nIn, cIn } = prep;
  const colsOut = nOut * cOut, nI = nIn * cIn;
  const notes: string[] = [];
  if (o.constraint !== 'none') notes.push(`a ${o.constraint} refit is not implemented for the span model; the unconstrained kernel is used`);
  const all = Array.from({ length: N }, (_, j) => j);
  const complete: number[] = [], partial: number[] = [];
  for (let c = 0; c < colsOut; c++) (sets[c]!.length === N ? complete : partial).push(c);
  const h = medianSpacing(prep.pointsIn);
  const priors: Prior[] = [{ name: 'white', kind: 'white', lengthScale: 0 }];
  for (const kind of ['se', 'matern52'] as const) for (const m of [1, 2, 4]) priors.push({ name: `${kind}:${m}h`, kind, lengthScale: m * h });
  const Kcache = new Map<string, Mat>();
  const FWc = centred(prep, all);
  // centred responses of complete rows (used for the choice of prior and λ)
  const rowsForChoice = complete.length ? complete : partial;
  const Uc = zeros(rowsForChoice.length, N);
  rowsForChoice.forEach((c, r) => {
    const J = sets[c]!;
    let m = 0;
    for (const j of J) m += prep.U.data[j * colsOut + c]!;
    m /= J.length;
    for (const j of J) Uc.data[r * N + j] = prep.U.data[j * colsOut + c]! - m;
  });
  let nObsChoice = 0;
  for (const c of rowsForChoice) nObsChoice += sets[c]!.length - 1;
  o.progress(`span model: choosing the prior among ${priors.length} and λ by GCV`);
  let best: { prior: Prior; sol: SpanSolve; KWF: Mat; A: Mat } | null = null;
  const tried: string[] = [];
  for (const prior of priors) {
    const KWF = priorTimes(prep, prior, FWc, Kcache);
    const A = matmul(FWc, KWF);
    const sol = gcvRows(A, KWF, Uc, nObsChoice);
    tried.push(`${prior.name}=${sol.gcv.toPrecision(4)}`);
    if (!best || sol.gcv < best.sol.gcv) best = { prior, sol, KWF, A };
  }
  const { prior, sol } = best!;
  // kernel rows
  const G = zeros(colsOut, nI);
  const uh = new Float64Array(colsOut);
  const R = o.replicates;
  const repG = Array.from({ length: R }, () => zeros(colsOut, nI));
  const repUh = Array.from({ length: R }, () => new Float64Array(colsOut));
  const sigma2 = sol.rss / Math.max(1, nObsChoice - sol.dof);
  const sigmaRep = o.sigmaKnown ?? Math.sqrt(sigma2);
  // forcing means over all experiments (for u_h of complete rows)
  const fbar = new Float64Array(nI);
  for (let j = 0; j < N; j++) for (let c = 0; c < nI; c++) fbar[c] += prep.FW.data[j * nI + c]! / N;
  const rowU = (c: number, J: number[]) => J.map((j) => prep.U.data[j * colsOut + c]!);
  // complete rows: G = Ũ Tᵀ, replicates (Ĝ W F̃ᵀ + Ẽ) Tᵀ
  if (complete.length) {
    o.progress(`span model: ${complete.length} complete sensor rows`);
    const Ucomp = zeros(complete.length, N), ubar = new Float64Array(complete.length);
    complete.forEach((c, r) => {
      const u = rowU(c, all);
      const m = u.reduce((a, b) => a + b, 0) / N;
      ubar[r] = m;
      for (let j = 0; j < N; j++) Ucomp.data[r * N + j] = u[j]! - m;
    });
    const Gc = matmulNT(Ucomp, sol.T);
    const GWF = matmulNT(Gc, FWc); // Ĝ W F̃ᵀ (rows × N)
    complete.forEach((c, r) => {
      G.data.set(Gc.data.subarray(r * nI, (r + 1) * nI), c * nI);
      let s = 0;
      for (let k = 0; k < nI; k++) s += Gc.data[r * nI + k]! * fbar[k]!;
      uh[c] = ubar[r]! - s;
    });
    for (let rep = 0; rep < R; rep++) {
      const D = zeros(complete.length, N);
      const me = new Float64Array(complete.length);
      for (let r = 0; r < complete.length; r++) {
        let m = 0;
        const e = new Float64Array(N);
        for (let j = 0; j < N; j++) { e[j] = sigmaRep * o.rng.normal(); m += e[j]!; }
        m /= N; me[r] = m;
        for (let j = 0; j < N; j++) D.data[r * N + j] = GWF.data[r * N + j]! + e[j]! - m;
      }
      const Gr = matmulNT(D, sol.T);
      complete.forEach((c, r) => {
        repG[rep]!.data.set(Gr.data.subarray(r * nI, (r + 1) * nI), c * nI);
        let s = 0;
        for (let k = 0; k < nI; k++) s += (Gr.data[r * nI + k]! - Gc.data[r * nI + k]!) * fbar[k]!;
        repUh[rep]![c] = uh[c]! + me[r]! - s;
      });
    }
  }
  // rows with missing values: their own centring and a Cholesky solve per row
  if (partial.length) {
    o.progress(`span model: ${partial.length} sensor rows with missing values`);
    for (const c of partial) {
      const J = sets[c]!, nJ = J.length;
      const FJ = centred(prep, J);
      const KWF = priorTimes(prep, prior, FJ, Kcache);
      const A = matmul(FJ, KWF);
      for (let a = 0; a < nJ; a++) A.data[a * nJ + a] += sol.lambda;
      const L = cholesky(A);
      if (!L) throw new Error('span model: row system not positive definite');
      const u = rowU(c, J);
      const m = u.reduce((a, b) => a + b, 0) / nJ;
      const fb = new Float64Array(nI);
      for (const j of J) for (let k = 0; k < nI; k++) fb[k] += prep.FW.data[j * nI + k]! / nJ;
      const rhs = zeros(nJ, R + 1);
      for (let a = 0; a < nJ; a++) rhs.data[a * (R + 1)] = u[a]! - m;
      const coef = choleskySolve(L, rhs);
      const g = new Float64Array(nI);
      for (let k = 0; k < nI; k++) { let s = 0; for (let a = 0; a < nJ; a++) s += KWF.data[k * nJ + a]! * coef.data[a * (R + 1)]!; g[k] = s; }
      G.data.set(g, c * nI);
      let s0 = 0;
      for (let k = 0; k < nI; k++) s0 += g[k]! * fb[k]!;
      uh[c] = m - s0;
      // replicates: Ĝ's own responses plus fresh noise
      const gwf = new Float64Array(nJ);
      for (let a = 0; a < nJ; a++) { let s = 0; for (let k = 0; k < nI; k++) s += FJ.data[a * nI + k]! * g[k]!; gwf[a] = s; }
      const me = new Float64Array(R);
      for (let rep = 0; rep < R; rep++) {
        let mm = 0;
        const e = new Float64Array(nJ);
        for (let a = 0; a < nJ; a++) { e[a] = sigmaRep * o.rng.normal(); mm += e[a]!; }
        mm /= nJ; me[rep] = mm;
        for (let a = 0; a < nJ; a++) rhs.data[a * (R + 1) + rep + 1] = gwf[a]! + e[a]! - mm;
      }
      const cr = choleskySolve(L, rhs);
      for (let rep = 0; rep < R; rep++) {
        const gr = repG[rep]!.data.subarray(c * nI, (c + 1) * nI);
        let s = 0;
        for (let k = 0; k < nI; k++) { let v = 0; for (let a = 0; a < nJ; a++) v += KWF.data[k * nJ + a]! * cr.data[a * (R + 1) + rep + 1]!; gr[k] = v; s += (v - g[k]!) * fb[k]!; }
        repUh[rep]![c] = uh[c]! + me[rep]! - s;
      }
    }
  }
  // scaling test: residual energy per experiment against amplitude (complete rows)
  let scaling = null;
  if (o.scaling && complete.length) {
    const resE = new Float64Array(N), resN = new Float64Array(N), predE = new Float64Array(N);
    for (const c of complete) {
      const J = sets[c]!;
      const u = rowU(c, J), m = u.reduce((a, b) => a + b, 0) / J.length;
      for (const j of J) {
        let pred = 0;
        for (let k = 0; k < nI; k++) pred += G.data[c * nI + k]! * FWc.data[j * nI + k]!;
        const r = prep.U.data[j * colsOut + c]! - m - pred;
        resE[j] += r * r; resN[j]++; predE[j] += pred * pred;
      }
    }
    scaling = scalingTest(responseSize(predE, resN), resE, resN);
  }
  return {
    method: 'span model: GP-prior ridge of each kernel row on the forcings\' span (kriging), prior and λ by GCV',
    hyper: { prior: prior.name, prior_length_scale: prior.lengthScale, lambda: sol.lambda, effective_parameters: sol.dof, priors_tried: tried.join(' ') },
    G, uh, rss: sol.rss, dof: sol.dof, nObs: nObsChoice, yy: frob2(Uc), gcvMse: sol.gcv,
    sigma: Math.sqrt(sigma2), replicates: repG, homogeneousReplicates: repUh, scaling, notes,
    constraint: 'none', complete: false, inputDof: nI,
  };
}

function frob2(m: Mat): number {
  let s = 0;
  for (const v of m.data) s += v * v;
  return s;
}
