/**
 * Singular part of a 2-D kernel for the span model. Forcings with a finite length scale excite only the
 * smooth input directions, yet most of what a 2-D Green's function holds outside their span is its
 * diagonal singularity, whose form is fixed by the operator's order: for a second-order operator
 * −∇·(a∇u) + …, G(x, s) = −ln|x − s| / (2π a(x)) + (smoother), for a fourth-order one (plate)
 * |x − s|² ln|x − s| / (8π D(x)) + (smoother) (fundamental solutions: Evans, PDE 2nd ed. §2.2.1;
 * Duffy, Green's Functions with Applications 2001, ch. 5 — from memory). The model for row i is
 *     g_i(s) = c_i Φ(x_i, s) + r_i(s),   r_i ~ GP(0, τ² K)
 * with a flat prior on the coefficient c_i (explicit basis functions in a GP: Rasmussen & Williams,
 * GPML 2006, §2.7), so c_i is the generalised least-squares estimate
 *     c_i = z_iᵀ (A + λI)⁻¹ ũ_i / z_iᵀ (A + λI)⁻¹ z_i,   z_i = F̃ W Φ(x_i, ·)ᵀ,
 * and the rest r_i is the span model's fit to ũ_i − c_i z_i. Near a straight boundary the free-space
 * singularity meets its mirror image, so for points in a box two more forms add the first images across
 * the sides and corners (Dirichlet or Neumann signs). Which Φ (none, logarithmic, logarithmic with
 * Dirichlet or Neumann images, r² ln r) is chosen by GCV together with the prior of the remainder,
 * counting one parameter per row for c_i. Pure numerics, no fs.
 */
import type { Mat } from '../linalg/dense.js';
import { zeros, matmul, matmulNT } from '../linalg/dense.js';

export type SingularForm = 'log' | 'r2log' | 'log-dirichlet' | 'log-neumann';

/**
 * Φ(x_i, s_k) on (output × input points). Where a sensor sits on an actuator the point value is infinite
 * (log) and the kernel holds the average over a disk of area w_k centred there, as the forward model's
 * quadrature does (and as the simulator's truth does): ρ = √(w_k/π), (1/2 − ln ρ)/(2π) for −ln r/(2π) and
 * ρ²(ln ρ/2 − 1/8)/(8π) for r² ln r/(8π).
 */
export function singularKernel(form: SingularForm, pointsOut: Mat, pointsIn: Mat, weightsIn: Float64Array, box?: [number, number][]): Mat {
  if (form === 'log-dirichlet' || form === 'log-neumann') {
    if (!box) throw new Error('singularKernel: the image forms need the box');
    // first reflections of the sensor across the four sides and the four corners, signs − and + for
    // Dirichlet sides, all + for Neumann sides: the method of images, exact for a half-plane or a
    // quarter-plane (Duffy 2001, ch. 5; Stakgold & Holst ch. 8 — from memory)
    const neu = form === 'log-neumann';
    const base = singularKernel('log', pointsOut, pointsIn, weightsIn);
    const [[ax, bx], [ay, by]] = box;
    const nO = pointsOut.rows, nI = pointsIn.rows, P = pointsOut.data, S = pointsIn.data;
    for (let i = 0; i < nO; i++) {
      const x = P[2 * i]!, y = P[2 * i + 1]!;
      const xs = [x, 2 * ax - x, 2 * bx - x], ys = [y, 2 * ay - y, 2 * by - y];
      for (let a = 0; a < 3; a++) for (let b = 0; b < 3; b++) {
        if (a === 0 && b === 0) continue;
        const sign = neu || (a > 0 && b > 0) ? 1 : -1;
        for (let k = 0; k < nI; k++) {
          const r = Math.max(Math.hypot(xs[a]! - S[2 * k]!, ys[b]! - S[2 * k + 1]!), Math.sqrt(Math.max(weightsIn[k]!, 0) / Math.PI));
          base.data[i * nI + k] += sign * (-Math.log(r) / (2 * Math.PI));
        }
      }
    }
    return base;
  }
  const nO = pointsOut.rows, nI = pointsIn.rows;
  const P = pointsOut.data, S = pointsIn.data;
  const out = zeros(nO, nI);
  for (let i = 0; i < nO; i++) for (let k = 0; k < nI; k++) {
    const r = Math.hypot(P[2 * i]! - S[2 * k]!, P[2 * i + 1]! - S[2 * k + 1]!);
    const rho = Math.sqrt(Math.max(weightsIn[k]!, 0) / Math.PI);
    let v: number;
    if (form === 'log') {
      // disk average of −ln r/(2π) over radius ρ: (1/2 − ln ρ)/(2π); used for r below ρ as well
      v = r > rho || rho === 0 ? -Math.log(r) / (2 * Math.PI) : (0.5 - Math.log(rho)) / (2 * Math.PI);
    } else {
      // disk average of r² ln r/(8π) over radius ρ: (2/ρ²)∫₀^ρ r³ ln r dr /(8π) = ρ²(ln ρ/2 − 1/8)/(8π)
      v = r > rho || rho === 0 ? (r > 0 ? (r * r * Math.log(r)) / (8 * Math.PI) : 0) : (rho * rho * (Math.log(rho) / 2 - 1 / 8)) / (8 * Math.PI);
    }
    out.data[i * nI + k] = v;
  }
  return out;
}

