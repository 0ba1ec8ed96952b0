/**
 * Locality: is the inverse of the kernel banded like a differential operator, or dense like an
 * integral (non-local) one?
 *
 * Inverting a noisy kernel amplifies noise without bound, so we invert only on the trusted
 * singular subspace (order.ts) and roll the inverse off smoothly there (a Hann taper in the
 * singular index): B = V diag(h_k/σ_k) Uᵀ. For a differential operator such a smooth
 * spectral filter gives a kernel concentrated within a few shortest resolved half-wavelengths
 * (L/K) of the diagonal; for a smooth integral kernel the inverse is dominated by its last
 * trusted modes and spreads over the whole domain. The statistic is the share of B's energy
 * farther than 3·L/K from the diagonal, placed on a scale between two references computed on
 * the same points and the same K: 0 = the Dirichlet Laplacian (Stakgold & Holst, entry (a):
 * sine modes, eigenvalues (kπ/L)²), 1 = a completely spread matrix. Below 0.5 (with margin)
 * is local, above is non-local. Its floor: the same number after first-order perturbation of
 * the inverse by the replicates' deviations, δB ≈ −B δA B (Stewart & Sun 1990).
 */
import type { Analysis, AnalysisOutput, Context } from './analysis.js';
import { normalCdf } from './analysis.js';
import type { Findings, Kernel } from '../types.js';
import type { Mat } from '../linalg/dense.js';
import { zeros, matmul, transpose } from '../linalg/dense.js';
import { colocated, replicates, sig, round3, domainLength, std, takeColsOf } from './util/a_common.js';
import { kernelSpectrum, projectedDeviations } from './order.js';

type F = Findings['locality'];

function hann(K: number): Float64Array {
  return Float64Array.from({ length: K }, (_, k) => 0.5 * (1 + Math.cos(Math.PI * k / K)));
}

/** Out-of-band energy share of B = Σ_k c_k v_k u_kᵀ (U, V columns, n × K); with C: of B − B_c C B_c (first-order perturbation). */
function outOfBand(U: Mat, V: Mat, c: Float64Array, far: Uint8Array, C?: Float64Array): number {
  const n = U.rows, K = c.length;
  // B = V M Uᵀ with M = diag(c) − diag(c) C diag(c)
  const VM = zeros(V.rows, K);
  for (let i = 0; i < V.rows; i++) {
    for (let k = 0; k < K; k++) {
      const v = V.data[i * V.cols + k]! * c[k]!;
      if (v === 0) continue;
      VM.data[i * K + k] += v;
      if (C) for (let l = 0; l < K; l++) VM.data[i * K + l] -= v * C[k * K + l]! * c[l]!;
    }
  }
  const B = matmul(VM, transpose(U.cols === K ? U : takeColsOf(U, K)));
  let tot = 0, out = 0;
  for (let q = 0; q < n * n; q++) { const e = B.data[q]! * B.data[q]!; tot += e; if (far[q]) out += e; }
  return tot > 0 ? out / tot : NaN;
}

