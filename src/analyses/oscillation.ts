/**
 * Oscillation (wave/Helmholtz-type kernels) and screening (reaction–diffusion kernels).
 *
 * Away from its diagonal each column x ↦ G(x, s) solves the homogeneous equation. For a
 * second-order operator with locally constant coefficients, −a u'' + b u' + c u = 0, the
 * solutions are e^{−p x/2}·{cos √θ x, sin √θ x} (cosh/sinh when θ < 0, {1, x} at θ = 0) with
 * p = −b/a and θ = −(c/a) − p²/4. We fit (p, θ) jointly to many off-diagonal column segments
 * by variable projection (the amplitudes of each segment are eliminated by least squares;
 * Golub & Pereyra, SIAM J. Numer. Anal. 10 (1973)), by a coarse grid search followed by a
 * local pattern search. Then
 *   - oscillation wavenumber k = √θ (θ > 0); for p = 0 this is the k of −u'' − k²u;
 *   - screening: κ² = c/a = −θ − p²/4 > 0 gives the screening length 1/κ.
 * Floors: the spread of θ and of κ² over the replicates (each refitted from the point
 * estimate). `localWaveNumber` does the same on a sub-interval, for per-region answers.
 */
import type { Analysis, AnalysisOutput, Context } from './analysis.js';
import type { Findings, Kernel, YesNo } from '../types.js';
import type { Mat } from '../linalg/dense.js';
import { replicates, decide, sig, domainLength, std } from './util/a_common.js';

interface Segment { rows: Int32Array; col: number; xc: number }

export interface WaveFit {
  /** θ = oscillation wavenumber² (negative: decay rate²) */
  theta: number;
  /** p = −b/a (drift term of the homogeneous equation) */
  p: number;
  /** κ² = c/a = −θ − p²/4 (positive: screening) */
  kappa2: number;
  /** relative residual of the fit over all segments */
  residual: number;
  segments: number;
  points: number;
}

export interface LocalWave extends WaveFit {
  wavenumber: number | null;
  screeningLength: number | null;
  thetaSd: number | null;
  kappa2Sd: number | null;
  /** relative size of the replicates' noise on the same segments (what a perfect model would leave) */
  noiseResidual: number | null;
  /** whether a constant-coefficient second-order model explains the segments (residual ≤ max(3× noise, 0.02)) */
  adequate: boolean;
  interval: [number, number];
}

/** Off-diagonal column segments inside [a, b] (1-D scalar kernel, sensors may differ from actuators). */
function segments(kernel: Kernel, a: number, b: number, gap: number, maxCols = 16): Segment[] {
  const xo = kernel.pointsOut.data, xi = kernel.pointsIn.data;
  const no = xo.length;
  const ord = Array.from({ length: no }, (_, i) => i).sort((p, q) => xo[p]! - xo[q]!);
  const L = domainLength(kernel);
  const minLen = Math.max(0.08 * (b - a), 4 * L / no);
  const cols = Array.from({ length: xi.length }, (_, j) => j).sort((p, q) => xi[p]! - xi[q]!);
  const step = Math.max(1, Math.floor(cols.length / maxCols));
  const out: Segment[] = [];
  for (let c = Math.floor(step / 2); c < cols.length; c += step) {
    const j = cols[c]!, s = xi[j]!;
    for (const side of [-1, 1]) {
      const lo = side > 0 ? Math.max(a, s + gap) : a, hi = side > 0 ? b : Math.min(b, s - gap);
      if (hi - lo < minLen) continue;
      const rows = ord.filter((i) => xo[i]! >= lo - 1e-12 && xo[i]! <= hi + 1e-12);
      if (rows.length < 6) continue;
      out.push({ rows: Int32Array.from(rows), col: j, xc: 0.5 * (lo + hi) });
    }
  }
  return out;
}

