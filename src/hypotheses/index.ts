/**
 * Ranked hypotheses: the findings combined into plain statements a domain scientist can act
 * on, most probable first. Each names the findings keys it rests on; its confidence is the
 * product of the confidences of the claims it makes (a joint statement is right only if all
 * its parts are), lowered — and said, in `caveats` — where other evidence contradicts it.
 * Verdicts that stayed inconclusive are stated as such ("the data do not decide …"). Pure.
 */
import type { Findings, Hypothesis, RegionCharacter } from '../types.js';

type Base = Omit<Findings, 'hypotheses'>;

/** Confidence of a finding: its own `confidence` when given, else a stated default. */
function conf(x: unknown, verdict?: string): number {
  const c = (x as { confidence?: unknown } | null)?.confidence;
  if (typeof c === 'number' && Number.isFinite(c)) return clamp(c);
  // an analysis that gives no confidence: a definite verdict counts as fairly likely, an
  // inconclusive one as a coin toss (our stated default, not a measurement)
  return verdict === 'inconclusive' ? 0.5 : 0.75;
}

function clamp(c: number): number { return Math.min(1, Math.max(0, c)); }
function round2(c: number): number { return Math.round(clamp(c) * 100) / 100; }

export function num(v: number, digits = 2): string {
  if (!Number.isFinite(v)) return String(v);
  const a = Math.abs(v);
  if (a >= 1000) return String(Math.round(v));
  if (a === 0) return '0';
  if (a < 1e-3) return v.toExponential(1);
  return String(Number(v.toPrecision(digits)));
}

function pos(p: number | [number, number]): string {
  return typeof p === 'number' ? num(p, 3) : `(${num(p[0], 3)}, ${num(p[1], 3)})`;
}

interface Claim { text: string; confidence: number; evidence: string[] }

/** Mean value of a named operator term, when the operator analysis gave one with a tight band. */
function termMean(f: Base, name: string): { value: number; rel: number } | null {
  const t = f.operator?.terms?.find((x) => x.name === name);
  if (!t || !t.value.length) return null;
  const v = t.value.reduce((s, x) => s + x, 0) / t.value.length;
  const hw = t.upper.reduce((s, u, i) => s + (u - t.lower[i]!) / 2, 0) / t.value.length;
  return { value: v, rel: hw / Math.max(Math.abs(v), 1e-300) };
}

function characterPhrase(c: RegionCharacter): string {
  switch (c) {
    case 'diffusion': return 'a diffusion process';
    case 'advection-diffusion': return 'a transport-dominated (advection–diffusion) process';
    case 'reaction-diffusion': return 'a diffusion process with absorption or decay (reaction–diffusion)';
    case 'wave': return 'a wave-like (Helmholtz-type) response';
    case 'higher-order': return 'a higher-order, bending-stiffness-like response';
    case 'nonlocal': return 'a non-local interaction';
    default: return 'a response of unclassified character';
  }
}

/** Mean relative half-width of a named operator term's band over the sample points inside [lo, hi]. */
function termBandIn(f: Base, name: string, lo: number, hi: number): number | null {
  const t = f.operator?.terms?.find((x) => x.name === name);
  if (!t) return null;
  let s = 0, m = 0;
  for (let i = 0; i < t.x.length; i++) {
    if (t.x[i]! < lo || t.x[i]! > hi) continue;
    s += (t.upper[i]! - t.lower[i]!) / 2 / Math.max(Math.abs(t.value[i]!), 1e-300);
    m++;
  }
  return m ? s / m : null;
}

