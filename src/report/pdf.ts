/**
 * The PDF dossier (pdfkit): the same model, sections and figures as the HTML, with DejaVu fonts
 * embedded (they carry ′ ∂ κ ≈ ± ² Δ, which the built-in Helvetica garbles), a table of
 * contents with page numbers and links, bookmarks, and page numbers in the footer. Charts are
 * drawn from the scenegraph vega laid out for the HTML (src/report/pdfdraw.ts); a heat map's
 * cells are the same raster image the HTML shows, placed under the chart's frame.
 */
import PDFDocument from 'pdfkit';
import { createRequire } from 'node:module';
import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import type { DossierModel, FigureRef } from './model.js';
import type { PdfFigure } from './index.js';
import { drawChart } from './pdfdraw.js';

const require = createRequire(import.meta.url);
const FONT_DIR = join(dirname(require.resolve('dejavu-fonts-ttf/package.json')), 'ttf');

const FONT_FILES = [['body', 'DejaVuSans.ttf'], ['bold', 'DejaVuSans-Bold.ttf'], ['mono', 'DejaVuSansMono.ttf']] as const;
const fontCache = new Map<string, Buffer>();
function fontBytes(file: string): Buffer {
  let b = fontCache.get(file);
  if (!b) { b = readFileSync(join(FONT_DIR, file)); fontCache.set(file, b); }
  return b;
}

/**
 * pdfkit shapes every word of a text once per document and font (EmbeddedFont.layoutCache);
 * a second dossier in the same process would shape the same words again. The shaped runs
 * depend on the font file alone (glyph ids, advances, code points), so one cache a font is
 * shared by every document; it is dropped when it grows past LAYOUT_CACHE_MAX words. When
 * pdfkit's font has no such cache (another pdfkit version), nothing is shared.
 */
const LAYOUT_CACHE_MAX = 50_000;
const layoutCaches = new Map<string, Record<string, unknown>>();
function shareLayouts(doc: PDFKit.PDFDocument, name: string): void {
  doc.font(name);
  const f = (doc as unknown as { _font?: { layoutCache?: unknown } })._font;
  if (!f || !f.layoutCache || typeof f.layoutCache !== 'object') return;
  let c = layoutCaches.get(name);
  if (!c || Object.keys(c).length > LAYOUT_CACHE_MAX) { c = f.layoutCache as Record<string, unknown>; layoutCaches.set(name, c); }
  f.layoutCache = c;
}

const A4 = { w: 595.28, h: 841.89 };
const M = { left: 56, right: 56, top: 56, bottom: 64 };
const CW = A4.w - M.left - M.right;
const C = { ink: '#22262b', muted: '#6a6f76', pine: '#1f5a4c', rust: '#b5542d', rule: '#d9d3c4', sand: '#f1ece0' };

