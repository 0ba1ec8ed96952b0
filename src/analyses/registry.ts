/**
 * The analyses, in the order they run (an analysis may read the outputs of those before it,
 * named in its `dependsOn`). Adding a question = one file + one line here.
 */
import type { Analysis } from './analysis.js';
import { operatorAnalysis } from './operator.js';
import { singularities } from './singularities.js';
import { interfacesAnalysis } from './interfaces.js';
import { regions } from './regions.js';

export const analyses: Analysis<unknown>[] = [
  operatorAnalysis as Analysis<unknown>, // after order and self_adjoint, before regions
  singularities as Analysis<unknown>,
  interfacesAnalysis as Analysis<unknown>,
  regions as Analysis<unknown>, // after interfaces, operator, order, locality
];