function regionPhrase(r: Base['regions'][number], f: Base): string {
  const k = r.coefficients ?? {};
  const parts: string[] = [characterPhrase(r.character)];
  if (typeof k.diffusion === 'number') {
    // the same bar as the global description: a value is stated only when its band is within ±50 %
    const rel = termBandIn(f, 'diffusion', r.bounds[0], r.bounds[1]);
    parts.push(rel !== null && rel >= 0.5
      ? `conductivity poorly determined (≈ ${num(k.diffusion)}, band ±${Math.round(Math.min(rel, 99.99) * 100)} %)`
      : `conductivity ≈ ${num(k.diffusion)}`);
  }
  if (typeof k.advection === 'number' && r.character === 'advection-diffusion') {
    const dir = k.advection >= 0 ? '+x' : '-x';
    let s = `moving toward ${dir}`;
    const relA = termBandIn(f, 'diffusion', r.bounds[0], r.bounds[1]);
    if (typeof k.diffusion === 'number' && k.diffusion > 0 && (relA === null || relA < 0.5)) s += ` with Péclet ≈ ${num(Math.abs(k.advection) * (r.bounds[1] - r.bounds[0]) / k.diffusion)}`;
    parts.push(s);
  }
  if (typeof k.reaction === 'number' && r.character === 'reaction-diffusion') parts.push(`decay rate ≈ ${num(k.reaction)}`);
  if (r.character === 'wave' && typeof f.oscillation.wavenumber === 'number') parts.push(`wavenumber ≈ ${num(f.oscillation.wavenumber, 3)}`);
  return `${parts[0]}${parts.length > 1 ? ' with ' + parts.slice(1).join(', ') : ''} on [${num(r.bounds[0], 3)}, ${num(r.bounds[1], 3)}]`;
}

/** The single-physics description from the global verdicts. */
function globalPhysics(f: Base): Claim {
  const ev: string[] = [];
  let c = 1;
  const use = (key: string, value: number) => { ev.push(key); c *= value; };
  if (f.locality.verdict === 'nonlocal') {
    use('locality', conf(f.locality, 'nonlocal'));
    return { text: 'A non-local interaction: the kernel\'s inverse is not banded, so the system couples distant points directly (an integral operator) rather than through a differential equation', confidence: c, evidence: ev };
  }
  const ord = f.order.estimate;
  let text: string;
  if (ord === 4) {
    use('order', conf(f.order));
    const e = termMean(f, 'fourth-order');
    text = `A fourth-order, beam- or plate-like response (bending stiffness${e && e.rel < 0.5 ? ` ≈ ${num(e.value)}` : ' not pinned down'})`;
  } else {
    if (ord === 2) use('order', conf(f.order));
    const a = termMean(f, 'diffusion');
    const aText = a && a.rel < 0.5 ? ` ≈ ${num(a.value)}` : '';
    const uniform = f.translation_invariant.verdict === 'yes' ? 'uniform' : f.translation_invariant.verdict === 'no' ? 'position-dependent' : '';
    if (f.translation_invariant.verdict !== 'inconclusive') use('translation_invariant', conf(f.translation_invariant));
    const medium = uniform ? `${uniform} conductivity${aText}` : aText ? `conductivity${aText}` : '';
    if (f.oscillation.verdict === 'yes') {
      use('oscillation', conf(f.oscillation));
      text = `A wave-like (Helmholtz-type) response${f.oscillation.wavenumber !== null ? ` with wavenumber ≈ ${num(f.oscillation.wavenumber, 3)}` : ''}${medium ? `, ${medium}` : ''}`;
    } else if (f.screening.verdict === 'yes') {
      use('screening', conf(f.screening));
      text = `A diffusion process with absorption or decay (reaction–diffusion)${medium ? `, ${medium}` : ''}${f.screening.length !== null ? `, screening length ≈ ${num(f.screening.length)}` : ''}`;
    } else if (f.transport.verdict === '+x' || f.transport.verdict === '-x') {
      use('transport', conf(f.transport));
      const pe = typeof f.transport.peclet === 'number' ? ` with Péclet ≈ ${num(f.transport.peclet)}` : '';
      text = `A transport-dominated (advection–diffusion) process moving toward ${f.transport.verdict}${pe}${medium ? `, ${medium}` : ''}`;
    } else {
      if (f.self_adjoint.verdict === 'yes') use('self_adjoint', conf(f.self_adjoint));
      if (f.oscillation.verdict === 'no') use('oscillation', conf(f.oscillation));
      if (f.screening.verdict === 'no') use('screening', conf(f.screening));
      text = medium ? `A diffusion process with ${medium}` : 'A diffusion process';
    }
  }
  if (!ev.length) c = 0.3; // nothing was decided: a weak default description
  return { text, confidence: c, evidence: ev };
}

