/**
 * Regions of one physical character, tiling a 1-D domain between the interfaces found by the
 * interfaces analysis. Each region's character comes from the local evidence pooled over the
 * region (interfaces.ts: local drift β and oscillation/decay γ of u'' + βu' + γu = 0 fitted to
 * the kernel's columns), from the global order (fourth order → `higher-order`) and locality
 * (`nonlocal`) findings when those analyses ran. Coefficients come from the operator analysis'
 * profiles averaged over the region when present; otherwise from our own local estimates
 * (diffusion from the diagonal jump, advection −aβ, reaction −aγ), and the entry says so.
 */
import type { Analysis, AnalysisOutput, Context } from './analysis.js';
import { separationConfidence, normalCdf } from './analysis.js';
import type { Findings, Kernel, Evidence, RegionCharacter, OperatorTerm } from '../types.js';
import type { Mat } from '../linalg/dense.js';
import { localProfiles, block00, type Profiles } from './interfaces.js';

type F = Findings['regions'];

function bounds1d(k: Kernel): [number, number] {
  if (k.domain.kind === 'interval') return k.domain.bounds;
  let lo = Infinity, hi = -Infinity;
  for (const v of k.pointsOut.data) { lo = Math.min(lo, v); hi = Math.max(hi, v); }
  return [lo, hi];
}

function median(v: number[]): number {
  const s = v.filter(Number.isFinite).sort((a, b) => a - b);
  return s.length ? s[Math.floor(s.length / 2)]! : NaN;
}

function regionMedian(p: Profiles, name: string, a: number, b: number, pad: number): number {
  const f = p.features[name];
  if (!f) return NaN;
  const v: number[] = [];
  for (let k = 0; k < p.centers.length; k++) if (p.centers[k]! > a + pad && p.centers[k]! < b - pad) v.push(f[k]!);
  return median(v);
}

function sens(p: Profiles, name: string, a: number, b: number, pad: number): number {
  const f = p.sensitivity[name];
  if (!f) return 0;
  const v: number[] = [];
  for (let k = 0; k < p.centers.length; k++) if (p.centers[k]! > a + pad && p.centers[k]! < b - pad) v.push(f[k]!);
  const m = median(v);
  return Number.isFinite(m) ? m : 0;
}

export interface RegionEvidence { bounds: [number, number]; drift: number; driftSd: number; wave: number; waveSd: number; logInvDiffusion: number }

/** Pooled local evidence per region (exported for tests and for the hypotheses). */
export function regionEvidence(kernel: Kernel, replicates: Mat[], cuts: number[]): RegionEvidence[] {
  const [lo, hi] = bounds1d(kernel);
  const edges = [lo, ...cuts.filter((c) => c > lo && c < hi).sort((a, b) => a - b), hi];
  const main = localProfiles(kernel, block00(kernel, kernel.G));
  const reps = replicates.slice(0, 4).map((R) => localProfiles(kernel, block00(kernel, R)));
  const pad = main.blur['drift'] ?? 0.05 * (hi - lo);
  const sd = (vals: number[]) => {
    const v = vals.filter(Number.isFinite);
    if (v.length < 2) return NaN;
    const m = v.reduce((a, b) => a + b, 0) / v.length;
    return Math.sqrt(v.reduce((a, b) => a + (b - m) ** 2, 0) / (v.length - 1));
  };
  const out: RegionEvidence[] = [];
  for (let r = 0; r + 1 < edges.length; r++) {
    const a = edges[r]!, b = edges[r + 1]!;
    const padR = Math.min(pad, (b - a) / 4);
    const pick = (p: Profiles, nm: string) => regionMedian(p, nm, r === 0 ? a - 1 : a, r === edges.length - 2 ? b + 1 : b, padR);
    out.push({
      bounds: [a, b],
      // spread over replicates combined with the estimator's own sensitivity (step size change)
      drift: pick(main, 'drift'), driftSd: Math.hypot(sd(reps.map((p) => pick(p, 'drift'))), sens(main, 'drift', a, b, padR)),
      wave: pick(main, 'wave'), waveSd: Math.hypot(sd(reps.map((p) => pick(p, 'wave'))), sens(main, 'wave', a, b, padR)),
      logInvDiffusion: pick(main, 'log_inv_diffusion'),
    });
  }
  return out;
}

