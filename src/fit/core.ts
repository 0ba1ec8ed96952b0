/** Shared shapes between the estimator's paths (1-D kink model, span model) and the driver. */
import type { Mat } from '../linalg/dense.js';
import type { Constraint } from './kink1d.js';

export interface ScalingTest {
  /** relative response-space distance between kernels fitted to low- and high-amplitude halves */
  statistic: number;
  /** the same statistic on parametric-bootstrap replicates of a linear system */
  nulls: number[];
  /** the fit's own relative response-space error (replicate spread), added to the null's spread */
  fitError: number;
  lowAmplitude: number;
  highAmplitude: number;
}

export interface CoreFit {
  method: string;
  hyper: Record<string, number | string | boolean>;
  G: Mat;
  uh: Float64Array;
  rss: number;
  dof: number;
  nObs: number;
  /** centred response energy */
  yy: number;
  /** GCV estimate of the mean squared prediction error per value */
  gcvMse: number;
  /** estimated noise std */
  sigma: number;
  replicates: Mat[];
  homogeneousReplicates: Float64Array[];
  scaling: ScalingTest | null;
  notes: string[];
  constraint: Constraint;
  /** false when the path itself can only identify G on the forcings' span */
  complete: boolean;
  /** input-side degrees of freedom of the model (the data must excite at least this many directions) */
  inputDof: number;
}