/** Evidence that contradicts a claim, with how strongly (the contradicting confidence). */
function contradictions(f: Base, claim: Claim): { say: string; strength: number }[] {
  const out: { say: string; strength: number }[] = [];
  const has = (k: string) => claim.evidence.includes(k);
  const tr = f.transport.verdict;
  if ((tr === '+x' || tr === '-x') && f.self_adjoint.verdict === 'yes') out.push({ say: `net transport toward ${tr} was reported although the kernel tested as self-adjoint`, strength: Math.min(conf(f.transport), conf(f.self_adjoint)) });
  if (f.oscillation.verdict === 'yes' && f.screening.verdict === 'yes') out.push({ say: 'the kernel tested both as oscillating and as screened', strength: Math.min(conf(f.oscillation), conf(f.screening)) });
  if (f.translation_invariant.verdict === 'yes' && f.interfaces.length > 0) out.push({ say: `the medium tested as uniform, yet ${f.interfaces.length} interface(s) were located`, strength: Math.min(conf(f.translation_invariant), Math.max(...f.interfaces.map((i) => i.confidence))) });
  if (f.order.estimate === 2 && f.regions.some((r) => r.character === 'higher-order')) out.push({ say: 'the spectrum points to a second-order operator while a region looks higher-order', strength: conf(f.order) });
  if (f.order.estimate === 4 && f.regions.length > 0 && f.regions.every((r) => r.character === 'diffusion')) out.push({ say: 'the spectrum points to a fourth-order operator while the regions look like plain diffusion', strength: conf(f.order) });
  if (f.locality.verdict === 'nonlocal' && f.order.estimate !== null && conf(f.order) >= 0.8) out.push({ say: `a non-local kernel was reported although the spectrum fits a differential operator of order ${f.order.estimate}`, strength: Math.min(conf(f.locality, 'nonlocal'), conf(f.order)) });
  const jc = (f.operator as { jump_check?: { median_ratio?: number } | null }).jump_check;
  if (has('locality') && f.locality.verdict === 'nonlocal' && jc && typeof jc.median_ratio === 'number' && jc.median_ratio >= 2 / 3 && jc.median_ratio <= 1.5) {
    // a fixed strength: the jump check carries no confidence of its own (our stated default)
    out.push({ say: `the kernel's slope jumps across its diagonal by an amount that matches the weak-form conductivity (ratio ${num(jc.median_ratio)}), as a second-order differential operator's does`, strength: 0.5 });
  }
  const c = termMean(f, 'reaction');
  const sig = (f.operator as { significant?: string[] }).significant ?? [];
  if (c && sig.includes('reaction')) {
    if (c.value < 0 && f.screening.verdict === 'yes') out.push({ say: 'the fitted local operator has a negative (wave-like) reaction term, against the screening verdict', strength: conf(f.screening) });
    if (c.value > 0 && f.oscillation.verdict === 'yes') out.push({ say: 'the fitted local operator has a positive (absorbing) reaction term, against the oscillation verdict', strength: conf(f.oscillation) });
  }
  const b = termMean(f, 'advection');
  if (b && sig.includes('advection') && (tr === '+x' || tr === '-x') && Math.sign(b.value) !== (tr === '+x' ? 1 : -1)) out.push({ say: `the fitted advection coefficient points the other way from the transport verdict (${tr})`, strength: conf(f.transport) });
  // a one-way coupling of fields breaks the symmetry by itself, without any transport
  if (!has('self_adjoint') && f.self_adjoint.verdict === 'no' && tr === 'none' && f.coupling.verdict !== 'one-way') out.push({ say: 'the kernel is not self-adjoint, yet no net transport direction was found', strength: conf(f.self_adjoint) * 0.5 });
  return out;
}