/** `charts` maps figure id → its rendered chart (renderFigures in src/report/index.ts). */
export function renderPdf(model: DossierModel, charts: Map<string, PdfFigure>): Promise<Buffer> {
  const when = new Date(model.generated);
  const doc = new PDFDocument({
    size: 'A4', margins: M, bufferPages: true, autoFirstPage: true,
    info: { Title: model.title, Author: 'kerneldx', Subject: 'kerneldx dossier', Creator: 'kerneldx', Producer: 'kerneldx (pdfkit)',
      CreationDate: Number.isNaN(when.getTime()) ? new Date(0) : when, ModDate: Number.isNaN(when.getTime()) ? new Date(0) : when },
  });
  const chunks: Buffer[] = [];
  doc.on('data', (b: Buffer) => chunks.push(b));
  const done = new Promise<Buffer>((res, rej) => { doc.on('end', () => res(Buffer.concat(chunks))); doc.on('error', rej); });

  for (const [name, file] of FONT_FILES) {
    doc.registerFont(name, fontBytes(file));
    shareLayouts(doc, name);
  }
  const fonts = { regular: 'body', bold: 'bold' };

  const pageOf = new Map<string, number>();
  let pageNo = 0;
  doc.on('pageAdded', () => { pageNo++; });
  const bottom = () => A4.h - M.bottom;
  const ensure = (h: number) => { if (doc.y + h > bottom()) doc.addPage(); };
  const mark = (anchor: string) => { pageOf.set(anchor, pageNo); doc.addNamedDestination(anchor); };
  const outline = doc.outline;

  const para = (s: string, o: { font?: string; size?: number; color?: string; gap?: number; indent?: number } = {}) => {
    doc.font(o.font ?? 'body').fontSize(o.size ?? 10).fillColor(o.color ?? C.ink)
      .text(s, M.left + (o.indent ?? 0), doc.y, { width: CW - (o.indent ?? 0), lineGap: 1.5 });
    doc.moveDown(o.gap ?? 0.5);
  };
  const h1 = (s: string, anchor: string) => {
    ensure(80);
    doc.moveDown(0.6); mark(anchor); outline.addItem(s);
    doc.font('bold').fontSize(15).fillColor(C.pine).text(s, M.left, doc.y, { width: CW });
    doc.moveTo(M.left, doc.y + 2).lineTo(M.left + CW, doc.y + 2).lineWidth(0.6).strokeColor(C.rule).stroke();
    doc.moveDown(0.6);
  };
  const h2 = (s: string, anchor?: string) => {
    ensure(70);
    doc.moveDown(0.4);
    if (anchor) mark(anchor);
    doc.font('bold').fontSize(12).fillColor(C.ink).text(s, M.left, doc.y, { width: CW });
    doc.moveDown(0.3);
  };
  const kv = (rows: { label: string; value: string }[], labelW = 190) => {
    for (const r of rows) {
      doc.font('body').fontSize(9);
      const h = Math.max(doc.heightOfString(r.label, { width: labelW - 8 }), doc.heightOfString(r.value, { width: CW - labelW })) + 3;
      ensure(h);
      const y = doc.y;
      doc.fillColor(C.muted).text(r.label, M.left, y, { width: labelW - 8 });
      doc.fillColor(C.ink).text(r.value, M.left + labelW, y, { width: CW - labelW });
      doc.y = y + h;
    }
    doc.moveDown(0.4);
  };
  const table = (head: string[], rows: string[][], widths?: number[], font = 'body') => {
    const w = widths ?? head.map(() => CW / head.length);
    const line = (cells: string[], f: string, fill?: string) => {
      doc.font(f).fontSize(8.5);
      const h = Math.max(...cells.map((c, i) => doc.heightOfString(c, { width: w[i]! - 6 }))) + 4;
      ensure(h);
      const y = doc.y;
      if (fill) doc.rect(M.left, y - 1, CW, h).fill(fill);
      let x = M.left;
      cells.forEach((c, i) => { doc.font(f).fontSize(8.5).fillColor(C.ink).text(c, x + 3, y + 1, { width: w[i]! - 6 }); x += w[i]!; });
      doc.moveTo(M.left, y + h - 1).lineTo(M.left + CW, y + h - 1).lineWidth(0.4).strokeColor(C.rule).stroke();
      doc.y = y + h;
    };
    line(head, 'bold', C.sand);
    for (const r of rows) line(r, font);
    doc.moveDown(0.5);
  };

  // charts are drawn at their own size (1 px = 1 pt); scale them so the raster and the axes agree
  const figure = (f: FigureRef, copy = false) => {
    const sc = Math.min(1, CW / f.chart.width, 330 / f.chart.height);
    const w = f.chart.width * sc, h = f.chart.height * sc;
    doc.font('body').fontSize(8.5);
    const capText = `Figure ${f.number}. ${f.title}. ${f.caption}`;
    const capH = doc.heightOfString(capText, { width: CW });
    ensure(h + capH + 12);
    const x = M.left + (CW - w) / 2, y = doc.y;
    if (!copy) mark(f.id);
    const drawn = charts.get(f.id);
    if (drawn) {
      doc.save();
      doc.translate(x, y).scale(sc);
      drawChart(doc, drawn.chart, fonts);
      const r = drawn.raster;
      if (r) {
        doc.image(r.png, r.plot.x, r.plot.y, { width: r.plot.width, height: r.plot.height });
        doc.rect(r.plot.x, r.plot.y, r.plot.width, r.plot.height).lineWidth(0.5 / sc).strokeColor(C.muted).stroke();
      }
      doc.restore();
      doc.x = M.left; doc.y = y;
    }
    doc.font('body').fontSize(8.5).fillColor(C.muted).text(capText, M.left, y + h + 4, { width: CW });
    doc.x = M.left;
    doc.moveDown(0.8);
  };

  // ---- page 1: title, caution, contents (page numbers filled in at the end)
  doc.font('bold').fontSize(8).fillColor(C.pine).text('KERNELDX DOSSIER', M.left, M.top, { characterSpacing: 1.5 });
  doc.moveDown(0.3);
  doc.font('bold').fontSize(20).fillColor(C.ink).text(model.title, { width: CW });
  doc.font('body').fontSize(10).fillColor(C.muted).text(model.subtitle, { width: CW });
  doc.text(`Generated ${model.generated}`, { width: CW });
  doc.moveDown(0.8);
  const cautionBox = () => {
    doc.font('body').fontSize(9.5);
    const text = `${model.caution.title}. ${model.caution.text}`;
    const hh = doc.heightOfString(text, { width: CW - 24 }) + 14;
    ensure(hh + 6);
    const y = doc.y;
    doc.rect(M.left, y, CW, hh).fill('#fbefe7');
    doc.rect(M.left, y, 4, hh).fill(C.rust);
    doc.font('bold').fontSize(9.5).fillColor(C.ink).text(`${model.caution.title}. `, M.left + 14, y + 7, { width: CW - 24, continued: true })
      .font('body').text(model.caution.text);
    doc.y = y + hh + 8; doc.x = M.left;
  };
  cautionBox();
  doc.font('bold').fontSize(13).fillColor(C.pine).text('Contents', M.left, doc.y);
  doc.moveDown(0.3);
  const tocLines: { anchor: string; y: number }[] = [];
  for (const t of model.toc) {
    const y = doc.y;
    doc.font(t.level === 1 ? 'bold' : 'body').fontSize(t.level === 1 ? 10 : 9.5).fillColor(C.ink)
      .text(t.title, M.left + (t.level - 1) * 16, y, { width: CW - 60, goTo: t.anchor, lineBreak: false });
    tocLines.push({ anchor: t.anchor, y });
    doc.y = y + (t.level === 1 ? 15 : 13);
  }
  doc.addPage();

  // ---- hypotheses
  h1('Hypotheses', 'hypotheses');
  para(model.intro.hypotheses, { color: C.muted, size: 9.5 });
  if (model.hypotheses.length === 0) para('The analyses produced no hypothesis: the evidence does not decide anything about the operator.');
  model.hypotheses.forEach((h, i) => {
    ensure(60);
    doc.font('bold').fontSize(10.5).fillColor(C.pine).text(`${h.rank}.  `, M.left, doc.y, { continued: true })
      .fillColor(C.ink).font('bold').text(h.statement, { width: CW });
    para(`Confidence ${h.confidenceText}. Rests on: ${h.evidence.map((e) => e.title).join(', ') || '—'}${h.figure ? `; see Figure ${h.figure.number}` : ''}.`, { color: C.muted, size: 9, indent: 16, gap: 0.2 });
    for (const c of h.caveats) para(`Caveat: ${c}`, { color: C.rust, size: 9, indent: 16, gap: 0.2 });
    doc.moveDown(0.4);
    if (h.figure && i < 3) figure(h.figure, true);
  });

  // ---- analyses
  h1('Analyses', 'analyses');
  para(model.intro.analyses, { color: C.muted, size: 9.5 });
  for (const s of model.analyses) {
    h2(`${s.title} — ${s.verdict}`, s.anchor);
    outline.addItem(`  ${s.title}`);
    if (s.summary) para(s.summary);
    table(['statistic', 'noise floor', 'ratio', 'reading'], [[s.statistic, s.noiseFloor, s.ratio, s.separated]], [90, 90, 80, CW - 260]);
    if (s.details.length) kv(s.details, 170);
    if (s.table) table(s.table.head, s.table.rows);
    para(`What this measures. ${s.explanation}`, { size: 9.5 });
    for (const f of s.figures) figure(f);
    if (s.figureNote) para(s.figureNote, { size: 9, color: C.muted });
  }

  // ---- data quality, caution
  h1('Data quality', 'quality');
  para(model.intro.quality, { color: C.muted, size: 9.5 });
  kv(model.quality, 230);
  for (const n of model.qualityNotes) para(n, { size: 9 });
  h1('Caution', 'caution');
  cautionBox();

  // ---- kernel
  h1('The fitted kernel', 'kernel');
  para(model.intro.kernel, { color: C.muted, size: 9.5 });
  for (const f of model.kernelFigures) figure(f);

  // ---- audit
  h1('Audit trail', 'audit');
  para(model.intro.audit, { color: C.muted, size: 9.5 });
  // one file a row, its SHA-256 on a line of its own so that a hash is never broken
  for (const f of model.audit.inputs) {
    ensure(26);
    doc.font('body').fontSize(9).fillColor(C.ink).text(f.path, M.left, doc.y, { width: CW, continued: true }).fillColor(C.muted).text(`  (${f.role})`);
    doc.font('mono').fontSize(8).fillColor(C.ink).text(`SHA-256 ${f.sha256 || '—'}`, M.left + 12, doc.y, { width: CW - 12, lineBreak: false });
    doc.x = M.left;
    doc.moveDown(0.45);
  }
  doc.moveDown(0.4);
  kv(model.audit.rows, 130);
  h2('Options');
  para(model.audit.options, { font: 'mono', size: 8 });
  h2('Re-create the findings');
  para(model.audit.rerun, { font: 'mono', size: 8.5 });
  h2('Re-create this dossier');
  para(model.audit.rebuild, { font: 'mono', size: 8.5 });

  // ---- contents page numbers and footers
  const range = doc.bufferedPageRange();
  doc.switchToPage(range.start);
  for (const t of tocLines) {
    const p = pageOf.get(t.anchor);
    if (p === undefined) continue;
    doc.font('body').fontSize(9.5).fillColor(C.muted).text(String(p + 1), M.left + CW - 50, t.y, { width: 50, align: 'right', lineBreak: false });
  }
  for (let i = range.start; i < range.start + range.count; i++) {
    doc.switchToPage(i);
    const keep = doc.page.margins.bottom;
    doc.page.margins.bottom = 0;
    doc.font('body').fontSize(8).fillColor(C.muted)
      .text(`kerneldx dossier · page ${i + 1} of ${range.count}`, M.left, A4.h - 40, { width: CW, align: 'center', lineBreak: false });
    doc.page.margins.bottom = keep;
  }
  doc.end();
  return done;
}
