/**
 * Decay and order of the hidden operator.
 *
 * 1. Singular values of the weighted operator W_out^{1/2} G W_in^{1/2} (they approximate the
 *    Green's operator's singular values), each with a bootstrap error (first-order
 *    perturbation u_kᵀ δA v_k over the replicates' deviations; Stewart & Sun, Matrix
 *    Perturbation Theory, 1990). Values above 3× their error and within the fit's identified
 *    rank are trustworthy (common practice from the prototype).
 * 2. Power law against exponential on the upper part of the trustworthy range. Weyl's law
 *    (Weyl 1912; shared/references §4): a 2m-order elliptic operator in d dimensions has
 *    σ_k ~ k^(−2m/d), so order ≈ d × exponent. Pre-asymptotic bias is known (1.5–1.75 for
 *    second order with advection or screening, 3.6 for the beam), so the boundary between
 *    orders 2 and 4 is taken at exponent·d = 3 with a model spread of 0.5.
 * 3. Smoothness across the diagonal (1-D): [∂xG] at x = s is −1/a(s) ≠ 0 for order 2 and 0
 *    for order 4, where [∂x³G] jumps instead (Coddington & Levinson ch. 7; shared/references
 *    §3). The normalised slope jump against its replicate floor gives the second line of
 *    evidence; the two are combined as independent evidence (naive Bayes on equal priors).
 */
import type { Analysis, AnalysisOutput, Context } from './analysis.js';
import { normalCdf, clamp01 } from './analysis.js';
import type { Findings, Kernel } from '../types.js';
import type { Mat } from '../linalg/dense.js';
import { zeros, matmul } from '../linalg/dense.js';
import { replicates, deviations, weightsOut, sqrtWeighted, topSvd, analysisRng, spectralNorm, decide, sig, round3, median, std, colocated, EQUIVALENCE_Z, slopeJumpFunctionals, applyJumpFunctionals, type TopSvd } from './util/a_common.js';

type F = Findings['order'];

export interface Spectrum {
  s: Float64Array;
  err: Float64Array;
  trusted: number;
  svd: TopSvd;
  /** the replicates' perturbed spectra (first order), rows = replicates */
  perturbed: Float64Array[];
  /** spectral norm of the weighted noise (mean over up to 5 replicates' deviations) */
  noiseNorm: number;
  /** W_out^{1/2}U and W_in^{1/2}V: the singular vectors in point values */
  weightedU: Mat;
  weightedV: Mat;
  /** per replicate deviation D (of `deviations(reps)`): D·W_in^{1/2}V, so that Uᵀ(W^{1/2}DW^{1/2})V = weightedUᵀ·devV */
  devV: Mat[];
  /** the replicates the spectrum was computed with */
  reps: Mat[];
}

const spectrumCache = new WeakMap<Mat, Spectrum>();

/** diag(w)^{1/2}·M. */
function sqrtScaleRows(M: Mat, w: Float64Array): Mat {
  const out = zeros(M.rows, M.cols);
  for (let i = 0; i < M.rows; i++) { const si = Math.sqrt(w[i]!); for (let k = 0; k < M.cols; k++) out.data[i * M.cols + k] = si * M.data[i * M.cols + k]!; }
  return out;
}

/**
 * Leading singular values of W^{1/2} G W^{1/2} with bootstrap errors and the trustworthy
 * count. Cached per kernel matrix (order, locality, oscillation and self_adjoint share it).
 */
