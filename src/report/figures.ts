/**
 * The dossier's figures. Each analysis figure is drawn from the plot data that analysis wrote
 * into findings.evidence[key].plot (field names as the analyses in src/analyses/*.ts write
 * them); the kernel figures from the kernel itself. Where the data a figure needs are missing,
 * the section gets a plain note instead of a stand-in chart. A figure carries its vega spec, an
 * alt text that says what it shows in words, and the numbers behind it (offered as a download
 * in the HTML).
 */
import type { Kernel, Findings } from '../types.js';
import { xySpec, heatSpec, stackSpec, edges, type Layer, type HeatCell, type HeatSpec, type Panel } from './charts.js';
import { heatGrid, samePoints, symParts, slice2d, sliceSources, spreadIndices, type HeatGrid } from './display.js';
import { CHARACTER_COLOURS, SERIES, MUTED } from './palette.js';
import type { Spec } from 'vega';
import { fmt, pct } from './text.js';

export interface Figure {
  id: string;
  title: string;
  caption: string;
  alt: string;
  chart: { kind: 'xy'; spec: Spec; width: number; height: number } | { kind: 'heat'; heat: HeatSpec; width: number; height: number };
  data: Record<string, unknown>;
}

export interface Labels { x: string; u: string; f: string }

/** The largest grid side shown in a heat map (stack notes: ≤ ~60 × 60 keeps the SVG small). */
export const HEAT_MAX = 56;

function cellsOf(g: HeatGrid): HeatCell[] {
  const ex = edges(g.colCoord), ey = edges(g.rowCoord);
  const cells: HeatCell[] = [];
  for (let i = 0; i < g.rowCoord.length; i++) for (let j = 0; j < g.colCoord.length; j++) {
    cells.push({ x0: ex[j]!, x1: ex[j + 1]!, y0: ey[i]!, y1: ey[i + 1]!, v: g.values[i]![j]! });
  }
  return cells;
}

function coord1(k: Kernel, side: 'in' | 'out'): Float64Array {
  return (side === 'in' ? k.pointsIn : k.pointsOut).data;
}

/** Heat maps of G (1-D scalar: also its symmetric part; systems: each block). */
export function kernelFigures(k: Kernel, L: Labels): { main: Figure[]; sym: Figure | null } {
  const main: Figure[] = [];
  let sym: Figure | null = null;
  if (k.dimension !== 1) return { main, sym };
  const xo = coord1(k, 'out'), xi = coord1(k, 'in');
  const nOut = k.pointsOut.rows, nIn = k.pointsIn.rows;
  const co = k.components.out, ci = k.components.in;
  const axes = { xTitle: `source s (${L.x})`, yTitle: `observation x (${L.x})` };
  const mk = (id: string, title: string, caption: string, alt: string, g: HeatGrid, colorTitle: string): Figure => {
    const heat = heatSpec(cellsOf(g), { ...axes, colorTitle, diverging: true, width: co * ci > 1 ? 220 : 300, height: co * ci > 1 ? 220 : 300 });
    return { id, title, caption, alt, chart: { kind: 'heat', heat, width: heat.width, height: heat.height },
      data: { observation_x: g.rowCoord, source_s: g.colCoord, values: g.values, note: `every ${nOut > HEAT_MAX ? 'k-th' : ''} point of the fitted kernel, shown as fitted (no smoothing)`.replace('every  point', 'every point') } };
  };
  const max = co * ci > 1 ? Math.floor(HEAT_MAX / 1.5) : HEAT_MAX;
  for (let a = 0; a < co; a++) for (let b = 0; b < ci; b++) {
    const g = heatGrid(k.G, xo, xi, max, { rowOffset: a * nOut, colOffset: b * nIn, rows: nOut, cols: nIn });
    const block = co * ci > 1 ? ` block ${a + 1}←${b + 1}` : '';
    main.push(mk(`fig-kernel${co * ci > 1 ? `-${a + 1}-${b + 1}` : ''}`, `Fitted Green's function${block}`,
      `G(x, s)${block ? ` of output component ${a + 1} driven by input component ${b + 1}` : ''}: response at x to a unit point source at s, in ${L.u} per (${L.f} · ${L.x}). ${g.rowCoord.length} × ${g.colCoord.length} of ${nOut} × ${nIn} points shown.`,
      `Heat map of the fitted kernel${block}; horizontal axis source position s, vertical axis observation position x, colour the kernel value from ${fmt(Math.min(...g.values.flat()))} to ${fmt(Math.max(...g.values.flat()))}.`, g, 'G'));
  }
  if (samePoints(k) && ci === 1) {
    const { sym: S } = symParts(k.G);
    const gs = heatGrid(S, xo, xi, HEAT_MAX);
    sym = mk('fig-kernel-sym', 'Symmetric part', '(G(x, s) + G(s, x)) / 2: the part a self-adjoint operator would have (the antisymmetric rest is drawn in the self-adjointness section).',
      `Heat map of the symmetric part of the kernel, values ${fmt(Math.min(...gs.values.flat()))} to ${fmt(Math.max(...gs.values.flat()))}.`, gs, '(G+Gᵀ)/2');
  }
  return { main, sym };
}