/** z_i = F̃ W Φ(x_i, ·)ᵀ for the given rows, as (rows × N); FWc is the centred F̃W (N × nI). */
export function singularResponses(Phi: Mat, rows: number[], FWc: Mat): Mat {
  const nI = Phi.cols;
  const sub = zeros(rows.length, nI);
  rows.forEach((c, r) => sub.data.set(Phi.data.subarray(c * nI, (c + 1) * nI), r * nI));
  return matmulNT(sub, FWc);
}

/** Shrinkage of the per-sensor coefficients toward their precision-weighted mean: c̄ and b_i. */
export interface Shrinkage { b: Float64Array; wts: Float64Array; /** added to every coefficient (chosen by GCV) */ offset?: number }

/**
 * GLS coefficients c_i (flat prior) given the eigen-decomposition A = V diag(d) Vᵀ and λ:
 * c_i = ⟨Vᵀz_i, Vᵀũ_i⟩_(d+λ)⁻¹ / ⟨Vᵀz_i, Vᵀz_i⟩_(d+λ)⁻¹, sampling variance τ² / ⟨Vᵀz_i, Vᵀz_i⟩_(d+λ)⁻¹
 * with τ² = Σ ‖ũ_i − c_i z_i‖²_(A+λ)⁻¹ / (rows·N) (the ML scale). The coefficient (1/a(x) for a
 * second-order operator) varies slowly, so the c_i are shrunk toward their precision-weighted mean by
 * the empirical-Bayes (Morris) rule c_i ← c̄ + s²/(s² + v_i) (c_i − c̄), with the spread s² of the true
 * coefficients by the method of moments (Efron & Morris, JASA 1973; Morris, JASA 1983). With `fixed`
 * the shrinkage factors are reused (bootstrap replicates).
 */
export function singularCoefficients(V: Mat, d: Float64Array, lambda: number, Z: Mat, U: Mat, fixed?: Shrinkage, coords?: { CZ: Mat; CU: Mat }): { c: Float64Array; shrink: Shrinkage } {
  const N = V.rows, rows = Z.rows;
  // coords: Z V and U V when the caller has them already
  const CZ = coords?.CZ ?? matmul(Z, V), CU = coords?.CU ?? matmul(U, V);
  const raw = new Float64Array(rows), prec = new Float64Array(rows);
  let q = 0;
  for (let i = 0; i < rows; i++) {
    let num = 0, den = 0;
    for (let m = 0; m < N; m++) {
      const wgt = 1 / (d[m]! + lambda), z = CZ.data[i * N + m]!;
      num += wgt * z * CU.data[i * N + m]!;
      den += wgt * z * z;
    }
    raw[i] = den > 0 && Number.isFinite(num / den) ? num / den : 0;
    prec[i] = den > 0 && Number.isFinite(den) ? den : 0;
    for (let m = 0; m < N; m++) q += (CU.data[i * N + m]! - raw[i]! * CZ.data[i * N + m]!) ** 2 / (d[m]! + lambda);
  }
  let shrink = fixed;
  if (!shrink) {
    const tau2 = q / Math.max(1, rows * N);
    const v = Float64Array.from(prec, (p) => (p > 0 ? tau2 / p : Infinity));
    let s2 = 0, cbar = 0;
    const wts = new Float64Array(rows);
    for (let it = 0; it < 50; it++) {
      let sw = 0, sc = 0;
      for (let i = 0; i < rows; i++) { wts[i] = Number.isFinite(v[i]!) ? 1 / (s2 + v[i]!) : 0; sw += wts[i]!; sc += wts[i]! * raw[i]!; }
      cbar = sw > 0 ? sc / sw : 0;
      // moment equation Σ w_i [(c_i − c̄)² − v_i] = 0 for s², solved by fixed-point steps
      let num = 0, den = 0;
      for (let i = 0; i < rows; i++) if (wts[i]! > 0) { num += wts[i]! * ((raw[i]! - cbar) ** 2 - v[i]!); den += wts[i]!; }
      const next = Math.max(0, s2 + num / Math.max(den, 1e-300));
      if (Math.abs(next - s2) <= 1e-10 * (next + 1e-300)) { s2 = next; break; }
      s2 = next;
    }
    const b = Float64Array.from(v, (vi) => (Number.isFinite(vi) ? (s2 + vi > 0 ? s2 / (s2 + vi) : 1) : 0));
    let sw = 0;
    for (let i = 0; i < rows; i++) sw += wts[i]!;
    shrink = { b, wts: Float64Array.from(wts, (w) => (sw > 0 ? w / sw : 0)) };
  }
  let cbar = 0;
  for (let i = 0; i < rows; i++) cbar += shrink.wts[i]! * raw[i]!;
  const off = shrink.offset ?? 0;
  const c = Float64Array.from(raw, (ci, i) => cbar + off + shrink!.b[i]! * (ci - cbar));
  return { c, shrink };
}

/** U − diag(c) Z (rows × N). */
export function subtractSingular(U: Mat, Z: Mat, c: Float64Array): Mat {
  const out = zeros(U.rows, U.cols);
  for (let i = 0; i < U.rows; i++) for (let j = 0; j < U.cols; j++) out.data[i * U.cols + j] = U.data[i * U.cols + j]! - c[i]! * Z.data[i * U.cols + j]!;
  return out;
}
