/**
 * Vega specs of our own for the dossier's two chart families: an x–y chart of layers
 * (lines, bands, points, vertical rules, shaded spans) and a heat map of rectangular cells.
 * Domains are computed here (not by vega) so log axes never see non-positive values and the
 * raster of a heat map's cells can be placed exactly where vega put its axes.
 */
import type { Spec } from 'vega';
import { DIVERGING, SEQUENTIAL, SERIES, INK, MUTED } from './palette.js';

export const FONT = 'DejaVu Sans';
export const PAD = { left: 64, right: 24, top: 12, bottom: 46 };

export type Layer =
  | { kind: 'line'; name: string; x: number[]; y: number[]; color?: string; dash?: boolean; points?: boolean }
  | { kind: 'band'; name: string; x: number[]; lower: number[]; upper: number[]; color?: string }
  | { kind: 'points'; name: string; x: number[]; y: number[]; color?: string; shape?: string; size?: number; sizes?: number[]; opacity?: number; label?: string[] }
  | { kind: 'vrule'; name: string; x: number[]; color?: string; label?: string[] }
  | { kind: 'span'; name: string; x0: number[]; x1: number[]; color: string[]; label?: string[]; opacity?: number };

export interface XYOptions {
  width?: number; height?: number;
  xTitle: string; yTitle: string;
  logX?: boolean; logY?: boolean;
  xDomain?: [number, number]; yDomain?: [number, number];
  /** show a legend of the named line/point layers */
  legend?: boolean;
  /** no labels on the vertical axis (strip charts where y only separates the marks) */
  hideY?: boolean;
}