/** u_h along the domain with a band (1-D), or binned over the plane (2-D). */
export function homogeneousFigure(k: Kernel, relErr: number | null, L: Labels, pointwise?: { lower?: unknown; upper?: unknown } | null): Figure | null {
  const h = k.homogeneous;
  if (!h) return null;
  const n = k.pointsOut.rows, co = k.components.out;
  if (k.dimension === 1) {
    const layers: Layer[] = [];
    const data: Record<string, unknown> = {};
    let bandNote = 'no uncertainty estimate of u_h was found (kernel/fit.json gives none), so no band is drawn';
    for (let c = 0; c < co; c++) {
      const x = Array.from(k.pointsOut.data), y = Array.from(h.subarray(c * n, (c + 1) * n));
      const idx = spreadIndices(n, 200);
      const xs = idx.map((i) => x[i]!), ys = idx.map((i) => y[i]!);
      let lower: number[] | null = null, upper: number[] | null = null;
      const pl = pointwise && Array.isArray(pointwise.lower) && Array.isArray(pointwise.upper) && pointwise.lower.length === n * co && pointwise.upper.length === n * co
        ? { lo: pointwise.lower as number[], hi: pointwise.upper as number[] } : null;
      if (pl) {
        // the diagnosis' pointwise band: ±2 standard deviations of u_h over the resampled fits
        lower = idx.map((i) => pl.lo[c * n + i]!); upper = idx.map((i) => pl.hi[c * n + i]!);
        bandNote = 'band: ± 2 standard deviations of u_h over the resampled fits, point by point';
      } else if (relErr !== null && Number.isFinite(relErr) && relErr >= 0) {
        // the fit states a relative error of the whole vector u_h: ‖δu_h‖ / ‖u_h‖, i.e. an RMS error of relErr × RMS(u_h)
        const rms = Math.sqrt(y.reduce((s, v) => s + v * v, 0) / Math.max(1, y.length));
        lower = ys.map((v) => v - 2 * relErr * rms); upper = ys.map((v) => v + 2 * relErr * rms);
        bandNote = `band: ± 2 × the fit's predicted RMS error of u_h (relative error ${fmt(relErr)} of its RMS ${fmt(rms)}), the same width everywhere — the fit reports no pointwise error`;
      }
      const name = co > 1 ? `u_h, component ${c + 1}` : 'u_h';
      if (lower && upper) layers.push({ kind: 'band', name: pl ? `${name} ± 2 sd` : `${name} ± 2 RMS error`, x: xs, lower, upper, color: SERIES[c]! });
      layers.push({ kind: 'line', name, x: xs, y: ys, color: SERIES[c]! });
      data[co > 1 ? `component_${c + 1}` : 'u_h'] = { x: xs, value: ys, lower, upper };
    }
    const { spec, width, height } = xySpec(layers, { xTitle: `x (${L.x})`, yTitle: `u_h (${L.u})`, legend: co > 1 || layers.length > 1 });
    return { id: 'fig-homogeneous', title: 'Homogeneous part', caption: `u_h(x): the response with no forcing (boundary- or offset-driven). ${bandNote[0]!.toUpperCase()}${bandNote.slice(1)}.`,
      alt: `Line plot of the homogeneous part u_h against x${co > 1 ? ` for ${co} components` : ''}, from ${fmt(Math.min(...Array.from(h)))} to ${fmt(Math.max(...Array.from(h)))}; ${bandNote}.`,
      chart: { kind: 'xy', spec, width, height }, data: { ...data, band: bandNote } };
  }
  // 2-D: bin u_h (component 1) onto a grid
  const fake: Kernel = { ...k, G: { rows: n, cols: 1, data: h.subarray(0, n) }, pointsIn: { rows: 1, cols: 2, data: new Float64Array(2) }, components: { in: 1, out: 1 } };
  const sl = slice2d(fake, 0, 36);
  const cells = sl.x.map((x, i) => ({ x0: x - sl.dx / 2, x1: x + sl.dx / 2, y0: sl.y[i]! - sl.dy / 2, y1: sl.y[i]! + sl.dy / 2, v: sl.value[i]! }));
  const heat = heatSpec(cells, { xTitle: `x (${L.x})`, yTitle: `y (${L.x})`, colorTitle: 'u_h', diverging: true, width: 280, height: 280 });
  return { id: 'fig-homogeneous', title: 'Homogeneous part', caption: `u_h over the plane (mean of the output points in each cell)${relErr !== null ? `; the fit predicts a relative error of ${fmt(relErr)}` : ''}.`,
    alt: `Heat map of the homogeneous part over the plane, values ${fmt(Math.min(...sl.value))} to ${fmt(Math.max(...sl.value))}.`,
    chart: { kind: 'heat', heat, width: heat.width, height: heat.height }, data: { x: sl.x, y: sl.y, u_h: sl.value } };
}

// ------------------------------------------------------------------ reading plot data

type Obj = Record<string, unknown>;

function obj(v: unknown): Obj | null { return v && typeof v === 'object' && !Array.isArray(v) ? v as Obj : null; }
function num(v: unknown): number | null { return typeof v === 'number' && Number.isFinite(v) ? v : null; }
/** A numeric array (null entries become NaN); null unless it has at least one finite entry. */
function nums(v: unknown): number[] | null {
  if (!Array.isArray(v) || v.length === 0) return null;
  const out = v.map((e) => (typeof e === 'number' ? e : Number.NaN));
  return out.some(Number.isFinite) ? out : null;
}
function matrix(v: unknown): number[][] | null {
  if (!Array.isArray(v) || v.length === 0 || !v.every((r) => Array.isArray(r) && r.length === (v[0] as unknown[]).length)) return null;
  return (v as unknown[][]).map((r) => r.map((e) => (typeof e === 'number' ? e : Number.NaN)));
}
function plotOf(F: Findings, key: string): Obj | null { return obj(F.evidence?.[key]?.plot); }

/** What a section shows: its figures, or a note saying why there is none. */
export interface SectionFigures { figures: Figure[]; note: string | null }
const none = (note: string): SectionFigures => ({ figures: [], note });
const some = (figures: (Figure | null)[], note: string): SectionFigures => {
  const f = figures.filter((x): x is Figure => !!x);
  return f.length ? { figures: f, note: null } : none(note);
};

/** Quantile of the finite values (linear interpolation). */
function quantile(v: number[], q: number): number {
  const a = v.filter(Number.isFinite).sort((x, y) => x - y);
  if (a.length === 0) return Number.NaN;
  const t = q * (a.length - 1), i = Math.floor(t);
  return i + 1 < a.length ? a[i]! + (t - i) * (a[i + 1]! - a[i]!) : a[i]!;
}

/**
 * A vertical range that shows the estimate and as much of its band as is useful: when the band
 * is more than four times as tall as the estimate's own range, it is cut at the plot's edge
 * (said in the caption) so that the estimate stays readable.
 */
function bandDomain(value: number[], lower: number[] | null, upper: number[] | null): { domain: [number, number]; clipped: boolean } {
  const v = value.filter(Number.isFinite);
  let lo = Math.min(...v), hi = Math.max(...v);
  const span = Math.max(hi - lo, 0.25 * Math.max(Math.abs(lo), Math.abs(hi)), 1e-12);
  const bl = lower ? Math.min(...lower.filter(Number.isFinite)) : lo, bh = upper ? Math.max(...upper.filter(Number.isFinite)) : hi;
  const cl = Math.max(bl, lo - 2 * span), ch = Math.min(bh, hi + 2 * span);
  const clipped = cl > bl || ch < bh;
  lo = Math.min(lo, cl); hi = Math.max(hi, ch);
  const pad = 0.06 * (hi - lo || 1);
  return { domain: [lo - pad, hi + pad], clipped };
}

