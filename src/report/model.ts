/**
 * The dossier's content as plain data, in reading order: hypotheses, one section per
 * analysis, data quality, the caution, the fitted kernel, the audit trail. Both the HTML and
 * the PDF are drawn from this one model, so they carry the same sections and figures.
 * Pure: the caller reads files and passes their contents and hashes.
 */
import type { Findings, Kernel, InputFile } from '../types.js';
import { fmt, pct, CAUTION, CAUTION_TITLE, INTRO, ANALYSES } from './text.js';
import {
  kernelFigures, homogeneousFigure, spectrumFigure, polesFigure, regionsFigure, interfacesFigure, coefficientFigures,
  couplingFigure, sliceFigures, adjointFigures, transportFigures, translationFigures, localityFigure, columnFigures,
  type Figure, type Labels, type SectionFigures,
} from './figures.js';

export interface FigureRef extends Figure { number: number }

export interface KeyValue { label: string; value: string }

export interface AnalysisSection {
  key: string; anchor: string; title: string;
  verdict: string; verdictClass: 'positive' | 'negative' | 'open' | 'neutral';
  statistic: string; noiseFloor: string; ratio: string; separated: string;
  summary: string; explanation: string;
  details: KeyValue[];
  table: { head: string[]; rows: string[][] } | null;
  figures: FigureRef[];
  /** why the section has no figure (null when it has one) */
  figureNote: string | null;
}

export interface HypothesisView {
  rank: number; statement: string; confidence: number; confidenceText: string;
  evidence: { key: string; title: string; anchor: string }[];
  caveats: string[];
  figure: FigureRef | null;
}

export interface DossierModel {
  title: string;
  subtitle: string;
  generated: string;
  caution: { title: string; text: string };
  intro: typeof INTRO;
  toc: { anchor: string; title: string; level: number }[];
  hypotheses: HypothesisView[];
  analyses: AnalysisSection[];
  quality: KeyValue[];
  qualityNotes: string[];
  kernelFigures: FigureRef[];
  audit: {
    inputs: { role: string; path: string; sha256: string }[];
    rows: KeyValue[];
    options: string;
    rerun: string;
    rebuild: string;
  };
  figures: FigureRef[];
}

export interface ModelInput {
  findings: Findings;
  kernel: Kernel | null;
  /** files the dossier itself read (findings.json, kernel files), with hashes */
  dossierInputs: InputFile[];
  /** the command that re-creates the dossier from its folder */
  rebuild: string;
  /** when the dossier was made (ISO); the only time-dependent field besides the audit's */
  generated: string;
  /** the fit's predicted relative error of u_h (kernel/fit.json), for the u_h band */
  homogeneousError?: number | null;
}

function studyInfo(F: Findings): { title: string | null; units: Record<string, unknown> } {
  const f = F as unknown as Record<string, unknown>;
  const study = (f.study && typeof f.study === 'object' ? f.study : {}) as Record<string, unknown>;
  const title = typeof study.title === 'string' ? study.title : typeof f.title === 'string' ? f.title : null;
  const units = (study.units && typeof study.units === 'object' ? study.units : f.units && typeof f.units === 'object' ? f.units : {}) as Record<string, unknown>;
  return { title, units };
}

function domainOf(F: Findings, k: Kernel | null): [number, number] | null {
  if (k && k.domain.kind === 'interval') return [...k.domain.bounds];
  const f = F as unknown as { study?: { domain?: { kind?: string; bounds?: unknown } }; domain?: { kind?: string; bounds?: unknown } };
  const d = f.study?.domain ?? f.domain;
  if (d?.kind === 'interval' && Array.isArray(d.bounds) && d.bounds.length === 2) return [Number(d.bounds[0]), Number(d.bounds[1])];
  if (k && k.dimension === 1) {
    const xs = Array.from(k.pointsOut.data);
    return [Math.min(...xs), Math.max(...xs)];
  }
  return null;
}

const VERDICT_CLASS: Record<string, AnalysisSection['verdictClass']> = {
  yes: 'positive', no: 'negative', inconclusive: 'open', local: 'positive', nonlocal: 'negative', linear: 'positive', nonlinear: 'negative',
  'not-tested': 'open', 'not-applicable': 'neutral', none: 'negative', '+x': 'positive', '-x': 'positive', 'one-way': 'positive', 'two-way': 'positive',
};

function verdictOf(key: string, v: unknown): string {
  if (Array.isArray(v)) return v.length === 0 ? 'none found' : `${v.length} found`;
  if (!v || typeof v !== 'object') return '—';
  const o = v as Record<string, unknown>;
  if (typeof o.verdict === 'string') return o.verdict;
  if (key === 'order') return o.estimate === null || o.estimate === undefined ? 'inconclusive' : `order ${o.estimate}`;
  if (key === 'operator') {
    const e = typeof o.expression === 'string' ? o.expression : '';
    if (!e || e.startsWith('not determined')) return 'inconclusive';
    if (e.startsWith('not estimated')) return 'not-applicable';
    return o.reliable === false ? 'tentative expression' : 'expression found';
  }
  return '—';
}

