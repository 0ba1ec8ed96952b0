/**
 * The validation suite's cases: studies simulated from known operators (our own specs, see
 * docs/operator-spec.md), each with what a correct diagnosis must say. Expected values come
 * from the operators themselves (closed forms in shared/references/greens-functions.md where one exists).
 */
export interface Expect {
  self_adjoint?: 'yes' | 'no';
  transport?: 'none' | '+x' | '-x';
  translation_invariant?: 'yes' | 'no';
  order?: 2 | 4;
  locality?: 'local' | 'nonlocal';
  oscillation?: 'yes' | 'no';
  /** k of −u'' − k²u (entry b) */
  wavenumber?: number;
  screening?: 'yes' | 'no';
  /** 1/κ of −u'' + κ²u (entry c) */
  screeningLength?: number;
  /** interface locations (an empty list means: there must be none) */
  interfaces?: number[];
  /** singular points other than the diagonal (empty list: none) */
  singularities?: number[];
  coupling?: 'none' | 'one-way' | 'two-way';
  linearity?: 'linear' | 'nonlinear';
  /** region characters at probe points away from interfaces (the region containing `at` must have this character) */
  regions?: { at: number; character: string }[];
  /** constant coefficients of the operator (checked against operator.terms' interior mean) */
  coefficients?: { diffusion?: number; reaction?: number; advection?: number; 'fourth-order'?: number };
  /**
   * coefficient profiles checked point by point against the truth (worst point within 5 % at
   * noise 0 and 10 % at 0.01; band covering the truth everywhere at every level); points whose
   * test bump reaches within 0.02 of the domain length of an `awayFrom` location are skipped
   */
  profiles?: { term: string; truth: (x: number) => number; label: string; awayFrom?: number[] }[];
  /** terms the operator does not have: must not be written into the expression, band must cover 0 */
  absentTerms?: string[];
}

export interface Case {
  name: string;
  family: string;
  spec: string;
  /** 1-D points on the operator's domain (default 200 uniform); or a 2-D grid size */
  n?: number;
  grid2d?: number;
  count?: number;
  lengthScale?: number;
  amplitudes?: [number, number];
  /** distinct sensors: this many seeded-random sensors, actuators uniform (n of them) */
  randomSensors?: number;
  /** part of the fast subset run by `npm test` */
  fast?: boolean;
  expect: Expect;
}