/** Global caveats that lower every physical statement: nonlinearity, coverage, assumed noise floor. */
function globalCaveats(f: Base): { say: string; factor: number }[] {
  const out: { say: string; factor: number }[] = [];
  if (f.linearity.verdict === 'nonlinear') out.push({ say: 'the system responded nonlinearly, so this describes a local linearisation only', factor: 0.8 });
  const cov = (f.fit as { coverage?: { complete?: boolean; identified_energy_fraction?: number } }).coverage;
  if (cov && cov.complete === false) out.push({ say: 'the forcings identified only part of the kernel, so finer-scale structure is not covered', factor: 0.9 });
  if (f.noise_floor?.source === 'kernel-self-estimate') out.push({ say: 'the noise floor was estimated from the kernel itself, not from repeated experiments', factor: 0.9 });
  if (f.noise_floor?.source === 'none') out.push({ say: 'no noise floor was available, so every confidence rests on the fit alone', factor: 0.7 });
  return out;
}

function finish(claim: Claim, f: Base): Hypothesis {
  const caveats: string[] = [];
  let c = claim.confidence;
  for (const k of contradictions(f, claim)) { c *= 1 - 0.5 * k.strength; caveats.push(`Contradicting evidence: ${k.say}.`); }
  for (const g of globalCaveats(f)) { c *= g.factor; caveats.push(`Caveat: ${g.say}.`); }
  const h: Hypothesis = { statement: claim.text.endsWith('.') ? claim.text : claim.text + '.', confidence: round2(c), evidence: [...new Set(claim.evidence)] };
  if (caveats.length) h.caveats = caveats;
  return h;
}

