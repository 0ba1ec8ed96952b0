/**
 * Runs the validation cases: simulate → fit (→ symmetric refit) → diagnose, and scores every
 * verdict against the operator it came from. Shared by `npm run validate` and the fast subset in
 * `npm test`.
 */
import { parseOperator, simulateStudy } from '../src/simulate/index.js';
import { diagnoseStudy } from '../src/pipeline.js';
import { Rng } from '../src/linalg/rng.js';
import type { Mat } from '../src/linalg/dense.js';
import type { Findings, Evidence } from '../src/types.js';
import type { Case, Expect } from './cases.js';

export type Outcome = 'right' | 'unsure' | 'wrong';

export interface Check {
  what: string;
  outcome: Outcome;
  /** the confidence the tool attached to its verdict (1 when it attached none: an unqualified claim) */
  confidence: number;
  got: string;
  want: string;
}

export interface CaseResult {
  name: string;
  family: string;
  noise: number;
  seed: number;
  checks: Check[];
  seconds: number;
  error?: string;
}

function grid1d(n: number, a: number, b: number): Mat {
  return { rows: n, cols: 1, data: Float64Array.from({ length: n }, (_, i) => a + ((b - a) * i) / (n - 1)) };
}

function grid2d(m: number, [[ax, bx], [ay, by]]: [[number, number], [number, number]]): Mat {
  // interior grid (the Dirichlet boundary carries no information)
  const data = new Float64Array(m * m * 2);
  let k = 0;
  for (let j = 0; j < m; j++) for (let i = 0; i < m; i++) {
    data[k++] = ax + ((bx - ax) * (i + 1)) / (m + 1);
    data[k++] = ay + ((by - ay) * (j + 1)) / (m + 1);
  }
  return { rows: m * m, cols: 2, data };
}

export function studyFor(c: Case, noise: number, seed: number) {
  const op = parseOperator(c.spec);
  let pointsIn: Mat, pointsOut: Mat | undefined;
  if (c.grid2d) {
    const bounds: [[number, number], [number, number]] = op.kind === 'pde' && op.domain.kind === 'box' ? op.domain.bounds : [[0, 1], [0, 1]];
    pointsIn = grid2d(c.grid2d, bounds);
  } else {
    const [a, b] = op.kind === 'ode' ? op.domain : [0, 1];
    pointsIn = grid1d(c.n ?? 200, a, b);
    if (c.randomSensors) {
      const rng = new Rng(seed * 7919 + 1);
      const xs = Array.from({ length: c.randomSensors }, () => a + (b - a) * rng.uniform()).sort((p, q) => p - q);
      pointsOut = { rows: xs.length, cols: 1, data: Float64Array.from(xs) };
    }
  }
  return simulateStudy(op, {
    pointsIn, pointsOut, count: c.count ?? 100, noise, seed,
    lengthScale: c.lengthScale ?? 0.03, covariance: 'se', amplitudes: c.amplitudes, title: c.name,
  });
}

function conf(v: unknown): number {
  return typeof v === 'number' && Number.isFinite(v) ? v : 1;
}

function verdictCheck(what: string, got: string | number | null | undefined, want: string | number, confidence: number): Check {
  const g = got === null || got === undefined ? 'inconclusive' : String(got);
  const outcome: Outcome = g === String(want) ? 'right' : g === 'inconclusive' || g === 'null' ? 'unsure' : 'wrong';
  return { what, outcome, confidence, got: g, want: String(want) };
}

/** Locations found vs expected: count must match, each within tol (0.02 of the domain length). */
function locationCheck(what: string, found: { location: unknown; confidence?: number }[], want: number[], tol: number, ev?: Evidence): Check {
  const xs = found.map((f) => Number(f.location)).sort((a, b) => a - b);
  // an empty list is a claim of absence unless the analysis said it could not decide
  const c = found.length ? Math.min(...found.map((f) => conf(f.confidence))) : conf(ev?.confidence);
  const ok = xs.length === want.length && want.every((w, i) => Math.abs(xs[i]! - w) <= tol);
  const got = `[${xs.map((x) => x.toFixed(3)).join(', ')}]`;
  if (!ok && ev?.verdict === 'inconclusive') return { what, outcome: 'unsure', confidence: c, got: `${got} (inconclusive)`, want: `[${want.join(', ')}]` };
  return { what, outcome: ok ? 'right' : 'wrong', confidence: c, got, want: `[${want.join(', ')}]` };
}