/** Replicate values as a strip of dots against the measured value (a vertical rule). */
function stripLayers(replicates: number[], measured: number | null, names: { reps: string; measured: string }, extra: Layer[] = []): Layer[] {
  const r = replicates.filter(Number.isFinite);
  // deterministic vertical spread so equal values stay visible
  const ys = r.map((_, i) => ((i * 7) % 11) / 10 - 0.5);
  const layers: Layer[] = [{ kind: 'points', name: names.reps, x: r, y: ys, color: SERIES[2]!, size: 30, opacity: 0.7 }, ...extra];
  if (measured !== null) layers.push({ kind: 'vrule', name: names.measured, x: [measured], label: [`${names.measured} ${fmt(measured)}`], color: SERIES[1]! });
  return layers;
}

function stripDomain(values: number[]): [number, number] {
  const v = values.filter(Number.isFinite);
  const lo = Math.min(...v), hi = Math.max(...v);
  const pad = 0.08 * (hi - lo || Math.abs(hi) || 1);
  return [lo - pad, hi + pad * 3];
}

// ------------------------------------------------------------------ per analysis

/** self_adjoint: the antisymmetric part the analysis measured, and its defect against the replicates'. */
export function adjointFigures(F: Findings, k: Kernel | null, L: Labels): SectionFigures {
  const p = plotOf(F, 'self_adjoint');
  const out: Figure[] = [];
  const vals = matrix(p?.values), rows = nums(p?.rows), cols = nums(p?.cols);
  if (vals && rows && cols && rows.length === vals.length && cols.length === vals[0]!.length) {
    // indices refer to the analysis' square view: the kernel's own points when they coincide and were not interpolated
    const onPoints = !!k && F.self_adjoint.interpolated !== true && k.components.in === 1 && samePoints(k) && k.dimension === 1 &&
      rows.every((i) => i >= 0 && i < k.pointsOut.rows) && cols.every((j) => j >= 0 && j < k.pointsIn.rows);
    const g: HeatGrid = {
      rowCoord: onPoints ? rows.map((i) => k!.pointsOut.data[i]!) : rows,
      colCoord: onPoints ? cols.map((j) => k!.pointsIn.data[j]!) : cols,
      values: vals,
    };
    const heat = heatSpec(cellsOf(g), { xTitle: onPoints ? `source s (${L.x})` : 'column index of the kernel', yTitle: onPoints ? `observation x (${L.x})` : 'row index of the kernel',
      colorTitle: 'G − Gᵀ', diverging: true, width: 300, height: 300 });
    const amax = Math.max(...vals.flat().filter(Number.isFinite).map(Math.abs));
    out.push({ id: 'fig-antisymmetric', title: 'Antisymmetric part', caption: `G(x, s) − G(s, x), as the self-adjointness analysis measured it (${rows.length} × ${cols.length} of its entries): zero for a self-adjoint operator. ` +
      (onPoints ? 'x grows upward, so entries above the diagonal have x > s; positive values there mean the response is stronger downstream toward +x.'
        : k && k.components.in > 1 && F.self_adjoint.interpolated !== true
          ? `Axes are entry indices of the block kernel: indices 0–${k.pointsIn.rows - 1} are component 1${k.components.in > 1 ? `, ${k.pointsIn.rows}–${2 * k.pointsIn.rows - 1} component 2` : ''}${k.components.in > 2 ? ', and so on' : ''}; an off-diagonal block that differs from its mirror image is a coupling that is not reciprocal.`
          : 'Axes are entry indices of the common grid the analysis compared the kernel on.'),
      alt: `Heat map of the antisymmetric part G(x,s) − G(s,x) of the kernel, largest magnitude ${fmt(amax)}.`,
      chart: { kind: 'heat', heat, width: heat.width, height: heat.height },
      data: { row: g.rowCoord, column: g.colCoord, values: vals, axes: onPoints ? 'positions' : 'indices', source: 'findings.evidence.self_adjoint.plot' } });
  }
  const reps = nums(p?.replicate_defects), d = num(F.self_adjoint.defect);
  if (reps && d !== null) {
    const layers = stripLayers(reps, d, { reps: 'defect of a resampled kernel', measured: 'defect of the fit' });
    const { spec, width, height } = xySpec(layers, { xTitle: 'weighted adjoint defect ‖G − Gᵀ‖ / ‖G‖', yTitle: ' ', hideY: true, height: 70, xDomain: stripDomain([...reps, d, 0]) });
    out.push({ id: 'fig-adjoint-defect', title: 'Defect against the resampling noise', caption: `The fit's adjoint defect (${fmt(d)}) against the same number for each of ${reps.length} resampled kernels, whose spread sets the noise floor (${fmt(F.self_adjoint.noise_floor)}).`,
      alt: `Strip of ${reps.length} replicate defects from ${fmt(Math.min(...reps))} to ${fmt(Math.max(...reps))}, with the fit's defect ${fmt(d)} marked.`,
      chart: { kind: 'xy', spec, width, height }, data: { defect: d, replicate_defects: reps, noise_floor: F.self_adjoint.noise_floor } });
  }
  return some(out, 'The self-adjointness analysis left no plot data in the findings, so no figure is drawn.');
}