/** Residual energy of the best fit of all segments for given (p, θ), and the total energy. */
function objective(G: Mat, x: Float64Array, segs: Segment[], p: number, theta: number): number {
  let res = 0;
  const w = Math.sqrt(Math.abs(theta));
  for (const sg of segs) {
    let s11 = 0, s12 = 0, s22 = 0, b1 = 0, b2 = 0, yy = 0;
    for (let q = 0; q < sg.rows.length; q++) {
      const i = sg.rows[q]!;
      const t = x[i]! - sg.xc;
      const e = Math.exp(-0.5 * p * t);
      let f1: number, f2: number;
      if (theta > 1e-12) { f1 = Math.cos(w * t); f2 = Math.sin(w * t) / w; }
      else if (theta < -1e-12) { f1 = Math.cosh(w * t); f2 = Math.sinh(w * t) / w; }
      else { f1 = 1; f2 = t; }
      f1 *= e; f2 *= e;
      const y = G.data[i * G.cols + sg.col]!;
      s11 += f1 * f1; s12 += f1 * f2; s22 += f2 * f2; b1 += f1 * y; b2 += f2 * y; yy += y * y;
    }
    const det = s11 * s22 - s12 * s12;
    let fitE = 0;
    if (det > 1e-14 * s11 * s22 && det > 0) fitE = (s22 * b1 * b1 - 2 * s12 * b1 * b2 + s11 * b2 * b2) / det;
    else if (s11 > 0) fitE = b1 * b1 / s11;
    res += Math.max(0, yy - fitE);
  }
  return res;
}

function energy(G: Mat, segs: Segment[]): number {
  let e = 0;
  for (const sg of segs) for (let q = 0; q < sg.rows.length; q++) e += G.data[sg.rows[q]! * G.cols + sg.col]! ** 2;
  return e;
}

/** Signed wavenumber parametrisation: κs = sign(θ)·√|θ|. */
const toTheta = (ks: number) => Math.sign(ks) * ks * ks;

function refine(G: Mat, x: Float64Array, segs: Segment[], p0: number, ks0: number, dp0: number, dk0: number, maxIt: number): { p: number; ks: number; f: number } {
  let p = p0, ks = ks0, f = objective(G, x, segs, p, toTheta(ks));
  let dp = dp0, dk = dk0;
  for (let it = 0; it < maxIt && (dp > 1e-7 * (1 + Math.abs(p)) || dk > 1e-7 * (1 + Math.abs(ks))); it++) {
    let moved = false;
    for (const [cp, ck] of [[dp, 0], [-dp, 0], [0, dk], [0, -dk], [dp, dk], [-dp, -dk], [dp, -dk], [-dp, dk]] as const) {
      const fn = objective(G, x, segs, p + cp, toTheta(ks + ck));
      if (fn < f) { f = fn; p += cp; ks += ck; moved = true; break; }
    }
    if (!moved) { dp /= 2; dk /= 2; }
  }
  return { p, ks, f };
}

/** Fit (p, θ) on the segments of one matrix; `start` skips the grid search (used for replicates). */
function fitWave(G: Mat, x: Float64Array, segs: Segment[], kmax: number, start: { p: number; ks?: number }): WaveFit & { ks: number } {
  const E = energy(G, segs);
  let best: { p: number; ks: number; f: number };
  const dk = (2 * kmax) / 160, dpp = kmax / 20;
  if (start.ks !== undefined) best = refine(G, x, segs, start.p, start.ks, dpp / 8, dk / 4, 60);
  else {
    // grid in the signed wavenumber at the starting drift, then a joint local search from the best three
    const top: { p: number; ks: number; f: number }[] = [];
    for (let a = 0; a <= 160; a++) {
      const ks = -kmax + a * dk;
      const f = objective(G, x, segs, start.p, toTheta(ks));
      top.push({ p: start.p, ks, f });
    }
    top.sort((u, v) => u.f - v.f);
    best = top.slice(0, 3).map((t) => refine(G, x, segs, t.p, t.ks, dpp / 2, dk / 2, 400)).sort((u, v) => u.f - v.f)[0]!;
  }
  const theta = toTheta(best.ks);
  const points = segs.reduce((s, g) => s + g.rows.length, 0);
  return { theta, p: best.p, kappa2: -theta - best.p * best.p / 4, residual: E > 0 ? Math.sqrt(best.f / E) : NaN, segments: segs.length, points, ks: best.ks };
}

/**
 * Local wavenumber / screening estimate of a 1-D scalar kernel on the sub-interval [a, b]
 * (for per-region answers). `reps` (resampled kernels) give the uncertainty; pass [] to skip.
 * `driftRate` (b/a, e.g. from the transport analysis) is the starting value of −p.
 */