function relCheck(what: string, got: number | null | undefined, want: number, tol: number, confidence: number): Check {
  if (got === null || got === undefined || !Number.isFinite(got)) return { what, outcome: 'unsure', confidence, got: 'none', want: String(want) };
  const ok = Math.abs(got - want) <= tol * Math.abs(want);
  return { what, outcome: ok ? 'right' : 'wrong', confidence, got: got.toPrecision(4), want: `${want} ± ${(100 * tol).toFixed(0)} %` };
}

/** Interior mean of an operator term's profile and whether its band covers the truth everywhere. */
function termCheck(f: Findings, name: string, want: number, noise: number): Check[] {
  const t = f.operator.terms.find((x) => x.name === name);
  if (!t || !t.value.length) return [{ what: `${name} coefficient`, outcome: 'unsure', confidence: 1, got: 'none', want: String(want) }];
  const mean = t.value.reduce((s, v) => s + v, 0) / t.value.length;
  const out: Check[] = [];
  if (noise <= 0.01) {
    const tol = noise === 0 ? 0.05 : 0.10;
    out.push(relCheck(`${name} coefficient`, mean, want, tol, 1));
  }
  const covered = t.value.every((_, i) => t.lower[i]! <= want && want <= t.upper[i]!);
  out.push({ what: `${name} band covers truth`, outcome: covered ? 'right' : 'wrong', confidence: 1, got: covered ? 'covers' : 'misses', want: 'covers' });
  return out;
}

/** Bump radius behind the profile point at x (the operator's pieces, else its one radius). */
function radiusAt(f: Findings, x: number): number {
  const segs = (f.operator as { segments?: { bounds: [number, number]; radius: number }[] }).segments;
  const seg = segs?.find((s) => x >= s.bounds[0] - 1e-12 && x <= s.bounds[1] + 1e-12);
  if (seg) return seg.radius;
  const r = (f.evidence.operator?.plot as { radius?: number } | undefined)?.radius;
  return typeof r === 'number' ? r : 0;
}

/** A coefficient profile point by point: worst relative error (noise ≤ 0.01) and band coverage. */
function profileCheck(f: Findings, p: NonNullable<Expect['profiles']>[number], noise: number, domainLength: number): Check[] {
  const t = f.operator.terms.find((x) => x.name === p.term);
  if (!t || !t.value.length) return [{ what: `${p.term} profile`, outcome: 'unsure', confidence: 1, got: 'none', want: p.label }];
  const keep = t.x.map((x, i) => i).filter((i) => (p.awayFrom ?? []).every((a) => Math.abs(t.x[i]! - a) >= radiusAt(f, t.x[i]!) + 0.02 * domainLength));
  if (!keep.length) return [{ what: `${p.term} profile`, outcome: 'unsure', confidence: 1, got: 'no point away from the interfaces', want: p.label }];
  const out: Check[] = [];
  if (noise <= 0.01) {
    const tol = noise === 0 ? 0.05 : 0.10;
    let worst = 0;
    for (const i of keep) { const w = p.truth(t.x[i]!); worst = Math.max(worst, Math.abs(t.value[i]! - w) / Math.abs(w)); }
    out.push({ what: `${p.term} profile`, outcome: worst <= tol ? 'right' : 'wrong', confidence: 1, got: `worst point ${(100 * worst).toFixed(1)} % off`, want: `${p.label} ± ${(100 * tol).toFixed(0)} %` });
  }
  const miss = keep.filter((i) => { const w = p.truth(t.x[i]!); return !(t.lower[i]! <= w && w <= t.upper[i]!); }).length;
  out.push({ what: `${p.term} profile band covers truth`, outcome: miss ? 'wrong' : 'right', confidence: 1, got: miss ? `misses at ${miss} of ${keep.length}` : 'covers', want: 'covers' });
  return out;
}

/** A term the operator does not have: not written into the expression, and its band covers 0. */
function absentCheck(f: Findings, name: string): Check[] {
  const sig = (f.operator as { significant?: string[] }).significant ?? [];
  const claimed = sig.includes(name);
  const out: Check[] = [{ what: `no ${name} term`, outcome: claimed ? 'wrong' : 'right', confidence: 1, got: claimed ? 'claimed' : 'absent', want: 'absent' }];
  const t = f.operator.terms.find((x) => x.name === name);
  if (t && t.value.length) {
    const covered = t.value.every((_, i) => t.lower[i]! <= 0 && 0 <= t.upper[i]!);
    out.push({ what: `${name} band covers 0`, outcome: covered ? 'right' : 'wrong', confidence: 1, got: covered ? 'covers' : 'misses', want: 'covers' });
  }
  return out;
}