export function kernelSpectrum(kernel: Kernel, reps: Mat[], identifiedRank?: number): Spectrum {
  const hit = spectrumCache.get(kernel.G);
  if (hit) return hit;
  const wo = expand(weightsOut(kernel), kernel.components.out);
  const wi = expand(kernel.weightsIn, kernel.components.in);
  const A = sqrtWeighted(kernel.G, wo, wi);
  const kmax = Math.min(A.rows, A.cols, kernel.dimension === 1 ? 64 : 96);
  const sv = topSvd(A, kmax, analysisRng(17));
  const K = sv.s.length;
  const Uw = sqrtScaleRows(sv.U, wo), Vw = sqrtScaleRows(sv.V, wi);
  const devs = deviations(reps);
  const perturbed: Float64Array[] = [];
  const devV: Mat[] = [];
  const err = new Float64Array(K);
  for (const D of devs) {
    // δσ_k = u_kᵀ (W^{1/2} D W^{1/2}) v_k = (W^{1/2}u_k)ᵀ D (W^{1/2}v_k)
    const DV = matmul(D, Vw);
    devV.push(DV);
    const p = new Float64Array(K);
    for (let k = 0; k < K; k++) { let t = 0; for (let i = 0; i < D.rows; i++) t += Uw.data[i * K + k]! * DV.data[i * K + k]!; p[k] = sv.s[k]! + t; err[k] += t * t; }
    perturbed.push(p);
  }
  for (let k = 0; k < K; k++) err[k] = devs.length ? Math.sqrt(err[k]! / devs.length) : 0;
  // noise-dominated below the spectral norm of the noise itself (mean over a few replicates)
  const rngN = analysisRng(19);
  const sr = Float64Array.from(wo, Math.sqrt), sc = Float64Array.from(wi, Math.sqrt);
  const enorm = devs.length ? devs.slice(0, 5).reduce((acc, D) => acc + spectralNorm(D, rngN, 30, sr, sc), 0) / Math.min(5, devs.length) : 0;
  let trusted = 0;
  const cap = identifiedRank && identifiedRank > 0 ? identifiedRank : K;
  const tiny = 1e-12 * (sv.s[0] ?? 0);
  while (trusted < Math.min(K, cap) && sv.s[trusted]! > 3 * err[trusted]! && sv.s[trusted]! > 2 * enorm && sv.s[trusted]! > tiny) trusted++;
  if (!devs.length) trusted = 0; // no floor: nothing can be called trustworthy
  const out = { s: sv.s, err, trusted, svd: sv, perturbed, noiseNorm: enorm, weightedU: Uw, weightedV: Vw, devV, reps: reps.slice() };
  spectrumCache.set(kernel.G, out);
  return out;
}

/**
 * Uᵀ(W^{1/2} D W^{1/2})V — or Vᵀ(…)V with `left = 'V'` — restricted to the leading K singular
 * vectors, for the first `max` deviations D of `reps` (K × K, row-major). Reuses the spectrum's
 * products D·W^{1/2}V when it was computed from the same replicates.
 */
export function projectedDeviations(sp: Spectrum, reps: Mat[], K: number, max: number, left: 'U' | 'V' = 'U'): Float64Array[] {
  const same = sp.reps.length === reps.length && sp.reps.every((r, i) => r === reps[i]);
  const L = left === 'U' ? sp.weightedU : sp.weightedV, Kall = sp.weightedV.cols;
  const devs = same ? [] : deviations(reps);
  const count = Math.min(max, same ? sp.devV.length : devs.length);
  const Vk = same ? null : zeros(sp.weightedV.rows, K);
  if (Vk) for (let i = 0; i < Vk.rows; i++) for (let k = 0; k < K; k++) Vk.data[i * K + k] = sp.weightedV.data[i * Kall + k]!;
  const out: Float64Array[] = [];
  for (let r = 0; r < count; r++) {
    const DV = same ? sp.devV[r]! : matmul(devs[r]!, Vk!);
    const dc = DV.cols;
    const C = new Float64Array(K * K);
    for (let i = 0; i < DV.rows; i++) {
      const lo = i * L.cols, dvo = i * dc;
      for (let k = 0; k < K; k++) { const u = L.data[lo + k]!; if (u === 0) continue; const ck = k * K; for (let l = 0; l < K; l++) C[ck + l] += u * DV.data[dvo + l]!; }
    }
    out.push(C);
  }
  return out;
}

function expand(w: Float64Array, c: number): Float64Array {
  if (c === 1) return w;
  const o = new Float64Array(w.length * c);
  for (let k = 0; k < c; k++) o.set(w, k * w.length);
  return o;
}

