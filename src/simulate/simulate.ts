/**
 * Synthetic studies from a known operator (interface.md §1 forward model):
 *   u_j(x_i) = Σ_k G(x_i, s_k) w_k f_j(s_k) + u_h(x_i)  [+ noise]
 * with G the exact Green's function at the (sensor, actuator) points and w_k the quadrature
 * weights of the actuators (src/quadrature.ts), so a perfect fit is possible in principle.
 * With a cubic term ε u³ the responses solve the same Nyström discretisation of
 *   u = G W (f − ε u³) + u_h        (G, u_h of the linear part)
 * by Newton's method (Krylov inner solves); the truth is then the linearisation at u = u_h.
 */
// Newton–Krylov with GMRES inner solves: Saad & Schultz, SIAM J. Sci. Stat. Comput. 7 (1986); Kelley, Iterative Methods for Linear and Nonlinear Equations (SIAM 1995).
import type { Mat } from '../linalg/dense.js';
import { zeros, matmulNT } from '../linalg/dense.js';
import { Rng } from '../linalg/rng.js';
import { InputError } from '../errors.js';
import type { Domain, Kernel, Study } from '../types.js';
import { quadratureWeights } from '../quadrature.js';
import { gpDraws, defaultLengthScale, type Covariance } from '../design/gp.js';
import { compileExpr } from './expr.js';
import type { OperatorSpec, OdeSpec } from './spec.js';
import { describeOperator } from './spec.js';
import { buildOdeModel, odeKernel, odeHomogeneous, linearisedModel, type Ode1dModel } from './green1d.js';
import { pdeKernel } from './green2d.js';

export interface SimulateOptions {
  /** actuator points (n_in × dimension) */
  pointsIn: Mat;
  /** sensor points (n_out × dimension); default: the actuator points */
  pointsOut?: Mat;
  count: number;
  /** noise std as a fraction of mean |u| over all noise-free responses (default 0) */
  noise?: number;
  seed?: number;
  lengthScale?: number;
  covariance?: Covariance;
  /** per-experiment forcing amplitude drawn uniformly from [lo, hi] (default [1, 1]) */
  amplitudes?: [number, number];
  /** given forcings (count × n_in·C) instead of GP draws */
  forcings?: Mat;
  title?: string;
  /** write the noise sigma into study.noise (otherwise only under "simulation") */
  stateNoise?: boolean;
  /** labels for messages about the points */
  pointsInLabel?: string;
  pointsOutLabel?: string;
}

export interface Truth {
  kernel: Kernel;
  homogeneous: Float64Array | null;
  /** true when the operator is nonlinear and the kernel is its linearisation at u = u_h */
  linearisation?: boolean;
}

export interface SimulateResult {
  study: Study;
  truth: Truth;
}

/** The study domain that goes with an operator. */
export function operatorDomain(op: OperatorSpec): Domain {
  if (op.kind === 'ode') return { kind: 'interval', bounds: [op.domain[0], op.domain[1]] };
  if (op.kind === 'pde') {
    return op.domain.kind === 'box' ? { kind: 'box', bounds: op.domain.bounds } : { kind: 'disk', center: op.domain.center, radius: op.domain.radius };
  }
  if (op.dimension === 1) { const d = op.domain as [number, number]; return { kind: 'interval', bounds: [d[0], d[1]] }; }
  return op.domain ? { kind: 'box', bounds: op.domain as [[number, number], [number, number]] } : { kind: 'points' };
}

export function operatorComponents(op: OperatorSpec): number {
  return op.kind === 'ode' ? op.components.length : 1;
}