/** transport: the net skew mass against the replicates' (1-D strip, 2-D plane) and the Péclet replicates. */
export function transportFigures(F: Findings, L: Labels): SectionFigures {
  const p = plotOf(F, 'transport');
  const out: Figure[] = [];
  const T = nums(p?.skew_mass);
  const reps = Array.isArray(p?.replicate_skew_mass) ? (p!.replicate_skew_mass as unknown[]).map(nums).filter((r): r is number[] => !!r) : [];
  if (T && T.length === 1 && reps.length) {
    const r = reps.map((v) => v[0]!);
    const layers = stripLayers(r, T[0]!, { reps: 'skew mass of resampling noise', measured: 'net skew mass' });
    const { spec, width, height } = xySpec(layers, { xTitle: 'net skew mass (positive: toward +x)', yTitle: ' ', hideY: true, height: 70, xDomain: stripDomain([...r, T[0]!, 0]) });
    out.push({ id: 'fig-skew-mass', title: 'Net skew mass against the noise', caption: `How much more the kernel answers downstream than upstream, summed over all pairs of points (${fmt(T[0]!)}), against the same sum for the ${r.length} noise replicates that set the floor.`,
      alt: `Strip of ${r.length} noise replicates of the skew mass between ${fmt(Math.min(...r))} and ${fmt(Math.max(...r))}, and the measured value ${fmt(T[0]!)}.`,
      chart: { kind: 'xy', spec, width, height }, data: { skew_mass: T, replicate_skew_mass: r } });
  } else if (T && T.length === 2 && T.every(Number.isFinite) && reps.length) {
    const layers: Layer[] = [
      { kind: 'points', name: 'noise replicates', x: reps.map((v) => v[0]!), y: reps.map((v) => v[1]!), color: SERIES[2]!, size: 26, opacity: 0.7 },
      { kind: 'points', name: 'net skew mass', x: [T[0]!], y: [T[1]!], color: SERIES[1]!, shape: 'diamond', size: 90 },
      { kind: 'line', name: 'origin to estimate', x: [0, T[0]!], y: [0, T[1]!], color: SERIES[1]! },
    ];
    const { spec, width, height } = xySpec(layers, { xTitle: 'skew mass along x', yTitle: 'skew mass along y', legend: true, width: 300, height: 260 });
    out.push({ id: 'fig-skew-mass', title: 'Net skew mass in the plane', caption: 'The direction of net transport: the measured skew-mass vector against the noise replicates.',
      alt: `Scatter of ${reps.length} noise replicates of the skew-mass vector with the measured vector (${fmt(T[0]!)}, ${fmt(T[1]!)}).`,
      chart: { kind: 'xy', spec, width, height }, data: { skew_mass: T, replicate_skew_mass: reps } });
  }
  const pe = nums(p?.peclet_replicates), pe0 = num(F.transport.peclet);
  if (pe && pe0 !== null) {
    const layers = stripLayers(pe, pe0, { reps: 'Péclet number of a resampled kernel', measured: 'estimate' });
    const { spec, width, height } = xySpec(layers, { xTitle: 'Péclet number (drift rate × domain length)', yTitle: ' ', hideY: true, height: 70, xDomain: stripDomain([...pe, pe0]) });
    out.push({ id: 'fig-peclet', title: 'Péclet number and its spread', caption: `The Péclet estimate (${fmt(pe0)}${F.transport.peclet_uncertainty !== null && F.transport.peclet_uncertainty !== undefined ? ` ± ${fmt(F.transport.peclet_uncertainty)}` : ''}) and the same estimate from ${pe.length} resampled kernels.`,
      alt: `Strip of ${pe.length} replicate Péclet numbers between ${fmt(Math.min(...pe))} and ${fmt(Math.max(...pe))}, estimate ${fmt(pe0)}.`,
      chart: { kind: 'xy', spec, width, height }, data: { peclet: pe0, peclet_replicates: pe } });
  }
  void L;
  return some(out, 'The transport analysis reported no skew mass that could be drawn (for example because the operator is not square or the direction is undetermined).');
}

/** translation_invariant: the slope jump across the diagonal along the domain, with its spread. */
export function translationFigures(F: Findings, L: Labels): SectionFigures {
  const p = plotOf(F, 'translation_invariant');
  const sj = obj(p?.slope_jump);
  const s = nums(sj?.s), j = nums(sj?.jump), sd = nums(sj?.sd);
  if (!(s && j && s.length === j.length)) return none(F.translation_invariant.applicable === false
    ? 'The uniform-medium test does not apply to this kernel, so there is nothing to draw.'
    : 'The uniform-medium analysis reported only its summary numbers (no slope-jump profile, which needs a 1-D kernel on coinciding points), so no figure is drawn.');
  // [∂G/∂x] across the diagonal = −1/a(s) for −(a u')' + …: draw −jump, the local inverse stiffness
  const y = j.map((v) => -v);
  const lo = sd && sd.length === s.length ? y.map((v, i) => v - 2 * sd[i]!) : null, hi = sd && sd.length === s.length ? y.map((v, i) => v + 2 * sd[i]!) : null;
  const { domain, clipped } = bandDomain(y, lo, hi);
  const layers: Layer[] = [];
  if (lo && hi) layers.push({ kind: 'band', name: '± 2 × replicate spread', x: s, lower: lo, upper: hi, color: SERIES[0]! });
  layers.push({ kind: 'line', name: '−[∂G/∂x] across the diagonal', x: s, y, color: SERIES[0]! });
  const cps = (F.translation_invariant.change_points ?? []).filter((c): c is number => typeof c === 'number');
  if (cps.length) layers.push({ kind: 'vrule', name: 'change points', x: cps, label: cps.map((c) => fmt(c)), color: SERIES[1]! });
  const { spec, width, height } = xySpec(layers, { xTitle: `source position s (${L.x})`, yTitle: '1/a(s) (inverse stiffness)', legend: true, yDomain: domain, height: 200 });
  return { figures: [{ id: 'fig-slope-jump', title: 'Slope jump across the diagonal', caption: 'The jump of ∂G/∂x across the diagonal, with its sign turned: for −(a u′)′ + … it equals 1/a(s), so a flat curve means a uniform stiffness and a step marks where the medium changes' +
    `${cps.length ? ` (change points found at ${cps.map((c) => fmt(c)).join(', ')})` : ''}. The band is ± 2 × the spread over the resampled kernels${clipped ? ' (cut at the plot edge where it is much wider than the curve)' : ''}.`,
    alt: `Line plot of the inverse stiffness 1/a(s) from the slope jump of the kernel, against s, ranging ${fmt(Math.min(...y.filter(Number.isFinite)))} to ${fmt(Math.max(...y.filter(Number.isFinite)))}${cps.length ? `, with change points at ${cps.map((c) => fmt(c)).join(', ')}` : ''}.`,
    chart: { kind: 'xy', spec, width, height }, data: { s, minus_jump: y, sd, change_points: cps } }], note: null };
}

