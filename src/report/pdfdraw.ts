/**
 * A vega scenegraph drawn straight into a pdfkit document: vega's own canvas mark painters
 * (vega.Marks[type].draw, the code its canvas renderer runs) call a small 2-D-context stand-in
 * that turns paths, fills, strokes, clips, gradients and text into pdfkit operations. This
 * replaces parsing the chart's SVG back (svg-to-pdfkit), which was the costliest part of the PDF.
 *
 * PDF paths are painted in the coordinate system current when painting, canvas paths in the one
 * current when each point was added; so the stand-in keeps the canvas transform itself, maps
 * every point through it when it is added, and leaves the document's transform alone (text is
 * placed under it with a local save / transform / restore).
 */
import * as vega from 'vega';
import type { RenderedChart } from './vega.js';

type Doc = PDFKit.PDFDocument;
/** a, b, c, d, e, f as in PDF and canvas: x' = a x + c y + e, y' = b x + d y + f */
type Mat = [number, number, number, number, number, number];

export interface ChartFonts { regular: string; bold: string }

interface Gradient { kind: 'linear'; x0: number; y0: number; x1: number; y1: number; stops: [number, string][]; addColorStop(o: number, c: string): void }

const NAMED: Record<string, [number, number, number]> = { black: [0, 0, 0], white: [255, 255, 255] };

/** A CSS colour as vega writes it (#rgb, #rrggbb, rgb(), rgba(), a few names) → RGB and alpha; null = draw nothing. */
export function cssColor(c: unknown): { rgb: [number, number, number]; alpha: number } | null {
  if (typeof c !== 'string') return null;
  const s = c.trim().toLowerCase();
  if (s === 'none' || s === 'transparent' || s === '') return null;
  if (s[0] === '#') {
    const h = s.length === 4 ? s.slice(1).split('').map((x) => x + x).join('') : s.slice(1, 7);
    const v = [0, 2, 4].map((i) => parseInt(h.slice(i, i + 2), 16));
    if (v.some((x) => !Number.isFinite(x))) throw new Error(`chart colour ${c}`);
    return { rgb: v as [number, number, number], alpha: 1 };
  }
  const m = /^rgba?\(([^)]*)\)$/.exec(s);
  if (m) {
    const p = m[1]!.split(',').map((x) => parseFloat(x));
    if (p.length < 3 || p.slice(0, 3).some((x) => !Number.isFinite(x))) throw new Error(`chart colour ${c}`);
    return { rgb: [p[0]!, p[1]!, p[2]!].map((x) => Math.round(Math.min(255, Math.max(0, x)))) as [number, number, number], alpha: p.length > 3 && Number.isFinite(p[3]) ? p[3]! : 1 };
  }
  const n = NAMED[s];
  if (n) return { rgb: n, alpha: 1 };
  throw new Error(`chart colour ${c} is not one the PDF writer knows`);
}

const hex = (rgb: [number, number, number]) => '#' + rgb.map((v) => v.toString(16).padStart(2, '0')).join('');

// path operation codes in the flat buffer (coordinates already in the base system)
const MOVE = 0, LINE = 1, CURVE = 2, CLOSE = 3;

class PdfContext {
  fillStyle: unknown = '#000000';
  strokeStyle: unknown = '#000000';
  lineWidth = 1;
  lineCap = 'butt';
  lineJoin = 'miter';
  miterLimit = 10;
  globalAlpha = 1;
  globalCompositeOperation = 'source-over';
  font = '10px sans-serif';
  textAlign = 'start';
  textBaseline = 'alphabetic';
  lineDashOffset = 0;
  imageSmoothingEnabled = true;
  readonly pixelRatio = 1;
  private dash: number[] = [];
  private m: Mat;
  private stack: { m: Mat; dash: number[]; s: Record<string, unknown> }[] = [];
  private ops: number[] = [];
  /** current point (user coordinates), for arcs */
  private cx = NaN; private cy = NaN;

  constructor(private doc: Doc, private fonts: ChartFonts, m: Mat) { this.m = m; }

  // ---- state
  save(): void {
    this.stack.push({ m: [...this.m] as Mat, dash: this.dash, s: { fillStyle: this.fillStyle, strokeStyle: this.strokeStyle, lineWidth: this.lineWidth, lineCap: this.lineCap,
      lineJoin: this.lineJoin, miterLimit: this.miterLimit, globalAlpha: this.globalAlpha, font: this.font, textAlign: this.textAlign, lineDashOffset: this.lineDashOffset } });
    this.doc.save();
  }
  restore(): void {
    const t = this.stack.pop();
    if (!t) return;
    this.m = t.m; this.dash = t.dash;
    Object.assign(this, t.s);
    this.doc.restore();
  }
  translate(x: number, y: number): void { const m = this.m; m[4] += m[0] * x + m[2] * y; m[5] += m[1] * x + m[3] * y; }
  scale(sx: number, sy: number): void { const m = this.m; m[0] *= sx; m[1] *= sx; m[2] *= sy; m[3] *= sy; }
  rotate(a: number): void {
    const m = this.m, c = Math.cos(a), s = Math.sin(a);
    const [a0, b0, c0, d0] = m;
    m[0] = a0 * c + c0 * s; m[1] = b0 * c + d0 * s; m[2] = -a0 * s + c0 * c; m[3] = -b0 * s + d0 * c;
  }
  setLineDash(d: number[]): void { this.dash = d ?? []; }
  getLineDash(): number[] { return this.dash; }

