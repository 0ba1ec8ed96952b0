/**
 * Interfaces: points where the character of the physics changes, from local evidence profiles
 * along a 1-D domain and a model comparison that decides whether a change is sharp (a step),
 * smooth (a low-degree trend) or absent.
 *
 * Local evidence, at each centre c:
 *  - `log_inv_diffusion` = log(−[∂xG](c, c)) = −log a(c), from the jump of ∂xG across the
 *    diagonal (jump condition [∂xG] = −1/a(s); Stakgold & Holst; Coddington & Levinson ch. 7);
 *    the one-sided slopes come from the operator analysis' `jumpDiffusion`.
 *  - `drift` (β L) and `wave` (sign(γ)√|γ| L): away from its diagonal each column of G solves the
 *    homogeneous equation, locally u'' + β u' + γ u = 0. Uniform samples of such a function obey
 *    the three-term recurrence g(x + d) = p g(x) + q g(x − d) with q = −e^{−βd} and
 *    p = 2 e^{−βd/2} cosh(μ d), μ² = β²/4 − γ.
 *    // Prony's method: R. de Prony, J. École Polytechnique 1795; total least squares as in Golub & Van Loan §6.3.
 *    (p, q) are fitted by total least squares to all triples of all column segments in a patch.
 * Model comparison (per feature, with a shared change location): constant, cubic trend, one
 * step, two steps; a step is blurred over the estimator's own window. Scores are BIC
 * (Schwarz 1978) with the noise variance taken as the larger of the replicate spread and the
 * residual variance of the richest model (as in Mallows' Cp), on the number of independent
 * windows. Model weights exp(−BIC/2) give the probability of a sharp change; replicates give
 * the location's spread.
 */
import type { Analysis, AnalysisOutput, Context } from './analysis.js';
import { clamp01 } from './analysis.js';
import type { Findings, Kernel, Evidence } from '../types.js';
import type { Mat } from '../linalg/dense.js';
import { jumpDiffusion } from './operator.js';

type F = Findings['interfaces'];

export interface Profiles {
  centers: Float64Array;
  /** feature name → values at the centres (NaN where the local fit is undefined) */
  features: Record<string, Float64Array>;
  /** half-width over which each feature blurs a sharp change */
  blur: Record<string, number>;
  /** estimator sensitivity: change of the feature when the recurrence step changes (systematic error) */
  sensitivity: Record<string, Float64Array>;
  lo: number; hi: number; h: number;
}

function bounds1d(k: Kernel): [number, number] {
  if (k.domain.kind === 'interval') return k.domain.bounds;
  let lo = Infinity, hi = -Infinity;
  for (const v of k.pointsOut.data) { lo = Math.min(lo, v); hi = Math.max(hi, v); }
  return [lo, hi];
}

function isUniform(x: Float64Array): boolean {
  if (x.length < 3) return false;
  const h = (x[x.length - 1]! - x[0]!) / (x.length - 1);
  for (let i = 1; i < x.length; i++) if (Math.abs(x[i]! - x[i - 1]! - h) > 1e-6 * Math.abs(h)) return false;
  return h > 0;
}

