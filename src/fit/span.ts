/**
 * The span model, for 2-D and scattered points (and any study where the diagonal-kink form does not
 * apply): each kernel row g_i is estimated as the posterior mean of a Gaussian-process prior
 * g_i ~ GP(0, τ² K) given ũ_i = F̃ W g_i + noise (kriging of the row; Rasmussen & Williams, GPML 2006,
 * §2.2 and §6.2 for the equivalent regularised least squares):
 *     g_i = K W F̃ᵀ (F̃ W K W F̃ᵀ + λ I)⁻¹ ũ_i.
 * The prior K is chosen by GCV (Golub, Heath & Wahba 1979) among the white prior K = W⁻¹ (which gives
 * the minimum-norm kernel, G restricted to the forcings' span) and squared-exponential and
 * Matérn-5/2 covariances with length scales of 1, 2, 4 and 8 point spacings; λ by GCV for each. For scalar
 * 2-D studies the choice is joint with a singular part c_i Φ(x_i, s) on the diagonal (spanSingular.ts),
 * which the kernel holds also outside the forcings' span. The error is predicted from the bootstrap and
 * from the prior's posterior spread (posteriorSpread). The kernel is reported as a restricted kernel.
 */
import type { Mat } from '../linalg/dense.js';
import { zeros, matmul, matmulNT } from '../linalg/dense.js';
import { eigSym, cholesky, choleskySolve } from '../linalg/decomp.js';
import type { Rng } from '../linalg/rng.js';
import { covarianceMatrix, medianSpacing, type Covariance } from '../design/gp.js';
import type { Prepared } from './prepare.js';
import { tensorAxes } from '../quadrature.js';
import type { Constraint } from './kink1d.js';
import { type CoreFit, scalingTest, responseSize } from './core.js';
import { singularKernel, singularResponses, singularCoefficients, subtractSingular, type SingularForm, type Shrinkage } from './spanSingular.js';

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
  /** eigenvectors V and eigenvalues d of A = F̃ W K W F̃ᵀ */
  V: Mat;
  d: Float64Array;
  lambda: number;
  dof: number;
  rss: number;
  gcv: number;
}

/** Per-direction sums a_m = Σ_i C_im², b_m = Σ_i C_im CZ_im, e_m = Σ_i CZ_im² of eigen-coordinates. */
function directionSums(C: Mat, CZ?: Mat): { a2: Float64Array; ab: Float64Array; e2: Float64Array } {
  const N = C.cols, rows = C.rows;
  const a2 = new Float64Array(N), ab = new Float64Array(N), e2 = new Float64Array(N);
  for (let i = 0; i < rows; i++) for (let m = 0; m < N; m++) {
    const v = C.data[i * N + m]!;
    a2[m] += v * v;
    if (CZ) { const z = CZ.data[i * N + m]!; ab[m] += v * z; e2[m] += z * z; }
  }
  return { a2, ab, e2 };
}

/**
 * GCV score at ratio λ of the rows Ũ − δZ given their per-direction sums (directionSums) and the
 * out-of-basis energies (qa0, qb0, qe0: what the eigenbasis misses, 0 when it is complete): the residual
 * is quadratic in δ, so with `level` δ takes its minimiser (closed form), else δ = 0.
 */
function gcvAt(d: Float64Array, s: { a2: Float64Array; ab: Float64Array; e2: Float64Array }, lam: number, rows: number, nObs: number, extraDof: number, level: boolean, out = { qa0: 0, qb0: 0, qe0: 0 }) {
  let qa = out.qa0, qb = out.qb0, qe = out.qe0, dof = 0;
  for (let m = 0; m < d.length; m++) {
    // directions with d = 0 are unfittable: their energy stays in the residual (f = 1)
    const f = lam / (d[m]! + lam), f2 = f * f;
    qa += f2 * s.a2[m]!; qb += f2 * s.ab[m]!; qe += f2 * s.e2[m]!;
    dof += d[m]! / (d[m]! + lam);
  }
  const delta = level && qe > 0 ? qb / qe : 0;
  const rss = Math.max(0, qa - 2 * delta * qb + delta * delta * qe);
  dof = dof * rows + extraDof;
  const den = nObs - dof;
  return { rss, dof, delta, gcv: den > 0 ? (nObs * rss) / (den * den) : Infinity };
}