export function localWaveNumber(kernel: Kernel, interval: [number, number], reps: Mat[] = [], opts: { maxReplicates?: number; driftRate?: number } = {}): LocalWave | null {
  if (kernel.dimension !== 1 || kernel.components.in !== 1 || kernel.components.out !== 1) return null;
  const L = domainLength(kernel);
  const n = kernel.pointsOut.rows;
  const [a, b] = interval;
  const gap = Math.max(3 * L / Math.max(1, n - 1), 0.03 * L);
  const segs = segments(kernel, a, b, gap);
  if (segs.length < 2) return null;
  const x = kernel.pointsOut.data;
  const kmax = Math.min(Math.PI * (n - 1) / (4 * L), 250 / L);
  const f = fitWave(kernel.G, x, segs, kmax, { p: -(opts.driftRate ?? 0) });
  const rf = reps.slice(0, opts.maxReplicates ?? 12).map((R) => fitWave(R, x, segs, kmax, { p: f.p, ks: f.ks }));
  const thetaSd = rf.length >= 3 ? std(rf.map((r) => r.theta)) : null;
  const kappa2Sd = rf.length >= 3 ? std(rf.map((r) => r.kappa2)) : null;
  const E = energy(kernel.G, segs);
  let noiseResidual: number | null = null;
  if (reps.length >= 2) {
    const mu = reps.reduce((acc, R) => { for (let i = 0; i < acc.length; i++) acc[i] += R.data[i]! / reps.length; return acc; }, new Float64Array(kernel.G.data.length));
    let e = 0;
    for (const R of reps) for (const sg of segs) for (let q = 0; q < sg.rows.length; q++) { const idx = sg.rows[q]! * R.cols + sg.col; e += (R.data[idx]! - mu[idx]!) ** 2; }
    noiseResidual = Math.sqrt(e / (reps.length - 1) / E);
  }
  const adequate = f.residual <= Math.max(3 * (noiseResidual ?? 0), 0.02);
  return {
    noiseResidual, adequate,
    theta: f.theta, p: f.p, kappa2: f.kappa2, residual: f.residual, segments: f.segments, points: f.points,
    wavenumber: f.theta > 0 ? Math.sqrt(f.theta) : null,
    screeningLength: f.kappa2 > 0 ? 1 / Math.sqrt(f.kappa2) : null,
    thetaSd, kappa2Sd, interval: [a, b],
  };
}

const cache = new WeakMap<Mat, { lw: LocalWave | null; why: string | null }>();

function globalFit(kernel: Kernel, ctx: Context): { lw: LocalWave | null; why: string | null } {
  const hit = cache.get(kernel.G);
  if (hit) return hit;
  let out: { lw: LocalWave | null; why: string | null };
  if (kernel.dimension !== 1) out = { lw: null, why: 'the column-segment fit is implemented for 1-D kernels only' };
  else if (kernel.components.in !== 1 || kernel.components.out !== 1) out = { lw: null, why: 'systems are not analysed for oscillation here (see coupling)' };
  else {
    const d = kernel.domain;
    const iv: [number, number] = d.kind === 'interval' ? d.bounds : [Math.min(...kernel.pointsOut.data), Math.max(...kernel.pointsOut.data)];
    const tr = ctx.results['transport']?.evidence.plot?.['drift_rate'];
    const r = Array.isArray(tr) && typeof tr[0] === 'number' && Number.isFinite(tr[0]) ? tr[0] : 0;
    const lw = localWaveNumber(kernel, iv, replicates(ctx), { driftRate: r });
    out = { lw, why: lw ? null : 'too few off-diagonal column segments' };
  }
  cache.set(kernel.G, out);
  return out;
}

const explanationOsc =
  'Away from the source point every column of the kernel obeys the same homogeneous equation, so its shape tells the local physics. ' +
  'We fit all column segments at once with the solutions of a second-order equation with constant coefficients, e^{−px/2}(A cos kx + B sin kx), choosing p and k² that fit best. ' +
  'A positive k² well above its resampling spread means the response oscillates with wavenumber k (a wave or Helmholtz-type operator).';
const explanationScr =
  'From the same fit, the reaction part c/a = −k² − p²/4 measures how fast the response dies away beyond what transport explains. ' +
  'A positive value well above its resampling spread means screening, with screening length 1/√(c/a) (a reaction–diffusion operator).';

function inapplicable(key: 'oscillation' | 'screening', why: string): AnalysisOutput<Findings['oscillation'] | Findings['screening']> {
  const finding = key === 'oscillation' ? { verdict: 'inconclusive' as YesNo, wavenumber: null, applicable: false } : { verdict: 'inconclusive' as YesNo, length: null, applicable: false };
  return { finding, evidence: { statistic: null, noise_floor: null, summary: `Not tested: ${why}.`, explanation: key === 'oscillation' ? explanationOsc : explanationScr } };
}

/** Effects weaker than the lowest Dirichlet mode of the domain, (π/L)², count as absent. */
function resolution(kernel: Kernel): number {
  return (Math.PI / domainLength(kernel)) ** 2;
}

