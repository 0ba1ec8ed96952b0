/**
 * Transport: for a kernel that is not self-adjoint, which way is the response carried and how
 * strongly?
 *
 * Direction: the net skew mass Σ w_i w_j (G(x_i, s_j) − G(s_j, x_i)) · (x_i − s_j)/|x_i − s_j|
 * over all pairs, relative to the total mass Σ w_i w_j |G|. A source feeds its downstream
 * side more than its upstream side, so the sign (1-D) or the vector (2-D) points downstream.
 * Its floor is the same linear statistic of the replicates' deviations.
 *
 * Strength: for −∇·(a∇u) + b·∇u (a, b uniform) the operator equals e^{r·x}[−∇·(a e^{−r·x}∇u)]
 * with r = b/a, so G(x, s)/G(s, x) = e^{r·(x − s)} exactly (Stakgold & Holst, adjoint Green's
 * function G(x,s) = G†(s,x); see shared/references entry (d)). A robust weighted regression of
 * log(G(x,s)/G(s,x)) on x − s over well-measured pairs gives r; the Péclet number is |r|·L.
 * With varying coefficients r is the domain average of b/a.
 */
import type { Analysis, AnalysisOutput, Context } from './analysis.js';
import type { Findings, Kernel } from '../types.js';
import type { Mat } from '../linalg/dense.js';
import { squareView, replicates, deviations, decide, sig, domainLength, std, type SquareView } from './util/a_common.js';
import { numberOption, driftedKernel } from './selfAdjoint.js';

type F = Findings['transport'];

/** Net skew mass (1-D: a number in [−1, 1]; 2-D: a 2-vector); G square on the view's points. */
export function skewMass(G: Mat, view: SquareView, dim: number, c: number, den: number): number[] {
  const n = view.w.length;
  const w = view.w, x = view.x;
  const out = new Array<number>(dim).fill(0);
  for (let b = 0; b < c; b++) {
    const o = b * n;
    for (let i = 0; i < n; i++) for (let j = 0; j < i; j++) {
      const a = G.data[(o + i) * G.cols + o + j]! - G.data[(o + j) * G.cols + o + i]!;
      const ww = w[i]! * w[j]! * a;
      if (dim === 1) out[0] += ww * Math.sign(x[i]! - x[j]!);
      else {
        const dx = x[2 * i]! - x[2 * j]!, dy = x[2 * i + 1]! - x[2 * j + 1]!;
        const r = Math.hypot(dx, dy);
        if (r > 0) { out[0] += ww * dx / r; out[1] += ww * dy / r; }
      }
    }
  }
  return out.map((v) => v / den);
}

function absMass(G: Mat, view: SquareView, c: number): number {
  const n = view.w.length;
  let s = 0;
  for (let b = 0; b < c; b++) {
    const o = b * n;
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) s += view.w[i]! * view.w[j]! * Math.abs(G.data[(o + i) * G.cols + o + j]!);
  }
  return s;
}

/**
 * Drift rate r (per unit length; a vector in 2-D) from log(G(x,s)/G(s,x)) = r·(x − s),
 * using pairs where both entries exceed 3× their noise and share a sign; a first fit is
 * followed by one pass that drops residuals beyond 3 robust standard deviations.
 */
