/**
 * The plain data that flows through kerneldx:
 *   Study ──fit──▶ FitResult (Kernel + FitReport + replicates) ──analyses──▶ Findings ──report──▶ dossier
 * All matrices are row-major `Mat` (see linalg/dense.ts). Points are `n × dimension` matrices.
 */
import type { Mat } from './linalg/dense.js';

export type Dimension = 1 | 2;

export type Domain =
  | { kind: 'interval'; bounds: [number, number] }
  | { kind: 'box'; bounds: [[number, number], [number, number]] }
  | { kind: 'points' }
  /** extension: a disk, used by the simulator and for quadrature weights */
  | { kind: 'disk'; center: [number, number]; radius: number };

export interface FieldData {
  /** n × dimension */
  points: Mat;
  /** experiments × (n · components), component-major columns; NaN = not measured */
  values: Mat;
  components: number;
}

export interface InputFile {
  /** path as given, relative to the study folder where possible */
  path: string;
  sha256: string;
}

export interface Study {
  title?: string;
  dimension: Dimension;
  inputs: FieldData;
  outputs: FieldData;
  domain: Domain;
  units?: { x?: string; f?: string; u?: string };
  noise?: { sigma: number };
  /** files read to build this study, with hashes (audit trail) */
  files?: InputFile[];
  /** anything else found in study.json (kept for the audit trail) */
  extra?: Record<string, unknown>;
}

export interface Kernel {
  dimension: Dimension;
  /** n_out × dimension */
  pointsOut: Mat;
  /** n_in × dimension */
  pointsIn: Mat;
  /** quadrature weights of the input points (length n_in) */
  weightsIn: Float64Array;
  /** (n_out · c_out) × (n_in · c_in) point values of G(x, s); component-major blocks */
  G: Mat;
  /** u_h at the output points (length n_out · c_out), or null when not known */
  homogeneous: Float64Array | null;
  components: { in: number; out: number };
  domain: Domain;
  /** files read to build this kernel, with hashes (audit trail) */
  files?: InputFile[];
}

/** What later stages may use as their noise floor. */
export interface NoiseFloor {
  /**
   * Resampled kernels (same shape as Kernel.G): the spread of any statistic over these
   * is its noise floor. Bootstrap over experiments when a study is available.
   */
  replicates: Mat[];
  /** replicates of the homogeneous part, aligned with `replicates` (may be empty) */
  homogeneousReplicates: Float64Array[];
  /** how the replicates were made */
  source: 'bootstrap' | 'kernel-self-estimate' | 'none';
  /** plain-words assumption behind the floor, shown in the findings */
  assumption: string;
}

/** Contents of fit.json (interface: ours; the findings copy a summary). */
export interface FitReport {
  format: 'kerneldx-fit/1';
  method: string;
  /** chosen hyper-parameters and model size */
  hyperparameters: Record<string, number | string | boolean>;
  experiments: number;
  /** cross-validated relative residual of predicted responses */
  relative_residual: number;
  /** response noise std (estimated, or the study's noise.sigma) */
  noise_estimate: number;
  noise_source: 'study' | 'estimated';
  uncertainty: {
    /** predicted relative Frobenius error of G */
    relative_kernel_error: number;
    /** predicted relative error of u_h */
    relative_homogeneous_error: number | null;
    method: string;
    replicates: number;
  };
  coverage: {
    /** fraction of the kernel's energy in the part the forcings identify */
    identified_energy_fraction: number;
    /** number of input directions the forcings excite above the noise */
    identified_rank: number;
    /** false when G is restricted to the forcings' span: never present it as the whole kernel */
    complete: boolean;
    note: string;
  };
  linearity: {
    verdict: 'linear' | 'nonlinear' | 'inconclusive' | 'not-tested';
    statistic: number | null;
    threshold: number | null;
    note: string;
  };
  /** which constrained refits were done, and which kernel the findings use */
  refits: { constraint: string; relative_residual: number; used: boolean; breaks?: number[]; reason?: string }[];
  seconds: number;
  seed: number;
}

export interface FitResult {
  kernel: Kernel;
  report: FitReport;
  noise: NoiseFloor;
}

