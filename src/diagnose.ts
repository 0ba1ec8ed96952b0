/**
 * The diagnosis: runs every registered analysis on a kernel (in registry order, each seeing the
 * outputs of those before it) and assembles findings.json with every key of interface.md §5.
 * Pure: no file system, no clock (the caller fills the audit's times).
 */
import type { Kernel, NoiseFloor, FitReport, Findings, Evidence, InputFile, Audit } from './types.js';
import type { AnalysisOutput, Context } from './analyses/analysis.js';
import { analyses as registry } from './analyses/registry.js';
import { Rng } from './linalg/rng.js';
import { TOOL } from './version.js';
import { selfEstimatedNoiseFloor, withModelError } from './noiseFloor.js';
import { buildHypotheses } from './hypotheses/index.js';

export interface DiagnoseInput {
  kernel: Kernel;
  /** the fit's noise floor; absent for a kernel fitted elsewhere (then self-estimated) */
  noise?: NoiseFloor;
  fit?: FitReport;
  inputs: InputFile[];
}

export interface DiagnoseOptions {
  seed: number;
  options?: Record<string, unknown>;
  progress?: (msg: string) => void;
  /** restrict to these analysis keys (default: all registered) */
  only?: string[];
  audit: Audit;
}

type Required = Omit<Findings, 'format' | 'tool' | 'inputs' | 'dimension' | 'components' | 'fit' | 'hypotheses' | 'evidence' | 'noise_floor' | 'audit'>;

/** What a key says when its analysis is absent or could not run: inconclusive, never a guess. */
function fallback(): Required {
  return {
    self_adjoint: { verdict: 'inconclusive', defect: null as unknown as number, noise_floor: null as unknown as number, confidence: 0 },
    transport: { verdict: 'inconclusive', direction: null },
    translation_invariant: { verdict: 'inconclusive', defect: null as unknown as number, confidence: 0 },
    order: { estimate: null, decay_exponent: null, confidence: 0 },
    locality: { verdict: 'inconclusive' },
    oscillation: { verdict: 'inconclusive', wavenumber: null },
    screening: { verdict: 'inconclusive', length: null },
    singularities: [],
    interfaces: [],
    regions: [],
    coupling: { verdict: 'not-applicable', matrix: null },
    linearity: { verdict: 'not-tested' },
    operator: { expression: 'not determined', terms: [] },
  };
}

export interface DiagnoseResult {
  findings: Findings;
  /** analyses that threw, with their messages (also recorded in findings.evidence) */
  errors: { key: string; message: string }[];
}