export interface DecayFit { exponent: number; rate: number; ssPower: number; ssExp: number; lo: number; hi: number }

/** Least-squares fits of log σ_k against log k (power law) and against k (exponential) on k ∈ [lo, hi] (1-based). */
export function decayFit(s: ArrayLike<number>, lo: number, hi: number): DecayFit | null {
  if (hi - lo + 1 < 3) return null;
  const line = (xs: number[], ys: number[]) => {
    const m = xs.length, mx = xs.reduce((a, b) => a + b, 0) / m, my = ys.reduce((a, b) => a + b, 0) / m;
    let sxx = 0, sxy = 0;
    for (let i = 0; i < m; i++) { sxx += (xs[i]! - mx) ** 2; sxy += (xs[i]! - mx) * (ys[i]! - my); }
    const b = sxy / sxx, a = my - b * mx;
    let ss = 0;
    for (let i = 0; i < m; i++) ss += (ys[i]! - a - b * xs[i]!) ** 2;
    return { b, ss };
  };
  const ks: number[] = [], ys: number[] = [];
  for (let k = lo; k <= hi; k++) { const v = Math.abs(s[k - 1]!); if (!(v > 0)) return null; ks.push(k); ys.push(Math.log(v)); }
  const p = line(ks.map(Math.log), ys), e = line(ks, ys);
  return { exponent: -p.b, rate: -e.b, ssPower: p.ss, ssExp: e.ss, lo, hi };
}

/** A place off the diagonal where G may itself bend or jump: an interface, or a break of the fitted basis. */
export interface Cut { at: number; margin: number }

/**
 * The columns whose slope-jump window (half-width w) stays clear of every cut by its margin. The window fit
 * assumes G smooth on either side of the diagonal; across an interface where a(x) jumps G bends for every
 * source (a u′ is continuous, u′ is not), and a fit with its basis broken at a point may bend or jump there,
 * so a window containing one would add that kink to the diagonal's.
 */
function clearOfCuts(s: readonly number[], w: number, cuts: readonly Cut[]): number[] {
  const q: number[] = [];
  s.forEach((v, i) => { if (!cuts.some((c) => Math.abs(v - c.at) <= w + c.margin)) q.push(i); });
  return q;
}

/**
 * The cuts known to the analysis. A kernel fitted here bends off the diagonal only where its basis is broken,
 * so those breaks are the cuts (margin two grid cells); for a kernel from elsewhere, whose construction is
 * unknown, the interfaces located with at least even odds stand in (margin two location uncertainties, as for
 * the oscillation's regions; the interfaces analysis runs before this one).
 */
export function kinkCuts(kernel: Kernel, ctx: Context): Cut[] {
  const x = kernel.pointsIn.data;
  let lo = Infinity, hi = -Infinity;
  for (const v of x) { lo = Math.min(lo, v); hi = Math.max(hi, v); }
  const cell = (hi - lo) / Math.max(1, x.length - 1);
  const h = ctx.fit?.hyperparameters;
  if (h && typeof h['basis'] === 'string') {
    return String(h['breaks'] ?? '').split(',').map(Number)
      .filter((v) => Number.isFinite(v) && v > lo && v < hi).map((at) => ({ at, margin: 2 * cell }));
  }
  const cuts: Cut[] = [];
  for (const i of (ctx.results['interfaces']?.finding as Findings['interfaces'] | undefined) ?? []) {
    if (typeof i.location === 'number' && i.confidence >= 0.5) cuts.push({ at: i.location, margin: Math.max(2 * (Number.isFinite(i.uncertainty) ? i.uncertainty : 0), 2 * cell) });
  }
  return cuts;
}

/**
 * Normalised slope jump |mean [∂xG]| / median max|∂xG| over interior columns clear of the cuts (1-D,
 * co-located; joint |t|-kink fit per column). NaN when no column is clear.
 */