function finiteExtent(vals: number[], log: boolean): [number, number] | null {
  let lo = Infinity, hi = -Infinity;
  for (const v of vals) {
    if (!Number.isFinite(v) || (log && !(v > 0))) continue;
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  return lo <= hi ? [lo, hi] : null;
}

function padDomain(e: [number, number] | null, log: boolean, frac = 0.04): [number, number] {
  if (!e) return log ? [0.1, 1] : [0, 1];
  let [lo, hi] = e;
  if (log) {
    if (lo === hi) { lo /= 2; hi *= 2; }
    const r = Math.log10(hi / lo) * frac;
    return [lo / 10 ** r, hi * 10 ** r];
  }
  if (lo === hi) { const d = Math.abs(lo) > 0 ? Math.abs(lo) * 0.1 : 1; return [lo - d, hi + d]; }
  const d = (hi - lo) * frac;
  return [lo - d, hi + d];
}

/** Values that survive the axis (finite, positive on a log axis). */
function keep(v: number, log: boolean): boolean { return Number.isFinite(v) && (!log || v > 0); }

interface Frame { top: number; bottom: number; yScale: string; logY: boolean; logX: boolean; prefix: string }

/** Data and marks of a list of layers drawn between `top` and `bottom` (pixels) on scale x / yScale. */
function emitLayers(layers: Layer[], f: Frame, data: Record<string, unknown>[], marks: Record<string, unknown>[]): void {
  const { logX, logY } = f;
  const X = { scale: 'x' }, Y = { scale: f.yScale };
  layers.forEach((l, li) => {
    const name = `${f.prefix}d${li}`;
    const color = ('color' in l && typeof l.color === 'string' ? l.color : undefined) ?? SERIES[li % SERIES.length]!;
    if (l.kind === 'line') {
      const values = l.x.map((x, i) => ({ x, y: l.y[i] })).filter((p) => keep(p.x, logX) && keep(p.y!, logY));
      data.push({ name, values });
      marks.push({ type: 'line', from: { data: name }, clip: true, encode: { enter: {
        x: { ...X, field: 'x' }, y: { ...Y, field: 'y' }, stroke: { value: color }, strokeWidth: { value: 1.8 },
        ...(l.dash ? { strokeDash: { value: [5, 3] } } : {}) } } });
      if (l.points) marks.push({ type: 'symbol', from: { data: name }, clip: true, encode: { enter: {
        x: { ...X, field: 'x' }, y: { ...Y, field: 'y' }, fill: { value: color }, size: { value: 18 } } } });
    } else if (l.kind === 'band') {
      const values = l.x.map((x, i) => ({ x, lo: l.lower[i], hi: l.upper[i] }))
        .filter((p) => keep(p.x, logX) && keep(p.lo!, logY) && keep(p.hi!, logY));
      data.push({ name, values });
      marks.push({ type: 'area', from: { data: name }, clip: true, encode: { enter: {
        x: { ...X, field: 'x' }, y: { ...Y, field: 'lo' }, y2: { ...Y, field: 'hi' },
        fill: { value: color }, fillOpacity: { value: 0.22 } } } });
    } else if (l.kind === 'points') {
      const values = l.x.map((x, i) => ({ x, y: l.y[i], t: l.label?.[i] ?? '', s: l.sizes?.[i] ?? l.size ?? 36 }))
        .filter((p) => keep(p.x, logX) && keep(p.y!, logY));
      data.push({ name, values });
      marks.push({ type: 'symbol', from: { data: name }, clip: true, encode: { enter: {
        x: { ...X, field: 'x' }, y: { ...Y, field: 'y' }, shape: { value: l.shape ?? 'circle' },
        size: { field: 's' }, fill: { value: color }, fillOpacity: { value: l.opacity ?? 1 }, stroke: { value: INK }, strokeWidth: { value: 0.6 } } } });
      if (l.label) marks.push({ type: 'text', from: { data: name }, encode: { enter: {
        x: { ...X, field: 'x' }, y: { ...Y, field: 'y', offset: -9 }, text: { field: 't' }, align: { value: 'center' },
        fontSize: { value: 10 }, font: { value: FONT }, fill: { value: INK } } } });
    } else if (l.kind === 'vrule') {
      const values = l.x.map((x, i) => ({ x, t: l.label?.[i] ?? '' })).filter((p) => keep(p.x, logX));
      data.push({ name, values });
      marks.push({ type: 'rule', from: { data: name }, encode: { enter: {
        x: { ...X, field: 'x' }, y: { value: f.top }, y2: { value: f.bottom }, stroke: { value: color },
        strokeWidth: { value: 1.4 }, strokeDash: { value: [4, 3] } } } });
      if (l.label) marks.push({ type: 'text', from: { data: name }, encode: { enter: {
        x: { ...X, field: 'x' }, dx: { signal: "scale('x', datum.x) > width * 0.6 ? -3 : 3" }, align: { signal: "scale('x', datum.x) > width * 0.6 ? 'right' : 'left'" },
        y: { value: f.top + 10 }, text: { field: 't' }, fontSize: { value: 10 },
        font: { value: FONT }, fill: { value: INK } } } });
    } else {
      const values = l.x0.map((x0, i) => ({ x0, x1: l.x1[i], c: l.color[i], t: l.label?.[i] ?? '' }));
      data.push({ name, values });
      marks.push({ type: 'rect', from: { data: name }, encode: { enter: {
        x: { ...X, field: 'x0' }, x2: { ...X, field: 'x1' }, y: { value: f.top }, y2: { value: f.bottom },
        fill: { field: 'c' }, fillOpacity: { value: l.opacity ?? 0.55 } } } });
      if (l.label) marks.push({ type: 'text', from: { data: name }, encode: { enter: {
        x: { signal: `(scale('x', datum.x0) + scale('x', datum.x1)) / 2` }, y: { value: f.bottom - 8 },
        text: { field: 't' }, align: { value: 'center' }, fontSize: { value: 10 }, font: { value: FONT }, fill: { value: INK } } } });
    }
  });
}

function extentOf(layers: Layer[]): { xs: number[]; ys: number[] } {
  const xs: number[] = [], ys: number[] = [];
  for (const l of layers) {
    if (l.kind === 'line' || l.kind === 'points') { xs.push(...l.x); ys.push(...l.y); }
    if (l.kind === 'band') { xs.push(...l.x); ys.push(...l.lower, ...l.upper); }
    if (l.kind === 'vrule') xs.push(...l.x);
    if (l.kind === 'span') xs.push(...l.x0, ...l.x1);
  }
  return { xs, ys };
}

const axisStyle = { labelFontSize: 10, titleFontSize: 11, labelColor: INK, titleColor: INK, domainColor: MUTED, tickColor: MUTED, grid: true, gridColor: '#ebe7dc', labelOverlap: true };

function legendOf(layers: Layer[], scales: Record<string, unknown>[], legends: Record<string, unknown>[]): void {
  const items = layers.filter((l) => l.kind === 'line' || l.kind === 'points' || l.kind === 'band');
  if (items.length === 0) return;
  scales.push({ name: 'series', type: 'ordinal', domain: items.map((l) => l.name),
    range: items.map((l) => ('color' in l && l.color) || SERIES[layers.indexOf(l) % SERIES.length]!) });
  legends.push({ fill: 'series', orient: 'bottom', direction: 'horizontal', columns: 2, columnPadding: 18, rowPadding: 3, offset: 40,
    labelFont: FONT, labelFontSize: 10, labelLimit: 240, symbolType: 'square' });
}

/** Rows of a legend of `n` entries below the plot (two columns; a row takes ~20 px: 10-px symbol and label, row padding, line gap). */
function legendRows(layers: Layer[]): number {
  return Math.ceil(layers.filter((l) => l.kind === 'line' || l.kind === 'points' || l.kind === 'band').length / 2);
}

export function xySpec(layers: Layer[], o: XYOptions): { spec: Spec; width: number; height: number } {
  const width = o.width ?? 520, height = o.height ?? 240;
  const logX = !!o.logX, logY = !!o.logY;
  const { xs, ys } = extentOf(layers);
  const xDomain = o.xDomain ?? padDomain(finiteExtent(xs, logX), logX, 0.02);
  const yDomain = o.yDomain ?? padDomain(finiteExtent(ys, logY), logY);
  const data: Record<string, unknown>[] = [];
  const marks: Record<string, unknown>[] = [];
  emitLayers(layers, { top: 0, bottom: height, yScale: 'y', logX, logY, prefix: '' }, data, marks);
  const scales: Record<string, unknown>[] = [
    { name: 'x', type: logX ? 'log' : 'linear', domain: xDomain, range: 'width', nice: false, zero: false },
    { name: 'y', type: logY ? 'log' : 'linear', domain: yDomain, range: 'height', nice: false, zero: false },
  ];
  const legends: Record<string, unknown>[] = [];
  if (o.legend) legendOf(layers, scales, legends);
  const pad = { ...PAD, bottom: PAD.bottom + (o.legend ? 20 * legendRows(layers) + 6 : 0) };
  const spec = {
    $schema: 'https://vega.github.io/schema/vega/v6.json',
    width, height, padding: pad, autosize: 'none', background: '#ffffff',
    config: { text: { font: FONT }, axis: { labelFont: FONT, titleFont: FONT } },
    data, scales, legends,
    axes: [
      { orient: 'bottom', scale: 'x', title: o.xTitle, tickCount: 6, ...axisStyle, ...(logX ? { format: '~g' } : {}) },
      { orient: 'left', scale: 'y', title: o.yTitle, tickCount: o.hideY ? 0 : 5, ...axisStyle, ...(o.hideY ? { labels: false, ticks: false, grid: false } : logY ? { format: '~e' } : {}) },
    ],
    marks,
  };
  return { spec: spec as unknown as Spec, width: width + pad.left + pad.right, height: height + pad.top + pad.bottom };
}

const SPAD = { ...PAD, left: 84 };

export interface Panel { layers: Layer[]; yTitle: string; yDomain?: [number, number] }

/**
 * Panels stacked over one shared x axis (the bottom panel carries the x labels): several
 * profiles along the same domain, each on its own vertical scale.
 */
export function stackSpec(panels: Panel[], o: { xTitle: string; xDomain?: [number, number]; width?: number; panelHeight?: number; gap?: number }):
  { spec: Spec; width: number; height: number } {
  const width = o.width ?? 520, ph = o.panelHeight ?? 110, gap = o.gap ?? 14;
  const height = panels.length * ph + (panels.length - 1) * gap;
  const all = panels.flatMap((p) => p.layers);
  const xDomain = o.xDomain ?? padDomain(finiteExtent(extentOf(all).xs, false), false, 0.02);
  const data: Record<string, unknown>[] = [], marks: Record<string, unknown>[] = [], axes: Record<string, unknown>[] = [];
  const scales: Record<string, unknown>[] = [{ name: 'x', type: 'linear', domain: xDomain, range: 'width', nice: false, zero: false }];
  panels.forEach((p, i) => {
    const top = i * (ph + gap), bottom = top + ph;
    const yd = p.yDomain ?? padDomain(finiteExtent(extentOf(p.layers).ys, false), false, 0.08);
    scales.push({ name: `y${i}`, type: 'linear', domain: yd, range: [bottom, top], nice: false, zero: false });
    emitLayers(p.layers, { top, bottom, yScale: `y${i}`, logX: false, logY: false, prefix: `p${i}` }, data, marks);
    marks.push({ type: 'rect', encode: { enter: { x: { value: 0 }, x2: { signal: 'width' }, y: { value: top }, y2: { value: bottom }, stroke: { value: MUTED }, strokeWidth: { value: 0.6 } } } });
    axes.push({ orient: 'left', scale: `y${i}`, title: p.yTitle, tickCount: 3, ...axisStyle, titleFontSize: 10, titleLimit: ph });
  });
  axes.push({ orient: 'bottom', scale: 'x', title: o.xTitle, tickCount: 6, ...axisStyle, grid: false });
  const spec = {
    $schema: 'https://vega.github.io/schema/vega/v6.json',
    width, height, padding: SPAD, autosize: 'none', background: '#ffffff',
    config: { text: { font: FONT }, axis: { labelFont: FONT, titleFont: FONT } },
    data, scales, axes, marks,
  };
  return { spec: spec as unknown as Spec, width: width + SPAD.left + SPAD.right, height: height + SPAD.top + SPAD.bottom };
}

/** Share of the colour ramp (from its light end) beyond which cell text is drawn light. */
export const DARK_FROM = 0.6;

/** Whether a cell's value falls on the dark part of the ramp (light text then). */
export function cellTextOnDark(v: number, colorDomain: [number, number], diverging: boolean): boolean {
  const [lo, hi] = colorDomain, mid = (lo + hi) / 2;
  const t = diverging ? Math.abs(v - mid) / ((hi - mid) || 1) : (v - lo) / ((hi - lo) || 1);
  return t > DARK_FROM;
}

export interface HeatCell { x0: number; x1: number; y0: number; y1: number; v: number; t?: string; t2?: string }

export interface HeatOptions {
  width?: number; height?: number;
  xTitle: string; yTitle: string; colorTitle: string;
  /** diverging (signed, symmetric domain) or sequential */
  diverging: boolean;
  /** print each cell's `t` (and `t2` under it) in it (small matrices) */
  text?: boolean;
  /** matrix axes: integer ticks 1 … n; rows numbered from the top (cells of row i span y ∈ [n − i − ½, n − i + ½]) */
  matrixAxes?: { rows: number; cols: number };
}

export interface HeatSpec {
  spec: Spec;
  /** the same chart with no cells: axes, legend and border only (the cells go in as a raster, src/report/raster.ts) */
  frame: Spec;
  width: number; height: number;
  plot: { x: number; y: number; width: number; height: number };
  xDomain: [number, number]; yDomain: [number, number];
  colorDomain: [number, number];
  stops: readonly string[];
  cells: HeatCell[];
}

/** Cell edges from centres: midpoints between neighbours, half-steps at the ends. */
export function edges(c: number[]): number[] {
  const n = c.length;
  if (n === 1) return [c[0]! - 0.5, c[0]! + 0.5];
  const e = [c[0]! - (c[1]! - c[0]!) / 2];
  for (let i = 0; i < n - 1; i++) e.push((c[i]! + c[i + 1]!) / 2);
  e.push(c[n - 1]! + (c[n - 1]! - c[n - 2]!) / 2);
  return e;
}

export function heatSpec(cells: HeatCell[], o: HeatOptions): HeatSpec {
  const width = o.width ?? 300, height = o.height ?? 300;
  let lo = Infinity, hi = -Infinity;
  let x0 = Infinity, x1 = -Infinity, y0 = Infinity, y1 = -Infinity;
  for (const c of cells) {
    if (Number.isFinite(c.v)) { lo = Math.min(lo, c.v); hi = Math.max(hi, c.v); }
    x0 = Math.min(x0, c.x0); x1 = Math.max(x1, c.x1); y0 = Math.min(y0, c.y0); y1 = Math.max(y1, c.y1);
  }
  if (!(lo <= hi)) { lo = -1; hi = 1; }
  let colorDomain: [number, number];
  if (o.diverging) { const m = Math.max(Math.abs(lo), Math.abs(hi)) || 1; colorDomain = [-m, m]; }
  else colorDomain = lo === hi ? [lo - 1, hi + 1] : [lo, hi];
  if (!(x0 < x1)) { x0 = 0; x1 = 1; }
  if (!(y0 < y1)) { y0 = 0; y1 = 1; }
  const stops = o.diverging ? DIVERGING : SEQUENTIAL;
  const mid = (colorDomain[0] + colorDomain[1]) / 2;
  // light text on the dark end of the ramp (same rule as the PDF: cellTextOnDark)
  const darkSignal = `cellDark(datum.v) ? '#ffffff' : '${INK}'`.replace('cellDark(datum.v)', `(${o.diverging ? 'abs(datum.v - ' + mid + ')' : '(datum.v - ' + colorDomain[0] + ')'} / ${o.diverging ? (colorDomain[1] - mid) || 1 : (colorDomain[1] - colorDomain[0]) || 1}) > ${DARK_FROM}`);
  const mk = (withCells: boolean): Spec => ({
    $schema: 'https://vega.github.io/schema/vega/v6.json',
    width, height, padding: { ...PAD, right: 96 }, autosize: 'none', background: '#ffffff',
    config: { text: { font: FONT }, axis: { labelFont: FONT, titleFont: FONT }, legend: { labelFont: FONT, titleFont: FONT } },
    data: [{ name: 'cells', values: withCells ? cells.map((c) => ({ ...c, v: Number.isFinite(c.v) ? c.v : null })) : [] }],
    scales: [
      { name: 'x', type: 'linear', domain: [x0, x1], range: 'width', nice: false, zero: false },
      { name: 'y', type: 'linear', domain: [y0, y1], range: 'height', nice: false, zero: false },
      { name: 'color', type: 'linear', domain: [colorDomain[0], mid, colorDomain[1]], range: [...stops], interpolate: 'rgb', clamp: true },
    ],
    axes: [
      { orient: 'bottom', scale: 'x', title: o.xTitle, labelFontSize: 10, titleFontSize: 11, labelColor: INK, titleColor: INK, labelOverlap: true,
        ...(o.matrixAxes ? { values: Array.from({ length: o.matrixAxes.cols }, (_, j) => j + 1), format: 'd' } : { tickCount: 5 }) },
      { orient: 'left', scale: 'y', title: o.yTitle, labelFontSize: 10, titleFontSize: 11, labelColor: INK, titleColor: INK, labelOverlap: true,
        ...(o.matrixAxes ? { values: Array.from({ length: o.matrixAxes.rows }, (_, i) => i + 1),
          encode: { labels: { update: { text: { signal: `format(${o.matrixAxes.rows + 1} - datum.value, 'd')` } } } } } : { tickCount: 5 }) },
    ],
    legends: [{ fill: 'color', type: 'gradient', title: o.colorTitle, titleFontSize: 10, labelFontSize: 9, gradientLength: Math.min(200, height - 20), format: '.3~g', values: [colorDomain[0], mid, colorDomain[1]] }],
    marks: [
      { type: 'rect', from: { data: 'cells' }, encode: { enter: {
        x: { scale: 'x', field: 'x0' }, x2: { scale: 'x', field: 'x1' }, y: { scale: 'y', field: 'y0' }, y2: { scale: 'y', field: 'y1' },
        fill: { scale: 'color', field: 'v' } } } },
      ...(o.text ? [{ type: 'text', from: { data: 'cells' }, encode: { enter: {
        x: { signal: "(scale('x', datum.x0) + scale('x', datum.x1)) / 2" }, y: { signal: "(scale('y', datum.y0) + scale('y', datum.y1)) / 2", offset: 4 },
        text: { field: 't' }, align: { value: 'center' }, fontSize: { value: 12 }, font: { value: FONT }, fill: { signal: darkSignal } } } },
        { type: 'text', from: { data: 'cells' }, encode: { enter: {
        x: { signal: "(scale('x', datum.x0) + scale('x', datum.x1)) / 2" }, y: { signal: "(scale('y', datum.y0) + scale('y', datum.y1)) / 2", offset: 18 },
        text: { signal: "datum.t2 || ''" }, align: { value: 'center' }, fontSize: { value: 9 }, font: { value: FONT }, fill: { signal: darkSignal } } } }] : []),
      { type: 'rect', encode: { enter: { x: { value: 0 }, y: { value: 0 }, x2: { signal: 'width' }, y2: { signal: 'height' }, stroke: { value: MUTED }, strokeWidth: { value: 0.8 } } } },
    ],
  } as unknown as Spec);
  return {
    spec: mk(true), frame: mk(false),
    width: width + PAD.left + 96, height: height + PAD.top + PAD.bottom,
    plot: { x: PAD.left, y: PAD.top, width, height },
    xDomain: [x0, x1], yDomain: [y0, y1], colorDomain, stops, cells,
  };
}