function checkPoints(op: OperatorSpec, pts: Mat, label: string, minRows = 2): void {
  if (pts.cols !== op.dimension) throw new InputError({ file: label }, `points have ${pts.cols} column(s) but the operator is ${op.dimension}-D`);
  if (pts.rows < minRows) throw new InputError({ file: label }, `need at least ${minRows} point(s)`);
  const dom = operatorDomain(op);
  for (let i = 0; i < pts.rows; i++) {
    const p = Array.from(pts.data.subarray(i * pts.cols, (i + 1) * pts.cols));
    if (!p.every(Number.isFinite)) throw new InputError({ file: label, row: i + 1 }, 'point is not finite');
    let inside = true;
    if (dom.kind === 'interval') {
      const [A, B] = dom.bounds, t = 1e-12 * (B - A);
      inside = p[0]! >= A - t && p[0]! <= B + t;
    } else if (dom.kind === 'box') {
      const [[ax, bx], [ay, by]] = dom.bounds, t = 1e-12 * Math.max(bx - ax, by - ay);
      inside = p[0]! >= ax - t && p[0]! <= bx + t && p[1]! >= ay - t && p[1]! <= by + t;
    } else if (dom.kind === 'disk') {
      inside = Math.hypot(p[0]! - dom.center[0], p[1]! - dom.center[1]) <= dom.radius * (1 + 1e-12);
    }
    if (!inside) throw new InputError({ file: label, row: i + 1 }, `point (${p.join(', ')}) is outside the operator's domain ${JSON.stringify('bounds' in dom ? dom.bounds : dom)}`);
  }
}

const modelCache = new WeakMap<OdeSpec, Ode1dModel>();
function odeModel(op: OdeSpec): Ode1dModel {
  let m = modelCache.get(op);
  if (!m) { m = buildOdeModel(op); modelCache.set(op, m); }
  return m;
}
const linCache = new WeakMap<OdeSpec, Ode1dModel>();
function linearPart(op: OdeSpec): Ode1dModel {
  let m = linCache.get(op);
  if (!m) { m = buildOdeModel({ ...op, cubic: 0 }); linCache.set(op, m); }
  return m;
}
const linzCache = new WeakMap<OdeSpec, Ode1dModel>();
function linearisation(op: OdeSpec): Ode1dModel {
  let m = linzCache.get(op);
  if (!m) { m = linearisedModel(op, odeModel(op)); linzCache.set(op, m); }
  return m;
}

/** G alone at (pointsOut × pointsIn): point values of the continuous Green's function (linearisation at u_h when cubic). */
export function greensKernel(op: OperatorSpec, pointsOut: Mat, pointsIn: Mat): Kernel {
  return truthOn(op, pointsOut, pointsIn).kernel;
}

function truthOn(op: OperatorSpec, pOut: Mat, pIn: Mat): Truth {
  checkPoints(op, pIn, 'points_in', 1);
  checkPoints(op, pOut, 'points_out', 1);
  const domain = operatorDomain(op);
  const weightsIn = quadratureWeights(pIn, domain);
  const C = operatorComponents(op);
  const kernel = (G: Mat, homogeneous: Float64Array | null): Kernel => ({
    dimension: op.dimension, pointsOut: pOut, pointsIn: pIn, weightsIn, G, homogeneous, components: { in: C, out: C }, domain,
  });
  if (op.kind === 'ode') {
    if (op.cubic !== 0) {
      const uh = odeHomogeneous(odeModel(op), pOut.data);
      return { kernel: kernel(odeKernel(linearisation(op), pOut.data, pIn.data), uh), homogeneous: uh, linearisation: true };
    }
    const m = odeModel(op);
    const uh = odeHomogeneous(m, pOut.data);
    return { kernel: kernel(odeKernel(m, pOut.data, pIn.data), uh), homogeneous: uh };
  }
  if (op.kind === 'pde') {
    const uh = new Float64Array(pOut.rows);
    return { kernel: kernel(pdeKernel(op, pOut, pIn, weightsIn), uh), homogeneous: uh };
  }
  const vars = op.dimension === 1 ? ['x', 's'] : ['x', 'y', 's', 't'];
  const g = compileExpr(op.kernel, vars);
  const hf = compileExpr(op.homogeneous, op.dimension === 1 ? ['x'] : ['x', 'y']);
  const G = zeros(pOut.rows, pIn.rows);
  const env: Record<string, number> = {};
  const d = op.dimension;
  for (let i = 0; i < pOut.rows; i++) {
    env.x = pOut.data[i * d]!; if (d === 2) env.y = pOut.data[i * d + 1]!;
    for (let k = 0; k < pIn.rows; k++) {
      if (d === 1) env.s = pIn.data[k]!; else { env.s = pIn.data[2 * k]!; env.t = pIn.data[2 * k + 1]!; }
      G.data[i * pIn.rows + k] = g(env);
    }
  }
  const uh = new Float64Array(pOut.rows);
  for (let i = 0; i < pOut.rows; i++) { env.x = pOut.data[i * d]!; if (d === 2) env.y = pOut.data[i * d + 1]!; uh[i] = hf(env); }
  return { kernel: kernel(G, uh), homogeneous: uh };
}

