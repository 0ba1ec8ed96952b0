/**
 * Self-adjointness: is G(x, s) = G(s, x) in the weighted inner product of the input points?
 *
 * For point values of G on co-located points with quadrature weights w, the adjoint kernel is
 * G(s, x), so the defect is ‖G − Gᵀ‖_W / ‖G‖_W with ‖A‖_W² = Σ w_i w_j A_ij². For systems
 * (component-major blocks) the same formula compares G_ij(x, s) with G_ji(s, x). The floor is
 * the same defect computed on the noise alone: the antisymmetric part of the replicates'
 * deviations from their mean (a pair-bootstrap spread; calibrated to a ratio ≈ 1 for
 * self-adjoint kernels). With distinct sensors in 1-D both are compared on the common support
 * after linear interpolation along x; in 2-D with distinct point sets the test does not apply.
 */
import type { Analysis, AnalysisOutput } from './analysis.js';
import type { Findings, Kernel } from '../types.js';
import type { Context } from './analysis.js';
import type { Mat } from '../linalg/dense.js';
import { zeros, matmul, matmulTN } from '../linalg/dense.js';
import { squareView, tile, weightedNorm, replicates, deviations, rms, decide, sig, downsample, domainLength, colocated, type SquareView } from './util/a_common.js';
import { kernelSpectrum, projectedDeviations } from './order.js';
import { asymmetrySlope } from './util/a_semisep.js';

type F = Findings['self_adjoint'];

/** Antisymmetric part G − Gᵀ of a square matrix. */
export function skewPart(G: Mat): Mat {
  const n = G.rows;
  const out = zeros(n, n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) out.data[i * n + j] = G.data[i * n + j]! - G.data[j * n + i]!;
  return out;
}

/** ‖A − Aᵀ‖_W = √(Σ_ij w_i w_j (A_ij − A_ji)²) of a square matrix, without forming A − Aᵀ. */
export function skewNorm(A: Mat, w: ArrayLike<number>): number {
  const n = A.rows;
  let s = 0;
  for (let i = 0; i < n; i++) {
    const o = i * n, wi = w[i]!;
    let r = 0;
    for (let j = 0; j < i; j++) { const d = A.data[o + j]! - A.data[j * n + i]!; r += w[j]! * d * d; }
    s += wi * r;
  }
  return Math.sqrt(2 * s);
}

/** Weighted defect ‖G − Gᵀ‖_W / ‖G‖_W of a square kernel (0 for a self-adjoint one). */
export function adjointDefect(G: Mat, w: Float64Array): number {
  const den = weightedNorm(G, w, w);
  if (!(den > 0)) return NaN;
  return skewNorm(G, w) / den;
}

/**
 * The kernel a Péclet number `pe` of uniform drift along the first axis would make of the
 * symmetric part of G: G_pe(x, s) = e^{r(x₁ − s₁)/2} G_sym(x, s) with r = pe/L. Conjugating an
 * operator by e^{r x₁/2} adds the drift term −r∂₁ (and a reaction shift r²/4), so this is the
 * Green's function of the same medium with transport of Péclet number pe (exactly so for
 * −εu'' + bu', shared/references entry (d): G = e^{−rs}·(symmetric kernel)). Square view only.
 */
export function driftedKernel(G: Mat, view: SquareView, dim: number, L: number, pe: number): Mat {
  const n = G.rows, nx = view.w.length;
  const r = pe / L;
  const out = zeros(n, n);
  for (let i = 0; i < n; i++) {
    const xi = view.x[(i % nx) * dim]!;
    for (let j = 0; j < n; j++) {
      const sj = view.x[(j % nx) * dim]!;
      out.data[i * n + j] = 0.5 * (G.data[i * n + j]! + G.data[j * n + i]!) * Math.exp(0.5 * r * (xi - sj));
    }
  }
  return out;
}