function details(v: unknown, skip: Set<string>): KeyValue[] {
  if (!v || typeof v !== 'object' || Array.isArray(v)) return [];
  const out: KeyValue[] = [];
  for (const [k, x] of Object.entries(v as Record<string, unknown>)) {
    if (skip.has(k)) continue;
    if (typeof x === 'number' || typeof x === 'string' || typeof x === 'boolean' || x === null) out.push({ label: k.replace(/_/g, ' '), value: typeof x === 'number' ? fmt(x, 4) : String(x ?? '—') });
    else if (Array.isArray(x) && x.length === 0) out.push({ label: k.replace(/_/g, ' '), value: 'none' });
    else if (Array.isArray(x) && x.length <= 6 && x.every((e) => typeof e === 'number')) out.push({ label: k.replace(/_/g, ' '), value: `[${x.map((e) => fmt(e as number, 3)).join(', ')}]` });
    else if (x && typeof x === 'object' && !Array.isArray(x) && Object.values(x).every((e) => e === null || ['number', 'string', 'boolean'].includes(typeof e)))
      out.push({ label: k.replace(/_/g, ' '), value: Object.entries(x).map(([a, b]) => `${a.replace(/_/g, ' ')} ${typeof b === 'number' ? fmt(b, 3) : String(b ?? '—')}`).join(', ') });
  }
  return out;
}

function pos(p: unknown): string {
  if (typeof p === 'number') return fmt(p, 4);
  if (Array.isArray(p)) return `(${p.map((e) => fmt(Number(e), 4)).join(', ')})`;
  return '—';
}

function tableOf(key: string, v: unknown): AnalysisSection['table'] {
  if (!Array.isArray(v) || v.length === 0) {
    if (key === 'coupling' && v && typeof v === 'object' && Array.isArray((v as { matrix?: unknown }).matrix)) {
      const m = (v as { matrix: number[][] }).matrix;
      return { head: ['output \\ input', ...m[0]!.map((_, j) => `component ${j + 1}`)], rows: m.map((r, i) => [`component ${i + 1}`, ...r.map((e) => fmt(e, 3))]) };
    }
    if (key === 'operator' && v && typeof v === 'object' && Array.isArray((v as { terms?: unknown }).terms) && (v as { terms: unknown[] }).terms.length) {
      const t = (v as Findings['operator']).terms;
      const range = (a: number[] | undefined, lo: (x: number[]) => number, hi: (x: number[]) => number) => {
        const fin = (a ?? []).filter((z) => Number.isFinite(z));
        return fin.length === 0 ? '—' : fin.length === 1 ? fmt(fin[0]) : `${fmt(lo(fin))} … ${fmt(hi(fin))}`;
      };
      const ext = (a: number[] | undefined, f: (...v: number[]) => number) => { const fin = (a ?? []).filter((z) => Number.isFinite(z)); return fin.length ? fmt(f(...fin)) : '—'; };
      return { head: ['term', 'form', 'estimate', 'band'], rows: t.map((e) => {
        const one = (e.value ?? []).length === 1;
        return [String(e.name), String(e.form), range(e.value, (a) => Math.min(...a), (a) => Math.max(...a)),
          one ? `${fmt(e.lower?.[0])} … ${fmt(e.upper?.[0])}` : `${ext(e.lower, Math.min)} … ${ext(e.upper, Math.max)} (widest extent)`];
      }) };
    }
    return null;
  }
  if (key === 'singularities') return { head: ['location', 'width', 'confidence'], rows: (v as Findings['singularities']).map((s) => [pos(s.location), fmt(s.width), pct(s.confidence)]) };
  if (key === 'interfaces') return { head: ['location', 'uncertainty', 'confidence'], rows: (v as Findings['interfaces']).map((s) => [pos(s.location), `± ${fmt(s.uncertainty)}`, pct(s.confidence)]) };
  if (key === 'regions') return { head: ['from', 'to', 'character', 'coefficients'], rows: (v as Findings['regions']).map((r) => [fmt(r.bounds?.[0], 4), fmt(r.bounds?.[1], 4), String(r.character),
    Object.entries(r.coefficients ?? {}).map(([n, c]) => `${n} ≈ ${fmt(c)}`).join(', ') || '—']) };
  return null;
}