export function kinkStatistic(G: Mat, x: Float64Array, scale?: number[], cuts: readonly Cut[] = []): { value: number; scale: number[] } {
  const fn = slopeJumpFunctionals(x);
  const use = clearOfCuts(fn.s, fn.halfWidth, cuts);
  const all = applyJumpFunctionals(G, fn);
  const jump = Float64Array.from(use, (q) => all[q]!);
  let sc = scale;
  if (!sc) {
    const n = x.length;
    const ord = Array.from({ length: n }, (_, i) => i).sort((a, b) => x[a]! - x[b]!);
    sc = use.map((q) => fn.idx[q]!).map((j) => {
      let m = 0;
      for (let i = 1; i < n; i++) m = Math.max(m, Math.abs(G.data[ord[i]! * G.cols + j]! - G.data[ord[i - 1]! * G.cols + j]!) / (x[ord[i]!]! - x[ord[i - 1]!]!));
      return m || 1;
    });
  }
  // pooled over columns: the jump has one sign along the whole diagonal (−1/a(s) < 0), so its mean
  // keeps the signal while the noise of many columns averages out
  const ms = median(sc);
  if (!jump.length) return { value: NaN, scale: sc };
  let sum = 0;
  for (let q = 0; q < jump.length; q++) sum += jump[q]!;
  return { value: Math.abs(sum / jump.length) / ms, scale: sc };
}

/**
 * Pooled jump of the third derivative across the diagonal, mean over interior columns of
 * [∂x³G](s_j) (1-D, co-located), at the default window w and at 2w, with replicate floors (RMS
 * of the same means over the replicates' deviations). A fourth-order operator (e u″)″ + … has
 * [∂x³G] = 1/e(s), one sign along the diagonal, so the mean keeps the signal, and a true jump
 * is the same at every window. A smooth (non-local) kernel has no jump, but the local fit's
 * unmodelled even Taylor terms (from u⁶ on) leak into the |u|u² coefficient: that bias grows
 * like w³, 8× from w to 2w. `scaleFree` is the equivalence test between the two predictions
 * (difference 0 for a jump, 7·J(w) for the bias): |J(2w) − J(w)| with its one-sided 95 % margin
 * below the midpoint 3.5·|J(w)|.
 */
export function thirdJumpStatistic(G: Mat, x: Float64Array, devs: Mat[], cuts: readonly Cut[] = []): { value: number; floor: number; wide: number; scaleFree: boolean } {
  const fn = slopeJumpFunctionals(x, undefined, 3);
  const fw = slopeJumpFunctionals(x, 2 * fn.halfWidth, 3);
  const useN = clearOfCuts(fn.s, fn.halfWidth, cuts), useW = clearOfCuts(fw.s, fw.halfWidth, cuts);
  const pooled = (M: Mat, f: typeof fn) => {
    const j = applyJumpFunctionals(M, f), use = f === fn ? useN : useW;
    let t = 0;
    for (const q of use) t += j[q]!;
    return use.length ? t / use.length : NaN;
  };
  const j1 = pooled(G, fn), j2 = useW.length ? pooled(G, fw) : NaN;
  let f1 = 0, fd = 0;
  for (const D of devs) { const a = pooled(D, fn); f1 += a * a; fd += (pooled(D, fw) - a) ** 2; }
  const floor = devs.length ? Math.sqrt(f1 / devs.length) : NaN, floorDiff = devs.length ? Math.sqrt(fd / devs.length) : NaN;
  const scaleFree = Number.isFinite(j2) && Number.isFinite(floorDiff) && Math.abs(j2 - j1) + EQUIVALENCE_Z * floorDiff < 3.5 * Math.abs(j1);
  return { value: Math.abs(j1), floor, wide: Math.abs(j2), scaleFree };
}

/** Combine two independent probabilities for the same hypothesis (equal priors). */
function combine(pa: number, pb: number): number {
  const a = pa * pb, b = (1 - pa) * (1 - pb);
  return a + b > 0 ? a / (a + b) : 0.5;
}

