/**
 * Vega specs of our own for the dossier's two chart families: an x–y chart of layers
 * (lines, bands, points, vertical rules, shaded spans) and a heat map of rectangular cells.
 * Domains are computed here (not by vega) so log axes never see non-positive values and the
 * PDF can place natively drawn heat-map cells exactly where vega put its axes.
 */
import type { Spec } from 'vega';
import { DIVERGING, SEQUENTIAL, SERIES, INK, MUTED } from './palette.js';

export const FONT = 'DejaVu Sans';
export const PAD = { left: 64, right: 24, top: 12, bottom: 46 };

export type Layer =
  | { kind: 'line'; name: string; x: number[]; y: number[]; color?: string; dash?: boolean; points?: boolean }
  | { kind: 'band'; name: string; x: number[]; lower: number[]; upper: number[]; color?: string }
  | { kind: 'points'; name: string; x: number[]; y: number[]; color?: string; shape?: string; size?: number; label?: string[] }
  | { kind: 'vrule'; name: string; x: number[]; color?: string; label?: string[] }
  | { kind: 'span'; name: string; x0: number[]; x1: number[]; color: string[]; label?: string[] };

export interface XYOptions {
  width?: number; height?: number;
  xTitle: string; yTitle: string;
  logX?: boolean; logY?: boolean;
  xDomain?: [number, number]; yDomain?: [number, number];
  /** show a legend of the named line/point layers */
  legend?: boolean;
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

export function xySpec(layers: Layer[], o: XYOptions): { spec: Spec; width: number; height: number } {
  const width = o.width ?? 520, height = o.height ?? 240;
  const logX = !!o.logX, logY = !!o.logY;
  const xs: number[] = [], ys: number[] = [];
  for (const l of layers) {
    if (l.kind === 'line' || l.kind === 'points') { xs.push(...l.x); ys.push(...l.y); }
    if (l.kind === 'band') { xs.push(...l.x); ys.push(...l.lower, ...l.upper); }
    if (l.kind === 'vrule') xs.push(...l.x);
    if (l.kind === 'span') xs.push(...l.x0, ...l.x1);
  }
  const xDomain = o.xDomain ?? padDomain(finiteExtent(xs, logX), logX, 0.02);
  const yDomain = o.yDomain ?? padDomain(finiteExtent(ys, logY), logY);
  const data: Record<string, unknown>[] = [];
  const marks: Record<string, unknown>[] = [];
  const clip = true;
  layers.forEach((l, li) => {
    const name = `d${li}`;
    const color = ('color' in l && typeof l.color === 'string' ? l.color : undefined) ?? SERIES[li % SERIES.length]!;
    if (l.kind === 'line') {
      const values = l.x.map((x, i) => ({ x, y: l.y[i] })).filter((p) => keep(p.x, logX) && keep(p.y!, logY));
      data.push({ name, values });
      marks.push({ type: 'line', from: { data: name }, clip, encode: { enter: {
        x: { scale: 'x', field: 'x' }, y: { scale: 'y', field: 'y' }, stroke: { value: color }, strokeWidth: { value: 1.8 },
        ...(l.dash ? { strokeDash: { value: [5, 3] } } : {}) } } });
      if (l.points) marks.push({ type: 'symbol', from: { data: name }, clip, encode: { enter: {
        x: { scale: 'x', field: 'x' }, y: { scale: 'y', field: 'y' }, fill: { value: color }, size: { value: 18 } } } });
    } else if (l.kind === 'band') {
      const values = l.x.map((x, i) => ({ x, lo: l.lower[i], hi: l.upper[i] }))
        .filter((p) => keep(p.x, logX) && keep(p.lo!, logY) && keep(p.hi!, logY));
      data.push({ name, values });
      marks.push({ type: 'area', from: { data: name }, clip, encode: { enter: {
        x: { scale: 'x', field: 'x' }, y: { scale: 'y', field: 'lo' }, y2: { scale: 'y', field: 'hi' },
        fill: { value: color }, fillOpacity: { value: 0.22 } } } });
    } else if (l.kind === 'points') {
      const values = l.x.map((x, i) => ({ x, y: l.y[i], t: l.label?.[i] ?? '' })).filter((p) => keep(p.x, logX) && keep(p.y!, logY));
      data.push({ name, values });
      marks.push({ type: 'symbol', from: { data: name }, clip, encode: { enter: {
        x: { scale: 'x', field: 'x' }, y: { scale: 'y', field: 'y' }, shape: { value: l.shape ?? 'circle' },
        size: { value: l.size ?? 36 }, fill: { value: color }, stroke: { value: INK }, strokeWidth: { value: 0.6 } } } });
      if (l.label) marks.push({ type: 'text', from: { data: name }, encode: { enter: {
        x: { scale: 'x', field: 'x' }, y: { scale: 'y', field: 'y', offset: -8 }, text: { field: 't' }, align: { value: 'center' },
        fontSize: { value: 10 }, font: { value: FONT }, fill: { value: INK } } } });
    } else if (l.kind === 'vrule') {
      const values = l.x.map((x, i) => ({ x, t: l.label?.[i] ?? '' })).filter((p) => keep(p.x, logX));
      data.push({ name, values });
      marks.push({ type: 'rule', from: { data: name }, encode: { enter: {
        x: { scale: 'x', field: 'x' }, y: { value: 0 }, y2: { signal: 'height' }, stroke: { value: color },
        strokeWidth: { value: 1.4 }, strokeDash: { value: [4, 3] } } } });
      if (l.label) marks.push({ type: 'text', from: { data: name }, encode: { enter: {
        x: { scale: 'x', field: 'x', offset: 3 }, y: { value: 10 }, text: { field: 't' }, fontSize: { value: 10 },
        font: { value: FONT }, fill: { value: INK } } } });
    } else {
      const values = l.x0.map((x0, i) => ({ x0, x1: l.x1[i], c: l.color[i], t: l.label?.[i] ?? '' }));
      data.push({ name, values });
      marks.push({ type: 'rect', from: { data: name }, encode: { enter: {
        x: { scale: 'x', field: 'x0' }, x2: { scale: 'x', field: 'x1' }, y: { value: 0 }, y2: { signal: 'height' },
        fill: { field: 'c' }, fillOpacity: { value: 0.55 } } } });
      if (l.label) marks.push({ type: 'text', from: { data: name }, encode: { enter: {
        x: { signal: `(scale('x', datum.x0) + scale('x', datum.x1)) / 2` }, y: { signal: 'height', offset: -8 },
        text: { field: 't' }, align: { value: 'center' }, fontSize: { value: 10 }, font: { value: FONT }, fill: { value: INK } } } });
    }
  });
  const legendItems = layers.filter((l) => o.legend && (l.kind === 'line' || l.kind === 'points' || l.kind === 'band'));
  const scales: Record<string, unknown>[] = [
    { name: 'x', type: logX ? 'log' : 'linear', domain: xDomain, range: 'width', nice: false, zero: false },
    { name: 'y', type: logY ? 'log' : 'linear', domain: yDomain, range: 'height', nice: false, zero: false },
  ];
  const legends: Record<string, unknown>[] = [];
  if (legendItems.length > 0) {
    scales.push({ name: 'series', type: 'ordinal', domain: legendItems.map((l) => l.name),
      range: legendItems.map((l) => ('color' in l && l.color) || SERIES[layers.indexOf(l) % SERIES.length]!) });
    legends.push({ fill: 'series', orient: 'top-right', fillColor: '#ffffffdd', padding: 4, labelFont: FONT, labelFontSize: 10, labelLimit: 280, symbolType: 'square' });
  }
  const spec = {
    $schema: 'https://vega.github.io/schema/vega/v6.json',
    width, height, padding: PAD, autosize: 'none', background: '#ffffff',
    config: { text: { font: FONT }, axis: { labelFont: FONT, titleFont: FONT } },
    data, scales, legends,
    axes: [
      { orient: 'bottom', scale: 'x', title: o.xTitle, tickCount: logX ? 6 : 6, labelFontSize: 10, titleFontSize: 11, labelColor: INK, titleColor: INK, domainColor: MUTED, tickColor: MUTED, grid: true, gridColor: '#ebe7dc', labelOverlap: true, ...(logX ? { format: '~g' } : {}) },
      { orient: 'left', scale: 'y', title: o.yTitle, tickCount: 5, labelFontSize: 10, titleFontSize: 11, labelColor: INK, titleColor: INK, domainColor: MUTED, tickColor: MUTED, grid: true, gridColor: '#ebe7dc', labelOverlap: true, ...(logY ? { format: '~e' } : { format: '~g' }) },
    ],
    marks,
  };
  return { spec: spec as unknown as Spec, width: width + PAD.left + PAD.right, height: height + PAD.top + PAD.bottom };
}

export interface HeatCell { x0: number; x1: number; y0: number; y1: number; v: number; t?: string }

export interface HeatOptions {
  width?: number; height?: number;
  xTitle: string; yTitle: string; colorTitle: string;
  /** diverging (signed, symmetric domain) or sequential */
  diverging: boolean;
  /** print each cell's `t` in it (small matrices) */
  text?: boolean;
}

export interface HeatSpec {
  spec: Spec;
  /** the same chart with no cells: axes and legend only (the PDF draws cells natively) */
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
      { orient: 'bottom', scale: 'x', title: o.xTitle, tickCount: 5, labelFontSize: 10, titleFontSize: 11, labelColor: INK, titleColor: INK, labelOverlap: true, format: '~g' },
      { orient: 'left', scale: 'y', title: o.yTitle, tickCount: 5, labelFontSize: 10, titleFontSize: 11, labelColor: INK, titleColor: INK, labelOverlap: true, format: '~g' },
    ],
    legends: [{ fill: 'color', type: 'gradient', title: o.colorTitle, titleFontSize: 10, labelFontSize: 9, gradientLength: Math.min(200, height - 20), format: '.3~g', values: [colorDomain[0], mid, colorDomain[1]] }],
    marks: [
      { type: 'rect', from: { data: 'cells' }, encode: { enter: {
        x: { scale: 'x', field: 'x0' }, x2: { scale: 'x', field: 'x1' }, y: { scale: 'y', field: 'y0' }, y2: { scale: 'y', field: 'y1' },
        fill: { scale: 'color', field: 'v' } } } },
      ...(o.text ? [{ type: 'text', from: { data: 'cells' }, encode: { enter: {
        x: { signal: "(scale('x', datum.x0) + scale('x', datum.x1)) / 2" }, y: { signal: "(scale('y', datum.y0) + scale('y', datum.y1)) / 2", offset: 4 },
        text: { field: 't' }, align: { value: 'center' }, fontSize: { value: 12 }, font: { value: FONT }, fill: { value: INK } } } }] : []),
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