/** order: singular values on log–log axes with their bootstrap error, trusted count and the fitted decay. */
export function spectrumFigure(F: Findings): SectionFigures {
  const p = plotOf(F, 'order');
  const ks = nums(p?.k), sv = nums(p?.sigma);
  if (!(ks && sv && ks.length === sv.length)) return none('The order analysis left no singular values in the findings, so the decay plot cannot be drawn.');
  const err = nums(p?.error);
  const trusted = num(p?.trusted) ?? num(F.order.trustworthy_values);
  const K = sv.length;
  const layers: Layer[] = [];
  if (err && err.length === K) layers.push({ kind: 'band', name: 'σ ± bootstrap error', x: ks, lower: sv.map((v, i) => Math.max(v - err[i]!, v * 1e-3)), upper: sv.map((v, i) => v + err[i]!), color: SERIES[0]! });
  const tIdx = trusted ?? K;
  const inT = ks.map((_, i) => i < tIdx);
  layers.push({ kind: 'line', name: 'trustworthy σ_k', x: ks.filter((_, i) => inT[i]), y: sv.filter((_, i) => inT[i]), points: true, color: SERIES[0]! });
  if (tIdx < K) layers.push({ kind: 'line', name: 'below 3 × their error', x: ks.slice(Math.max(0, tIdx - 1)), y: sv.slice(Math.max(0, tIdx - 1)), points: true, color: MUTED_SERIES });
  const fit = obj(p?.fit);
  const lo = num(fit?.lo), hi = num(fit?.hi), line = nums(fit?.line), ex = num(fit?.exponent);
  let fitted: { k: number[]; sigma: number[] } | null = null;
  if (lo !== null && hi !== null && line && line.length === hi - lo + 1 && ex !== null) {
    fitted = { k: line.map((_, q) => lo + q), sigma: line };
    layers.push({ kind: 'line', name: `fitted k^−${fmt(ex, 3)} over k = ${lo}–${hi}`, x: fitted.k, y: fitted.sigma, dash: true, color: SERIES[1]! });
  }
  if (trusted !== null && trusted >= 1 && trusted < K) layers.push({ kind: 'vrule', name: 'trustworthy', x: [trusted + 0.5], label: [`${trusted} trustworthy`], color: SERIES[3]! });
  const { spec, width, height } = xySpec(layers, { xTitle: 'index k', yTitle: 'singular value σ_k', logX: true, logY: true, legend: true });
  const decay = F.order.decay;
  return { figures: [{ id: 'fig-spectrum', title: 'Singular values of the kernel', caption: `σ_k of the weighted kernel on log–log axes, as the order analysis computed them, with their bootstrap error. ` +
    `Only values above about 3 × their error count as trustworthy (${trusted ?? '?'} here). ` +
    (fitted ? `A straight line of slope −p means power-law decay; in 1-D, p ≈ the operator's order (Weyl's law). Decay judged ${decay}.` : 'Too few trustworthy values to fit a decay law.'),
    alt: `Log–log plot of ${K} singular values from ${fmt(sv[0]!)} down to ${fmt(sv[K - 1]!)}, ${trusted ?? 'an unknown number'} of them trustworthy${fitted ? `, with a fitted decay exponent of ${fmt(ex, 3)}` : ', no decay fitted'}.`,
    chart: { kind: 'xy', spec, width, height }, data: { k: ks, sigma: sv, error: err, trusted, fitted_line: fitted, decay_exponent: ex } }], note: null };
}
const MUTED_SERIES = '#9a9fa6';

/** locality (2-D): the spread index between its two yardsticks. */
export function localityFigure(F: Findings): SectionFigures {
  const p = plotOf(F, 'locality');
  const idx = num(p?.index), sd = num(p?.sd);
  if (idx === null) return none(F.locality?.applicable === false ? 'Locality is not tested for this kernel, so there is nothing to draw.'
    : `The locality analysis reported no spread index${typeof F.locality?.trustworthy_values === 'number' ? ` (only ${F.locality.trustworthy_values} trustworthy singular values)` : ''}, so no figure is drawn.${F.locality?.evidence_used ? ' Its verdict rests on the jump at the diagonal and on the column equation; see the order and oscillation sections.' : ''}`);
  const layers: Layer[] = [];
  if (sd !== null) layers.push({ kind: 'band', name: 'index ± 2 × replicate spread', x: [idx - 2 * sd, idx + 2 * sd], lower: [-1, -1], upper: [1, 1], color: SERIES[0]! });
  layers.push({ kind: 'vrule', name: 'yardsticks', x: [0, 1], label: ['diffusion (local)', 'fully spread'], color: MUTED });
  layers.push({ kind: 'points', name: 'spread index', x: [idx], y: [0], color: SERIES[1]!, shape: 'diamond', size: 100 });
  const lo = Math.min(-0.05, idx - 3 * (sd ?? 0)), hi = Math.max(1.25, idx + 3 * (sd ?? 0));
  const { spec, width, height } = xySpec(layers, { xTitle: 'spread index (0: as local as diffusion, 1: completely spread)', yTitle: ' ', hideY: true, height: 70, xDomain: [lo, hi], yDomain: [-1, 1] });
  return { figures: [{ id: 'fig-locality', title: 'Spread of the inverse kernel', caption: `How much of the regularised inverse lies away from the diagonal, on a scale set by two yardsticks computed the same way: a diffusion operator (0) and a completely spread one (1). Index ${fmt(idx)}${sd !== null ? ` ± ${fmt(sd)}` : ''}.`,
    alt: `Number line with the spread index ${fmt(idx)} between the yardsticks 0 (local) and 1 (spread).`,
    chart: { kind: 'xy', spec, width, height }, data: { index: idx, sd, reference_local: p?.reference_local ?? null, reference_spread: p?.reference_spread ?? null } }], note: null };
}