// ---------------------------------------------------------------- findings

export type YesNo = 'yes' | 'no' | 'inconclusive';
export type Position = number | [number, number];
export type RegionCharacter =
  | 'diffusion' | 'advection-diffusion' | 'reaction-diffusion' | 'wave' | 'higher-order' | 'nonlocal' | 'other';

export interface OperatorTerm {
  /** e.g. "diffusion", "advection", "reaction", "fourth-order" */
  name: string;
  /** symbolic form, e.g. "-(a(x) u')'" */
  form: string;
  /** sample positions and estimated value with a band */
  x: number[];
  value: number[];
  lower: number[];
  upper: number[];
}

export interface Hypothesis {
  statement: string;
  confidence: number;
  evidence: string[];
  /** contradicting evidence, said plainly */
  caveats?: string[];
}

/** Behind every verdict: the number, the floor it was compared with, and what the test measures. */
export interface Evidence {
  statistic: number | null;
  noise_floor: number | null;
  /** one sentence: what was found */
  summary: string;
  /** what the test measures, in plain words (shown in the dossier) */
  explanation: string;
  /** data for the analysis' plot (free form, JSON-serialisable) */
  plot?: Record<string, unknown>;
  /**
   * For analyses whose finding is a list (singularities, interfaces): whether the list is a
   * claim ('found' / 'none': "there is none") or 'inconclusive' (nothing could be decided at
   * this noise level), with the confidence of that claim.
   */
  verdict?: 'found' | 'none' | 'inconclusive';
  confidence?: number;
}

export interface Findings {
  format: 'kerneldx-findings/1';
  tool: { name: 'kerneldx'; version: string };
  inputs: InputFile[];
  dimension: Dimension;
  components: { in: number; out: number };
  fit: { relative_residual: number | null; noise_estimate: number | null; experiments: number | null; [k: string]: unknown };
  self_adjoint: { verdict: YesNo; defect: number; noise_floor: number; confidence: number; [k: string]: unknown };
  transport: { verdict: 'none' | '+x' | '-x' | 'inconclusive'; direction: number[] | null; peclet?: number | null; [k: string]: unknown };
  translation_invariant: { verdict: YesNo; defect: number; confidence: number; isotropic?: YesNo; change_points?: Position[]; [k: string]: unknown };
  order: { estimate: number | null; decay_exponent: number | null; confidence: number; trustworthy_values?: number; [k: string]: unknown };
  locality: { verdict: 'local' | 'nonlocal' | 'inconclusive'; [k: string]: unknown };
  oscillation: { verdict: YesNo; wavenumber: number | null; [k: string]: unknown };
  screening: { verdict: YesNo; length: number | null; [k: string]: unknown };
  singularities: { location: Position; width: number; confidence: number; [k: string]: unknown }[];
  interfaces: { location: Position; uncertainty: number; confidence: number; [k: string]: unknown }[];
  regions: { bounds: [number, number]; character: RegionCharacter; coefficients: Record<string, number>; [k: string]: unknown }[];
  coupling: { verdict: 'none' | 'one-way' | 'two-way' | 'not-applicable' | 'inconclusive'; matrix: number[][] | null; symmetric?: YesNo; [k: string]: unknown };
  linearity: { verdict: 'linear' | 'nonlinear' | 'inconclusive' | 'not-tested'; [k: string]: unknown };
  operator: { expression: string; terms: OperatorTerm[]; [k: string]: unknown };
  hypotheses: Hypothesis[];
  /** extension: evidence behind each analysis, keyed like the findings */
  evidence: Record<string, Evidence>;
  /** extension: the noise floor used and its assumption */
  noise_floor: { source: NoiseFloor['source']; assumption: string; replicates: number };
  /** extension: audit trail */
  audit: Audit;
}

export interface Audit {
  command: string[];
  options: Record<string, unknown>;
  seed: number;
  started: string;
  seconds: number;
  platform: { node: string; os: string; arch: string };
  /** the command that re-creates this output (run it from `cwd`) */
  rerun: string;
  /** working folder the command ran in (the re-run command's paths are relative to it) */
  cwd?: string;
}