/**
 * GCV over λ for complete rows Ũ (rows × N) given A = F̃ W K W F̃ᵀ. With Z (rows × N) the rows are
 * Ũ − δ Z with a common level δ that is a hyper-parameter too: the residual is quadratic in δ for every
 * λ, so its minimiser is closed-form and GCV is minimised jointly over (λ, δ) on the λ grid (δ counted as
 * one parameter in extraDof by the caller).
 */
function gcvRows(A: Mat, Uc: Mat, nObs: number, fixedLambda?: number, extraDof = 0, eig?: { vectors: Mat; values: Float64Array }, Z?: Mat): SpanSolve & { delta: number } {
  const e = eig ?? eigSym(A);
  const d = Float64Array.from(e.values, (v) => Math.max(v, 0));
  const s = directionSums(matmul(Uc, e.vectors), Z ? matmul(Z, e.vectors) : undefined);
  let yy = 0, yz = 0, zz = 0;
  for (const v of Uc.data) yy += v * v;
  if (Z) for (let k = 0; k < Uc.data.length; k++) { yz += Uc.data[k]! * Z.data[k]!; zz += Z.data[k]! ** 2; }
  const sum = (x: Float64Array) => x.reduce((p, q) => p + q, 0);
  const rest = { qa0: Math.max(0, yy - sum(s.a2)), qb0: yz - sum(s.ab), qe0: Math.max(0, zz - sum(s.e2)) };
  const evalAt = (lam: number) => gcvAt(d, s, lam, Uc.rows, nObs, extraDof, !!Z, rest);
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
  return { V: e.vectors, d, lambda, ...evalAt(lambda) };
}