/** Poles from the singularity analysis in the upper half-plane over the domain segment. */
export function polesFigure(F: Findings, domain: [number, number] | null, L: Labels): SectionFigures {
  const p = plotOf(F, 'singularities');
  const seg = nums(p?.segment);
  const d: [number, number] | null = seg && seg.length === 2 ? [seg[0]!, seg[1]!] : domain;
  const raw = Array.isArray(p?.poles) ? (p!.poles as unknown[]).map(obj).filter((q): q is Obj => !!q && num(q.re) !== null && num(q.im) !== null) : [];
  const sings = F.singularities.filter((s) => typeof s.location === 'number');
  if (!d) return none('The pole search runs on 1-D kernels only; there is no segment to draw.');
  if (raw.length === 0 && sings.length === 0) return none('The rational fits placed no poles near the domain segment, so there is nothing to draw.');
  const [a, b] = d, w = b - a;
  const near = raw.filter((q) => (q.re as number) > a - 0.5 * w && (q.re as number) < b + 0.5 * w);
  const sources = [...new Set(near.map((q) => String(q.source ?? 'fit')))].sort();
  const inf = near.map((q) => num(q.influence) ?? 0);
  const imax = Math.max(1e-300, ...inf);
  const layers: Layer[] = [{ kind: 'line', name: 'domain segment', x: [a, b], y: [0, 0], color: '#22262b' }];
  sources.forEach((src, t) => {
    const qs = near.filter((q) => String(q.source ?? 'fit') === src);
    layers.push({ kind: 'points', name: `poles of the ${src} fits`, x: qs.map((q) => q.re as number), y: qs.map((q) => q.im as number), color: SERIES[(t + 2) % SERIES.length]!,
      sizes: qs.map((q) => 14 + 90 * Math.sqrt((num(q.influence) ?? 0) / imax)), opacity: 0.75 });
  });
  if (sings.length) layers.push({ kind: 'points', name: 'singularities reported', x: sings.map((s) => s.location as number), y: sings.map(() => 0), color: SERIES[1]!, shape: 'diamond', size: 90,
    label: sings.map((s) => `${fmt(s.location as number)}`) });
  const ims = near.map((q) => q.im as number).filter(Number.isFinite);
  const ymax = Math.max(0.05 * w, quantile(ims, 0.95) || 0) * 1.15;
  const { spec, width, height } = xySpec(layers, { xTitle: `Re (${L.x})`, yTitle: `Im (${L.x})`, legend: true, xDomain: [a - 0.08 * w, b + 0.08 * w], yDomain: [-0.08 * ymax, ymax], height: 220 });
  return { figures: [{ id: 'fig-poles', title: 'Poles in the complex plane', caption: `Poles of the rational (AAA) fits near the domain segment [${fmt(a)}, ${fmt(b)}] (upper half-plane; real data give conjugate pairs), coloured by what was fitted and sized by their pull on the axis. ` +
    'A singularity is reported only where poles recur at one place across many fits and resampled kernels; its distance from the axis estimates the feature\'s width.',
    alt: `Scatter of ${near.length} poles around the segment from ${fmt(a)} to ${fmt(b)}; ${sings.length ? `singularities reported at ${sings.map((s) => fmt(s.location as number)).join(', ')}` : 'no singularity reported'}.`,
    chart: { kind: 'xy', spec, width, height }, data: { segment: d, poles: near, singularities: sings } }], note: null };
}

function regionLayers(F: Findings): Layer[] {
  const regions = F.regions.filter((r) => Array.isArray(r.bounds) && r.bounds.length === 2);
  return regions.length ? [{ kind: 'span', name: 'regions', x0: regions.map((r) => r.bounds[0]), x1: regions.map((r) => r.bounds[1]),
    color: regions.map((r) => CHARACTER_COLOURS[r.character] ?? CHARACTER_COLOURS.other!), opacity: 0.18 }] : [];
}

function interfaceLayers(F: Findings, y: [number, number], labels: boolean): Layer[] {
  const ifs = F.interfaces.filter((i) => typeof i.location === 'number');
  const out: Layer[] = [];
  for (const i of ifs) {
    const loc = i.location as number, u = Math.max(0, i.uncertainty);
    out.push({ kind: 'band', name: 'interface ± uncertainty', x: [loc - u, loc + u], lower: [y[0], y[0]], upper: [y[1], y[1]], color: SERIES[1]! });
  }
  if (ifs.length) out.push({ kind: 'vrule', name: 'interfaces', x: ifs.map((i) => i.location as number), ...(labels ? { label: ifs.map((i) => `${fmt(i.location as number)} ± ${fmt(i.uncertainty)}`) } : {}), color: SERIES[1]! });
  return out;
}

const FEATURE_TITLES: Record<string, string> = { log_inv_diffusion: 'log(1/a)', drift: 'drift βL', wave: 'wave ±√|γ|L' };

/** interfaces: the local evidence profiles the interfaces were located from, with regions and interfaces. */
export function interfacesFigure(F: Findings, domain: [number, number] | null, L: Labels): SectionFigures {
  if (F.dimension !== 1 || !domain) return none('Interfaces are searched for along 1-D domains only.');
  const p = plotOf(F, 'interfaces');
  const c = nums(p?.centers), feats = obj(p?.features), spread = obj(p?.spread);
  if (!c || !feats) return none('The interface analysis left no local evidence profiles in the findings, so no figure is drawn.');
  const panels: Panel[] = [];
  const data: Record<string, unknown> = { centers: c };
  for (const [name, v] of Object.entries(feats)) {
    const y = nums(v);
    if (!y || y.length !== c.length) continue;
    const sd = nums(spread?.[name]);
    const lo = sd && sd.length === c.length ? y.map((e, i) => e - 2 * sd[i]!) : null, hi = sd && sd.length === c.length ? y.map((e, i) => e + 2 * sd[i]!) : null;
    const { domain: yd } = bandDomain(y, lo, hi);
    const layers: Layer[] = [...regionLayers(F), ...interfaceLayers(F, yd, panels.length === 0)];
    if (lo && hi) layers.push({ kind: 'band', name: `${name} band`, x: c, lower: lo, upper: hi, color: SERIES[0]! });
    layers.push({ kind: 'line', name, x: c, y, color: SERIES[0]! });
    panels.push({ layers, yTitle: FEATURE_TITLES[name] ?? name.replace(/_/g, ' '), yDomain: yd });
    data[name] = { value: y, spread: sd };
  }
  if (panels.length === 0) return none('The interface analysis had no usable local evidence along the domain (every profile was undefined), so no figure is drawn.');
  const { spec, width, height } = stackSpec(panels, { xTitle: `x (${L.x})`, xDomain: domain, panelHeight: 95 });
  const ifs = F.interfaces.filter((i) => typeof i.location === 'number');
  const mw = obj(p?.model_weights);
  const pStep = mw ? (num(mw.step) ?? 0) + (num(mw['two-steps']) ?? 0) : null;
  return { figures: [{ id: 'fig-interfaces', title: 'Local evidence along the domain', caption: `The local estimates the interfaces are located from (one panel each, band ± 2 × replicate spread): ${panels.map((q) => q.yTitle).join(', ')}. ` +
    `Shading: the regions found; red lines and bands: interfaces with their uncertainty${ifs.length ? '' : ' (none found)'}.${pStep !== null ? ` Probability of a sharp change ${fmt(pStep, 2)}.` : ''}`,
    alt: `${panels.length} stacked profiles against x (${panels.map((q) => q.yTitle).join(', ')}); ${ifs.length ? `interfaces at ${ifs.map((i) => fmt(i.location as number)).join(', ')}` : 'no interface found'}.`,
    chart: { kind: 'xy', spec, width, height }, data: { ...data, model_weights: mw, interfaces: ifs } }], note: null };
}

