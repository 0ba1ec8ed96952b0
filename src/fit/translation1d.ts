/**
 * Translation-invariant refit in 1-D: G(x, s) = h(x − s) + Σ_ab C_ab φ_a(x) ψ_b(s), with
 * h(t) = a(t) + sign(t) b(t) (the diagonal kink of a constant-coefficient operator) in orthonormal
 * Legendre polynomials of t = x − s on [−L, L], plus a low-degree smooth tensor part (size K_c ≤ 4) for the
 * boundary correction, which on a bounded interval is of low rank (the order of the operator;
 * shared/feasibility-1d.md: "Toeplitz + low rank"). Linear in the coefficients: ridge with the
 * degree-weighted penalty, (K_t, K_c, λ) by GCV (Golub, Heath & Wahba 1979). Scalar studies only.
 */
import type { Mat } from '../linalg/dense.js';
import { zeros, matmulTN } from '../linalg/dense.js';
import type { Rng } from '../linalg/rng.js';
import type { Prepared } from './prepare.js';
import { legendreBasis } from './basis.js';
import { type NormalSystem, ridgeSpectrum, gcvMinimise, RidgeSolver, type GcvPoint } from './spectral.js';
import type { CoreFit } from './core.js';

const KT = [4, 6, 8, 12, 16, 20, 24];
const KC = [0, 2, 3, 4];

interface Layout { Kt: number; Kc: number; idx: number[]; P: Float64Array }

/** Row features at the largest sizes: [h-part a (KTmax), h-part b (KTmax), tensor part (KCmax²)]. */
function rowFeatures(prep: Prepared, i: number, Ktm: number, Kcm: number, Phi: Mat, Psi: Mat, L: number, out: Float64Array): void {
  const { N, nIn } = prep;
  const F = 2 * Ktm + Kcm * Kcm;
  out.fill(0);
  const xi = prep.pointsOut.data[i]!;
  const t = new Float64Array(nIn);
  for (let k = 0; k < nIn; k++) t[k] = xi - prep.pointsIn.data[k]!;
  const Q = legendreBasis(t, Ktm, -L, L);
  for (let j = 0; j < N; j++) {
    const o = j * F;
    for (let k = 0; k < nIn; k++) {
      const fw = prep.FW.data[j * nIn + k]!;
      if (fw === 0) continue;
      const sg = Math.sign(t[k]!);
      for (let b = 0; b < Ktm; b++) { const v = fw * Q.data[k * Ktm + b]!; out[o + b] += v; out[o + Ktm + b] += sg * v; }
      for (let b = 0; b < Kcm; b++) {
        const v = fw * Psi.data[k * Kcm + b]!;
        for (let a = 0; a < Kcm; a++) out[o + 2 * Ktm + a * Kcm + b] += Phi.data[i * Kcm + a]! * v;
      }
    }
  }
}