export function driftRate(G: Mat, sd: Float64Array | null, view: SquareView, dim: number): number[] | null {
  const n = view.w.length, x = view.x;
  let gmax = 0;
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) gmax = Math.max(gmax, Math.abs(G.data[i * G.cols + j]!));
  if (!(gmax > 0)) return null;
  const tiny = 1e-8 * gmax;
  const stride = Math.max(1, Math.round(n / 90));
  const cap = Math.ceil(n / stride) ** 2;
  const D = new Float64Array(cap * dim), Y = new Float64Array(cap), W = new Float64Array(cap);
  let m = 0;
  for (let i = 0; i < n; i += stride) for (let j = 0; j < i; j += stride) {
    const a = G.data[i * G.cols + j]!, b = G.data[j * G.cols + i]!;
    const sa = Math.max(sd ? sd[i * G.cols + j]! : 0, tiny), sb = Math.max(sd ? sd[j * G.cols + i]! : 0, tiny);
    if (Math.abs(a) < 3 * sa || Math.abs(b) < 3 * sb || Math.sign(a) !== Math.sign(b)) continue;
    Y[m] = Math.log(a / b);
    W[m] = 1 / ((sa / a) ** 2 + (sb / b) ** 2);
    if (dim === 1) D[m] = x[i]! - x[j]!;
    else { D[2 * m] = x[2 * i]! - x[2 * j]!; D[2 * m + 1] = x[2 * i + 1]! - x[2 * j + 1]!; }
    m++;
  }
  if (m < 3 * dim) return null;
  const fit = (keep: Uint8Array | null): number[] | null => {
    let a11 = 0, a12 = 0, a22 = 0, b1 = 0, b2 = 0;
    for (let k = 0; k < m; k++) {
      if (keep && !keep[k]) continue;
      const w = W[k]!, y = Y[k]!;
      if (dim === 1) { const d = D[k]!; a11 += w * d * d; b1 += w * d * y; }
      else { const d1 = D[2 * k]!, d2 = D[2 * k + 1]!; a11 += w * d1 * d1; a12 += w * d1 * d2; a22 += w * d2 * d2; b1 += w * d1 * y; b2 += w * d2 * y; }
    }
    if (dim === 1) return a11 > 0 ? [b1 / a11] : null;
    const det = a11 * a22 - a12 * a12;
    return det > 0 ? [(a22 * b1 - a12 * b2) / det, (a11 * b2 - a12 * b1) / det] : null;
  };
  let r = fit(null);
  if (!r) return null;
  const res = new Float64Array(m);
  for (let k = 0; k < m; k++) {
    const pred = dim === 1 ? D[k]! * r[0]! : D[2 * k]! * r[0]! + D[2 * k + 1]! * r[1]!;
    res[k] = Math.abs(Y[k]! - pred) * Math.sqrt(W[k]!);
  }
  const sorted = Float64Array.from(res).sort();
  const mad = 1.4826 * sorted[m >> 1]!;
  if (mad > 0) {
    const keep = new Uint8Array(m);
    let kept = 0;
    for (let k = 0; k < m; k++) if (res[k]! <= 3 * mad) { keep[k] = 1; kept++; }
    if (kept >= 3 * dim) r = fit(keep) ?? r;
  }
  return r;
}