/** regions: a strip of the domain coloured by character, with the interfaces. */
export function regionsFigure(F: Findings, domain: [number, number] | null, L: Labels): SectionFigures {
  if (F.dimension !== 1 || !domain) return none('Regions are segmented along 1-D domains only.');
  const regions = F.regions.filter((r) => Array.isArray(r.bounds) && r.bounds.length === 2);
  if (regions.length === 0) return none('The regions analysis reported no region, so no figure is drawn.');
  const layers: Layer[] = [{ kind: 'span', name: 'regions', x0: regions.map((r) => r.bounds[0]), x1: regions.map((r) => r.bounds[1]),
    color: regions.map((r) => CHARACTER_COLOURS[r.character] ?? CHARACTER_COLOURS.other!), label: regions.map((r) => `${r.character} (${pct(typeof r.confidence === 'number' ? r.confidence : null)})`) }, ...interfaceLayers(F, [0, 1], true)];
  const { spec, width, height } = xySpec(layers, { xTitle: `x (${L.x})`, yTitle: ' ', hideY: true, xDomain: domain, yDomain: [0, 1], height: 70 });
  return { figures: [{ id: 'fig-regions', title: 'Regions and interfaces', caption: 'The domain divided into regions of one character (shaded, with the confidence in the character), and the interfaces between them with their uncertainty.',
    alt: `Strip along the domain from ${fmt(domain[0])} to ${fmt(domain[1])}: ${regions.map((r) => `${r.character} on [${fmt(r.bounds[0])}, ${fmt(r.bounds[1])}]`).join('; ')}.`,
    chart: { kind: 'xy', spec, width, height }, data: { regions: regions.map((r) => ({ bounds: r.bounds, character: r.character, confidence: r.confidence, coefficients: r.coefficients })), interfaces: F.interfaces } }], note: null };
}

/** operator: one figure per term profile with its band; the diffusion term also shows a(x) from the slope jump. */
export function coefficientFigures(F: Findings, L: Labels): SectionFigures {
  const terms = F.operator?.terms ?? [];
  const p = plotOf(F, 'operator');
  const jump = obj(p?.jump);
  const jx = nums(jump?.x), ja = nums(jump?.a);
  const out: Figure[] = [];
  let single = 0;
  terms.forEach((t, ti) => {
    const x = nums(t.x), v = nums(t.value);
    if (!x || !v || x.length !== v.length) return;
    if (x.length < 2) { single++; return; }
    const lo = nums(t.lower), hi = nums(t.upper);
    const haveBand = !!(lo && hi && lo.length === x.length && hi.length === x.length);
    const layers: Layer[] = [];
    const extra: number[] = [];
    if (haveBand) layers.push({ kind: 'band', name: 'band', x, lower: lo!, upper: hi!, color: SERIES[ti % 3]! });
    layers.push({ kind: 'line', name: `${t.name} (weak form)`, x, y: v, points: true, color: SERIES[ti % 3]! });
    let jumpNote = '';
    if (t.name === 'diffusion' && jx && ja && jx.length === ja.length) {
      const idx = spreadIndices(jx.length, 80).filter((i) => Number.isFinite(ja[i]!) && ja[i]! > 0);
      // keep the cross-check inside the range of interest (its ends are dominated by noise)
      const q1 = quantile(ja, 0.1), q9 = quantile(ja, 0.9);
      const keepIdx = idx.filter((i) => ja[i]! >= q1 - (q9 - q1) && ja[i]! <= q9 + (q9 - q1));
      if (keepIdx.length) {
        layers.push({ kind: 'points', name: 'a from the ∂G/∂x jump', x: keepIdx.map((i) => jx[i]!), y: keepIdx.map((i) => ja[i]!), color: SERIES[3]!, size: 10, opacity: 0.6 });
        extra.push(...keepIdx.map((i) => ja[i]!));
        jumpNote = ' Small dots: a(x) = −1/[∂G/∂x] from the slope jump across the diagonal, an independent cross-check.';
      }
    }
    const { domain, clipped } = bandDomain([...v, ...extra], haveBand ? lo : null, haveBand ? hi : null);
    const { spec, width, height } = xySpec(layers, { xTitle: `x (${L.x})`, yTitle: `${t.name} coefficient`, height: 170, legend: true, yDomain: domain });
    const fin = v.filter(Number.isFinite);
    out.push({ id: `fig-coef-${ti + 1}`, title: `Coefficient: ${t.name}`, caption: `The ${t.name} coefficient of the term ${t.form}, estimated at ${x.length} positions from the weak form, with its band${clipped ? ' (cut at the plot edge: the band is far wider than the estimate\'s range, so the values are poorly determined)' : ''}.${jumpNote}`,
      alt: `Line plot of the ${t.name} coefficient against x, ranging ${fmt(Math.min(...fin))} to ${fmt(Math.max(...fin))}${haveBand ? ', with an uncertainty band' : ''}.`,
      chart: { kind: 'xy', spec, width, height }, data: { name: t.name, form: t.form, x, value: v, lower: lo, upper: hi, ...(t.name === 'diffusion' && jx ? { jump_x: jx, jump_a: ja } : {}) } });
  });
  if (out.length) return { figures: out, note: null };
  if (single > 0) return none('The coefficients were estimated as constants over the interior, one value each; they are listed in the table above, and there is no profile to draw.');
  return none(terms.length ? 'The coefficient profiles in the findings have no usable values, so no figure is drawn.' : 'No coefficients were estimated for this kernel, so there is nothing to draw.');
}