/**
 * The smallest adjoint defect worth reporting: the defect of `driftedKernel` at Péclet
 * number 1, the usual boundary between diffusion- and transport-dominated behaviour (common
 * practice). About 0.19 for −u'' on [0, 1] (closed form (d)); computed for each kernel so that
 * it follows the kernel's own shape and weights.
 */
export function adjointResolution(kernel: Kernel, view: SquareView, G: Mat, w: Float64Array): number {
  const D = driftedKernel(G, view, kernel.dimension, domainLength(kernel), 1);
  const den = weightedNorm(D, w, w);
  return den > 0 ? skewNorm(D, w) / den : NaN;
}

export interface AdjointTest {
  defect: number;
  floor: number;
  replicateDefects: number[];
  /** the square view used (null when G(x, s) and G(s, x) cannot be compared) */
  applicable: boolean;
  interpolated: boolean;
  /** the defect of the same kernel with transport of Péclet number 1 (the resolution) */
  resolution: number;
}

/**
 * Compression onto the kernel's leading right-singular subspace (orthonormal V, weighted
 * coordinates): B = Vᵀ W^½ G W^½ V. A kernel known only on the forcings' span is G·P; its
 * leading right-singular vectors lie in that span, and Vᵀ A V is symmetric whenever G is, while
 * G·P itself is not. Returned in the shape the defect formula expects (unit weights).
 */
function compress(G: Mat, w: Float64Array, V: Mat): Mat {
  const Vw = zeros(V.rows, V.cols);
  for (let i = 0; i < V.rows; i++) { const si = Math.sqrt(w[i]!); for (let k = 0; k < V.cols; k++) Vw.data[i * V.cols + k] = si * V.data[i * V.cols + k]!; }
  return matmulTN(Vw, matmul(G, Vw));
}

/** The statistic and its floor; exported for the coupling analysis and for tests. `span`: compare on this
 * orthonormal subspace (weighted coordinates) only, for a kernel restricted to the forcings' span. */
export function adjointTest(kernel: Kernel, reps: Mat[], span?: Mat, projected?: Float64Array[]): AdjointTest {
  const view = squareView(kernel);
  if (!view) return { defect: NaN, floor: NaN, replicateDefects: [], applicable: false, interpolated: false, resolution: NaN };
  const c = kernel.components.in;
  if (span && !view.interpolated && c === 1 && kernel.components.out === 1) {
    const one = new Float64Array(span.cols).fill(1);
    const B = compress(kernel.G, view.w, span);
    const den = weightedNorm(B, one, one);
    // `projected`: the deviations already compressed (Vᵀ W^½ D W^½ V, K × K each), e.g. from the shared spectrum
    const K = span.cols;
    const devs = projected && projected.length === (reps.length >= 2 ? reps.length : 0) ? projected.map((C) => ({ rows: K, cols: K, data: C }))
      : deviations(reps).map((d) => compress(d, view.w, span));
    const rd = devs.map((d) => skewNorm(d, one) / den);
    return {
      defect: skewNorm(B, one) / den, floor: rd.length ? rms(rd) : NaN, replicateDefects: rd, applicable: true, interpolated: false,
      resolution: adjointResolution(kernel, view, kernel.G, view.w),
    };
  }
  const w = tile(view.w, c);
  const G = view.map(kernel.G);
  const den = weightedNorm(G, w, w);
  const defect = skewNorm(G, w) / den;
  const devs = deviations(reps.map(view.map));
  const rd = devs.map((d) => skewNorm(d, w) / den);
  return { defect, floor: rd.length ? rms(rd) : NaN, replicateDefects: rd, applicable: true, interpolated: view.interpolated, resolution: adjointResolution(kernel, view, G, w) };
}

/** Cells of the drift profile: ∫|b/a| is summed by the midpoint rule over this many equal cells (our choice). */
export const DRIFT_CELLS = 8;

export interface DriftTest {
  /** P = ∫|b/a| dx over the covered cells (dimensionless; a Péclet number) */
  peclet: number;
  /** the same P computed on the replicates' deviations from their mean (RMS over replicates) */
  floor: number;
  /** b/a at the cell centres (NaN where too few pairs are well measured) */
  profile: Float64Array;
  /** every cell had enough pairs: P bounds the drift over the whole domain */
  covered: boolean;
}