  // ---- paths
  beginPath(): void { this.ops.length = 0; this.cx = this.cy = NaN; }
  private pt(op: number, x: number, y: number): void {
    const m = this.m;
    this.ops.push(op, m[0] * x + m[2] * y + m[4], m[1] * x + m[3] * y + m[5]);
  }
  moveTo(x: number, y: number): void { this.pt(MOVE, x, y); this.cx = x; this.cy = y; }
  lineTo(x: number, y: number): void {
    if (Number.isNaN(this.cx)) { this.moveTo(x, y); return; }
    this.pt(LINE, x, y); this.cx = x; this.cy = y;
  }
  bezierCurveTo(x1: number, y1: number, x2: number, y2: number, x: number, y: number): void {
    if (Number.isNaN(this.cx)) this.moveTo(x1, y1);
    const m = this.m;
    this.ops.push(CURVE, m[0] * x1 + m[2] * y1 + m[4], m[1] * x1 + m[3] * y1 + m[5], m[0] * x2 + m[2] * y2 + m[4], m[1] * x2 + m[3] * y2 + m[5], m[0] * x + m[2] * y + m[4], m[1] * x + m[3] * y + m[5]);
    this.cx = x; this.cy = y;
  }
  quadraticCurveTo(qx: number, qy: number, x: number, y: number): void {
    if (Number.isNaN(this.cx)) this.moveTo(qx, qy);
    const x0 = this.cx, y0 = this.cy;
    this.bezierCurveTo(x0 + (2 / 3) * (qx - x0), y0 + (2 / 3) * (qy - y0), x + (2 / 3) * (qx - x), y + (2 / 3) * (qy - y), x, y);
  }
  closePath(): void { this.ops.push(CLOSE); }
  rect(x: number, y: number, w: number, h: number): void {
    this.moveTo(x, y); this.lineTo(x + w, y); this.lineTo(x + w, y + h); this.lineTo(x, y + h); this.closePath();
    this.cx = x; this.cy = y;
  }
  /** canvas arc as cubic pieces of at most a quarter turn each (control length 4/3 · tan(Δ/4) · r) */
  arc(x: number, y: number, r: number, a0: number, a1: number, ccw = false): void {
    const tau = 2 * Math.PI;
    let d = a1 - a0;
    if (!ccw && d < 0) d = (d % tau) + tau;
    if (ccw && d > 0) d = (d % tau) - tau;
    if (Math.abs(a1 - a0) >= tau) d = ccw ? -tau : tau;
    const sx = x + r * Math.cos(a0), sy = y + r * Math.sin(a0);
    if (Number.isNaN(this.cx)) this.moveTo(sx, sy); else this.lineTo(sx, sy);
    if (r <= 0 || d === 0) return;
    const n = Math.ceil(Math.abs(d) / (Math.PI / 2) - 1e-9), step = d / n, k = (4 / 3) * Math.tan(step / 4);
    let a = a0;
    for (let i = 0; i < n; i++) {
      const c0 = Math.cos(a), s0 = Math.sin(a), c1 = Math.cos(a + step), s1 = Math.sin(a + step);
      this.bezierCurveTo(x + r * (c0 - k * s0), y + r * (s0 + k * c0), x + r * (c1 + k * s1), y + r * (s1 - k * c1), x + r * c1, y + r * s1);
      a += step;
    }
  }
  private emitPath(): boolean {
    const o = this.ops, doc = this.doc;
    if (o.length === 0) return false;
    for (let i = 0; i < o.length;) {
      const op = o[i]!;
      if (op === MOVE) { doc.moveTo(o[i + 1]!, o[i + 2]!); i += 3; }
      else if (op === LINE) { doc.lineTo(o[i + 1]!, o[i + 2]!); i += 3; }
      else if (op === CURVE) { doc.bezierCurveTo(o[i + 1]!, o[i + 2]!, o[i + 3]!, o[i + 4]!, o[i + 5]!, o[i + 6]!); i += 7; }
      else { doc.closePath(); i += 1; }
    }
    return true;
  }