export const cases: Case[] = [
  {
    name: 'uniform-diffusion', family: 'constant coefficients', spec: 'a=1', fast: true,
    expect: { regions: [{ at: 0.5, character: 'diffusion' }], self_adjoint: 'yes', transport: 'none', translation_invariant: 'yes', order: 2, locality: 'local', oscillation: 'no', screening: 'no', interfaces: [], singularities: [], coefficients: { diffusion: 1 }, absentTerms: ['reaction', 'advection'] },
  },
  {
    name: 'variable-conductivity', family: 'variable coefficients', spec: 'a=1+x^2',
    expect: { self_adjoint: 'yes', transport: 'none', translation_invariant: 'no', order: 2, locality: 'local', oscillation: 'no', interfaces: [], profiles: [{ term: 'diffusion', truth: (x) => 1 + x * x, label: '1 + x²' }], absentTerms: ['reaction'] },
  },
  {
    name: 'transport-plus-x', family: 'transport', spec: 'a=0.05; b=1', fast: true,
    expect: { regions: [{ at: 0.5, character: 'advection-diffusion' }], self_adjoint: 'no', transport: '+x', order: 2, locality: 'local', oscillation: 'no', interfaces: [], coefficients: { diffusion: 0.05, advection: 1 }, absentTerms: ['reaction'] },
  },
  {
    name: 'transport-minus-x', family: 'transport', spec: 'a=0.05; b=-1',
    expect: { regions: [{ at: 0.5, character: 'advection-diffusion' }], self_adjoint: 'no', transport: '-x', order: 2, locality: 'local', oscillation: 'no', interfaces: [] },
  },
  {
    name: 'helmholtz-k15', family: 'wave', spec: 'c=-225', fast: true,
    expect: { regions: [{ at: 0.5, character: 'wave' }], self_adjoint: 'yes', transport: 'none', translation_invariant: 'yes', order: 2, locality: 'local', oscillation: 'yes', wavenumber: 15, screening: 'no', interfaces: [], coefficients: { diffusion: 1, reaction: -225 } },
  },
  {
    name: 'screened-kappa10', family: 'screening', spec: 'c=100',
    expect: { regions: [{ at: 0.5, character: 'reaction-diffusion' }], self_adjoint: 'yes', transport: 'none', translation_invariant: 'yes', order: 2, locality: 'local', oscillation: 'no', screening: 'yes', screeningLength: 0.1, interfaces: [], coefficients: { diffusion: 1, reaction: 100 } },
  },
  {
    name: 'bar-one-interface', family: 'piecewise', spec: 'a=pw(1,0.4,10)',
    expect: { regions: [{ at: 0.2, character: 'diffusion' }, { at: 0.7, character: 'diffusion' }], self_adjoint: 'yes', transport: 'none', translation_invariant: 'no', order: 2, locality: 'local', oscillation: 'no', interfaces: [0.4], profiles: [{ term: 'diffusion', truth: (x) => (x < 0.4 ? 1 : 10), label: '1 | 10 at 0.4', awayFrom: [0.4] }] },
  },
  {
    name: 'bar-two-interfaces', family: 'piecewise', spec: 'a=pw(1,0.3,4,0.7,1)',
    expect: { self_adjoint: 'yes', transport: 'none', translation_invariant: 'no', order: 2, locality: 'local', oscillation: 'no', interfaces: [0.3, 0.7] },
  },
  {
    name: 'diffusion-joined-to-belt', family: 'piecewise', spec: 'a=pw(1,0.55,0.05); b=pw(0,0.55,1)',
    expect: { regions: [{ at: 0.25, character: 'diffusion' }, { at: 0.8, character: 'advection-diffusion' }], self_adjoint: 'no', transport: '+x', translation_invariant: 'no', order: 2, locality: 'local', oscillation: 'no', interfaces: [0.55] },
  },
  {
    name: 'internal-layer', family: 'internal layer', spec: 'a=0.0005; b=2*(0.45-x); left=dirichlet(1); right=dirichlet(-1)',
    expect: { self_adjoint: 'no', order: 2, locality: 'local', oscillation: 'no', singularities: [0.45] },
  },
  {
    name: 'clamped-beam', family: 'fourth order', spec: 'e=1', fast: true,
    expect: { regions: [{ at: 0.5, character: 'higher-order' }], self_adjoint: 'yes', transport: 'none', order: 4, locality: 'local', oscillation: 'no', interfaces: [], coefficients: { 'fourth-order': 1 } },
  },
  {
    name: 'gaussian-nonlocal', family: 'non-local', spec: 'kernel=exp(-((x-s)/0.15)^2)',
    expect: { self_adjoint: 'yes', transport: 'none', locality: 'nonlocal' },
  },
  {
    name: 'one-way-coupled', family: 'systems', spec: 'a1=1; a2=1; c21=20', count: 150,
    expect: { coupling: 'one-way', self_adjoint: 'no' },
  },
  {
    name: 'two-way-coupled', family: 'systems', spec: 'a1=1; a2=1; c12=10; c21=10', count: 150,
    expect: { coupling: 'two-way', self_adjoint: 'yes' },
  },
  {
    name: 'plate-2d', family: '2-D', spec: 'domain=box(0,1,0,1)', grid2d: 24, count: 150, lengthScale: 0.1,
    expect: { self_adjoint: 'yes', order: 2, locality: 'local', oscillation: 'no', coefficients: { diffusion: 1 }, absentTerms: ['reaction'] },
  },
  {
    name: 'distinct-sensors', family: 'sensors ≠ actuators', spec: 'a=1', n: 120, randomSensors: 150,
    expect: { transport: 'none', order: 2, oscillation: 'no', interfaces: [] },
  },
  {
    name: 'cubic-nonlinear', family: 'nonlinear', spec: 'a=1; cubic=30', amplitudes: [0.2, 5],
    expect: { linearity: 'nonlinear' },
  },
  {
    // the demo's operator (examples/conveyor-oven/scenario.json): a belt carrying heat toward +x
    // between 0.3 and 0.7 in a uniformly conducting bar, ends held at 20 and 60
    name: 'conveyor-belt', family: 'piecewise', spec: 'a=0.05; b=pw(0,0.3,1,0.7,0); left=dirichlet(20); right=dirichlet(60)', count: 120, lengthScale: 0.05, amplitudes: [20, 40],
    expect: { self_adjoint: 'no', transport: '+x', translation_invariant: 'no', order: 2, locality: 'local', oscillation: 'no', interfaces: [0.3, 0.7] },
  },
];

// oscillation: 'no' on every operator without a wave (negative reaction) term, piecewise ones included: a
// constant-coefficient column family fitted across an interface must not turn a drift or a jump into an oscillation
export const noiseLevels = [0, 0.01, 0.1, 1.0];
export const seeds = [1, 2];