export const order: Analysis<F> = {
  key: 'order',
  dependsOn: ['interfaces'],
  run(kernel: Kernel, ctx: Context): AnalysisOutput<F> {
    const explanation =
      'How fast the singular values of the kernel fall off tells the order of the hidden operator: for a differential operator of order 2m in d dimensions they fall like k^(−2m/d) (Weyl\'s law), while a smooth integral kernel gives an exponential fall-off. ' +
      'Only values clearly above their resampling error are used, and the count is stated. ' +
      'In 1-D a second line of evidence is the kernel\'s shape across its diagonal: a corner (a jump in slope) means order 2; a join that is smooth in slope but jumps in its third derivative, by the same amount at two window sizes, means order 4; a join smooth in every derivative fits a non-local kernel as well, so it decides nothing on its own.';
    const reps = replicates(ctx);
    const idRank = ctx.fit?.coverage?.identified_rank;
    const sp = kernelSpectrum(kernel, reps, typeof idRank === 'number' ? idRank : undefined);
    const d = kernel.dimension;
    const K = sp.trusted;
    const lo = Math.max(1, Math.ceil(K / 3)), hi = K;
    const fit = decayFit(sp.s, lo, hi);
    const repFits = fit ? sp.perturbed.map((p) => decayFit(p, lo, hi)) : [];
    const expReps = repFits.map((f) => f?.exponent ?? NaN).filter(Number.isFinite);
    const expSd = expReps.length >= 3 ? std(expReps) : NaN;
    // Weyl line of evidence: P(order 2) from the exponent's side of the boundary at 3/d
    let pWeyl2 = 0.5;
    let decay: 'power' | 'exponential' | 'undetermined' = 'undetermined';
    if (fit && K >= 6) {
      // the law that fits clearly better (residuals at least 2× smaller), and stays so across the
      // replicates' spectra: D = ln(ss_power/ss_exp) beyond ±ln 2 by its one-sided 95 % margin (as in
      // `decide`); over a short range of k the two laws are hard to tell apart and noise can flip them
      const D = Math.log(fit.ssPower / fit.ssExp);
      const Dr = repFits.map((f) => (f ? Math.log(f.ssPower / f.ssExp) : NaN)).filter(Number.isFinite);
      const sdD = Dr.length >= 3 && Number.isFinite(D) ? std(Dr) : 0;
      decay = fit.ssExp < 0.5 * fit.ssPower && !(D - EQUIVALENCE_Z * sdD <= Math.LN2) ? 'exponential'
        : fit.ssPower < 0.5 * fit.ssExp && !(D + EQUIVALENCE_Z * sdD >= -Math.LN2) ? 'power' : 'undetermined';
      const od = fit.exponent * d;
      const spread = Math.sqrt((d * (Number.isFinite(expSd) ? expSd : 0)) ** 2 + 0.5 ** 2);
      pWeyl2 = clamp01(normalCdf((3 - od) / spread));
    }
    // smoothness line of evidence (1-D, co-located)
    // A slope jump says order 2. No slope jump says "not order 2" but not yet "order 4": a smooth
    // non-local kernel has no kink either. Order 4 needs its own signature, a jump of ∂x³G at the
    // diagonal above the replicates' floor (3 sigma, the shared `decide` rule). Only a positive
    // signature lets the diagonal decide without the spectrum.
    let pSmooth2 = 0.5;
    let diagonalDecides = false;
    let kink: { value: number; floor: number; decision: string } | null = null;
    let third: { value: number; floor: number; decision: string; wide: number } | null = null;
    if (d === 1 && colocated(kernel) && kernel.components.in === 1 && kernel.components.out === 1) {
      const cuts = kinkCuts(kernel, ctx);
      const ks = kinkStatistic(kernel.G, kernel.pointsIn.data, undefined, cuts);
      const devs = deviations(reps);
      const fl = devs.length ? Math.sqrt(devs.reduce((s, dv) => s + kinkStatistic(dv, kernel.pointsIn.data, ks.scale, cuts).value ** 2, 0) / devs.length) : NaN;
      const dk = decide(ks.value, fl, 0.05);
      kink = { value: ks.value, floor: fl, decision: dk.decision };
      if (dk.decision === 'present') { pSmooth2 = dk.confidence; diagonalDecides = true; }
      else if (dk.decision === 'absent') {
        const t3 = thirdJumpStatistic(kernel.G, kernel.pointsIn.data, devs, cuts);
        const d3 = decide(t3.value, t3.floor, 0); // resolution 0: presence only (absence says nothing here)
        const decision = d3.decision === 'present' && !t3.scaleFree ? 'inconclusive' : d3.decision;
        third = { value: t3.value, floor: t3.floor, decision, wide: t3.wide };
        // both must hold: no slope jump and a scale-free third-derivative jump (the weaker confidence counts)
        if (decision === 'present') { pSmooth2 = 1 - Math.min(dk.confidence, d3.confidence); diagonalDecides = true; }
        // no signature of a finite order: against order 2 only as far as the spectrum also says it
        else if (K >= 6) pSmooth2 = 1 - dk.confidence;
      }
    }
    let estimate: number | null = null;
    let confidence = 0.5;
    const p2 = combine(pWeyl2, pSmooth2);
    if (decay === 'exponential') {
      estimate = null; confidence = 0.5;
    } else if (K >= 6 || diagonalDecides) {
      if (p2 >= 0.5) { estimate = 2; confidence = p2; } else { estimate = 4; confidence = 1 - p2; }
      if (Math.max(p2, 1 - p2) < 0.6) { estimate = null; confidence = 0.5; }
    }
    const disagree = (pWeyl2 - 0.5) * (pSmooth2 - 0.5) < 0 && Math.abs(pWeyl2 - 0.5) > 0.2 && Math.abs(pSmooth2 - 0.5) > 0.2;
    return {
      finding: {
        estimate,
        decay_exponent: fit ? sig(fit.exponent, 4) : null,
        confidence: round3(Math.min(confidence, 0.99)),
        trustworthy_values: K,
        decay,
        decay_exponent_uncertainty: sig(expSd, 2),
        exponential_rate: fit ? sig(fit.rate, 4) : null,
        fit_range: fit ? [lo, hi] : null,
        diagonal_kink: kink ? { statistic: sig(kink.value, 3), noise_floor: sig(kink.floor, 3), verdict: kink.decision } : null,
        third_derivative_jump: third ? { statistic: sig(third.value, 3), noise_floor: sig(third.floor, 3), at_double_window: sig(third.wide, 3), verdict: third.decision } : null,
        evidence_agree: !disagree,
      },
      evidence: {
        statistic: fit ? sig(fit.exponent, 4) : null,
        noise_floor: sig(expSd, 3),
        summary: `${K} trustworthy singular values; ` + (fit ? `power-law exponent ${fit.exponent.toFixed(2)}${Number.isFinite(expSd) ? ` ± ${expSd.toFixed(2)}` : ''} over k = ${lo}–${hi} (decay looks ${decay})` : 'too few to fit a decay') +
          (kink ? `; slope jump across the diagonal ${kink.decision} (${kink.value.toPrecision(2)} vs floor ${Number.isFinite(kink.floor) ? kink.floor.toPrecision(2) : '?'})` : '') +
          (third ? `; third-derivative jump ${third.decision} (${third.value.toPrecision(2)} vs floor ${Number.isFinite(third.floor) ? third.floor.toPrecision(2) : '?'})` : '') +
          `: order ${estimate ?? 'not determined'}${disagree ? ' (the two lines of evidence disagree)' : ''}.`,
        explanation,
        plot: {
          kind: 'spectrum',
          k: Array.from({ length: sp.s.length }, (_, i) => i + 1),
          sigma: Array.from(sp.s, (v) => sig(v, 4)),
          error: Array.from(sp.err, (v) => sig(v, 3)),
          trusted: K,
          fit: fit ? { lo, hi, exponent: fit.exponent, rate: fit.rate, line: Array.from({ length: hi - lo + 1 }, (_, q) => sig(sp.s[lo - 1]! * ((lo + q) / lo) ** -fit.exponent, 4)) } : null,
        },
      },
    };
  },
};
