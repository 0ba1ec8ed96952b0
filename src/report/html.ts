/**
 * The HTML dossier: one self-contained file (styles, SVG plots, plot data and a tiny download
 * script inline; no external request). Templates live in report-templates/ and are compiled
 * strictly, so a missing field is an error rather than a silent blank. Every string that came
 * from the user goes through `{{ }}` (escaped); `{{{ }}}` is kept for SVG this program made and
 * for JSON encoded by `safeJson`.
 */
import Handlebars from 'handlebars';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import type { DossierModel } from './model.js';
import { VERSION } from '../version.js';

export const TEMPLATE_DIR = fileURLToPath(new URL('../../report-templates/', import.meta.url));

/** JSON that is safe inside <script type="application/json">: no `<`, `>`, `&`, U+2028/9 left raw. */
export function safeJson(v: unknown): string {
  return JSON.stringify(v, (_k, x) => (typeof x === 'number' && !Number.isFinite(x) ? null : x))
    .replace(/</g, '\\u003c').replace(/>/g, '\\u003e').replace(/&/g, '\\u0026')
    .replace(/\u2028/g, '\\u2028').replace(/\u2029/g, '\\u2029');
}

/** How many hypotheses get a copy of their supporting figure inline (the rest link to it). */
export const INLINE_HYPOTHESIS_FIGURES = 3;

let compiled: HandlebarsTemplateDelegate | null = null;
function template(): HandlebarsTemplateDelegate {
  if (compiled) return compiled;
  const hb = Handlebars.create();
  hb.registerPartial('figure', readFileSync(`${TEMPLATE_DIR}partials/figure.hbs`, 'utf8'));
  hb.registerHelper('json', (v: unknown) => safeJson(v));
  hb.registerHelper('meter', (c: unknown) => (typeof c === 'number' && Number.isFinite(c) ? Math.round(Math.min(1, Math.max(0, c)) * 100) : 0));
  hb.registerHelper('inlineFigure', (i: unknown) => typeof i === 'number' && i < INLINE_HYPOTHESIS_FIGURES);
  compiled = hb.compile(readFileSync(`${TEMPLATE_DIR}dossier.hbs`, 'utf8'), { strict: true });
  return compiled;
}

/** The dossier as one HTML string; `svgs` maps figure id → rendered SVG. */
export function renderHtml(model: DossierModel, svgs: Map<string, string>): string {
  const css = readFileSync(`${TEMPLATE_DIR}style.css`, 'utf8');
  const script = readFileSync(`${TEMPLATE_DIR}script.js`, 'utf8');
  const withSvg = (f: { id: string }) => ({ ...f, svg: svgs.get(f.id) ?? '' });
  const m = {
    ...model,
    // a hypothesis shows a copy of its figure: give the copy's clip-path ids their own prefix
    hypotheses: model.hypotheses.map((h, i) => ({ ...h, figure: h.figure
      ? { ...h.figure, svg: (svgs.get(h.figure.id) ?? '').replaceAll(`"${h.figure.id}-`, `"${h.figure.id}-h${i + 1}-`).replaceAll(`#${h.figure.id}-`, `#${h.figure.id}-h${i + 1}-`) } : null })),
    analyses: model.analyses.map((s) => ({ ...s, figures: s.figures.map(withSvg) })),
    kernelFigures: model.kernelFigures.map(withSvg),
  };
  return template()({ model: m, css, script, version: VERSION });
}