export function score(f: Findings, e: Expect, noise: number, domainLength: number): Check[] {
  const out: Check[] = [];
  if (e.self_adjoint) out.push(verdictCheck('self_adjoint', f.self_adjoint.verdict, e.self_adjoint, conf(f.self_adjoint.confidence)));
  if (e.transport) out.push(verdictCheck('transport', f.transport.verdict, e.transport, conf(f.transport.confidence)));
  if (e.translation_invariant) out.push(verdictCheck('translation_invariant', f.translation_invariant.verdict, e.translation_invariant, conf(f.translation_invariant.confidence)));
  if (e.order) out.push(verdictCheck('order', f.order.estimate, e.order, conf(f.order.confidence)));
  if (e.locality) out.push(verdictCheck('locality', f.locality.verdict, e.locality, conf(f.locality.confidence)));
  if (e.oscillation) out.push(verdictCheck('oscillation', f.oscillation.verdict, e.oscillation, conf(f.oscillation.confidence)));
  if (e.wavenumber) out.push(relCheck('wavenumber', f.oscillation.wavenumber, e.wavenumber, 0.03, conf(f.oscillation.confidence)));
  if (e.screening) out.push(verdictCheck('screening', f.screening.verdict, e.screening, conf(f.screening.confidence)));
  if (e.screeningLength) out.push(relCheck('screening length', f.screening.length, e.screeningLength, 0.10, conf(f.screening.confidence)));
  if (e.interfaces) out.push(locationCheck('interfaces', f.interfaces, e.interfaces, 0.02 * domainLength, f.evidence.interfaces));
  if (e.singularities) out.push(locationCheck('singularities', f.singularities, e.singularities, 0.02 * domainLength, f.evidence.singularities));
  if (e.regions) for (const probe of e.regions) {
    const r = f.regions.find((q) => q.bounds[0] <= probe.at && probe.at <= q.bounds[1]);
    out.push(verdictCheck(`region character at ${probe.at}`, r ? r.character : null, probe.character, conf(r?.confidence)));
  }
  if (e.coupling) out.push(verdictCheck('coupling', f.coupling.verdict, e.coupling, conf(f.coupling.confidence)));
  if (e.linearity) out.push(verdictCheck('linearity', f.linearity.verdict, e.linearity, conf(f.linearity.confidence)));
  for (const [name, want] of Object.entries(e.coefficients ?? {})) if (want !== undefined) out.push(...termCheck(f, name, want, noise));
  for (const p of e.profiles ?? []) out.push(...profileCheck(f, p, noise, domainLength));
  for (const name of e.absentTerms ?? []) out.push(...absentCheck(f, name));
  return out;
}

export function runCase(c: Case, noise: number, seed: number): CaseResult {
  const t0 = performance.now();
  try {
    const { study } = studyFor(c, noise, seed);
    const { findings } = diagnoseStudy(study, { seed });
    const L = study.domain.kind === 'interval' ? study.domain.bounds[1] - study.domain.bounds[0] : 1;
    return { name: c.name, family: c.family, noise, seed, checks: score(findings, c.expect, noise, L), seconds: (performance.now() - t0) / 1000 };
  } catch (e) {
    return { name: c.name, family: c.family, noise, seed, checks: [], seconds: (performance.now() - t0) / 1000, error: (e as Error).message };
  }
}

export interface Targets {
  /** at noise ≤ 0.1: every verdict right */
  lowNoiseAllRight: boolean;
  lowNoiseMisses: number;
  /** at noise 1: no wrong verdict with confidence ≥ 0.8 */
  highNoiseConfidentWrong: number;
  /** of verdicts with confidence ≥ 0.9, the fraction right */
  calibration: { count: number; right: number; fraction: number };
  errors: number;
}

export function targets(results: CaseResult[]): Targets {
  let lowMiss = 0, highWrong = 0, n9 = 0, r9 = 0, errors = 0;
  for (const r of results) {
    if (r.error) errors++;
    for (const c of r.checks) {
      if (r.noise <= 0.1 && c.outcome !== 'right') lowMiss++;
      if (r.noise >= 1 && c.outcome === 'wrong' && c.confidence >= 0.8) highWrong++;
      if (c.confidence >= 0.9 && c.outcome !== 'unsure') { n9++; if (c.outcome === 'right') r9++; }
    }
  }
  return {
    lowNoiseAllRight: lowMiss === 0 && errors === 0, lowNoiseMisses: lowMiss, highNoiseConfidentWrong: highWrong,
    calibration: { count: n9, right: r9, fraction: n9 ? r9 / n9 : 1 }, errors,
  };
}