/** smallest eigenvector of a symmetric 3×3 matrix (Jacobi rotations) */
function smallestEig3(S: number[]): number[] {
  const a = S.slice();
  const V = [1, 0, 0, 0, 1, 0, 0, 0, 1];
  for (let sweep = 0; sweep < 50; sweep++) {
    let off = 0;
    for (const [p, q] of [[0, 1], [0, 2], [1, 2]] as const) {
      const apq = a[p * 3 + q]!;
      off += apq * apq;
      if (Math.abs(apq) < 1e-300) continue;
      const theta = (a[q * 3 + q]! - a[p * 3 + p]!) / (2 * apq);
      const t = Math.sign(theta || 1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
      const c = 1 / Math.sqrt(t * t + 1), s = t * c;
      for (let k = 0; k < 3; k++) { // A ← A J
        const akp = a[k * 3 + p]!, akq = a[k * 3 + q]!;
        a[k * 3 + p] = c * akp - s * akq; a[k * 3 + q] = s * akp + c * akq;
      }
      for (let k = 0; k < 3; k++) { // A ← Jᵀ A
        const apk = a[p * 3 + k]!, aqk = a[q * 3 + k]!;
        a[p * 3 + k] = c * apk - s * aqk; a[q * 3 + k] = s * apk + c * aqk;
      }
      for (let k = 0; k < 3; k++) {
        const vkp = V[k * 3 + p]!, vkq = V[k * 3 + q]!;
        V[k * 3 + p] = c * vkp - s * vkq; V[k * 3 + q] = s * vkp + c * vkq;
      }
    }
    if (off < 1e-30 * (a[0]! ** 2 + a[4]! ** 2 + a[8]! ** 2)) break;
  }
  let j = 0;
  for (let k = 1; k < 3; k++) if (a[k * 3 + k]! < a[j * 3 + j]!) j = k;
  return [V[j]!, V[3 + j]!, V[6 + j]!];
}

/** Local (β, γ) of u'' + βu' + γu = 0 from the columns of G in [c − w, c + w] (uniform x). */
export function localRecurrence(G: Mat, x: Float64Array, s: Float64Array, c: number, w: number, gap: number, d: number): { beta: number; gamma: number } {
  const h = x[1]! - x[0]!;
  const i0 = Math.max(0, Math.ceil((c - w - x[0]!) / h - 1e-9)), i1 = Math.min(x.length - 1, Math.floor((c + w - x[0]!) / h + 1e-9));
  const S = [0, 0, 0, 0, 0, 0, 0, 0, 0];
  let count = 0;
  for (let j = 0; j < s.length; j++) {
    const sj = s[j]!;
    for (let i = i0 + d; i + d <= i1; i++) {
      const xa = x[i - d]!, xb = x[i + d]!;
      // all three points on one side of the source, outside the smeared kink
      if (!((xb < sj - gap) || (xa > sj + gap))) continue;
      const v = [G.data[(i - d) * G.cols + j]!, G.data[i * G.cols + j]!, G.data[(i + d) * G.cols + j]!];
      for (let a = 0; a < 3; a++) for (let b = 0; b < 3; b++) S[a * 3 + b] += v[a]! * v[b]!;
      count++;
    }
  }
  if (count < 6) return { beta: NaN, gamma: NaN };
  const e = smallestEig3(S); // e0 g(x−d) + e1 g(x) + e2 g(x+d) = 0
  if (!(Math.abs(e[2]!) > 0)) return { beta: NaN, gamma: NaN };
  const p = -e[1]! / e[2]!, q = -e[0]! / e[2]!;
  const D = d * h;
  if (!(q < 0)) return { beta: NaN, gamma: NaN };
  const beta = -Math.log(-q) / D;
  const v = p / (2 * Math.sqrt(-q));
  const mu2 = v >= 1 ? (Math.acosh(v) / D) ** 2 : -((Math.acos(Math.max(-1, v)) / D) ** 2);
  return { beta, gamma: (beta * beta) / 4 - mu2 };
}

/** The local evidence profiles of one kernel matrix G (block (0,0), 1-D). */
export function localProfiles(kernel: Kernel, G: Mat, opts: { centers?: number } = {}): Profiles {
  const [lo, hi] = bounds1d(kernel);
  const L = hi - lo;
  const nOut = kernel.pointsOut.rows, nIn = kernel.pointsIn.rows;
  const x = kernel.pointsOut.data.slice(0, nOut), s = kernel.pointsIn.data.slice(0, nIn);
  const h = (x[nOut - 1]! - x[0]!) / (nOut - 1);
  // centres stay one patch (plus the smeared-kink gap) away from the ends: near a boundary the
  // one-sided windows are truncated and the evidence is unreliable
  const edge = 0.08 * L;
  const nc = opts.centers ?? 56;
  const centers = Float64Array.from({ length: nc }, (_, k) => lo + edge + ((L - 2 * edge) * (k + 0.5)) / nc);
  const features: Record<string, Float64Array> = {};
  const blur: Record<string, number> = {};
  const sensitivity: Record<string, Float64Array> = {};
  // jump of ∂xG across the diagonal
  const jd = jumpDiffusion({ ...kernel, G });
  if (jd.x.length >= 8) {
    const f = new Float64Array(nc).fill(NaN);
    const half = (L - 2 * edge) / nc;
    for (let k = 0; k < nc; k++) {
      const vals: number[] = [];
      for (let i = 0; i < jd.x.length; i++) if (Math.abs(jd.x[i]! - centers[k]!) <= half && jd.a[i]! > 0) vals.push(-Math.log(jd.a[i]!));
      if (vals.length) { vals.sort((a, b) => a - b); f[k] = vals[Math.floor(vals.length / 2)]!; }
    }
    features['log_inv_diffusion'] = f;
    blur['log_inv_diffusion'] = Math.max(2 * h, 0.02 * L) + 0.05 * L;
  }
  if (isUniform(x)) {
    const w = 0.05 * L, gap = Math.max(3 * h, 0.03 * L);
    const d = Math.max(1, Math.round(w / (3 * h)));
    const d2 = d + Math.max(1, Math.round(d / 2));
    const fb = new Float64Array(nc), fg = new Float64Array(nc), sb = new Float64Array(nc), sg = new Float64Array(nc);
    const wv = (g: number) => Math.sign(g) * Math.sqrt(Math.abs(g)) * L;
    for (let k = 0; k < nc; k++) {
      const r = localRecurrence(G, x, s, centers[k]!, w, gap, d);
      const r2 = localRecurrence(G, x, s, centers[k]!, w, gap, d2);
      fb[k] = r.beta * L;
      fg[k] = wv(r.gamma);
      sb[k] = Math.abs(r2.beta * L - fb[k]!);
      sg[k] = Math.abs(wv(r2.gamma) - fg[k]!);
    }
    features['drift'] = fb; blur['drift'] = w; sensitivity['drift'] = sb;
    features['wave'] = fg; blur['wave'] = w; sensitivity['wave'] = sg;
  }
  return { centers, features, blur, sensitivity, lo, hi, h };
}

// ------------------------------------------------------------------ model comparison

export type ModelName = 'constant' | 'trend' | 'step' | 'two-steps';
export interface SegmentFit { model: ModelName; taus: number[]; bic: number; rss: number[]; k: number }

function ramp(t: number): number { return t <= -1 ? 0 : t >= 1 ? 1 : (t + 1) / 2; }

/** least squares with given basis columns (rows with NaN y skipped); returns RSS */
function lsq(cols: Float64Array[], y: Float64Array, wt: Float64Array): number {
  const m = cols.length, n = y.length;
  const A = new Float64Array(m * m), b = new Float64Array(m);
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(y[i]!) || !(wt[i]! > 0)) continue;
    const wi = wt[i]!;
    for (let a = 0; a < m; a++) { b[a] += wi * cols[a]![i]! * y[i]!; for (let c = 0; c < m; c++) A[a * m + c] += wi * cols[a]![i]! * cols[c]![i]!; }
  }
  // Cholesky-free small solve by Gaussian elimination with a tiny ridge
  for (let a = 0; a < m; a++) A[a * m + a] += 1e-12 * (A[a * m + a]! + 1e-300);
  const M = A.slice(), r = b.slice();
  for (let k = 0; k < m; k++) {
    let p = k;
    for (let i = k + 1; i < m; i++) if (Math.abs(M[i * m + k]!) > Math.abs(M[p * m + k]!)) p = i;
    if (p !== k) { for (let j = 0; j < m; j++) { const t = M[k * m + j]!; M[k * m + j] = M[p * m + j]!; M[p * m + j] = t; } const t = r[k]!; r[k] = r[p]!; r[p] = t; }
    const piv = M[k * m + k]!;
    if (piv === 0) continue;
    for (let i = k + 1; i < m; i++) { const f = M[i * m + k]! / piv; for (let j = k; j < m; j++) M[i * m + j] -= f * M[k * m + j]!; r[i] -= f * r[k]!; }
  }
  const c = new Float64Array(m);
  for (let k = m - 1; k >= 0; k--) { let t = r[k]!; for (let j = k + 1; j < m; j++) t -= M[k * m + j]! * c[j]!; c[k] = M[k * m + k] ? t / M[k * m + k]! : 0; }
  let rss = 0;
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(y[i]!) || !(wt[i]! > 0)) continue;
    let v = 0;
    for (let a = 0; a < m; a++) v += c[a]! * cols[a]![i]!;
    rss += wt[i]! * (y[i]! - v) ** 2;
  }
  return rss;
}