/** T = K W F̃ᵀ V diag(1/(d+λ)) Vᵀ (nIn·cIn × N), the row map g_i = T ũ_i of a solve. */
function rowMap(sol: SpanSolve, KWF: Mat): Mat {
  const N = sol.V.rows;
  const Vs = zeros(N, N);
  for (let a = 0; a < N; a++) for (let m = 0; m < N; m++) Vs.data[a * N + m] = sol.V.data[a * N + m]! / (sol.d[m]! + sol.lambda);
  return matmulNT(matmul(KWF, Vs), sol.V);
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
  for (const kind of ['se', 'matern52'] as const) for (const m of [1, 2, 4, 8]) priors.push({ name: `${kind}:${m}h`, kind, lengthScale: m * h });
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
  // singular part of the kernel (spanSingular.ts): scalar 2-D studies with every response measured; the
  // form (none, logarithmic, r² ln r) and the prior of the remainder are chosen together by GCV
  const singularForms: SingularForm[] = prep.dimension === 2 && cIn === 1 && cOut === 1 && complete.length === colsOut ? ['log', 'log-dirichlet', 'log-neumann', 'r2log'] : [];
  const forms = singularForms.map((form) => {
    const Phi = singularKernel(form, prep.pointsOut, prep.pointsIn, prep.weights, prep.box);
    return { form, Phi, Z: singularResponses(Phi, complete, FWc) };
  });
  if (forms.length) o.progress('span model: testing a singular part on the diagonal (logarithmic, with images, r² ln r) jointly with the prior');
  // per prior: the plain solve and, per form, its λ and shrinkage (the replicates re-choose among them)
  interface Cand { form: (typeof forms)[number]; lambda: number; shrink: Shrinkage }
  let best: { prior: Prior; sol: SpanSolve; KWF: Mat; A: Mat; form: (typeof forms)[number] | null; c: Float64Array | null; shrink?: Shrinkage; eig: { vectors: Mat; values: Float64Array }; base: SpanSolve; cands: Cand[] } | null = null;
  const tried: string[] = [];
  for (const prior of priors) {
    const KWF = priorTimes(prep, prior, FWc, Kcache);
    const A = matmul(FWc, KWF);
    const eig = eigSym(A);
    const sol = gcvRows(A, Uc, nObsChoice, undefined, 0, eig);
    tried.push(`${prior.name}=${sol.gcv.toPrecision(4)}`);
    const cands: Cand[] = [];
    let here: { sol: SpanSolve; form: (typeof forms)[number] | null; c: Float64Array | null; shrink?: Shrinkage } = { sol, form: null, c: null };
    for (const f of forms) {
      // c_i by GLS shrunk toward their mean (spanSingular.ts); the GLS level is pulled toward the part of
      // the remainder that resembles Φ, so the common level c_i + δ is a hyper-parameter, chosen by GCV
      // jointly with λ for every form and prior (closed form in δ, see gcvRows)
      const { c, shrink } = singularCoefficients(sol.V, sol.d, sol.lambda, f.Z, Uc);
      const solS = gcvRows(A, subtractSingular(Uc, f.Z, c), nObsChoice, undefined, complete.length + 1, eig, f.Z);
      tried.push(`${prior.name}+${f.form}=${solS.gcv.toPrecision(4)}`);
      cands.push({ form: f, lambda: solS.lambda, shrink });
      if (solS.gcv < here.sol.gcv) here = { sol: solS, form: f, c: Float64Array.from(c, (v) => v + solS.delta), shrink: { ...shrink, offset: solS.delta } };
    }
    if (!best || here.sol.gcv < best.sol.gcv) best = { prior, KWF, A, eig, base: sol, cands, ...here };
  }
  const singular = best!.form && best!.c && best!.shrink ? { form: best!.form.form, Phi: best!.form.Phi, Z: best!.form.Z, c: best!.c, shrink: best!.shrink } : null;
  const singularNotes: Record<string, number | string> = {};
  if (forms.length) singularNotes.singular_part = singular ? singular.form : 'none';
  if (singular) {
    const sorted = Array.from(singular.c).sort((x, y) => x - y);
    singularNotes.singular_coefficient_median = sorted[sorted.length >> 1]!;
    const formName = { log: 'logarithmic (second-order)', 'log-dirichlet': 'logarithmic (second-order, with Dirichlet images across the box sides)', 'log-neumann': 'logarithmic (second-order, with Neumann images across the box sides)', r2log: 'r² ln r (fourth-order)' }[singular.form];
    notes.push(`a ${formName} singularity on the diagonal, its coefficient fitted per sensor, lowered the GCV score; the kernel holds it in full, also where the forcings do not reach (median coefficient ${singularNotes.singular_coefficient_median.toPrecision(3)}${singular.form.startsWith('log') ? ', i.e. 1/a for −∇·(a∇u)' : ''})`);
  }
  const { prior, sol } = best!;
  const post = posteriorSpread(sol, best!.KWF, priorTrace(prep, prior, Kcache), singular ? subtractSingular(Uc, singular.Z, singular.c) : Uc);
  const hyperX: Record<string, number | string> = {};
  let gcvX = sol.gcv, rssX = sol.rss, dofX = sol.dof;
  // kernel rows
  const G = zeros(colsOut, nI);
  const uh = new Float64Array(colsOut);
  const R = o.replicates;
  const repG = Array.from({ length: R }, () => zeros(colsOut, nI));
  const repUh = Array.from({ length: R }, () => new Float64Array(colsOut));
  let sigma2 = sol.rss / Math.max(1, nObsChoice - sol.dof);
  let sigmaRep = o.sigmaKnown ?? Math.sqrt(sigma2);
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
    // optional smoothness prior across sensors (tensor-grid sensors, all rows complete): G ~ MN(0, K_x, K_s)
    const T = rowMap(sol, best!.KWF);
    let baseMap = (U: Mat): Mat => matmulNT(U, T);
    const sing = singular;
    // with a singular part: c_i by GLS from the rows' data, the span model on the remainder, plus c_i Φ(x_i, ·)
    const mapRows = !sing ? (U: Mat): Mat => baseMap(U) : (U: Mat): Mat => {
      // the GLS at the plain solve's λ, as in the choice, so that mapRows(Ũ) reproduces the chosen c_i
      const { c } = singularCoefficients(sol.V, sol.d, best!.base.lambda, sing.Z, U, sing.shrink);
      const Gm = baseMap(subtractSingular(U, sing.Z, c));
      complete.forEach((row, r) => { for (let k = 0; k < nI; k++) Gm.data[r * nI + k] += c[r]! * sing.Phi.data[row * nI + k]!; });
      return Gm;
    };
    // replicates re-choose the singular part (none or a form, at the chosen prior and each form's λ) and
    // its common level by GCV, as the fit did, so that the uncertainty of that selection enters their
    // spread; the remainder's map stays the fitted one (the bootstrap of a data-driven choice: Efron &
    // Tibshirani, An Introduction to the Bootstrap 1993, ch. 17 — from memory)
    const CZcache = new Map<string, Mat>();
    const repMap = !forms.length ? mapRows : (U: Mat): Mat => {
      const b = best!, V = b.eig.vectors, rows = U.rows;
      const d = b.base.d;
      const CU = matmul(U, V);
      let pick = { gcv: gcvAt(d, directionSums(CU), b.base.lambda, rows, nObsChoice, 0, false).gcv, c: null as Float64Array | null, cand: null as Cand | null };
      for (const cd of b.cands) {
        let CZ = CZcache.get(cd.form.form);
        if (!CZ) { CZ = matmul(cd.form.Z, V); CZcache.set(cd.form.form, CZ); }
        const { c } = singularCoefficients(V, d, b.base.lambda, cd.form.Z, U, { ...cd.shrink, offset: 0 }, { CZ, CU });
        const R = zeros(rows, CU.cols);
        for (let i = 0; i < rows; i++) for (let m = 0; m < CU.cols; m++) R.data[i * CU.cols + m] = CU.data[i * CU.cols + m]! - c[i]! * CZ.data[i * CU.cols + m]!;
        const g = gcvAt(d, directionSums(R, CZ), cd.lambda, rows, nObsChoice, rows + 1, true);
        if (g.gcv < pick.gcv) pick = { gcv: g.gcv, c: Float64Array.from(c, (v) => v + g.delta), cand: cd };
      }
      if (!pick.cand || !pick.c) return baseMap(U);
      const Gm = baseMap(subtractSingular(U, pick.cand.form.Z, pick.c));
      const Phi = pick.cand.form.Phi;
      complete.forEach((row, r) => { for (let k = 0; k < nI; k++) Gm.data[r * nI + k] += pick.c![r]! * Phi.data[row * nI + k]!; });
      return Gm;
    };
    if (complete.length === colsOut && cOut === 1) {
      const Urem = sing ? subtractSingular(Ucomp, sing.Z, sing.c) : Ucomp;
      const kx = kroneckerChoice(prep, best!.A, best!.KWF, Urem, nObsChoice, sol.gcv, sing ? complete.length : 0);
      if (kx) {
        baseMap = kx.map;
        hyperX.sensor_prior = kx.name; hyperX.sensor_prior_length_scale = kx.lengthScale; hyperX.lambda = kx.lambda;
        hyperX.effective_parameters = kx.dof; gcvX = kx.gcv; rssX = kx.rss; dofX = kx.dof;
        notes.push(`a squared-exponential prior across sensors (length ${kx.lengthScale.toPrecision(3)}) lowered the GCV score; kernel rows are smoothed across neighbouring sensors`);
      }
    }
    if (gcvX !== sol.gcv) { sigma2 = rssX / Math.max(1, nObsChoice - dofX); sigmaRep = o.sigmaKnown ?? Math.sqrt(sigma2); }
    const Gc = mapRows(Ucomp);
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
      const Gr = repMap(D);
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
    hyper: { prior: prior.name, prior_length_scale: prior.lengthScale, lambda: sol.lambda, effective_parameters: sol.dof, priors_tried: tried.join(' '), ...singularNotes, ...hyperX },
    G, uh, rss: rssX, dof: dofX, nObs: nObsChoice, yy: frob2(Uc), gcvMse: gcvX,
    sigma: Math.sqrt(sigma2), replicates: repG, homogeneousReplicates: repUh, scaling, notes,
    constraint: 'none', complete: false, inputDof: nI,
    posteriorError2: { total: post.total, unidentified: post.unidentified },
  };
}