  // ---- paint
  private paint(style: unknown, stroke: boolean): boolean {
    const doc = this.doc;
    if (style && typeof style === 'object' && (style as Gradient).kind === 'linear') {
      const g = style as Gradient, m = this.m;
      const grad = doc.linearGradient(g.x0, g.y0, g.x1, g.y1);
      for (const [off, col] of g.stops) {
        const c = cssColor(col);
        if (c) grad.stop(off, hex(c.rgb), c.alpha);
      }
      (grad as unknown as { setTransform(...m: number[]): void }).setTransform(m[0], m[1], m[2], m[3], m[4], m[5]);
      if (stroke) doc.strokeColor(grad, this.globalAlpha); else doc.fillColor(grad, this.globalAlpha);
      return true;
    }
    const c = cssColor(style);
    if (!c) return false;
    if (stroke) doc.strokeColor(c.rgb, c.alpha * this.globalAlpha); else doc.fillColor(c.rgb, c.alpha * this.globalAlpha);
    return true;
  }
  fill(): void {
    if (!this.paint(this.fillStyle, false)) return;
    if (this.emitPath()) this.doc.fill();
  }
  stroke(): void {
    if (!this.paint(this.strokeStyle, true)) return;
    const doc = this.doc;
    doc.lineWidth(this.lineWidth).lineCap(this.lineCap as 'butt').lineJoin(this.lineJoin as 'miter').miterLimit(this.miterLimit);
    if (this.dash.length) doc.dash(this.dash as unknown as number, { phase: this.lineDashOffset } as never); else doc.undash();
    if (this.emitPath()) doc.stroke();
  }
  clip(): void {
    if (this.emitPath()) this.doc.clip();
    else this.doc.rect(0, 0, 0, 0).clip();
  }
  createLinearGradient(x0: number, y0: number, x1: number, y1: number): Gradient {
    const stops: [number, string][] = [];
    return { kind: 'linear', x0, y0, x1, y1, stops, addColorStop: (o: number, c: string) => { stops.push([o, c]); } };
  }

  // ---- text
  private useFont(): number {
    const f = this.font;
    const size = parseFloat(/([\d.]+)px/.exec(f)?.[1] ?? '10');
    const bold = /\b(bold|bolder|[6-9]00)\b/.test(f);
    this.doc.font(bold ? this.fonts.bold : this.fonts.regular).fontSize(size);
    return size;
  }
  measureText(s: string): { width: number } {
    this.useFont();
    return { width: this.doc.widthOfString(s) };
  }
  fillText(s: string, x: number, y: number): void { this.text(s, x, y, false); }
  strokeText(s: string, x: number, y: number): void { this.text(s, x, y, true); }
  private text(s: string, x: number, y: number, stroke: boolean): void {
    if (s == null || s === '') return;
    const str = String(s);
    this.useFont();
    if (!this.paint(stroke ? this.strokeStyle : this.fillStyle, stroke)) return;
    const doc = this.doc, w = doc.widthOfString(str);
    const al = this.textAlign;
    const dx = al === 'center' ? -w / 2 : al === 'right' || al === 'end' ? -w : 0;
    const m = this.m;
    const opts = { baseline: 'alphabetic', lineBreak: false, textWidth: w, stroke, fill: !stroke } as unknown as PDFKit.Mixins.TextOptions;
    if (m[0] === 1 && m[1] === 0 && m[2] === 0 && m[3] === 1) doc.text(str, x + dx + m[4], y + m[5], opts);
    else {
      doc.save();
      doc.transform(m[0], m[1], m[2], m[3], m[4], m[5]);
      doc.text(str, x + dx, y, opts);
      doc.restore();
    }
  }

  drawImage(): void { throw new Error('image marks are not drawn into the PDF'); }
}

interface SceneItem { marktype?: string; clip?: unknown; group?: { width?: number; height?: number } }

/** vega's canvas renderer walk (CanvasRenderer.draw) with our context; no bounds culling. */
const walker = {
  draw(ctx: PdfContext, scene: SceneItem, _bounds: unknown, markTypes: unknown): void {
    const mark = (vega as unknown as { Marks: Record<string, { draw: (this: unknown, c: unknown, s: unknown, b: unknown, t: unknown) => void }> }).Marks[scene.marktype ?? ''];
    if (!mark) throw new Error(`unknown vega mark type ${scene.marktype}`);
    if (scene.clip) {
      ctx.save();
      if (typeof scene.clip === 'function') { ctx.beginPath(); (scene.clip as (c: PdfContext) => void)(ctx); ctx.clip(); }
      else { ctx.beginPath(); ctx.rect(0, 0, scene.group?.width ?? 0, scene.group?.height ?? 0); ctx.clip(); }
    }
    mark.draw.call(walker, ctx, scene, null, markTypes);
    if (scene.clip) ctx.restore();
  },
};

/**
 * Draw a rendered chart with its top-left corner at the origin of the document's current
 * coordinate system, one chart unit a PDF unit (scale the document first to resize it).
 * doc.x / doc.y are left as they were.
 */
export function drawChart(doc: Doc, chart: RenderedChart, fonts: ChartFonts): void {
  const { x, y } = doc;
  doc.save();
  // the chart's own box clips it, as an SVG viewport does in the HTML
  doc.rect(0, 0, chart.width, chart.height).clip();
  const ctx = new PdfContext(doc, fonts, [1, 0, 0, 1, 0, 0]);
  const bg = cssColor(chart.background);
  if (bg) doc.rect(0, 0, chart.width, chart.height).fill(bg.rgb);
  ctx.translate(chart.origin[0], chart.origin[1]);
  walker.draw(ctx, chart.scene as SceneItem, null, null);
  doc.restore();
  doc.x = x; doc.y = y;
}