/** Kernel matrix times quadrature weights, columns repeated per component. */
function weighted(G: Mat, w: Float64Array, C: number): Mat {
  const out = zeros(G.rows, G.cols);
  const n = w.length;
  for (let i = 0; i < G.rows; i++) for (let j = 0; j < G.cols; j++) out.data[i * G.cols + j] = G.data[i * G.cols + j]! * w[j % n]!;
  return out;
}

export function simulateStudy(op: OperatorSpec, opts: SimulateOptions): SimulateResult {
  const pIn = opts.pointsIn, pOut = opts.pointsOut ?? opts.pointsIn;
  const inLabel = opts.pointsInLabel ?? 'points', outLabel = opts.pointsOutLabel ?? opts.pointsInLabel ?? 'points';
  checkPoints(op, pIn, inLabel);
  if (pOut !== pIn) checkPoints(op, pOut, outLabel);
  if (!Number.isInteger(opts.count) || opts.count < 1) throw new Error('simulateStudy: count must be a positive integer');
  const seed = opts.seed ?? 0;
  const C = operatorComponents(op);
  const nIn = pIn.rows, nOut = pOut.rows;
  const lengthScale = opts.lengthScale ?? defaultLengthScale(pIn);
  const covariance = opts.covariance ?? 'se';
  const [lo, hi] = opts.amplitudes ?? [1, 1];
  if (!(lo > 0) || !(hi >= lo)) throw new Error('simulateStudy: amplitudes must satisfy 0 < lo ≤ hi');
  // forcings: one GP draw per experiment and component, component-major columns
  let F: Mat;
  if (opts.forcings) {
    F = opts.forcings;
    if (F.cols !== nIn * C || F.rows !== opts.count) throw new Error(`simulateStudy: forcings must be ${opts.count} × ${nIn * C}, got ${F.rows} × ${F.cols}`);
  } else {
    F = zeros(opts.count, nIn * C);
    for (let c = 0; c < C; c++) {
      const D = gpDraws(pIn, opts.count, { covariance, lengthScale, seed: (seed + 7919 * c) >>> 0, amplitude: 1 });
      for (let j = 0; j < opts.count; j++) F.data.set(D.data.subarray(j * nIn, (j + 1) * nIn), j * nIn * C + c * nIn);
    }
    if (hi > lo || lo !== 1) {
      const ra = new Rng((seed ^ 0x2545f491) >>> 0);
      for (let j = 0; j < opts.count; j++) {
        const a = lo + (hi - lo) * ra.uniform();
        for (let k = 0; k < nIn * C; k++) F.data[j * nIn * C + k] *= a;
      }
    }
  }
  const domain = operatorDomain(op);
  const w = quadratureWeights(pIn, domain);
  let U: Mat;
  let truth: Truth;
  let newton: { iterations: number; residual: number } | undefined;
  if (op.kind === 'ode' && op.cubic !== 0) {
    const lin = linearPart(op);
    const Gss = odeKernel(lin, pIn.data, pIn.data), Gos = pOut === pIn ? Gss : odeKernel(lin, pOut.data, pIn.data);
    const uhS = odeHomogeneous(lin, pIn.data), uhO = pOut === pIn ? uhS : odeHomogeneous(lin, pOut.data);
    const r = nystromCubic(weighted(Gss, w, 1), weighted(Gos, w, 1), uhS, uhO, F, op.cubic);
    U = r.U;
    newton = { iterations: r.iterations, residual: r.residual };
    truth = truthOn(op, pOut, pIn);
  } else {
    truth = truthOn(op, pOut, pIn);
    const GW = weighted(truth.kernel.G, w, C);
    U = matmulNT(F, GW);
    const uh = truth.homogeneous;
    if (uh) for (let j = 0; j < U.rows; j++) for (let i = 0; i < U.cols; i++) U.data[j * U.cols + i] += uh[i]!;
  }
  let meanAbs = 0;
  for (const v of U.data) meanAbs += Math.abs(v);
  meanAbs /= U.data.length;
  const level = opts.noise ?? 0;
  if (!(level >= 0) || !Number.isFinite(level)) throw new Error('simulateStudy: noise level must be ≥ 0');
  const sigma = level * meanAbs;
  if (sigma > 0) {
    const rn = new Rng((seed ^ 0x68e31da4) >>> 0);
    for (let i = 0; i < U.data.length; i++) U.data[i] += sigma * rn.normal();
  }
  for (const v of U.data) if (!Number.isFinite(v)) throw new Error('simulateStudy: a simulated response is not finite');
  const simulation: Record<string, unknown> = {
    operator: op.source,
    equation: describeOperator(op),
    kind: op.kind,
    count: opts.count,
    seed,
    noise_level: level,
    noise_sigma: sigma,
    mean_abs_response: meanAbs,
    forcings: opts.forcings ? 'given' : { covariance, length_scale: lengthScale, amplitudes: [lo, hi] },
    forcing_model: 'discrete: u = G W f + u_h with G the exact Green\'s function at the points and W the quadrature weights of the actuators',
  };
  if (newton) simulation.nonlinear = { method: 'Nyström discretisation solved by Newton–GMRES', max_newton_iterations: newton.iterations, max_residual: newton.residual };
  const study: Study = {
    title: opts.title ?? `simulated: ${describeOperator(op)}`,
    dimension: op.dimension,
    inputs: { points: pIn, values: F, components: C },
    outputs: { points: pOut, values: U, components: C },
    domain,
    extra: { simulation },
  };
  if (opts.stateNoise) study.noise = { sigma };
  return { study, truth };
}