/**
 * Drift profile of a 1-D scalar kernel on co-located points. For −(a u')' + b u' + c u,
 * log(G(x,s)/G(s,x)) = φ(x) − φ(s) with φ' = b/a exactly (a_semisep.ts identity (1)), and for
 * any operator G = Gᵀ makes it vanish. So |log(G(x,s)/G(s,x))| ≤ P = ∫|b/a| dx for every pair:
 * P < 1 means transport changes no entry of G by a factor e or more — the Péclet-1 boundary
 * that also sets `adjointResolution` (our convention). Unlike the Frobenius defect, P neither
 * saturates (‖G − Gᵀ‖/‖G‖ ≤ √2) nor grows with a symmetric model error of the fit.
 * Null when the kernel is not 1-D scalar co-located.
 */
export function driftTest(kernel: Kernel, reps: Mat[]): DriftTest | null {
  const view = squareView(kernel);
  if (!view || view.interpolated || kernel.dimension !== 1 || kernel.components.in !== 1 || kernel.components.out !== 1) return null;
  const n = view.w.length;
  const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => view.x[a]! - view.x[b]!);
  const x = Float64Array.from(order, (i) => view.x[i]!);
  const sorted = (M: Mat): Mat => {
    const A = view.map(M), out = zeros(n, n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) out.data[i * n + j] = A.data[order[i]! * n + order[j]!]!;
    return out;
  };
  const L = x[n - 1]! - x[0]!;
  if (!(L > 0) || n < 8) return null;
  const K = DRIFT_CELLS, cell = L / K;
  const centers = Float64Array.from({ length: K }, (_, k) => x[0]! + (k + 0.5) * cell);
  const h = L / (n - 1);
  const dmin = Math.max(2 * h, 0.01 * L);
  // windows of two cells (half-width one cell) so each has pairs spanning its cell
  const G0 = sorted(kernel.G);
  let profile: Float64Array, R: Float64Array[] = [];
  if (reps.length < 2) profile = asymmetrySlope(G0, x, centers, cell, dmin);
  else ({ profile, reps: R } = windowSlopes(G0, reps.map(sorted), x, centers, cell, dmin));
  const ok = Array.from(profile, (v) => Number.isFinite(v));
  const P = ok.reduce((s, good, k) => (good ? s + Math.abs(profile[k]!) * cell : s), 0);
  let floor = NaN;
  if (R.length >= 2) {
    const f = Math.sqrt(R.length / (R.length - 1));
    const mu = new Float64Array(K), cnt = new Float64Array(K);
    for (const r of R) for (let k = 0; k < K; k++) if (Number.isFinite(r[k]!)) { mu[k] += r[k]!; cnt[k]++; }
    for (let k = 0; k < K; k++) mu[k] = cnt[k]! > 0 ? mu[k]! / cnt[k]! : NaN;
    let ss = 0;
    for (const r of R) {
      let p = 0;
      // a replicate cell without pairs counts as deviating by the whole main-kernel value (conservative)
      for (let k = 0; k < K; k++) if (ok[k]) p += (Number.isFinite(r[k]!) ? f * Math.abs(r[k]! - mu[k]!) : Math.abs(profile[k]!)) * cell;
      ss += p * p;
    }
    floor = Math.sqrt(ss / R.length);
  }
  return { peclet: P, floor, profile, covered: ok.every(Boolean) };
}

/**
 * Local slopes of y = log(G(x,s)/G(s,x)) against Δ = x − s per window (the identity of
 * `asymmetrySlope`), weighted by 1/var(y) over the replicates instead of by the entries' size:
 * weights that do not move with the estimate's own noise keep the slope unbiased where G is
 * small (size weights attenuate it toward 0 near Dirichlet ends), and make the slope linear in
 * y, so the replicates' slopes (same pairs, same weights) give its honest spread. Pairs: both
 * entries above 3× their replicate spread with one sign (as in transport's driftRate).
 */