export function buildHypotheses(f: Base): Hypothesis[] {
  const out: Hypothesis[] = [];

  // systems: who drives whom
  if (f.components.in > 1 || f.components.out > 1) {
    const cp = f.coupling;
    if (cp.verdict !== 'not-applicable') {
      let text: string;
      if (cp.verdict === 'none') text = `The ${f.components.out} fields evolve independently: no field measurably drives another`;
      else if (cp.verdict === 'inconclusive' as string) text = 'The data do not decide whether the fields are coupled';
      else {
        const links: string[] = [];
        const M = cp.matrix ?? [];
        M.forEach((row, i) => row.forEach((v, j) => { if (i !== j && v > 0.05) links.push(`field ${j + 1} drives field ${i + 1} (relative strength ${num(v)})`); }));
        text = `A ${cp.verdict} coupled system: ${links.length ? links.join('; ') : 'the off-diagonal blocks are above the noise'}`;
        if (cp.symmetric === 'yes') text += ', with a symmetric (reciprocal) block structure';
      }
      out.push(finish({ text, confidence: conf(cp, cp.verdict), evidence: ['coupling'] }, f));
    }
  }

  // the physics: joined regions, or one description for the whole domain
  const physics: Claim = f.regions.length >= 2 && f.dimension === 1
    ? (() => {
      const regs = [...f.regions].sort((a, b) => a.bounds[0] - b.bounds[0]);
      const ifc = f.interfaces.length ? f.interfaces : [];
      const joins = regs.slice(1).map((r) => {
        const near = ifc.find((i) => typeof i.location === 'number' && Math.abs((i.location as number) - r.bounds[0]) <= Math.max(i.uncertainty * 3, 0.05 * (regs[regs.length - 1]!.bounds[1] - regs[0]!.bounds[0])));
        return near ? `, joined at x ≈ ${pos(near.location)} (±${num(near.uncertainty)}) to ` : ', joined to ';
      });
      let text = capital(regionPhrase(regs[0]!, f));
      regs.slice(1).forEach((r, i) => { text += joins[i] + regionPhrase(r, f); });
      const ic = ifc.length ? ifc.reduce((p, i) => p * clamp(i.confidence), 1) : 0.5;
      return { text, confidence: ic, evidence: ['regions', 'interfaces'] };
    })()
    : globalPhysics(f);
  out.push(finish(physics, f));

  // strong structural verdicts the physics statement does not already carry
  const tr = f.transport.verdict;
  if ((tr === '+x' || tr === '-x') && !physics.evidence.includes('transport') && !/toward [+-]x/.test(physics.text)) {
    const pe = typeof f.transport.peclet === 'number' ? `; Péclet ≈ ${num(f.transport.peclet)}${typeof f.transport.peclet_uncertainty === 'number' ? ` ± ${num(f.transport.peclet_uncertainty)}` : ''}` : '';
    const sa = f.self_adjoint.verdict === 'no' ? conf(f.self_adjoint) : 1;
    out.push(finish({ text: `Something carries the quantity toward ${tr}, as a flow or a moving medium would: the kernel is not symmetric and its skew part points that way${pe}`, confidence: conf(f.transport) * sa, evidence: f.self_adjoint.verdict === 'no' ? ['transport', 'self_adjoint'] : ['transport'] }, f));
  }
  if (f.translation_invariant.verdict === 'no' && !physics.evidence.includes('translation_invariant') && !physics.evidence.includes('regions')) {
    const cps = ((f.translation_invariant as { change_points?: unknown }).change_points as number[] | undefined)?.filter((x) => typeof x === 'number' && Number.isFinite(x)) ?? [];
    out.push(finish({ text: `The medium is not uniform: the response depends on where the forcing is applied, not only on the distance from it${cps.length ? `; it changes most near x ≈ ${cps.map((x) => num(x, 3)).join(' and ')}` : ''}`, confidence: conf(f.translation_invariant), evidence: ['translation_invariant'] }, f));
  }

  // the estimated equation itself
  const op = f.operator as Base['operator'] & { reliable?: boolean };
  if (op && op.expression && !/^not (determined|estimated)/.test(op.expression)) {
    const reliable = op.reliable !== false;
    const poor = /poorly determined/.test(op.expression);
    const c = physics.confidence * (reliable ? (poor ? 0.6 : 0.9) : 0.4);
    out.push(finish({ text: `The local equation is approximately ${op.expression}`, confidence: c, evidence: ['operator', ...physics.evidence] }, f));
  } else if (op && /^not determined/.test(op.expression ?? '')) {
    const res = (op as { residual?: unknown }).residual;
    const resText = typeof res === 'number' && Number.isFinite(res) ? ` (the best local model leaves ${Math.round(Math.min(res, 9.99) * 100)} % of the weak-form equations unexplained)` : '';
    const text = /order is open/.test(op.expression)
      ? `The local equation is not determined: second- and fourth-order local models fit the kernel about equally${resText}, as happens when coefficients change sharply inside a test region or the operator is not a differential one`
      : `The data do not determine the local coefficients of the operator: the leading coefficient is not separated from zero${resText}; more experiments or lower noise would be needed`;
    out.push(finish({ text, confidence: 0.8, evidence: ['operator'] }, f));
  }

  // internal layers and sharp features
  for (const s of f.singularities) {
    out.push(finish({ text: `A sharp internal feature (layer, shock or kink) near x ≈ ${pos(s.location)}, width ≈ ${num(s.width)}`, confidence: clamp(s.confidence), evidence: ['singularities'] }, f));
  }

  // a second-best order when the order is not firmly decided
  if (f.order.estimate === 2 && conf(f.order) < 0.8) {
    out.push(finish({ text: 'Alternatively, a fourth-order (bending-type) operator: the spectrum does not rule it out', confidence: 1 - conf(f.order), evidence: ['order'] }, f));
  } else if (f.order.estimate === 4 && conf(f.order) < 0.8) {
    out.push(finish({ text: 'Alternatively, a second-order (diffusion-type) operator: the spectrum does not rule it out', confidence: 1 - conf(f.order), evidence: ['order'] }, f));
  }

  // nonlinearity, stated on its own
  if (f.linearity.verdict === 'nonlinear') {
    out.push({ statement: 'The system is nonlinear: responses do not scale with the forcing, so the kernel is a local linearisation valid near the tested forcing amplitudes only.', confidence: round2(conf(f.linearity, 'nonlinear')), evidence: ['linearity'] });
  }
  // restricted coverage, stated on its own
  const cov = (f.fit as { coverage?: { complete?: boolean; identified_energy_fraction?: number; identified_rank?: number } }).coverage;
  if (cov && cov.complete === false) {
    const pct = (e: number) => { const p = 100 * e; return p >= 99.95 && p < 100 ? 'over 99.9' : `about ${p >= 99.5 && p < 100 ? p.toFixed(1) : String(Math.round(p))}`; };
    const frac = typeof cov.identified_energy_fraction === 'number' ? ` (${pct(cov.identified_energy_fraction)} % of its energy${typeof cov.identified_rank === 'number' ? `, ${cov.identified_rank} directions` : ''})` : '';
    out.push({ statement: `The forcings identified only part of the kernel${frac}: conclusions about finer scales than the forcings excite are not supported by these data.`, confidence: 0.9, evidence: ['fit'] });
  }

  // honest negatives: what the data do not decide
  const open: { key: string; what: string; c: number }[] = [];
  if (f.self_adjoint.verdict === 'inconclusive') open.push({ key: 'self_adjoint', what: 'whether the operator is self-adjoint (reciprocal)', c: conf(f.self_adjoint, 'inconclusive') });
  if (f.transport.verdict === 'inconclusive') open.push({ key: 'transport', what: 'whether there is net transport, and in which direction', c: conf(f.transport, 'inconclusive') });
  if (f.translation_invariant.verdict === 'inconclusive') open.push({ key: 'translation_invariant', what: 'whether the medium is uniform', c: conf(f.translation_invariant, 'inconclusive') });
  if (f.order.estimate === null) open.push({ key: 'order', what: 'the differential order', c: conf(f.order) });
  if (f.locality.verdict === 'inconclusive') open.push({ key: 'locality', what: 'whether the interaction is local (differential) or non-local', c: conf(f.locality, 'inconclusive') });
  if (f.oscillation.verdict === 'inconclusive') open.push({ key: 'oscillation', what: 'whether the response oscillates', c: conf(f.oscillation, 'inconclusive') });
  if (f.screening.verdict === 'inconclusive') open.push({ key: 'screening', what: 'whether the response is screened (decays exponentially)', c: conf(f.screening, 'inconclusive') });
  if (f.linearity.verdict === 'inconclusive') open.push({ key: 'linearity', what: 'whether the system is linear', c: conf(f.linearity, 'inconclusive') });
  if (open.length) {
    const decided = Math.max(...open.map((o) => o.c));
    out.push({
      statement: `The data do not decide ${joinAnd(open.map((o) => o.what))}.`,
      confidence: round2(1 - decided),
      evidence: open.map((o) => o.key),
    });
  }

  return out.sort((a, b) => b.confidence - a.confidence);
}

function capital(s: string): string { return s.charAt(0).toUpperCase() + s.slice(1); }

function joinAnd(parts: string[]): string {
  if (parts.length <= 1) return parts.join('');
  return `${parts.slice(0, -1).join('; ')}; nor ${parts[parts.length - 1]}`;
}