function termMean(t: OperatorTerm, a: number, b: number): number {
  const v: number[] = [];
  for (let i = 0; i < t.x.length; i++) if (t.x[i]! >= a && t.x[i]! <= b && Number.isFinite(t.value[i]!)) v.push(t.value[i]!);
  return v.length ? v.reduce((p, q) => p + q, 0) / v.length : NaN;
}

const EXPLANATION = 'The domain is cut at the interfaces found, and each piece is described by the local evidence pooled over it: whether the kernel\'s columns show a drift (transport), an oscillation (wave-like) or an exponential decay (screening, reaction) beyond what plain diffusion gives, each judged against its spread over resampled kernels. A fourth-order or non-local operator found by the order and locality analyses overrides this. Coefficients are averages of the operator analysis\' profiles over the region where available. When the fitted kernel is too coarse to show structure on the scale of our local windows, a character read from them is given at most even odds.';

export const regions: Analysis<F> = {
  key: 'regions',
  dependsOn: ['interfaces', 'operator', 'order', 'locality'],
  run(kernel: Kernel, ctx: Context): AnalysisOutput<F> {
    if (kernel.dimension !== 1) {
      return { finding: [], evidence: { statistic: null, noise_floor: null, summary: 'Regions are not segmented in 2-D (omitted).', explanation: EXPLANATION, plot: {} } };
    }
    const L = bounds1d(kernel)[1] - bounds1d(kernel)[0];
    const ifs = (ctx.results.interfaces?.finding as Findings['interfaces'] | undefined) ?? [];
    const cuts = ifs.map((i) => i.location as number);
    // the regions are only as certain as their bounds: when the interfaces analysis could not
    // decide, or an interface's place is uncertain, a region's character cannot be surer
    const ifVerdict = (ctx.results.interfaces?.evidence as { verdict?: string } | undefined)?.verdict;
    const boundConf = (a: number, b: number): number => {
      let c = ifVerdict === 'inconclusive' ? 0.5 : 1;
      for (const i of ifs) if (Math.abs((i.location as number) - a) < 1e-9 || Math.abs((i.location as number) - b) < 1e-9) c = Math.min(c, i.confidence);
      return c;
    };
    const order = ctx.results.order?.finding as Findings['order'] | undefined;
    const locality = ctx.results.locality?.finding as Findings['locality'] | undefined;
    const terms = (ctx.results.operator?.finding as Findings['operator'] | undefined)?.terms ?? [];
    const ev = regionEvidence(kernel, ctx.noise.replicates, cuts);
    // the local evidence reads the kernel on windows of full width 0.1 L (interfaces.ts); a
    // fitted kernel expanded in K basis functions per axis does not resolve structure finer
    // than about L / K, so when L / K exceeds the window the local character is not resolved
    const K = Number(ctx.fit?.hyperparameters?.['basis_size']);
    const resolved = !(Number.isFinite(K) && K > 0 && 1 / K > 0.1);
    const finding: F = ev.map((r) => {
      const len = r.bounds[1] - r.bounds[0];
      // dimensionless size over the region: Péclet-like |β|ℓ and √|γ|ℓ (features are scaled by L)
      const pe = Math.abs(r.drift) * (len / L), osc = Math.abs(r.wave) * (len / L);
      const cDrift = Number.isFinite(r.driftSd) ? separationConfidence(Math.abs(r.drift), r.driftSd) : 0;
      const cWave = Number.isFinite(r.waveSd) ? separationConfidence(Math.abs(r.wave), r.waveSd) : 0;
      // a term matters when its dimensionless group over the region is of order one: Péclet ≥ 1;
      // at least a quarter period (oscillation) or decay over a quarter of the region's length
      // (screening), i.e. √|γ| ℓ ≥ π/2
      const hasDrift = cDrift >= 0.9 && pe >= 1, hasWave = cWave >= 0.9 && osc >= Math.PI / 2;
      let character: RegionCharacter = 'diffusion';
      // plain diffusion is only as certain as the data exclude a relevant drift or oscillation:
      // P(|β|ℓ < 1) · P(√|γ|ℓ < π/2) under a Gaussian error of the pooled estimates
      const excl = (est: number, sdv: number, thr: number) => (Number.isFinite(sdv) && sdv > 0 ? normalCdf((thr - Math.abs(est)) / sdv) : (Math.abs(est) < thr ? 1 : 0));
      let confidence = excl(r.drift, r.driftSd, L / len) * excl(r.wave, r.waveSd, (Math.PI / 2) * (L / len));
      if (hasDrift || hasWave) {
        if (hasWave && (!hasDrift || osc >= pe)) { character = r.wave > 0 ? 'wave' : 'reaction-diffusion'; confidence = cWave; }
        else { character = 'advection-diffusion'; confidence = cDrift; }
      }
      if (order && order.estimate === 4 && order.confidence >= 0.5) { character = 'higher-order'; confidence = order.confidence; }
      if (locality && locality.verdict === 'nonlocal') {
        // the locality analysis' own confidence, lowered when the local evidence clearly shows a
        // differential character (drift or oscillation/decay) that contradicts it
        const cNl = typeof locality.confidence === 'number' ? locality.confidence : 0.5;
        const cLocal = hasDrift || hasWave ? confidence : 0;
        character = 'nonlocal'; confidence = Math.min(cNl, 1 - cLocal);
      }
      const coefficients: Record<string, number> = {};
      let source = 'operator analysis';
      for (const t of terms) { const m = termMean(t, r.bounds[0], r.bounds[1]); if (Number.isFinite(m)) coefficients[t.name] = sig4(m); }
      if (!Object.keys(coefficients).length) {
        source = 'own local estimates (no operator analysis available)';
        const a = Math.exp(-r.logInvDiffusion);
        if (Number.isFinite(a)) {
          coefficients['diffusion'] = sig4(a);
          if (character === 'advection-diffusion') coefficients['advection'] = sig4(-a * r.drift / L);
          if (character === 'reaction-diffusion' || character === 'wave') coefficients['reaction'] = sig4(-a * Math.sign(r.wave) * (r.wave / L) ** 2);
        }
      }
      confidence = Math.min(confidence, boundConf(r.bounds[0], r.bounds[1]));
      // unresolved local evidence: at most even odds for a character read from it
      if (!resolved && character !== 'higher-order' && character !== 'nonlocal') confidence = Math.min(confidence, 0.5);
      return {
        bounds: [sig4(r.bounds[0]), sig4(r.bounds[1])] as [number, number], character, coefficients,
        confidence: sig4(Math.max(0, Math.min(1, confidence))), coefficients_source: source, resolved,
        local: { drift: sig4(r.drift / L), drift_sd: sig4(r.driftSd / L), wave: sig4(r.wave / L), wave_sd: sig4(r.waveSd / L) },
      };
    });
    const summary = `${finding.length} region${finding.length > 1 ? 's' : ''}: ` + finding.map((r) => `[${r.bounds[0]}, ${r.bounds[1]}] ${r.character}`).join('; ') + '.';
    const evidence: Evidence = {
      statistic: null, noise_floor: null, summary, explanation: EXPLANATION,
      plot: { regions: finding.map((r) => ({ bounds: r.bounds, character: r.character })), interfaces: ifs, evidence_plot_of: 'interfaces' },
    };
    return { finding, evidence };
  },
};

function sig4(v: number): number { return Number.isFinite(v) ? Number(v.toPrecision(4)) : v; }