/**
 * Solve v = K (f − ε v³) + uh_s on the actuators for every experiment (Newton, GMRES inner solves),
 * then u = K_o (f − ε v³) + uh_o on the sensors. K = G_ss W, K_o = G_os W.
 */
export function nystromCubic(K: Mat, Ko: Mat, uhS: Float64Array, uhO: Float64Array, F: Mat, eps: number): { U: Mat; iterations: number; residual: number } {
  const n = K.rows, nOut = Ko.rows;
  const U = zeros(F.rows, nOut);
  let maxIt = 0, maxRes = 0;
  const Kv = (x: Float64Array) => { const y = new Float64Array(n); for (let i = 0; i < n; i++) { let s = 0; const o = i * n; for (let j = 0; j < n; j++) s += K.data[o + j]! * x[j]!; y[i] = s; } return y; };
  for (let e = 0; e < F.rows; e++) {
    const f = F.data.subarray(e * n, (e + 1) * n);
    const Kf = Kv(Float64Array.from(f));
    const v = new Float64Array(n);
    for (let i = 0; i < n; i++) v[i] = Kf[i]! + uhS[i]!;
    const resid = () => {
      const c = new Float64Array(n);
      for (let i = 0; i < n; i++) c[i] = v[i]! ** 3;
      const Kc = Kv(c);
      const r = new Float64Array(n);
      for (let i = 0; i < n; i++) r[i] = v[i]! + eps * Kc[i]! - Kf[i]! - uhS[i]!;
      return r;
    };
    let it = 0;
    let scale = 1;
    for (let i = 0; i < n; i++) scale = Math.max(scale, Math.abs(v[i]!));
    for (; it < 50; it++) {
      const r = resid();
      const rn = Math.max(...Array.from(r, Math.abs));
      if (rn <= 1e-12 * scale) break;
      const d2 = Float64Array.from(v, (t) => 3 * eps * t * t);
      const J = (x: Float64Array) => { const y = Kv(Float64Array.from(x, (t, i) => t * d2[i]!)); for (let i = 0; i < n; i++) y[i] += x[i]!; return y; };
      const dx = gmres(J, r, 1e-13, 200);
      for (let i = 0; i < n; i++) v[i] -= dx[i]!;
      if (!v.every(Number.isFinite)) throw new Error('simulate: Newton iteration for the cubic term diverged');
    }
    const r = resid();
    const rn = Math.max(...Array.from(r, Math.abs));
    if (rn > 1e-9 * scale) throw new Error(`simulate: Newton iteration for the cubic term did not converge (residual ${rn.toExponential(2)})`);
    maxIt = Math.max(maxIt, it); maxRes = Math.max(maxRes, rn / scale);
    const g = new Float64Array(n);
    for (let i = 0; i < n; i++) g[i] = f[i]! - eps * v[i]! ** 3;
    for (let i = 0; i < nOut; i++) { let s = 0; const o = i * n; for (let j = 0; j < n; j++) s += Ko.data[o + j]! * g[j]!; U.data[e * nOut + i] = s + uhO[i]!; }
  }
  return { U, iterations: maxIt, residual: maxRes };
}