function basis(model: ModelName, x: Float64Array, taus: number[], blur: number, lo: number, hi: number): Float64Array[] {
  const one = new Float64Array(x.length).fill(1);
  if (model === 'constant') return [one];
  if (model === 'trend') {
    const t = Float64Array.from(x, (v) => (2 * (v - lo)) / (hi - lo) - 1);
    return [one, t, Float64Array.from(t, (v) => v * v), Float64Array.from(t, (v) => v * v * v)];
  }
  return [one, ...taus.map((tau) => Float64Array.from(x, (v) => ramp((v - tau) / blur)))];
}

/**
 * Compare the models on several features sharing the change locations. `sd` is the
 * replicate standard deviation of each feature (pointwise), `nEff` the number of independent
 * windows.
 */
export function compareModels(p: Profiles, sd: Record<string, Float64Array>, names: string[]): { fits: SegmentFit[]; weights: Record<ModelName, number> } {
  const { centers: x, lo, hi, h } = p;
  const L = hi - lo;
  const grid: number[] = [];
  const stepT = Math.max(h, L / 400);
  for (let t = x[0]!; t <= x[x.length - 1]!; t += stepT) grid.push(t);
  // pointwise weights 1/(replicate variance + a floor of a tenth of its median), so that
  // centres where the local fit is unstable count less
  const wts: Record<string, Float64Array> = {};
  for (const nm of names) {
    const sv = sd[nm], y = p.features[nm]!;
    const v2 = sv ? Array.from(sv).filter((u) => Number.isFinite(u)).map((u) => u * u).sort((a, b) => a - b) : [];
    const floor = v2.length ? 0.1 * v2[Math.floor(v2.length / 2)]! + 1e-30 : 1;
    wts[nm] = Float64Array.from(y, (yy, k) => (Number.isFinite(yy) ? 1 / ((sv && Number.isFinite(sv[k]!) ? sv[k]! ** 2 : NaN) + floor) : 0));
    for (let k = 0; k < y.length; k++) if (!Number.isFinite(wts[nm]![k]!)) wts[nm]![k] = v2.length ? 0 : 1;
  }
  const rssOf = (model: ModelName, taus: number[]) => names.map((nm) => lsq(basis(model, x, taus, p.blur[nm]!, lo, hi), p.features[nm]!, wts[nm]!));
  const fits: { model: ModelName; taus: number[]; rss: number[] }[] = [];
  fits.push({ model: 'constant', taus: [], rss: rssOf('constant', []) });
  fits.push({ model: 'trend', taus: [], rss: rssOf('trend', []) });
  const total = (r: number[], scale: number[]) => r.reduce((a, v, i) => a + v / scale[i]!, 0);
  // rough per-feature scale for the search: variance of the feature (so features weigh alike)
  const fscale = names.map((nm) => { const v = Array.from(p.features[nm]!).filter(Number.isFinite); const m = v.reduce((a, b) => a + b, 0) / v.length; return v.reduce((a, b) => a + (b - m) ** 2, 0) / v.length + 1e-30; });
  let best1 = { taus: [grid[0]!], rss: rssOf('step', [grid[0]!]) };
  const oneStep: { t: number; score: number }[] = [];
  for (const t of grid) {
    const r = rssOf('step', [t]);
    const sc = total(r, fscale);
    oneStep.push({ t, score: sc });
    if (sc < total(best1.rss, fscale)) best1 = { taus: [t], rss: r };
  }
  fits.push({ model: 'step', ...best1 });
  // two steps: coarse search on a thinned grid, then refine around the best pair
  const minSep = 2 * Math.max(...names.map((nm) => p.blur[nm]!));
  const coarse = grid.filter((_, i) => i % 4 === 0);
  let best2 = { taus: [coarse[0]!, coarse[coarse.length - 1]!], rss: rssOf('two-steps', [coarse[0]!, coarse[coarse.length - 1]!]) };
  for (let a = 0; a < coarse.length; a++) for (let b = a + 1; b < coarse.length; b++) {
    if (coarse[b]! - coarse[a]! < minSep) continue;
    const r = rssOf('two-steps', [coarse[a]!, coarse[b]!]);
    if (total(r, fscale) < total(best2.rss, fscale)) best2 = { taus: [coarse[a]!, coarse[b]!], rss: r };
  }
  for (let it = 0; it < 2; it++) for (const k of [0, 1]) for (const t of grid) {
    if (Math.abs(t - best2.taus[k]!) > 4 * stepT) continue;
    const taus = best2.taus.slice(); taus[k] = t;
    if (taus[1]! - taus[0]! < minSep) continue;
    const r = rssOf('two-steps', taus);
    if (total(r, fscale) < total(best2.rss, fscale)) best2 = { taus, rss: r };
  }
  fits.push({ model: 'two-steps', ...best2 });
  // noise variance per feature: replicate spread, or the richest model's residual variance
  const blurMax = Math.max(...names.map((nm) => p.blur[nm]!));
  const nEff = Math.max(4, (x[x.length - 1]! - x[0]!) / blurMax);
  const ks: Record<ModelName, number> = { constant: 1, trend: 4, step: 2, 'two-steps': 3 };
  const extra: Record<ModelName, number> = { constant: 0, trend: 0, step: 1, 'two-steps': 2 };
  // overdispersion (quasi-likelihood, common practice): the richest model's weighted residual
  // per degree of freedom, when above 1, scales the noise of that feature
  const sigma2 = names.map((nm, i) => {
    const n = Array.from(wts[nm]!).filter((w) => w > 0).length;
    const richest = Math.min(...fits.map((f) => f.rss[i]! / Math.max(1, n - ks[f.model])));
    return Math.max(1, richest);
  });
  const out: SegmentFit[] = fits.map((f) => {
    let chi = 0;
    names.forEach((nm, i) => {
      const n = Array.from(wts[nm]!).filter((w) => w > 0).length;
      chi += (f.rss[i]! / sigma2[i]!) * (nEff / Math.max(n, 1));
    });
    const k = ks[f.model] * names.length + extra[f.model];
    return { model: f.model, taus: f.taus, rss: f.rss, k, bic: chi + k * Math.log(nEff) };
  });
  const bmin = Math.min(...out.map((f) => f.bic));
  const ws = out.map((f) => Math.exp(-(f.bic - bmin) / 2));
  const wsum = ws.reduce((a, b) => a + b, 0);
  const weights = { constant: 0, trend: 0, step: 0, 'two-steps': 0 } as Record<ModelName, number>;
  out.forEach((f, i) => { weights[f.model] = ws[i]! / wsum; });
  return { fits: out, weights };
}