export function buildModel(inp: ModelInput): DossierModel {
  const F = inp.findings, k = inp.kernel;
  const info = studyInfo(F);
  const L: Labels = { x: String(info.units.x ?? 'x units'), u: String(info.units.u ?? 'u units'), f: String(info.units.f ?? 'f units') };
  const domain = domainOf(F, k);
  const figures: FigureRef[] = [];
  const add = (f: Figure | null): FigureRef | null => {
    if (!f) return null;
    const ref = { ...f, number: figures.length + 1 };
    figures.push(ref);
    return ref;
  };
  const kf = k ? kernelFigures(k, L) : { main: [], sym: null };
  const record = F as unknown as Record<string, unknown>;

  const sections: AnalysisSection[] = [];
  for (const a of ANALYSES) {
    if (!(a.key in record) && !F.evidence?.[a.key]) continue;
    const v = record[a.key];
    const ev = F.evidence?.[a.key];
    let sf: SectionFigures;
    switch (a.key) {
      case 'self_adjoint': sf = adjointFigures(F, k, L); break;
      case 'transport': sf = transportFigures(F, L); break;
      case 'translation_invariant': sf = translationFigures(F, L); break;
      case 'order': sf = spectrumFigure(F); break;
      case 'locality': sf = localityFigure(F); break;
      case 'oscillation': sf = columnFigures(F, k, L, 'oscillation'); break;
      case 'screening': sf = columnFigures(F, k, L, 'screening'); break;
      case 'singularities': sf = polesFigure(F, domain, L); break;
      case 'interfaces': sf = interfacesFigure(F, domain, L); break;
      case 'regions': sf = regionsFigure(F, domain, L); break;
      case 'operator': sf = coefficientFigures(F, L); break;
      case 'coupling': sf = couplingFigure(F); break;
      case 'linearity': sf = { figures: [], note: 'The linearity test is summarised by the numbers above (the fit ran it on the experiments); it has no figure.' }; break;
      default: sf = { figures: [], note: 'This analysis has no figure in the dossier.' };
    }
    const figs: Figure[] = sf.figures;
    const refs = figs.map(add).filter((f): f is FigureRef => !!f);
    const verdict = verdictOf(a.key, v);
    const stat = ev?.statistic ?? null, floor = ev?.noise_floor ?? null;
    const ratio = typeof stat === 'number' && typeof floor === 'number' && floor > 0 ? stat / floor : null;
    sections.push({
      key: a.key, anchor: `an-${a.key.replace(/_/g, '-')}`, title: a.title,
      verdict, verdictClass: VERDICT_CLASS[verdict] ?? (verdict.startsWith('order') || verdict.endsWith('found') && verdict !== 'none found' ? 'positive' : 'neutral'),
      statistic: fmt(stat, 4), noiseFloor: fmt(floor, 4), ratio: ratio === null || a.key === 'order' || a.key === 'interfaces' ? '—' : `${fmt(ratio, 3)} ×`,
      // the verdict itself comes from the analysis' own decision rule; this only reads the two numbers
      separated: a.key === 'order' ? (stat === null ? 'no decay fitted' : 'decay exponent ± its bootstrap spread')
        : a.key === 'interfaces' && stat !== null ? 'probability of a sharp change, against 0.5 (undecided)'
        : ratio === null ? 'no floor to compare with' : ratio > 1 ? 'above the noise floor' : 'within the noise floor',
      summary: ev?.summary ?? '', explanation: ev?.explanation || a.fallback,
      details: details(v, new Set(['verdict', 'terms', 'matrix'])),
      table: tableOf(a.key, v),
      figures: refs,
      figureNote: refs.length ? null : sf.note,
    });
  }

  const anchorOf = new Map(sections.map((s) => [s.key, s]));
  const hypotheses: HypothesisView[] = [...(F.hypotheses ?? [])]
    .map((h, i) => ({ h, i }))
    .sort((p, q) => (q.h.confidence - p.h.confidence) || (p.i - q.i))
    .map(({ h }, r) => {
      const evidence = (h.evidence ?? []).map((key) => {
        const s = anchorOf.get(key);
        return { key, title: s?.title ?? key.replace(/_/g, ' '), anchor: s?.anchor ?? '' };
      });
      let figure: FigureRef | null = null;
      for (const e of h.evidence ?? []) { const s = anchorOf.get(e); if (s && s.figures.length) { figure = s.figures[0]!; break; } }
      return { rank: r + 1, statement: h.statement, confidence: h.confidence, confidenceText: pct(h.confidence), evidence, caveats: h.caveats ?? [], figure };
    });

  const fit = F.fit as Record<string, unknown>;
  const cov = (fit.coverage ?? {}) as Record<string, unknown>;
  const quality: KeyValue[] = [
    { label: 'experiments used', value: fmt(F.fit.experiments, 6) },
    { label: 'cross-validated relative residual', value: fmt(F.fit.relative_residual, 3) },
    { label: 'noise estimate (std of responses)', value: `${fmt(F.fit.noise_estimate, 3)}${typeof fit.noise_source === 'string' ? ` (${fit.noise_source})` : ''}` },
  ];
  const unc = (fit.uncertainty ?? {}) as Record<string, unknown>;
  if (typeof unc.relative_kernel_error === 'number') quality.push({ label: 'predicted relative error of G', value: fmt(unc.relative_kernel_error, 3) });
  if (typeof cov.identified_energy_fraction === 'number') quality.push({ label: 'coverage: kernel energy the forcings identify', value: pct(cov.identified_energy_fraction) });
  if (typeof cov.identified_rank === 'number') quality.push({ label: 'coverage: input directions excited above noise', value: fmt(cov.identified_rank, 6) });
  if (typeof cov.complete === 'boolean') quality.push({ label: 'coverage: whole kernel determined', value: cov.complete ? 'yes' : 'no — only the part in the forcings\' span' });
  quality.push({ label: 'linearity', value: F.linearity?.verdict ?? 'not-tested' });
  if (F.noise_floor) quality.push({ label: 'noise floor', value: `${F.noise_floor.source}, ${F.noise_floor.replicates} replicates` });
  if (k) quality.push({ label: 'kernel size', value: `${k.G.rows} × ${k.G.cols} (${k.pointsOut.rows} output × ${k.pointsIn.rows} input points${k.components.in * k.components.out > 1 ? `, ${k.components.out}×${k.components.in} components` : ''})` });
  const qualityNotes: string[] = [];
  if (typeof cov.note === 'string' && cov.note) qualityNotes.push(cov.note);
  const lin = F.linearity as Record<string, unknown>;
  if (typeof lin?.note === 'string' && lin.note) qualityNotes.push(lin.note);
  if (F.noise_floor?.assumption) qualityNotes.push(`Noise floor: ${F.noise_floor.assumption}`);

  const kernelFigs: FigureRef[] = [];
  for (const f of [...kf.main, kf.sym]) { const r = add(f); if (r) kernelFigs.push(r); }
  if (k) { const h = add(homogeneousFigure(k, inp.homogeneousError ?? null, L, (inp.findings.evidence?.homogeneous?.plot ?? null) as { lower?: unknown; upper?: unknown } | null)); if (h) kernelFigs.push(h); }
  if (k && k.dimension === 2 && k.components.in === 1) for (const f of sliceFigures(k, L)) { const r = add(f); if (r) kernelFigs.push(r); }

  const A = F.audit;
  const seen = new Set<string>();
  const inputs: DossierModel['audit']['inputs'] = [];
  for (const f of F.inputs ?? []) { inputs.push({ role: 'study input', path: f.path, sha256: f.sha256 }); seen.add(`${f.path}:${f.sha256}`); }
  for (const f of inp.dossierInputs) if (!seen.has(`${f.path}:${f.sha256}`)) inputs.push({ role: 'read by this dossier', path: f.path, sha256: f.sha256 });
  const rows: KeyValue[] = [
    { label: 'tool', value: `${F.tool?.name ?? 'kerneldx'} ${F.tool?.version ?? '?'}` },
    { label: 'command', value: (A?.command ?? []).join(' ') || '—' },
    { label: 'seed', value: A ? String(A.seed) : '—' },
    { label: 'started', value: A?.started ?? '—' },
    { label: 'duration', value: A ? `${fmt(A.seconds, 3)} s` : '—' },
    { label: 'platform', value: A ? `Node ${A.platform.node}, ${A.platform.os}, ${A.platform.arch}` : '—' },
    { label: 'dossier generated', value: inp.generated },
  ];

  const toc = [
    { anchor: 'hypotheses', title: 'Hypotheses', level: 1 },
    { anchor: 'analyses', title: 'Analyses', level: 1 },
    ...sections.map((s) => ({ anchor: s.anchor, title: s.title, level: 2 })),
    { anchor: 'quality', title: 'Data quality', level: 1 },
    { anchor: 'caution', title: 'Caution', level: 1 },
    { anchor: 'kernel', title: 'The fitted kernel', level: 1 },
    { anchor: 'audit', title: 'Audit trail', level: 1 },
  ];
  return {
    title: info.title ?? 'Untitled study',
    subtitle: `Dossier of a ${F.dimension}-D study${F.components.in * F.components.out > 1 ? ` with ${F.components.in} input and ${F.components.out} output components` : ''} — kerneldx ${F.tool?.version ?? ''}`.trim(),
    generated: inp.generated,
    caution: { title: CAUTION_TITLE, text: CAUTION },
    intro: INTRO,
    toc, hypotheses, analyses: sections, quality, qualityNotes, kernelFigures: kernelFigs,
    audit: { inputs, rows, options: JSON.stringify(A?.options ?? {}, null, 2), rerun: A?.rerun ?? '—', rebuild: inp.rebuild },
    figures,
  };
}