export function diagnose(input: DiagnoseInput, opts: DiagnoseOptions): DiagnoseResult {
  const { kernel } = input;
  const noise = input.noise
    ? (input.fit ? withModelError(input.noise, kernel, input.fit.uncertainty.relative_kernel_error, input.fit.uncertainty.relative_homogeneous_error, opts.seed) : input.noise)
    : selfEstimatedNoiseFloor(kernel, opts.seed);
  const rng = new Rng(opts.seed);
  const results: Record<string, AnalysisOutput<unknown>> = {};
  const findings = fallback() as unknown as Record<string, unknown>;
  const evidence: Record<string, Evidence> = {};
  const errors: { key: string; message: string }[] = [];

  // linearity is measured by the fit (superposition and scaling need the experiments)
  if (input.fit) {
    const lin = input.fit.linearity;
    findings.linearity = { verdict: lin.verdict, statistic: lin.statistic, threshold: lin.threshold, note: lin.note };
    evidence.linearity = {
      statistic: lin.statistic, noise_floor: lin.threshold, summary: lin.note,
      explanation: 'A linear system obeys superposition and scaling: doubling a forcing doubles the response. The fit checks whether held-out experiments, and experiments of different forcing amplitude, are predicted equally well by one kernel; a residual that grows with amplitude beyond the noise means the system is not linear and the kernel is only a local linearisation.',
    };
  } else {
    findings.linearity = { verdict: 'not-tested', note: 'A kernel was given without experiments, so superposition could not be tested.' };
  }

  for (const a of registry) {
    if (opts.only && !opts.only.includes(a.key)) continue;
    const ctx: Context = { noise, fit: input.fit, rng: rng.fork(hashKey(a.key)), options: opts.options ?? {}, results };
    opts.progress?.(`analysis: ${a.key}`);
    try {
      const out = a.run(kernel, ctx);
      results[a.key] = out;
      findings[a.key] = out.finding;
      evidence[a.key] = out.evidence;
    } catch (e) {
      const message = (e as Error)?.message ?? String(e);
      errors.push({ key: a.key, message });
      evidence[a.key] = {
        statistic: null, noise_floor: null,
        summary: `This analysis could not be completed (${message}); its verdict is left inconclusive.`,
        explanation: '',
      };
    }
  }

  // the homogeneous part with a pointwise band (±2 standard deviations over the replicates)
  if (kernel.homogeneous && noise.homogeneousReplicates.length >= 2) {
    evidence.homogeneous = homogeneousEvidence(kernel, noise);
  }

  const base = {
    format: 'kerneldx-findings/1' as const,
    tool: TOOL,
    inputs: input.inputs,
    dimension: kernel.dimension,
    components: kernel.components,
    fit: input.fit
      ? {
        relative_residual: input.fit.relative_residual,
        noise_estimate: input.fit.noise_estimate,
        experiments: input.fit.experiments,
        method: input.fit.method,
        predicted_kernel_error: input.fit.uncertainty.relative_kernel_error,
        coverage: input.fit.coverage,
        refits: input.fit.refits,
      }
      : { relative_residual: null, noise_estimate: null, experiments: null, note: 'kernel supplied without experiments' },
    ...(findings as unknown as Required),
    evidence,
    noise_floor: { source: noise.source, assumption: noise.assumption, replicates: noise.replicates.length },
    audit: opts.audit,
  };
  const hypotheses = buildHypotheses(base);
  const full: Findings = { ...base, hypotheses };
  if (errors.length) (full as unknown as Record<string, unknown>).analysis_errors = errors;
  return { findings: full, errors };
}

function hashKey(s: string): number {
  let h = 2166136261;
  for (let i = 0; i < s.length; i++) h = Math.imul(h ^ s.charCodeAt(i), 16777619) >>> 0;
  return h;
}

function homogeneousEvidence(kernel: Kernel, noise: NoiseFloor): Evidence {
  const h = kernel.homogeneous!;
  const reps = noise.homogeneousReplicates;
  const R = reps.length;
  const lower: number[] = [], upper: number[] = [], sd: number[] = [];
  for (let i = 0; i < h.length; i++) {
    let m = 0;
    for (const r of reps) m += r[i]! / R;
    let v = 0;
    for (const r of reps) v += (r[i]! - m) ** 2;
    const s = Math.sqrt(v / (R - 1));
    sd.push(s);
    lower.push(h[i]! - 2 * s);
    upper.push(h[i]! + 2 * s);
  }
  const nOut = kernel.pointsOut.rows;
  const x = Array.from({ length: h.length }, (_, i) => kernel.pointsOut.data[(i % nOut) * kernel.dimension]!);
  const hNorm = Math.sqrt(h.reduce((s, v) => s + v * v, 0));
  const sdNorm = Math.sqrt(sd.reduce((s, v) => s + v * v, 0));
  return {
    statistic: hNorm, noise_floor: sdNorm,
    summary: `The homogeneous (boundary- or offset-driven) part has norm ${hNorm.toPrecision(3)} against a replicate spread of ${sdNorm.toPrecision(3)}.`,
    explanation: 'The homogeneous part u_h is the response the system shows with no forcing at all: the effect of boundary temperatures, offsets or drifts. The band is ±2 standard deviations of u_h over the resampled fits.',
    plot: { x, value: Array.from(h), lower, upper, components: kernel.components.out },
  };
}