/** The coupling matrix of a system with each entry's noise floor. */
export function couplingFigure(F: Findings): SectionFigures {
  const m = matrix(F.coupling?.matrix);
  if (!m) return none(F.coupling?.verdict === 'not-applicable' ? 'A single field: there is no coupling matrix to draw.' : 'The coupling analysis reported no matrix, so no figure is drawn.');
  const p = plotOf(F, 'coupling');
  const floor = matrix(p?.floor) ?? matrix((F.coupling as unknown as Obj).noise_floor);
  const drives = Array.isArray(p?.drives) ? p!.drives as unknown[][] : null;
  const r = m.length, c = m[0]!.length;
  const cells: HeatCell[] = [];
  for (let i = 0; i < r; i++) for (let j = 0; j < c; j++) {
    const v = m[i]![j]!;
    const fl = floor?.[i]?.[j];
    const dv = drives?.[i]?.[j];
    cells.push({ x0: j + 0.5, x1: j + 1.5, y0: r - i - 0.5, y1: r - i + 0.5, v, t: fmt(v, 2), t2: i === j ? 'own block' : `${dv === 'present' ? 'clears' : dv === 'absent' ? 'below' : 'vs'} floor ${fmt(fl ?? null, 2)}` });
  }
  const heat = heatSpec(cells, { xTitle: 'input component j', yTitle: 'output component i', colorTitle: 'strength', diverging: false, text: true, width: 110 * c, height: 80 * r, matrixAxes: { rows: r, cols: c } });
  return { figures: [{ id: 'fig-coupling', title: 'Coupling matrix', caption: 'How strongly input component j drives output component i, each row divided by its own diagonal block; off-diagonal entries are compared with the size resampling noise gives them (the floor).',
    alt: `${r} × ${c} coupling matrix: ${m.map((row, i) => `row ${i + 1}: ${row.map((v, j) => `${fmt(v, 2)}${i !== j && floor ? ` (floor ${fmt(floor[i]?.[j] ?? null, 2)})` : ''}`).join(', ')}`).join('; ')}.`,
    chart: { kind: 'heat', heat, width: heat.width, height: heat.height }, data: { matrix: m, floor, drives } }], note: null };
}

/** Kernel slices x ↦ G(x, s) for a few sources s: lines in 1-D, binned maps in 2-D. */
export function sliceFigures(k: Kernel, L: Labels, opts: { logAbs?: boolean } = {}): Figure[] {
  if (k.dimension === 1) {
    const n = k.pointsIn.rows, nOut = k.pointsOut.rows;
    const picks = [0.25, 0.5, 0.75].map((f) => Math.min(n - 1, Math.round(f * (n - 1))));
    const xs = Array.from(k.pointsOut.data);
    const idx = spreadIndices(nOut, 200);
    const layers: Layer[] = [];
    const data: Record<string, unknown> = {};
    picks.forEach((j, t) => {
      const s = k.pointsIn.data[j]!;
      const y = idx.map((i) => k.G.data[i * k.G.cols + j]!);
      const yy = opts.logAbs ? y.map(Math.abs) : y;
      layers.push({ kind: 'line', name: `s = ${fmt(s, 3)}`, x: idx.map((i) => xs[i]!), y: yy, color: SERIES[t]! });
      data[`s=${fmt(s, 6)}`] = { x: idx.map((i) => xs[i]!), value: y };
    });
    const { spec, width, height } = xySpec(layers, { xTitle: `x (${L.x})`, yTitle: opts.logAbs ? '|G(x, s)|' : 'G(x, s)', logY: !!opts.logAbs, legend: true });
    return [{ id: opts.logAbs ? 'fig-slices-log' : 'fig-slices', title: opts.logAbs ? 'Kernel columns, magnitude on a log axis' : 'Kernel columns',
      caption: opts.logAbs ? '|G(x, s)| of the fitted kernel for three sources: a screened operator decays exponentially away from the source (straight flanks on this axis).' : 'G(x, s) of the fitted kernel for three sources s: the response to a point source. Oscillation between sources points to a wave-type term; the analysis fits these column segments.',
      alt: `Line plot of kernel columns for sources at ${picks.map((j) => fmt(k.pointsIn.data[j]!, 3)).join(', ')}${opts.logAbs ? ', magnitude on a logarithmic axis' : ''}.`,
      chart: { kind: 'xy', spec, width, height }, data }];
  }
  const out: Figure[] = [];
  const srcs = sliceSources(k, [[0.3, 0.3], [0.5, 0.5], [0.7, 0.65]]);
  srcs.forEach((j, t) => {
    const sl = slice2d(k, j, 36);
    const cells = sl.x.map((x, i) => ({ x0: x - sl.dx / 2, x1: x + sl.dx / 2, y0: sl.y[i]! - sl.dy / 2, y1: sl.y[i]! + sl.dy / 2, v: sl.value[i]! }));
    const heat = heatSpec(cells, { xTitle: `x (${L.x})`, yTitle: `y (${L.x})`, colorTitle: 'G', diverging: true, width: 220, height: 220 });
    const s = [k.pointsIn.data[2 * j]!, k.pointsIn.data[2 * j + 1]!];
    out.push({ id: `fig-slice2d-${t + 1}`, title: `Kernel slice at s = (${fmt(s[0]!, 3)}, ${fmt(s[1]!, 3)})`,
      caption: `G(x, s) over the plane for the source at (${fmt(s[0]!, 3)}, ${fmt(s[1]!, 3)}), binned to 36 × 36 cells.`,
      alt: `Heat map of the kernel's response over the plane to a point source at (${fmt(s[0]!, 3)}, ${fmt(s[1]!, 3)}), values ${fmt(Math.min(...sl.value))} to ${fmt(Math.max(...sl.value))}.`,
      chart: { kind: 'heat', heat, width: heat.width, height: heat.height }, data: { source: s, x: sl.x, y: sl.y, value: sl.value } });
  });
  return out;
}

/** oscillation / screening: the kernel columns the analysis fitted (1-D scalar kernels). */
export function columnFigures(F: Findings, k: Kernel | null, L: Labels, key: 'oscillation' | 'screening'): SectionFigures {
  const f = F[key] as unknown as Obj;
  if (f?.applicable === false) return none(`The ${key} analysis does not apply to this kernel (it fits column segments of 1-D scalar kernels), so there is nothing to draw.`);
  if (!k) return none('The kernel folder was not found, so the kernel columns cannot be drawn; the analysis itself reported only the numbers above.');
  if (k.dimension !== 1 || k.components.in !== 1) return none(`The ${key} analysis reported only the numbers above; no profile to draw for this kernel.`);
  return { figures: sliceFigures(k, L, { logAbs: key === 'screening' }), note: null };
}