function windowSlopes(G: Mat, reps: Mat[], x: Float64Array, centers: Float64Array, w: number, dmin: number): { profile: Float64Array; reps: Float64Array[] } {
  const n = x.length, K = centers.length, R = reps.length;
  const profile = new Float64Array(K).fill(NaN);
  const out = reps.map(() => new Float64Array(K).fill(NaN));
  const yr = new Float64Array(R);
  for (let k = 0; k < K; k++) {
    const c = centers[k]!;
    let num = 0, den = 0, cnt = 0;
    const rn = new Float64Array(R), rd = new Float64Array(R);
    for (let i = 0; i < n; i++) {
      if (Math.abs(x[i]! - c) > w) continue;
      for (let j = 0; j < i; j++) {
        const d = x[i]! - x[j]!;
        if (d < dmin || Math.abs(x[j]! - c) > w) continue;
        const a = G.data[i * n + j]!, b = G.data[j * n + i]!;
        if (!(a * b > 0)) continue;
        let sa = 0, sb = 0, m = 0, my = 0, vy = 0;
        for (let r = 0; r < R; r++) {
          const A = reps[r]!.data[i * n + j]!, B = reps[r]!.data[j * n + i]!;
          sa += (A - a) ** 2; sb += (B - b) ** 2;
          yr[r] = A * B > 0 ? Math.log(A / B) : NaN;
          if (A * B > 0) { m++; my += yr[r]!; }
        }
        if (Math.abs(a + b) <= 6 * Math.sqrt((sa + sb) / (2 * R)) || m < 2) continue;
        my /= m;
        for (let r = 0; r < R; r++) if (Number.isFinite(yr[r]!)) vy += (yr[r]! - my) ** 2;
        vy /= m - 1;
        if (!(vy > 0)) vy = 1e-30; // exact replicates: equal weights in effect (all pairs agree)
        const wt = 1 / vy, y = Math.log(a / b);
        num += wt * y * d; den += wt * d * d; cnt++;
        for (let r = 0; r < R; r++) { const v = Number.isFinite(yr[r]!) ? yr[r]! : y; rn[r] += wt * v * d; rd[r] += wt * d * d; }
      }
    }
    if (cnt >= 8 && den > 0) {
      profile[k] = num / den;
      for (let r = 0; r < R; r++) out[r]![k] = rn[r]! / rd[r]!;
    }
  }
  return { profile, reps: out };
}