/** Sine modes of the Dirichlet Laplacian on the points' box, √w-weighted, ordered by eigenvalue. */
function laplacianModes(kernel: Kernel, K: number): { Phi: Mat; lam: Float64Array } | null {
  const P = kernel.pointsIn, n = P.rows, w = kernel.weightsIn;
  const d = kernel.domain;
  let box: [number, number][];
  if (d.kind === 'interval') box = [d.bounds];
  else if (d.kind === 'box') box = d.bounds;
  else return null;
  const modes: { m: number[]; lam: number }[] = [];
  const M = Math.ceil(Math.sqrt(K)) + 3;
  if (box.length === 1) for (let k = 1; k <= K; k++) modes.push({ m: [k], lam: (k * Math.PI / (box[0]![1] - box[0]![0])) ** 2 });
  else for (let a = 1; a <= M * 2; a++) for (let b = 1; b <= M * 2; b++) modes.push({ m: [a, b], lam: (a * Math.PI / (box[0]![1] - box[0]![0])) ** 2 + (b * Math.PI / (box[1]![1] - box[1]![0])) ** 2 });
  modes.sort((p, q) => p.lam - q.lam);
  const use = modes.slice(0, K);
  const Phi = zeros(n, K);
  for (let i = 0; i < n; i++) for (let k = 0; k < K; k++) {
    let v = Math.sqrt(w[i]!);
    for (let ax = 0; ax < box.length; ax++) {
      const [lo, hi] = box[ax]!;
      v *= Math.sqrt(2 / (hi - lo)) * Math.sin(use[k]!.m[ax]! * Math.PI * (P.data[i * P.cols + ax]! - lo) / (hi - lo));
    }
    Phi.data[i * K + k] = v;
  }
  return { Phi, lam: Float64Array.from(use, (u) => u.lam) };
}

const COLUMN_EXPLANATION = 'With too few trustworthy singular values the spectral test cannot decide; the kernel is then called local only when two things hold together: its diagonal carries the jump of a finite-order differential operator, and away from the diagonal its columns solve one homogeneous equation with constant coefficients to within the noise — which the columns of an integral operator\'s kernel do not.';

/**
 * The marks of a differential operator that need no spectrum (1-D): the Green's function of a differential
 * operator L has a jump in a derivative of finite order at the diagonal, and away from it each column solves
 * the homogeneous equation L G(·, s) = 0 (Coddington & Levinson 1955 ch. 7). A smooth integral kernel has
 * neither; the kernel of an integro-differential operator L + K has the jump, but its columns solve
 * L G + K G = 0, not a local equation. Both must hold: the order analysis found a positive diagonal signature
 * (a slope jump, order 2; or a scale-free jump of ∂x³G, order 4), and the oscillation analysis's
 * constant-coefficient column family of that order (its second-order family for order 2; for order 4 its
 * fourth-order family, which nests it) explains the column segments to within the noise (its adequacy rule),
 * on the whole domain or, for a medium with interfaces or internal layers, on every region between them
 * (a piecewise-constant local operator).
 * Either alone is not enough: at high noise any family is adequate, and a fit can bend a smooth kernel at its
 * diagonal.
 */
function differentialMarks(ctx: Context): { order: 2 | 4; why: string } | null {
  const ord = ctx.results['order']?.finding as Findings['order'] | undefined;
  const osc = ctx.results['oscillation']?.finding as Findings['oscillation'] | undefined;
  if (!ord || !osc) return null;
  const verdictOf = (v: unknown) => (v && typeof v === 'object' ? (v as { verdict?: unknown }).verdict : undefined);
  const slope = verdictOf(ord['diagonal_kink']) === 'present', third = verdictOf(ord['third_derivative_jump']) === 'present';
  if (!slope && !third) return null;
  const order = slope ? 2 : 4;
  // the column equation must have the order the diagonal shows: two solutions for order 2, four for order 4;
  // on the whole domain, or (a medium with interfaces or layers) on every region between them
  const fits = (second: unknown, fourth: unknown) => (order === 2 ? second === true : second === true || fourth === true);
  const regions = Array.isArray(osc['region_fits']) ? osc['region_fits'] as { bounds: number[]; model_adequate: unknown; fourth_order_adequate: unknown }[] : [];
  const whole = fits(osc['model_adequate'], osc['fourth_order_adequate']);
  const piecewise = !whole && regions.length > 0 && regions.every((r) => fits(r.model_adequate, r.fourth_order_adequate));
  if (!whole && !piecewise) return null;
  const family = `${order === 2 ? 'second' : 'fourth'}-order equation with constant coefficients`;
  return {
    order,
    why: `the diagonal carries ${slope ? 'a slope jump' : 'a jump of the third derivative at two window sizes'} and the columns off the diagonal are explained within the noise by ${whole ? `one ${family}` : `a ${family} on each of the ${regions.length} regions between the interfaces and layers`}`,
  };
}

