/**
 * The analyses, in the order they run (an analysis may read the outputs of those before it,
 * named in its `dependsOn`). Adding a question = one file + one line here.
 */
import type { Analysis } from './analysis.js';
import { selfAdjoint } from './selfAdjoint.js';
import { transport } from './transport.js';
import { translation } from './translation.js';
import { order } from './order.js';
import { locality } from './locality.js';
import { oscillation, screening } from './oscillation.js';
import { coupling } from './coupling.js';
import { operatorAnalysis } from './operator.js';
import { singularities } from './singularities.js';
import { interfacesAnalysis } from './interfaces.js';
import { regions } from './regions.js';

export const analyses: Analysis<unknown>[] = [
  selfAdjoint as Analysis<unknown>,
  transport as Analysis<unknown>, // after self_adjoint
  interfacesAnalysis as Analysis<unknown>,
  order as Analysis<unknown>, // after interfaces (its diagonal windows avoid them)
  singularities as Analysis<unknown>,
  oscillation as Analysis<unknown>, // after order, transport, interfaces and singularities (column fits per region)
  screening as Analysis<unknown>,
  locality as Analysis<unknown>, // after order (shares its spectrum) and oscillation (its column fits)
  coupling as Analysis<unknown>,
  translation as Analysis<unknown>, // after interfaces
  operatorAnalysis as Analysis<unknown>, // after order, self_adjoint and interfaces; before regions
  regions as Analysis<unknown>, // after interfaces, operator, order, locality
];