/** tr K of the prior (unweighted): Σ 1/w for the white prior K = W⁻¹, else the diagonal of the covariance. */
function priorTrace(prep: Prepared, prior: Prior, Kcache: Map<string, Mat>): number {
  let t = 0;
  if (prior.kind === 'white') { for (const w of prep.weights) if (w > 0) t += 1 / w; return t * prep.cIn; }
  const K = Kcache.get(`${prior.kind}:${prior.lengthScale}`)!;
  for (let k = 0; k < K.rows; k++) t += K.data[k * K.cols + k]!;
  return t * prep.cIn;
}

/**
 * Posterior spread of the rows under the row-wise GP prior g_i ~ GP(0, τ² K) (GPML §2.2, eq. 2.24):
 * E‖g_i − ĝ_i‖² = τ² [tr K − Σ_m ‖K W F̃ᵀ v_m‖² / (d_m + λ)], with τ² by maximum likelihood at the
 * chosen ratio λ = σ²/τ² (ũ_i ~ N(0, τ²(A + λI)): τ̂² = Σ_i ũ_iᵀ(A + λI)⁻¹ũ_i / (rows·N)). Returned as the
 * total over rows at the fitted λ and in the noise-free limit (λ → 0: what no amount of data along these
 * forcings determines).
 */