export const selfAdjoint: Analysis<F> = {
  key: 'self_adjoint',
  run(kernel: Kernel, ctx: Context): AnalysisOutput<F> {
    // a kernel known only on the forcings' span is compared on its leading (identified) subspace
    const cov = ctx.fit?.coverage;
    let span: Mat | undefined;
    let projected: Float64Array[] | undefined;
    if (cov && cov.complete === false && colocated(kernel) && kernel.components.in === 1 && kernel.components.out === 1) {
      const sp = kernelSpectrum(kernel, replicates(ctx), cov.identified_rank);
      const K = Math.min(sp.svd.V.cols, Math.max(1, cov.identified_rank));
      span = zeros(sp.svd.V.rows, K);
      for (let i = 0; i < span.rows; i++) for (let k = 0; k < K; k++) span.data[i * K + k] = sp.svd.V.data[i * sp.svd.V.cols + k]!;
      projected = projectedDeviations(sp, replicates(ctx), K, Infinity, 'V');
    }
    const t = adjointTest(kernel, replicates(ctx), span, projected);
    const explanation =
      'We compare the kernel with its mirror image G(s, x): a self-adjoint (reciprocal) system responds at x to a source at s exactly as it responds at s to a source at x. ' +
      'The number is the size of the difference relative to the kernel, with each point counted by its quadrature weight. ' +
      'It is set against the same number computed from the resampling noise alone, so a ratio near 1 means the mismatch is what noise would produce. ' +
      'Calling the system reciprocal needs more: the mismatch must be confidently smaller than what a drift of Péclet number 1 would cause in the same kernel. ' +
      'When that comparison does not decide (for instance because the fit\'s own error is as large as such a mismatch), a 1-D kernel is also read as a drift profile: the logarithm of G(x,s)/G(s,x) grows along x at the rate b/a of the transport term, and its integral over the domain, a Péclet number, is compared with 1 against the same number computed from the resampling noise.';
    if (!t.applicable) {
      return {
        finding: { verdict: 'inconclusive', defect: NaN, noise_floor: NaN, confidence: 0.5, applicable: false },
        evidence: {
          statistic: null, noise_floor: null,
          summary: 'Self-adjointness was not tested: sensors and actuators share no common support on which G(x, s) and G(s, x) can both be read.',
          explanation,
        },
      };
    }
    const resolution = numberOption(ctx, 'selfAdjointResolution', t.resolution);
    const d = decide(t.defect, t.floor, resolution);
    let verdict: F['verdict'] = d.decision === 'present' ? 'no' : d.decision === 'absent' ? 'yes' : 'inconclusive';
    let confidence = d.confidence;
    // When the Frobenius test does not decide (its floor, inflated by the fit's model error, is as
    // large as the effects of interest, or the defect saturates near √2), the drift profile decides
    // in physical units against the same Péclet-1 boundary; absence needs every cell covered.
    // A kernel known only on the forcings' span may show a drift (the fitted entries carry it
    // against their floor) but cannot certify its absence in the unidentified directions.
    const drift = driftTest(kernel, replicates(ctx));
    let dd: ReturnType<typeof decide> | null = null;
    if (drift && d.decision === 'inconclusive') {
      dd = decide(drift.peclet, drift.floor, 1);
      if (dd.decision === 'present') { verdict = 'no'; confidence = dd.confidence; }
      else if (dd.decision === 'absent' && drift.covered && !span) { verdict = 'yes'; confidence = dd.confidence; }
      else dd = null;
    }
    const view = squareView(kernel)!;
    const skew = skewPart(view.map(kernel.G));
    const floorTxt = Number.isFinite(t.floor) ? t.floor.toPrecision(2) : 'unknown (no replicates)';
    return {
      finding: {
        verdict,
        defect: sig(t.defect) ?? NaN,
        noise_floor: sig(t.floor) ?? NaN,
        confidence,
        ratio: sig(d.z, 3),
        ...(drift ? { drift_peclet: sig(drift.peclet, 3), drift_floor: sig(drift.floor, 3) } : {}),
        interpolated: t.interpolated,
        resolution: sig(resolution, 3),
        ...(span ? { compared_on: `the leading ${span.cols} identified directions (the kernel is known only on the forcings' span)` } : {}),
      },
      evidence: {
        statistic: sig(t.defect),
        noise_floor: sig(t.floor),
        summary: `Weighted adjoint defect ${t.defect.toPrecision(3)} against a noise floor of ${floorTxt} (ratio ${Number.isFinite(d.z) ? d.z.toPrecision(3) : '∞'}; a Péclet-1 drift would give ${resolution.toPrecision(2)}): ` +
          (dd && dd.decision !== 'inconclusive' ? `the drift profile gives a Péclet number ${drift!.peclet.toPrecision(3)} against a floor of ${drift!.floor.toPrecision(2)}, so ` : '') +
          (verdict === 'yes' ? 'consistent with a self-adjoint operator.' : verdict === 'no' ? 'the operator is not self-adjoint.' : 'the data do not decide.'),
        explanation,
        plot: { kind: 'heatmap', title: 'antisymmetric part G(x,s) − G(s,x)', ...downsample(skew, 60), replicate_defects: t.replicateDefects.map((v) => sig(v, 3)) },
      },
    };
  },
};

export function numberOption(ctx: Context, name: string, dflt: number): number {
  const v = ctx.options?.[name];
  return typeof v === 'number' && Number.isFinite(v) ? v : dflt;
}