/** GMRES without restart (Givens rotations, modified Gram–Schmidt); for I + compact operators. */
export function gmres(A: (x: Float64Array) => Float64Array, b: Float64Array, tol: number, maxIt: number): Float64Array {
  const n = b.length;
  const beta = Math.hypot(...b);
  const x = new Float64Array(n);
  if (beta === 0) return x;
  const V: Float64Array[] = [Float64Array.from(b, (t) => t / beta)];
  const H: number[][] = [];
  const cs: number[] = [], sn: number[] = [];
  const g = [beta];
  let k = 0;
  for (; k < Math.min(maxIt, n); k++) {
    const w = A(V[k]!);
    const h: number[] = [];
    for (let j = 0; j <= k; j++) {
      let s = 0; const vj = V[j]!;
      for (let i = 0; i < n; i++) s += w[i]! * vj[i]!;
      h.push(s);
      for (let i = 0; i < n; i++) w[i] -= s * vj[i]!;
    }
    const hn = Math.hypot(...w);
    h.push(hn);
    for (let j = 0; j < k; j++) { const t = cs[j]! * h[j]! + sn[j]! * h[j + 1]!; h[j + 1] = -sn[j]! * h[j]! + cs[j]! * h[j + 1]!; h[j] = t; }
    const den = Math.hypot(h[k]!, h[k + 1]!);
    cs.push(h[k]! / den); sn.push(h[k + 1]! / den);
    h[k] = den; h[k + 1] = 0;
    g.push(-sn[k]! * g[k]!); g[k] = cs[k]! * g[k]!;
    H.push(h);
    if (Math.abs(g[k + 1]!) <= tol * beta || hn === 0) { k++; break; }
    V.push(Float64Array.from(w, (t) => t / hn));
  }
  const y = new Array<number>(k).fill(0);
  for (let i = k - 1; i >= 0; i--) {
    let s = g[i]!;
    for (let j = i + 1; j < k; j++) s -= H[j]![i]! * y[j]!;
    y[i] = s / H[i]![i]!;
  }
  for (let j = 0; j < k; j++) { const vj = V[j]!; for (let i = 0; i < n; i++) x[i] += y[j]! * vj[i]!; }
  return x;
}