function posteriorSpread(sol: SpanSolve, KWF: Mat, trK: number, U: Mat): { tau2: number; total: number; unidentified: number } {
  const N = sol.V.rows, rows = U.rows;
  const B = matmul(KWF, sol.V);
  const b = new Float64Array(N);
  for (let k = 0; k < B.rows; k++) for (let m = 0; m < N; m++) b[m] += B.data[k * N + m]! ** 2;
  const C = matmul(U, sol.V);
  let q = 0;
  for (let i = 0; i < rows; i++) for (let m = 0; m < N; m++) q += C.data[i * N + m]! ** 2 / (sol.d[m]! + sol.lambda);
  const tau2 = q / (rows * N);
  const top = sol.d[0]!;
  let red = 0, red0 = 0;
  for (let m = 0; m < N; m++) {
    red += b[m]! / (sol.d[m]! + sol.lambda);
    if (sol.d[m]! > 1e-12 * top) red0 += b[m]! / sol.d[m]!;
  }
  return { tau2, total: rows * tau2 * Math.max(0, trK - red), unidentified: rows * tau2 * Math.max(0, trK - red0) };
}

/**
 * Matrix-normal prior G ~ MN(0, K_x, K_s) with K_x a squared-exponential covariance over tensor-grid sensors
 * (separable, so its eigen-decomposition comes from the two axes). With A = F̃ W K_s W F̃ᵀ = V_a D_a V_aᵀ
 * and K_x = V_x D_x V_xᵀ, the posterior mean solves a Sylvester equation diagonal in the two eigenbases:
 * G = V_x [D_x (V_xᵀ Ũ V_a) ⊘ (d_x d_aᵀ + λ)] V_aᵀ F̃ W K_s (Kronecker-structured GP regression:
 * Stegle et al., NeurIPS 2011; Saatçi, PhD thesis, Cambridge 2011). Returns null unless GCV prefers it
 * to the row-wise model (K_x = I).
 */
function kroneckerChoice(prep: Prepared, A: Mat, KWF: Mat, Uc: Mat, nObs: number, gcvRowwise: number, extraDof = 0):
  { name: string; lengthScale: number; lambda: number; gcv: number; rss: number; dof: number; map: (U: Mat) => Mat } | null {
  if (prep.dimension !== 2) return null;
  const axes = tensorAxes(prep.pointsOut);
  if (!axes) return null;
  const { xs, ys } = axes;
  const nx = xs.length, ny = ys.length, n = prep.nOut, N = A.rows;
  const nearest = (arr: number[], v: number) => { let b = 0; for (let k = 1; k < arr.length; k++) if (Math.abs(arr[k]! - v) < Math.abs(arr[b]! - v)) b = k; return b; };
  const ix = new Int32Array(n), iy = new Int32Array(n);
  for (let p = 0; p < n; p++) { ix[p] = nearest(xs, prep.pointsOut.data[2 * p]!); iy[p] = nearest(ys, prep.pointsOut.data[2 * p + 1]!); }
  const ea = eigSym(A);
  const da = Float64Array.from(ea.values, (v) => Math.max(v, 0));
  const axisPts = (v: number[]): Mat => ({ rows: v.length, cols: 1, data: Float64Array.from(v) });
  const h = Math.min(xs[1]! - xs[0]!, ys[1]! - ys[0]!);
  let best: { name: string; lengthScale: number; lambda: number; gcv: number; rss: number; dof: number; V1: Mat; V2: Mat; dx: Float64Array } | null = null;
  for (const m of [1, 2, 4]) {
    const l = m * h;
    const e1 = eigSym(covarianceMatrix(axisPts(xs), 'se', l)), e2 = eigSym(covarianceMatrix(axisPts(ys), 'se', l));
    const dx = new Float64Array(nx * ny);
    for (let a = 0; a < nx; a++) for (let b = 0; b < ny; b++) dx[a * ny + b] = Math.max(0, e1.values[a]!) * Math.max(0, e2.values[b]!);
    const C = matmul(toEig(Uc, e1.vectors, e2.vectors, ix, iy, nx, ny), ea.vectors);
    const c2 = C.data;
    let top = 0;
    for (let i = 0; i < nx * ny; i++) top = Math.max(top, dx[i]! * da[0]!);
    for (let k = 0; k <= 60; k++) {
      const lam = top * Math.pow(10, -14 + (15 * k) / 60);
      let rss = 0, dof = extraDof;
      for (let i = 0; i < nx * ny; i++) for (let q = 0; q < N; q++) {
        const dd = dx[i]! * da[q]!, f = lam / (dd + lam);
        rss += f * f * c2[i * N + q]! ** 2; dof += dd / (dd + lam);
      }
      const gcv = nObs - dof > 0 ? (nObs * rss) / (nObs - dof) ** 2 : Infinity;
      if (!best || gcv < best.gcv) best = { name: `se:${m}h`, lengthScale: l, lambda: lam, gcv, rss, dof, V1: e1.vectors, V2: e2.vectors, dx };
    }
  }
  if (!best || !(best.gcv < gcvRowwise)) return null;
  const b = best;
  const tail = matmulNT(ea.vectors, KWF); // V_aᵀ F̃ W K_s as (N × nI): (V_a)ᵀ · KWFᵀ
  const Vt = zeros(N, N);
  for (let a = 0; a < N; a++) for (let q = 0; q < N; q++) Vt.data[a * N + q] = ea.vectors.data[q * N + a]!;
  const tailM = matmul(Vt, { rows: N, cols: KWF.rows, data: transposeData(KWF) });
  void tail;
  const map = (U: Mat): Mat => {
    const C = matmul(toEig(U, b.V1, b.V2, ix, iy, nx, ny), ea.vectors);
    for (let i = 0; i < nx * ny; i++) for (let q = 0; q < N; q++) C.data[i * N + q] *= b.dx[i]! / (b.dx[i]! * da[q]! + b.lambda);
    return matmul(fromEig(C, b.V1, b.V2, ix, iy, nx, ny), tailM);
  };
  return { name: b.name, lengthScale: b.lengthScale, lambda: b.lambda, gcv: b.gcv, rss: b.rss, dof: b.dof, map };
}

