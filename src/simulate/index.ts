/** The simulator's public API (docs/operator-spec.md describes the spec syntax). */
export { parseOperator, describeOperator } from './spec.js';
export type { OperatorSpec, OdeSpec, PdeSpec, KernelFormulaSpec, CoefSpec, EndCondition, ComponentSpec } from './spec.js';
export { simulateStudy, greensKernel, operatorDomain, operatorComponents } from './simulate.js';
export type { SimulateOptions, SimulateResult, Truth } from './simulate.js';
export { compileExpr, ExprError } from './expr.js';
export type { Compiled, Env } from './expr.js';