/** Locality with fewer than 6 trustworthy values: local when the differential marks hold and the order analysis decided that order from them. Confidence: the order's (the diagonal signature's). */
function columnsLocal(ctx: Context): { confidence: number; why: string } | null {
  const ord = ctx.results['order']?.finding as Findings['order'] | undefined;
  const m = differentialMarks(ctx);
  if (!ord || !m || ord.estimate !== m.order || ord['decay'] === 'exponential') return null;
  return { confidence: ord.confidence, why: `${m.why} (order ${ord.estimate}, confidence ${ord.confidence.toFixed(2)})` };
}

export const locality: Analysis<F> = {
  key: 'locality',
  dependsOn: ['order', 'oscillation'],
  run(kernel: Kernel, ctx: Context): AnalysisOutput<F> {
    const explanation =
      'A differential operator only couples neighbouring points, so the inverse of its kernel is concentrated near the diagonal; an integral (non-local) operator couples distant points directly. ' +
      'Because inverting a noisy kernel amplifies the noise, we invert it only on the part the data resolve, with a smooth roll-off, and measure how much of the inverse lies far from the diagonal. ' +
      'The share is placed between two yardsticks computed the same way: a diffusion operator (0) and a completely spread one (1).';
    if (!colocated(kernel) || kernel.components.in !== 1 || kernel.components.out !== 1) {
      return { finding: { verdict: 'inconclusive', confidence: 0.5, applicable: false }, evidence: { statistic: null, noise_floor: null, summary: 'Locality was not tested: it needs one field on co-located sensors and actuators.', explanation } };
    }
    const reps = replicates(ctx);
    const idRank = ctx.fit?.coverage?.identified_rank;
    const sp = kernelSpectrum(kernel, reps, typeof idRank === 'number' ? idRank : undefined);
    const K = sp.trusted;
    const ref = K >= 6 ? laplacianModes(kernel, K) : null;
    if (K < 6 || !ref) {
      const cols = K < 6 ? columnsLocal(ctx) : null;
      if (cols) {
        return {
          finding: { verdict: 'local', confidence: round3(Math.min(cols.confidence, 0.99)), trustworthy_values: K, evidence_used: 'diagonal signature and column equation' },
          evidence: { statistic: null, noise_floor: null, summary: `Only ${K} trustworthy singular values, too few for the spectral test; but ${cols.why}: local (the columns' equation holds to the noise, so a non-local part, if any, is below what the data resolve).`, explanation: explanation + ' ' + COLUMN_EXPLANATION },
        };
      }
      return { finding: { verdict: 'inconclusive', confidence: 0.5, trustworthy_values: K }, evidence: { statistic: null, noise_floor: null, summary: K < 6 ? `Only ${K} trustworthy singular values: too few to judge locality.` : 'Locality needs an interval or a box as domain.', explanation } };
    }
    const n = kernel.pointsIn.rows, P = kernel.pointsIn, dim = kernel.dimension;
    const L = domainLength(kernel);
    const band = 3 * L / (dim === 1 ? K : Math.sqrt(K));
    const far = new Uint8Array(n * n);
    let wFar = 0, wTot = 0;
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) {
      let d2 = 0;
      for (let a = 0; a < dim; a++) d2 += (P.data[i * dim + a]! - P.data[j * dim + a]!) ** 2;
      const f = Math.sqrt(d2) > band ? 1 : 0;
      far[i * n + j] = f;
      const ww = kernel.weightsIn[i]! * kernel.weightsIn[j]!;
      wTot += ww; if (f) wFar += ww;
    }
    const h = hann(K);
    const U = takeColsOf(sp.svd.U, K), V = takeColsOf(sp.svd.V, K);
    const c = Float64Array.from({ length: K }, (_, k) => h[k]! / sp.s[k]!);
    const share = outOfBand(U, V, c, far);
    const cRef = Float64Array.from({ length: K }, (_, k) => h[k]! * ref.lam[k]!);
    const shareLocal = outOfBand(ref.Phi, ref.Phi, cRef, far);
    const shareSpread = wFar / wTot;
    const pos = (v: number) => (v - shareLocal) / (shareSpread - shareLocal);
    const x = pos(share);
    // floor: first-order perturbation of the filtered inverse by a few replicates' deviations;
    // C = Uᵀ E V (K × K) with E the weighted deviation, so that δB = −V diag(c) C diag(c) Uᵀ
    // (B = V diag(c) Uᵀ; the unfiltered 1/σ on the inner side)
    const xs = projectedDeviations(sp, reps, K, 8).map((C) => pos(outOfBand(U, V, c, far, C)));
    const sd = xs.length >= 3 ? std(xs) : NaN;
    // our allowance for the spread between different local operators on the same yardstick
    const model = 0.15;
    const spread = Math.sqrt((Number.isFinite(sd) ? sd : 0) ** 2 + model ** 2);
    const pLocal = normalCdf((0.5 - x) / spread);
    let verdict: F['verdict'] = 'inconclusive', confidence = 0.5;
    // a finite-order differential operator has polynomially growing eigenvalues (Weyl's law);
    // singular values that fall exponentially mean the inverse is not a differential operator
    const ord = ctx.results['order']?.finding as Findings['order'] | undefined;
    const fp = ord?.['decay'] === 'exponential';
    // exponential fall-off over the trusted range against the marks of a differential operator: over a short
    // range of k an indefinite operator's sorted singular values (1/|λ_k| around a resonance) can fall like an
    // exponential, so the two lines of evidence conflict and neither decides
    const conflict = fp ? differentialMarks(ctx) : null;
    if (fp && !conflict) { verdict = 'nonlocal'; confidence = 0.85; }
    else if (conflict) { verdict = 'inconclusive'; confidence = 0.5; }
    else if (Number.isFinite(sd) && x + 2 * sd < 0.5 && pLocal >= 0.8) { verdict = 'local'; confidence = pLocal; }
    else if (Number.isFinite(sd) && x - 2 * sd > 0.5 && 1 - pLocal >= 0.8) { verdict = 'nonlocal'; confidence = 1 - pLocal; }
    return {
      finding: {
        verdict,
        confidence: round3(Math.min(confidence, 0.99)),
        spread_index: sig(x, 3),
        far_energy_share: sig(share, 3),
        reference_local: sig(shareLocal, 3),
        reference_spread: sig(shareSpread, 3),
        band_halfwidth: sig(band, 3),
        trustworthy_values: K,
        exponential_decay: fp,
        ...(conflict ? { conflict: `exponential decay against a diagonal signature of order ${conflict.order} and its column equation` } : {}),
      },
      evidence: {
        statistic: sig(x, 3),
        noise_floor: sig(sd, 3),
        summary: `Share of the resolved inverse farther than ${band.toPrecision(2)} from the diagonal: ${share.toPrecision(2)} (diffusion yardstick ${shareLocal.toPrecision(2)}, fully spread ${shareSpread.toPrecision(2)}; index ${x.toPrecision(2)}${Number.isFinite(sd) ? ` ± ${sd.toPrecision(2)}` : ''})${fp ? '; the singular values fall exponentially, which no finite-order differential operator does' : ''}${conflict ? `, but ${conflict.why}, as for a differential operator of order ${conflict.order}: the evidence conflicts` : ''}: ${verdict === 'inconclusive' ? 'not decided' : verdict}.`,
        explanation,
        plot: { kind: 'index', index: x, sd, reference_local: shareLocal, reference_spread: shareSpread, K },
      },
    };
  },
};