function transposeData(m: Mat): Float64Array {
  const out = new Float64Array(m.rows * m.cols);
  for (let i = 0; i < m.rows; i++) for (let j = 0; j < m.cols; j++) out[j * m.rows + i] = m.data[i * m.cols + j]!;
  return out;
}

/** V_xᵀ Y for V_x = V1 ⊗ V2 on grid sensors: per column, V1ᵀ Z V2 with Z the column laid on the grid. */
function toEig(Y: Mat, V1: Mat, V2: Mat, ix: Int32Array, iy: Int32Array, nx: number, ny: number): Mat {
  const out = zeros(nx * ny, Y.cols);
  const Z = new Float64Array(nx * ny), T = new Float64Array(nx * ny);
  for (let j = 0; j < Y.cols; j++) {
    Z.fill(0);
    for (let p = 0; p < Y.rows; p++) Z[ix[p]! * ny + iy[p]!] = Y.data[p * Y.cols + j]!;
    T.fill(0); // T = V1ᵀ Z
    for (let r = 0; r < nx; r++) for (let a = 0; a < nx; a++) { const v = V1.data[r * nx + a]!; if (v === 0) continue; for (let c = 0; c < ny; c++) T[a * ny + c] += v * Z[r * ny + c]!; }
    for (let a = 0; a < nx; a++) for (let bb = 0; bb < ny; bb++) { let s = 0; for (let c = 0; c < ny; c++) s += T[a * ny + c]! * V2.data[c * ny + bb]!; out.data[(a * ny + bb) * Y.cols + j] = s; }
  }
  return out;
}

/** V_x R: per column, V1 R V2ᵀ read back at the sensors. */
function fromEig(R: Mat, V1: Mat, V2: Mat, ix: Int32Array, iy: Int32Array, nx: number, ny: number): Mat {
  const n = ix.length;
  const out = zeros(n, R.cols);
  const Z = new Float64Array(nx * ny), T = new Float64Array(nx * ny);
  for (let j = 0; j < R.cols; j++) {
    T.fill(0); // T = V1 R
    for (let r = 0; r < nx; r++) for (let a = 0; a < nx; a++) { const v = V1.data[r * nx + a]!; if (v === 0) continue; for (let bb = 0; bb < ny; bb++) T[r * ny + bb] += v * R.data[(a * ny + bb) * R.cols + j]!; }
    for (let r = 0; r < nx; r++) for (let c = 0; c < ny; c++) { let s = 0; for (let bb = 0; bb < ny; bb++) s += T[r * ny + bb]! * V2.data[c * ny + bb]!; Z[r * ny + c] = s; }
    for (let p = 0; p < n; p++) out.data[p * R.cols + j] = Z[ix[p]! * ny + iy[p]!]!;
  }
  return out;
}

function frob2(m: Mat): number {
  let s = 0;
  for (const v of m.data) s += v * v;
  return s;
}