// ------------------------------------------------------------------ the analysis

export interface InterfaceResult {
  interfaces: { location: number; uncertainty: number; confidence: number }[];
  profiles: Profiles;
  sd: Record<string, Float64Array>;
  used: string[];
  weights: Record<ModelName, number>;
  chosen: SegmentFit;
}

function block00(kernel: Kernel, G: Mat): Mat {
  const nOut = kernel.pointsOut.rows, nIn = kernel.pointsIn.rows;
  if (G.rows === nOut && G.cols === nIn) return G;
  const d = new Float64Array(nOut * nIn);
  for (let i = 0; i < nOut; i++) for (let j = 0; j < nIn; j++) d[i * nIn + j] = G.data[i * G.cols + j]!;
  return { rows: nOut, cols: nIn, data: d };
}

/** Profiles of the kernel and its replicates, feature selection, model comparison. */
export function detectInterfaces(kernel: Kernel, replicates: Mat[], maxReps = 8): InterfaceResult {
  const main = localProfiles(kernel, block00(kernel, kernel.G));
  const reps = replicates.slice(0, maxReps).map((R) => localProfiles(kernel, block00(kernel, R)));
  const names = Object.keys(main.features);
  const sd: Record<string, Float64Array> = {};
  for (const nm of names) {
    const f = main.features[nm]!;
    sd[nm] = Float64Array.from(f, (_, k) => {
      const v = reps.map((r) => r.features[nm]?.[k]).filter((u): u is number => u !== undefined && Number.isFinite(u));
      const sys = main.sensitivity[nm]?.[k] ?? 0;
      if (v.length < 2) return Number.isFinite(sys) && sys > 0 ? sys : NaN;
      const m = v.reduce((a, b) => a + b, 0) / v.length;
      const rep2 = v.reduce((a, b) => a + (b - m) ** 2, 0) / (v.length - 1);
      return Math.sqrt(rep2 + (Number.isFinite(sys) ? sys * sys : 0));
    });
  }
  // keep features defined on most of the domain
  const used = names.filter((nm) => Array.from(main.features[nm]!).filter(Number.isFinite).length >= 0.7 * main.centers.length);
  // mask isolated undefined values rather than dropping the feature
  const cmp = compareModels(main, sd, used);
  let chosen = cmp.fits[0]!;
  for (const f of cmp.fits) if (f.bic < chosen.bic) chosen = f;
  const pSharp = cmp.weights.step + cmp.weights['two-steps'];
  const interfaces: InterfaceResult['interfaces'] = [];
  if (chosen.model === 'step' || chosen.model === 'two-steps') {
    // replicate locations: re-fit the chosen model's change points on each replicate
    const repTaus = reps.map((r) => {
      const c = compareModels(r, sd, used);
      return c.fits.find((f) => f.model === chosen.model)!.taus;
    });
    const repSel = reps.map((r) => {
      const c = compareModels(r, sd, used);
      return c.weights.step + c.weights['two-steps'];
    });
    const agree = repSel.filter((w) => w > 0.5).length;
    const recur = reps.length ? (agree + 1) / (reps.length + 2) : 0.5;
    chosen.taus.forEach((tau, k) => {
      const locs = repTaus.map((t) => t[k]!).filter(Number.isFinite);
      let spread = 0;
      if (locs.length > 1) { const m = locs.reduce((a, b) => a + b, 0) / locs.length; spread = Math.sqrt(locs.reduce((a, b) => a + (b - m) ** 2, 0) / (locs.length - 1)); }
      const conf = clamp01((chosen.model === 'two-steps' ? cmp.weights['two-steps'] : pSharp) * Math.min(1, 2 * recur));
      interfaces.push({ location: tau, uncertainty: Math.max(spread, main.h), confidence: conf });
    });
  }
  return { interfaces, profiles: main, sd, used, weights: cmp.weights, chosen };
}