export function fitPathTranslation(prep: Prepared, sets: number[][], o: { rng: Rng; replicates: number; sigmaKnown?: number; progress: (m: string) => void }): CoreFit {
  const { N, nIn, nOut } = prep;
  const [lo, hi] = prep.box[0]!;
  const L = hi - lo;
  const Ktm = Math.min(KT[KT.length - 1]!, Math.max(4, Math.floor(nIn / 3))), Kcm = KC[KC.length - 1]!;
  const F = 2 * Ktm + Kcm * Kcm;
  const Phi = legendreBasis(prep.pointsOut.data, Kcm, lo, hi), Psi = legendreBasis(prep.pointsIn.data, Kcm, lo, hi);
  o.progress('translation-invariant refit: h(x − s) with a diagonal kink plus a low-rank boundary part');
  const M = zeros(F, F), r = new Float64Array(F);
  let yy = 0, nObs = 0;
  const X = new Float64Array(N * F);
  const xbar = new Float64Array(nOut * F), ubar = new Float64Array(nOut);
  const rows: Float64Array[] = [];
  for (let i = 0; i < nOut; i++) {
    rowFeatures(prep, i, Ktm, Kcm, Phi, Psi, L, X);
    const J = sets[i]!;
    const xb = xbar.subarray(i * F, (i + 1) * F);
    let ub = 0;
    for (const j of J) { ub += prep.U.data[j * nOut + i]!; for (let f = 0; f < F; f++) xb[f] += X[j * F + f]!; }
    ub /= J.length; ubar[i] = ub;
    for (let f = 0; f < F; f++) xb[f] /= J.length;
    const Xc = zeros(J.length, F);
    J.forEach((j, n) => {
      const u = prep.U.data[j * nOut + i]! - ub;
      yy += u * u;
      for (let f = 0; f < F; f++) { const v = X[j * F + f]! - xb[f]!; Xc.data[n * F + f] = v; r[f] += v * u; }
    });
    nObs += J.length - 1;
    const Q = matmulTN(Xc, Xc);
    for (let u = 0; u < F * F; u++) M.data[u] += Q.data[u]!;
    rows.push(Xc.data);
  }
  const penalty = (Kt: number, Kc: number): Layout => {
    const idx: number[] = [], P: number[] = [];
    for (let part = 0; part < 2; part++) for (let b = 0; b < Kt; b++) { idx.push(part * Ktm + b); P.push((1 + b) ** 2); }
    for (let a = 0; a < Kc; a++) for (let b = 0; b < Kc; b++) { idx.push(2 * Ktm + a * Kcm + b); P.push(((1 + a) * (1 + b)) ** 2); }
    return { Kt, Kc, idx, P: Float64Array.from(P) };
  };
  const sub = (lay: Layout): NormalSystem => {
    const n = lay.idx.length;
    const Ms = zeros(n, n), rs = new Float64Array(n);
    for (let u = 0; u < n; u++) { rs[u] = r[lay.idx[u]!]!; for (let v = 0; v < n; v++) Ms.data[u * n + v] = M.data[lay.idx[u]! * F + lay.idx[v]!]!; }
    return { M: Ms, r: rs, yy, nObs };
  };
  let best: { lay: Layout; g: GcvPoint; sys: NormalSystem } | null = null;
  for (const Kt of KT.filter((k) => k <= Ktm)) for (const Kc of KC) {
    const lay = penalty(Kt, Kc), sys = sub(lay);
    const g = gcvMinimise(ridgeSpectrum(sys, lay.P));
    if (!best || g.gcv < best.g.gcv) best = { lay, g, sys };
  }
  const { lay, g, sys } = best!;
  const solver = new RidgeSolver(sys, lay.P, g.lambda);
  const eta = solver.solveVec(sys.r);
  const full = (e: Float64Array) => { const th = new Float64Array(F); lay.idx.forEach((ix, u) => { th[ix] = e[u]!; }); return th; };
  const kernelOf = (th: Float64Array): Mat => {
    const G = zeros(nOut, nIn);
    const t = new Float64Array(nIn);
    for (let i = 0; i < nOut; i++) {
      const xi = prep.pointsOut.data[i]!;
      for (let k = 0; k < nIn; k++) t[k] = xi - prep.pointsIn.data[k]!;
      const Qb = legendreBasis(t, Ktm, -L, L);
      for (let k = 0; k < nIn; k++) {
        const sg = Math.sign(t[k]!);
        let v = 0;
        for (let b = 0; b < Ktm; b++) v += Qb.data[k * Ktm + b]! * (th[b]! + sg * th[Ktm + b]!);
        for (let a = 0; a < Kcm; a++) for (let b = 0; b < Kcm; b++) v += Phi.data[i * Kcm + a]! * th[2 * Ktm + a * Kcm + b]! * Psi.data[k * Kcm + b]!;
        G.data[i * nIn + k] = v;
      }
    }
    return G;
  };
  const uhOf = (th: Float64Array, shift?: Float64Array): Float64Array => Float64Array.from({ length: nOut }, (_, i) => {
    let s = 0;
    for (let f = 0; f < F; f++) s += xbar[i * F + f]! * th[f]!;
    return ubar[i]! + (shift ? shift[i]! : 0) - s;
  });
  const theta = full(eta);
  const G = kernelOf(theta), uh = uhOf(theta);
  const sigma2 = g.rss / Math.max(1, nObs - g.dof);
  const sigma = o.sigmaKnown ?? Math.sqrt(sigma2);
  // parametric bootstrap with the factorisation reused: η* = (M + λP)⁻¹ (M η̂ + Xᵀ ε̃)
  const n = eta.length;
  const Me = new Float64Array(n);
  for (let a = 0; a < n; a++) { let s = 0; for (let b = 0; b < n; b++) s += sys.M.data[a * n + b]! * eta[b]!; Me[a] = s; }
  const base = solver.solveVec(Me);
  const replicates: Mat[] = [], homogeneousReplicates: Float64Array[] = [];
  for (let rep = 0; rep < o.replicates; rep++) {
    const rhs = new Float64Array(n), me = new Float64Array(nOut);
    for (let i = 0; i < nOut; i++) {
      const J = sets[i]!, Xc = rows[i]!;
      const e = J.map(() => sigma * o.rng.normal());
      const m = e.reduce((a, b) => a + b, 0) / e.length;
      me[i] = m;
      lay.idx.forEach((ix, u) => { let s = 0; for (let q = 0; q < J.length; q++) s += Xc[q * F + ix]! * (e[q]! - m); rhs[u] += s; });
    }
    const d = solver.solveVec(rhs);
    for (let u = 0; u < n; u++) d[u] += base[u]!;
    const th = full(d);
    replicates.push(kernelOf(th));
    homogeneousReplicates.push(uhOf(th, me));
  }
  return {
    method: 'translation-invariant refit: h(x − s) = a(x − s) + sign(x − s) b(x − s) plus a low-rank smooth boundary part, ridge with GCV',
    hyper: { basis: 'legendre', constraint: 'translation', kernel_size: lay.Kt, boundary_part_size: lay.Kc, lambda: g.lambda, effective_parameters: g.dof },
    G, uh, rss: g.rss, dof: g.dof, nObs, yy, gcvMse: g.gcv, sigma: Math.sqrt(sigma2),
    replicates, homogeneousReplicates, scaling: null, notes: [], constraint: 'translation',
    complete: true, inputDof: 2 * lay.Kt + lay.Kc,
  };
}