export const transport: Analysis<F> = {
  key: 'transport',
  dependsOn: ['self_adjoint'],
  run(kernel: Kernel, ctx: Context): AnalysisOutput<F> {
    const explanation =
      'A system that carries its response along (advection, drift, flow) answers a source more strongly downstream than upstream. ' +
      'We add up, over all pairs of points, how much the kernel exceeds its mirror image in each direction; the sign (or, in 2-D, the vector) of that imbalance is the direction of transport, compared with the same sum over resampling noise. ' +
      'The strength comes from the ratio G(x,s)/G(s,x), which for uniform drift b and diffusion a grows like e^{(b/a)(x−s)}: its rate times the domain length is the Péclet number.';
    const view = squareView(kernel);
    const dim = kernel.dimension;
    const sa = ctx.results['self_adjoint']?.finding as Findings['self_adjoint'] | undefined;
    if (!view) {
      return {
        finding: { verdict: 'inconclusive', direction: null, peclet: null, confidence: 0.5, applicable: false },
        evidence: { statistic: null, noise_floor: null, summary: 'Transport was not tested: G(x, s) and G(s, x) cannot both be read on these point sets.', explanation },
      };
    }
    const c = kernel.components.in;
    const G = view.map(kernel.G);
    const den = absMass(G, view, c);
    const T = skewMass(G, view, dim, c, den);
    const reps = replicates(ctx).map(view.map);
    const devs = deviations(reps);
    const Tr = devs.map((d) => skewMass(d, view, dim, c, den));
    const mag = Math.hypot(...T);
    // per-component floor (RMS over replicates), then the floor of the magnitude
    const floor = Tr.length ? Math.sqrt(Tr.reduce((s, t) => s + t.reduce((q, v) => q + v * v, 0), 0) / Tr.length / dim) : NaN;
    // the smallest transport worth reporting: the skew mass a drift of Péclet number 1 would give this kernel
    const L0 = domainLength(kernel);
    const res = Math.hypot(...skewMass(driftedKernel(G, view, dim, L0, 1), view, dim, c, den));
    const dT = decide(mag, floor, numberOption(ctx, 'transportResolution', res));

    // drift rate and Péclet number (first diagonal block)
    const n = view.w.length;
    const sub = (M: Mat): Mat => {
      if (c === 1) return M;
      const out = { rows: n, cols: n, data: new Float64Array(n * n) };
      for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) out.data[i * n + j] = M.data[i * M.cols + j]!;
      return out;
    };
    const G1 = sub(G);
    let sd: Float64Array | null = null;
    if (devs.length) {
      sd = new Float64Array(n * n);
      for (const d of devs.map(sub)) for (let i = 0; i < sd.length; i++) sd[i] += d.data[i]! ** 2;
      for (let i = 0; i < sd.length; i++) sd[i] = Math.sqrt(sd[i]! / devs.length);
    }
    const L = domainLength(kernel);
    const r = driftRate(G1, sd, view, dim);
    const rReps = reps.slice(0, 20).map((R) => driftRate(sub(R), sd, view, dim)).filter((v): v is number[] => v !== null);
    const pe = r ? Math.hypot(...r) * L : null;
    const peReps = rReps.map((v) => Math.hypot(...v) * L);
    const peSd = peReps.length >= 3 ? std(peReps) : null;

    let verdict: F['verdict'] = 'inconclusive';
    let confidence = 0.5;
    const saV = sa?.verdict ?? 'inconclusive';
    if (dT.decision === 'present' && saV !== 'yes') {
      verdict = dim === 1 ? (T[0]! > 0 ? '+x' : '-x') : (T[0]! >= 0 ? '+x' : '-x');
      confidence = saV === 'no' ? dT.confidence : Math.min(dT.confidence, 0.7);
    } else if (dT.decision === 'absent' && saV !== 'inconclusive') {
      verdict = 'none';
      confidence = saV === 'yes' ? Math.min(dT.confidence, sa!.confidence) : dT.confidence;
    }
    const unit = mag > 0 ? T.map((v) => v / mag) : null;
    const direction = verdict === '+x' || verdict === '-x' ? (dim === 1 ? [Math.sign(T[0]!)] : unit!.map((v) => sig(v, 4) ?? 0)) : null;
    const label = dim === 2 && unit ? (Math.abs(unit[0]!) >= Math.abs(unit[1]!) ? (unit[0]! > 0 ? '+x' : '-x') : (unit[1]! > 0 ? '+y' : '-y')) : null;
    const peTxt = pe !== null && verdict !== 'none' ? ` Estimated Péclet number ${pe.toPrecision(3)}${peSd !== null ? ` ± ${peSd.toPrecision(2)}` : ''}.` : '';
    return {
      finding: {
        verdict,
        direction,
        peclet: verdict === '+x' || verdict === '-x' ? sig(pe, 3) : null,
        peclet_uncertainty: verdict === '+x' || verdict === '-x' ? sig(peSd, 2) : null,
        confidence,
        skew_mass: T.map((v) => sig(v, 4) ?? 0),
        resolution: sig(res, 3),
        ...(dim === 2 ? { dominant_axis: label } : {}),
      },
      evidence: {
        statistic: sig(mag, 4),
        noise_floor: sig(floor, 3),
        summary: `Net skew mass ${T.map((v) => v.toPrecision(3)).join(', ')} against a floor of ${Number.isFinite(floor) ? floor.toPrecision(2) : 'unknown'}: ` +
          (verdict === 'none' ? 'no net transport.' : verdict === 'inconclusive' ? 'the direction of transport is not decided.' : `transport toward ${dim === 1 ? verdict : `(${direction!.join(', ')})`}.`) + peTxt,
        explanation,
        plot: { kind: 'bars', skew_mass: T, replicate_skew_mass: Tr.map((t) => t.map((v) => sig(v, 3))), drift_rate: r, peclet_replicates: peReps.map((v) => sig(v, 3)) },
      },
    };
  },
};