const EXPLANATION = 'Along the domain we measure local evidence of what the operator is doing: the size of the jump of the kernel\'s slope across its diagonal (the inverse of the local diffusion coefficient), and, from how the kernel\'s columns bend away from the diagonal, the local drift and the local oscillation or decay rate. We then ask which description of these profiles the data favour: no change, a smooth trend, one sharp change or two, scoring each by how well it fits against how many parameters it uses (an information criterion), with the spread over resampled kernels as the noise. An interface is reported only when a sharp change beats a smooth trend.';

export const interfacesAnalysis: Analysis<F> = {
  key: 'interfaces',
  dependsOn: [],
  run(kernel: Kernel, ctx: Context): AnalysisOutput<F> {
    if (kernel.dimension !== 1) {
      return { finding: [], evidence: { statistic: null, noise_floor: null, summary: 'Interfaces are searched for on 1-D kernels only; none are reported for this 2-D kernel.', explanation: EXPLANATION, plot: {} } };
    }
    const res = detectInterfaces(kernel, ctx.noise.replicates);
    const finding: F = res.interfaces.filter((i) => i.confidence >= 0.5).map((i) => ({
      location: sig4(i.location), uncertainty: sig4(i.uncertainty), confidence: sig4(i.confidence),
    }));
    const pSharp = res.weights.step + res.weights['two-steps'];
    const summary = finding.length
      ? `${finding.length} interface${finding.length > 1 ? 's' : ''} at ` + finding.map((f) => `x ≈ ${(f.location as number).toFixed(3)} ± ${f.uncertainty.toFixed(3)}`).join(' and ') + ` (probability of a sharp change ${pSharp.toFixed(2)}; evidence: ${res.used.join(', ')}).`
      : `No sharp change of character: the ${res.chosen.model === 'trend' ? 'smooth-trend' : res.chosen.model} description is preferred (probability of a sharp change ${pSharp.toFixed(2)}; evidence: ${res.used.join(', ') || 'none'}).`;
    const plot = {
      centers: Array.from(res.profiles.centers),
      features: Object.fromEntries(res.used.map((nm) => [nm, Array.from(res.profiles.features[nm]!, (v) => (Number.isFinite(v) ? sig4(v) : null))])),
      spread: Object.fromEntries(res.used.map((nm) => [nm, Array.from(res.sd[nm] ?? [], (v) => (Number.isFinite(v) ? sig4(v) : null))])),
      model_weights: res.weights,
      interfaces: finding,
    };
    const evidence: Evidence = { statistic: sig4(pSharp), noise_floor: 0.5, summary, explanation: EXPLANATION, plot };
    return { finding, evidence };
  },
};

function sig4(v: number): number { return Number.isFinite(v) ? Number(v.toPrecision(4)) : v; }