function higherOrder(ctx: Context): boolean {
  const o = ctx.results['order']?.finding as Findings['order'] | undefined;
  return !!o && o.estimate !== null && o.estimate > 2 && o.confidence >= 0.8;
}

export const oscillation: Analysis<Findings['oscillation']> = {
  key: 'oscillation',
  dependsOn: ['order', 'transport'],
  run(kernel, ctx) {
    const { lw, why } = globalFit(kernel, ctx);
    if (!lw) return inapplicable('oscillation', why!) as AnalysisOutput<Findings['oscillation']>;
    const sd = lw.thetaSd ?? NaN;
    const d = decide(Math.max(lw.theta, 0), sd, resolution(kernel));
    let verdict: YesNo = d.decision === 'present' ? 'yes' : d.decision === 'absent' ? 'no' : 'inconclusive';
    const ho = higherOrder(ctx) || !lw.adequate;
    if (ho) verdict = 'inconclusive';
    const k = lw.wavenumber;
    const kSd = k && Number.isFinite(sd) ? sd / (2 * k) : null;
    return {
      finding: {
        verdict,
        wavenumber: verdict === 'yes' ? sig(k, 4) : null,
        wavenumber_uncertainty: verdict === 'yes' ? sig(kSd, 2) : null,
        confidence: verdict === 'inconclusive' ? 0.5 : d.confidence,
        k_squared: sig(lw.theta, 4),
        drift_term: sig(lw.p, 4),
        fit_residual: sig(lw.residual, 3),
        noise_residual: sig(lw.noiseResidual, 3),
        model_adequate: lw.adequate,
      },
      evidence: {
        statistic: sig(lw.theta, 4),
        noise_floor: sig(sd, 3),
        summary: `Column segments fit with k² = ${lw.theta.toPrecision(4)} ± ${Number.isFinite(sd) ? sd.toPrecision(2) : '?'} (p = ${lw.p.toPrecision(3)}, relative residual ${lw.residual.toPrecision(2)} over ${lw.segments} segments): ` +
          (verdict === 'yes' ? `oscillatory with wavenumber ${k!.toPrecision(4)}.` : verdict === 'no' ? 'no oscillation.' : ho ? 'the columns are not explained by one second-order equation with constant coefficients (higher order, or coefficients that vary: see the regions).' : 'the data do not decide.'),
        explanation: explanationOsc,
        plot: { kind: 'segments', k_squared: lw.theta, p: lw.p, residual: lw.residual, segments: lw.segments },
      },
    };
  },
};

export const screening: Analysis<Findings['screening']> = {
  key: 'screening',
  dependsOn: ['order', 'transport'],
  run(kernel, ctx) {
    const { lw, why } = globalFit(kernel, ctx);
    if (!lw) return inapplicable('screening', why!) as AnalysisOutput<Findings['screening']>;
    const sd = lw.kappa2Sd ?? NaN;
    const d = decide(Math.max(lw.kappa2, 0), sd, resolution(kernel));
    let verdict: YesNo = d.decision === 'present' ? 'yes' : d.decision === 'absent' ? 'no' : 'inconclusive';
    const ho = higherOrder(ctx) || !lw.adequate;
    if (ho) verdict = 'inconclusive';
    const len = lw.screeningLength;
    const lenSd = len && Number.isFinite(sd) ? 0.5 * len * sd / lw.kappa2 : null;
    return {
      finding: {
        verdict,
        length: verdict === 'yes' ? sig(len, 4) : null,
        length_uncertainty: verdict === 'yes' ? sig(lenSd, 2) : null,
        confidence: verdict === 'inconclusive' ? 0.5 : d.confidence,
        kappa_squared: sig(lw.kappa2, 4),
      },
      evidence: {
        statistic: sig(lw.kappa2, 4),
        noise_floor: sig(sd, 3),
        summary: `Reaction-to-diffusion ratio c/a = ${lw.kappa2.toPrecision(4)} ± ${Number.isFinite(sd) ? sd.toPrecision(2) : '?'}: ` +
          (verdict === 'yes' ? `screened, with screening length ${len!.toPrecision(3)}.` : verdict === 'no' ? 'no screening.' : ho ? 'the columns are not explained by one second-order equation with constant coefficients.' : 'the data do not decide.'),
        explanation: explanationScr,
        plot: { kind: 'segments', kappa_squared: lw.kappa2, p: lw.p },
      },
    };
  },
};


