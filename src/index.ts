/**
 * kerneldx as a library. The command line (src/cli) is a thin user of these functions.
 *   readStudy → fitStudy → diagnose → buildDossier, or diagnoseDir/runPipeline for folders.
 */
export type * from './types.js';
export { readStudy, writeStudy } from './io/study.js';
export { readKernel, writeKernel } from './io/kernel.js';
export { readMatrix, readVector } from './io/arrays.js';
export { withOutput } from './io/output.js';
export { quadratureWeights } from './quadrature.js';
export { gpDraws } from './design/gp.js';
export { parseOperator, simulateStudy, greensKernel } from './simulate/index.js';
export { fitStudy, refit } from './fit/index.js';
export { diagnose } from './diagnose.js';
export { selfEstimatedNoiseFloor } from './noiseFloor.js';
export { analyses } from './analyses/registry.js';
export { buildHypotheses } from './hypotheses/index.js';
export { buildDossier } from './report/index.js';
export { diagnoseDir, diagnoseStudy, runPipeline } from './pipeline.js';
export { KdxError, UsageError, InputError, DataError } from './errors.js';
export { VERSION } from './version.js';
