/**
 * The dossier's figures, each built from the kernel and the findings (and, where an analysis
 * left plot data in findings.evidence[key].plot, from that data). A figure carries its vega
 * spec, an alt text that says what it shows in words, and the numbers behind it (offered as a
 * download in the HTML).
 */
import type { Kernel, Findings } from '../types.js';
import { xySpec, heatSpec, edges, type Layer, type HeatCell, type HeatSpec } from './charts.js';
import { heatGrid, samePoints, symParts, weightedSingularValues, decayLine, slice2d, sliceSources, spreadIndices, type HeatGrid } from './display.js';
import { CHARACTER_COLOURS, SERIES } from './palette.js';
import type { Spec } from 'vega';
import { fmt } from './text.js';

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

/** Heat maps of G (1-D scalar: also its symmetric and antisymmetric parts; systems: each block). */
export function kernelFigures(k: Kernel, L: Labels): { main: Figure[]; sym: Figure | null; anti: Figure | null } {
  const main: Figure[] = [];
  let sym: Figure | null = null, anti: Figure | null = null;
  if (k.dimension !== 1) return { main, sym, anti };
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
    const { sym: S, anti: A } = symParts(k.G);
    const gs = heatGrid(S, xo, xi, HEAT_MAX), ga = heatGrid(A, xo, xi, HEAT_MAX);
    const amax = Math.max(...ga.values.flat().map(Math.abs));
    sym = mk('fig-kernel-sym', 'Symmetric part', '(G(x, s) + G(s, x)) / 2: the part a self-adjoint operator would have.',
      `Heat map of the symmetric part of the kernel, values ${fmt(Math.min(...gs.values.flat()))} to ${fmt(Math.max(...gs.values.flat()))}.`, gs, '(G+Gᵀ)/2');
    anti = mk('fig-kernel-anti', 'Antisymmetric part', '(G(x, s) − G(s, x)) / 2: zero for a self-adjoint operator. Positive values where x > s (above the diagonal in this picture, where x grows upward) point to transport toward +x.',
      `Heat map of the antisymmetric part of the kernel; largest magnitude ${fmt(amax)}.`, ga, '(G−Gᵀ)/2');
  }
  return { main, sym, anti };
}

/** u_h along the domain with a band (1-D), or binned over the plane (2-D). */
export function homogeneousFigure(k: Kernel, F: Findings, L: Labels): Figure | null {
  const h = k.homogeneous;
  if (!h) return null;
  const n = k.pointsOut.rows, co = k.components.out;
  const fit = F.fit as Record<string, unknown>;
  const unc = fit.uncertainty as { relative_homogeneous_error?: unknown } | undefined;
  const relErr = typeof fit.relative_homogeneous_error === 'number' ? fit.relative_homogeneous_error
    : typeof unc?.relative_homogeneous_error === 'number' ? unc.relative_homogeneous_error : null;
  const ev = F.evidence?.homogeneous?.plot as { lower?: unknown; upper?: unknown } | undefined;
  if (k.dimension === 1) {
    const layers: Layer[] = [];
    const data: Record<string, unknown> = {};
    let bandNote = 'no uncertainty estimate was available for u_h';
    for (let c = 0; c < co; c++) {
      const x = Array.from(k.pointsOut.data), y = Array.from(h.subarray(c * n, (c + 1) * n));
      const idx = spreadIndices(n, 400);
      const xs = idx.map((i) => x[i]!), ys = idx.map((i) => y[i]!);
      let lower: number[] | null = null, upper: number[] | null = null;
      if (Array.isArray(ev?.lower) && Array.isArray(ev?.upper) && ev.lower.length === n * co && ev.upper.length === n * co) {
        lower = idx.map((i) => Number((ev.lower as unknown[])[c * n + i])); upper = idx.map((i) => Number((ev.upper as unknown[])[c * n + i]));
        bandNote = 'band: the fit\'s pointwise interval for u_h';
      } else if (relErr !== null && relErr >= 0) {
        const rms = Math.sqrt(ys.reduce((s, v) => s + v * v, 0) / Math.max(1, ys.length));
        lower = ys.map((v) => v - 2 * relErr * rms); upper = ys.map((v) => v + 2 * relErr * rms);
        bandNote = `band: ± 2 × the fit's predicted relative error of u_h (${fmt(relErr)}) × its RMS — a uniform band, not pointwise`;
      }
      const name = co > 1 ? `u_h, component ${c + 1}` : 'u_h';
      if (lower && upper) layers.push({ kind: 'band', name: `${name} band`, x: xs, lower, upper, color: SERIES[c]! });
      layers.push({ kind: 'line', name, x: xs, y: ys, color: SERIES[c]! });
      data[co > 1 ? `component_${c + 1}` : 'u_h'] = { x: xs, value: ys, lower, upper };
    }
    const { spec, width, height } = xySpec(layers, { xTitle: `x (${L.x})`, yTitle: `u_h (${L.u})`, legend: co > 1 });
    return { id: 'fig-homogeneous', title: 'Homogeneous part', caption: `u_h(x): the response with no forcing (boundary- or offset-driven). ${bandNote}.`,
      alt: `Line plot of the homogeneous part u_h against x${co > 1 ? ` for ${co} components` : ''}, with ${bandNote}.`,
      chart: { kind: 'xy', spec, width, height }, data: { ...data, band: bandNote } };
  }
  // 2-D: bin u_h (component 1) onto a grid
  const fake: Kernel = { ...k, G: { rows: n, cols: 1, data: h.subarray(0, n) }, pointsIn: { rows: 1, cols: 2, data: new Float64Array(2) }, components: { in: 1, out: 1 } };
  const sl = slice2d(fake, 0, 36);
  const cells = sl.x.map((x, i) => ({ x0: x - sl.dx / 2, x1: x + sl.dx / 2, y0: sl.y[i]! - sl.dy / 2, y1: sl.y[i]! + sl.dy / 2, v: sl.value[i]! }));
  const heat = heatSpec(cells, { xTitle: `x (${L.x})`, yTitle: `y (${L.x})`, colorTitle: 'u_h', diverging: true, width: 280, height: 280 });
  return { id: 'fig-homogeneous', title: 'Homogeneous part', caption: 'u_h over the plane (mean of the output points in each cell).',
    alt: `Heat map of the homogeneous part over the plane, values ${fmt(Math.min(...sl.value))} to ${fmt(Math.max(...sl.value))}.`,
    chart: { kind: 'heat', heat, width: heat.width, height: heat.height }, data: { x: sl.x, y: sl.y, u_h: sl.value } };
}

function numArray(v: unknown): number[] | null {
  if (!Array.isArray(v) || v.length === 0) return null;
  const out = v.map((e) => (typeof e === 'number' ? e : e === null ? NaN : Number.NaN));
  return out.some((e) => Number.isFinite(e)) ? out : null;
}

function pick(o: Record<string, unknown> | undefined, names: string[]): number[] | null {
  if (!o) return null;
  for (const n of names) { const a = numArray(o[n]); if (a) return a; }
  return null;
}

/** Singular values on log–log axes with the fitted decay k^(−p). */
export function spectrumFigure(k: Kernel, F: Findings): Figure | null {
  const plot = F.evidence?.order?.plot as Record<string, unknown> | undefined;
  let sv = pick(plot, ['singular_values', 'sigma', 'values']);
  let source = 'the order analysis';
  if (!sv) {
    const s = weightedSingularValues(k);
    if (!s) return null;
    sv = Array.from(s);
    source = 'the dossier (Nyström singular values of the fitted kernel, thinned to ≤ 160 points)';
  }
  const err = pick(plot, ['errors', 'error', 'spread', 'sigma_error']);
  const K = sv.length;
  const ks = sv.map((_, i) => i + 1);
  const layers: Layer[] = [];
  if (err && err.length === K) {
    layers.push({ kind: 'band', name: 'bootstrap spread', x: ks, lower: sv.map((v, i) => Math.max(v - err[i]!, v * 1e-3)), upper: sv.map((v, i) => v + err[i]!), color: SERIES[0]! });
  }
  layers.push({ kind: 'line', name: 'singular values', x: ks, y: sv, points: true, color: SERIES[0]! });
  const p = F.order?.decay_exponent;
  const trusted = typeof F.order?.trustworthy_values === 'number' ? F.order.trustworthy_values : null;
  let line: { k: number[]; sigma: number[] } | null = null;
  if (typeof p === 'number' && Number.isFinite(p)) {
    const fitK = pick(plot, ['fit_k', 'line_k']), fitS = pick(plot, ['fit_sigma', 'line_sigma', 'fitted']);
    line = fitK && fitS && fitK.length === fitS.length ? { k: fitK, sigma: fitS } : decayLine(sv, p, 1, Math.max(2, Math.min(K, trusted ?? K)));
    layers.push({ kind: 'line', name: `fitted decay k^−${fmt(p, 3)}`, x: line.k, y: line.sigma, dash: true, color: SERIES[1]! });
  }
  if (trusted !== null && trusted >= 1 && trusted <= K) layers.push({ kind: 'vrule', name: 'trustworthy', x: [trusted + 0.5], label: [`${trusted} trustworthy`], color: SERIES[3]! });
  const { spec, width, height } = xySpec(layers, { xTitle: 'index k', yTitle: 'singular value σ_k', logX: true, logY: true, legend: true });
  return { id: 'fig-spectrum', title: 'Singular values of the kernel', caption: `σ_k of the weighted kernel on log–log axes, from ${source}. A straight line of slope −p means power-law decay; p ≈ order of the operator in 1-D (Weyl's law).`,
    alt: `Log–log plot of ${K} singular values, from ${fmt(sv[0]!)} down to ${fmt(sv[K - 1]!)}${typeof p === 'number' ? `, with a fitted decay exponent of ${fmt(p, 3)}` : ''}.`,
    chart: { kind: 'xy', spec, width, height }, data: { k: ks, sigma: sv, error: err, fitted_line: line, decay_exponent: p ?? null, source } };
}

/** Poles (from the singularity analysis' plot data) in the complex plane over the domain segment. */
export function polesFigure(F: Findings, domain: [number, number] | null, L: Labels): Figure | null {
  const plot = F.evidence?.singularities?.plot as Record<string, unknown> | undefined;
  const re: number[] = [], im: number[] = [];
  const raw = plot?.poles;
  if (Array.isArray(raw)) for (const p of raw) {
    if (Array.isArray(p) && p.length >= 2) { re.push(Number(p[0])); im.push(Number(p[1])); }
    else if (p && typeof p === 'object') { const o = p as Record<string, unknown>; re.push(Number(o.re ?? o.real)); im.push(Number(o.im ?? o.imag)); }
  } else {
    const r = pick(plot, ['re', 'real']), i = pick(plot, ['im', 'imag']);
    if (r && i && r.length === i.length) { re.push(...r); im.push(...i); }
  }
  const sings = F.singularities.filter((s) => typeof s.location === 'number');
  if (re.length === 0 && sings.length === 0) return null;
  if (!domain) return null;
  const [a, b] = domain;
  const layers: Layer[] = [
    { kind: 'line', name: 'domain segment', x: [a, b], y: [0, 0], color: '#22262b' },
  ];
  if (re.length) layers.push({ kind: 'points', name: 'poles', x: re, y: im, color: SERIES[2]!, size: 30 });
  if (sings.length) layers.push({ kind: 'points', name: 'singularities found', x: sings.map((s) => s.location as number), y: sings.map(() => 0), color: SERIES[1]!, shape: 'diamond', size: 80 });
  const w = b - a;
  const reIn = re.filter((v, i) => Number.isFinite(v) && Number.isFinite(im[i]!) && v > a - w && v < b + w);
  const imIn = im.filter((v, i) => Number.isFinite(v) && Number.isFinite(re[i]!) && re[i]! > a - w && re[i]! < b + w);
  const ymax = Math.max(0.1 * w, ...imIn.map(Math.abs)) * 1.1;
  const { spec, width, height } = xySpec(layers, { xTitle: `Re (${L.x})`, yTitle: `Im (${L.x})`, legend: true,
    xDomain: [Math.min(a - 0.05 * w, ...reIn), Math.max(b + 0.05 * w, ...reIn)], yDomain: [-ymax, ymax] });
  return { id: 'fig-poles', title: 'Poles in the complex plane', caption: 'Poles of rational (AAA) approximants near the domain segment [a, b] on the real axis; a pole close to the segment marks a near-singular point of the solution or kernel.',
    alt: `Scatter plot of ${re.length} poles in the complex plane around the domain segment from ${fmt(a)} to ${fmt(b)}; ${sings.length} singularities marked on the segment${sings.length ? ` at ${sings.map((s) => fmt(s.location as number)).join(', ')}` : ''}.`,
    chart: { kind: 'xy', spec, width, height }, data: { poles: re.map((r, i) => [r, im[i]]), domain, singularities: sings } };
}

/** Regions (coloured by character) and interfaces with their uncertainty, along a 1-D domain. */
export function regionsFigure(F: Findings, domain: [number, number] | null, L: Labels): Figure | null {
  if (F.dimension !== 1 || !domain) return null;
  const regions = F.regions.filter((r) => Array.isArray(r.bounds) && r.bounds.length === 2);
  const ifs = F.interfaces.filter((i) => typeof i.location === 'number');
  if (regions.length === 0 && ifs.length === 0) return null;
  const layers: Layer[] = [];
  if (regions.length) layers.push({ kind: 'span', name: 'regions', x0: regions.map((r) => r.bounds[0]), x1: regions.map((r) => r.bounds[1]),
    color: regions.map((r) => CHARACTER_COLOURS[r.character] ?? CHARACTER_COLOURS.other!), label: regions.map((r) => r.character) });
  const plot = F.evidence?.interfaces?.plot as Record<string, unknown> | undefined;
  const px = pick(plot, ['x', 'position', 'positions']), py = pick(plot, ['score', 'statistic', 'evidence', 'y', 'values']);
  const haveCurve = !!(px && py && px.length === py.length);
  let yDomain: [number, number] = [0, 1];
  if (haveCurve) {
    const fin = py!.filter(Number.isFinite);
    const lo = Math.min(0, ...fin), hi = Math.max(...fin, lo + 1e-12);
    yDomain = [lo, hi + 0.25 * (hi - lo)];
    layers.push({ kind: 'line', name: 'local evidence', x: px!, y: py!, color: SERIES[5]! });
  }
  for (const i of ifs) {
    const loc = i.location as number, u = Math.max(0, i.uncertainty);
    layers.push({ kind: 'band', name: 'interface uncertainty', x: [loc - u, loc + u], lower: [yDomain[0], yDomain[0]], upper: [yDomain[1], yDomain[1]], color: SERIES[1]! });
  }
  if (ifs.length) layers.push({ kind: 'vrule', name: 'interfaces', x: ifs.map((i) => i.location as number), label: ifs.map((i) => `${fmt(i.location as number)} ± ${fmt(i.uncertainty)}`), color: SERIES[1]! });
  const { spec, width, height } = xySpec(layers, { xTitle: `x (${L.x})`, yTitle: haveCurve ? 'local evidence' : ' ', xDomain: domain, yDomain, height: 150 });
  return { id: 'fig-regions', title: 'Regions and interfaces', caption: 'Regions of one character along the domain (shaded), interfaces with their uncertainty (dashed line and band)' + (haveCurve ? ', and the local evidence profile the interfaces were located from.' : '.'),
    alt: `Strip along the domain from ${fmt(domain[0])} to ${fmt(domain[1])}: ${regions.map((r) => `${r.character} on [${fmt(r.bounds[0])}, ${fmt(r.bounds[1])}]`).join('; ') || 'no regions'}; ${ifs.length} interface(s)${ifs.length ? ` at ${ifs.map((i) => fmt(i.location as number)).join(', ')}` : ''}.`,
    chart: { kind: 'xy', spec, width, height }, data: { regions, interfaces: ifs, evidence_curve: haveCurve ? { x: px, y: py } : null } };
}

/** One figure per operator term: the coefficient profile with its band. */
export function coefficientFigures(F: Findings, L: Labels): Figure[] {
  const out: Figure[] = [];
  (F.operator?.terms ?? []).forEach((t, ti) => {
    const x = numArray(t.x), v = numArray(t.value);
    if (!x || !v || x.length !== v.length) return;
    const lo = numArray(t.lower), hi = numArray(t.upper);
    const layers: Layer[] = [];
    if (lo && hi && lo.length === x.length && hi.length === x.length) layers.push({ kind: 'band', name: 'band', x, lower: lo, upper: hi, color: SERIES[ti % 3]! });
    layers.push({ kind: 'line', name: String(t.name), x, y: v, color: SERIES[ti % 3]! });
    const { spec, width, height } = xySpec(layers, { xTitle: `x (${L.x})`, yTitle: String(t.name), height: 170 });
    const fin = v.filter(Number.isFinite);
    out.push({ id: `fig-coef-${ti + 1}`, title: `Coefficient: ${t.name}`, caption: `${t.name} coefficient of the term ${t.form}, estimated along the domain, with its band.`,
      alt: `Line plot of the ${t.name} coefficient against x, ranging ${fmt(Math.min(...fin))} to ${fmt(Math.max(...fin))}${lo && hi ? ', with an uncertainty band' : ''}.`,
      chart: { kind: 'xy', spec, width, height }, data: { name: t.name, form: t.form, x, value: v, lower: lo, upper: hi } });
  });
  return out;
}

/** The coupling matrix of a system (row i: how strongly each input component drives output i). */
export function couplingFigure(F: Findings): Figure | null {
  const m = F.coupling?.matrix;
  if (!Array.isArray(m) || m.length === 0 || !Array.isArray(m[0])) return null;
  const r = m.length, c = m[0]!.length;
  const cells: HeatCell[] = [];
  for (let i = 0; i < r; i++) for (let j = 0; j < c; j++) {
    const v = Number(m[i]![j]);
    cells.push({ x0: j + 0.5, x1: j + 1.5, y0: r - i - 0.5, y1: r - i + 0.5, v, t: fmt(v, 2) });
  }
  const heat = heatSpec(cells, { xTitle: 'input component j', yTitle: 'output component i (top = 1)', colorTitle: 'strength', diverging: false, text: true, width: 60 * c, height: 60 * r });
  return { id: 'fig-coupling', title: 'Coupling matrix', caption: 'Relative strength with which input component j drives output component i (each row scaled by its diagonal block).',
    alt: `${r} × ${c} coupling matrix: ${m.map((row, i) => `row ${i + 1}: ${row.map((v) => fmt(Number(v), 2)).join(', ')}`).join('; ')}.`,
    chart: { kind: 'heat', heat, width: heat.width, height: heat.height }, data: { matrix: m } };
}

/** Kernel slices x ↦ G(x, s) for a few sources s: lines in 1-D, binned maps in 2-D. */
export function sliceFigures(k: Kernel, L: Labels, opts: { logAbs?: boolean } = {}): Figure[] {
  if (k.dimension === 1) {
    const n = k.pointsIn.rows, nOut = k.pointsOut.rows;
    const picks = [0.25, 0.5, 0.75].map((f) => Math.min(n - 1, Math.round(f * (n - 1))));
    const xs = Array.from(k.pointsOut.data);
    const idx = spreadIndices(nOut, 400);
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
      caption: opts.logAbs ? '|G(x, s)| for three sources: a screened operator decays exponentially away from the source (straight flanks on this axis).' : 'G(x, s) for three sources s: the response to a point source. Oscillation between sources points to a wave-type term.',
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

/** Mean antisymmetric part against the offset x − s (1-D scalar, coinciding points). */
export function skewProfileFigure(k: Kernel, L: Labels): Figure | null {
  if (k.dimension !== 1 || !samePoints(k) || k.components.in !== 1) return null;
  const n = k.pointsIn.rows, x = k.pointsIn.data;
  const span = x[n - 1]! - x[0]!;
  if (!(span > 0)) return null;
  const bins = 61, sum = new Float64Array(bins), cnt = new Float64Array(bins);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) {
    const d = x[i]! - x[j]!;
    const b = Math.min(bins - 1, Math.floor(((d + span) / (2 * span)) * bins));
    const a = 0.5 * (k.G.data[i * n + j]! - k.G.data[j * n + i]!);
    if (Number.isFinite(a)) { sum[b]! += a; cnt[b]! += 1; }
  }
  const dx: number[] = [], val: number[] = [];
  for (let b = 0; b < bins; b++) if (cnt[b]! > 0) { dx.push(-span + (b + 0.5) * (2 * span / bins)); val.push(sum[b]! / cnt[b]!); }
  const { spec, width, height } = xySpec([{ kind: 'line', name: 'mean skew', x: dx, y: val, color: SERIES[1]! }, { kind: 'vrule', name: 'diagonal', x: [0], color: '#6a6f76' }],
    { xTitle: `offset x − s (${L.x})`, yTitle: 'mean of (G − Gᵀ)/2', height: 180 });
  return { id: 'fig-skew', title: 'Antisymmetric part against offset', caption: 'Mean of (G(x, s) − G(s, x))/2 over pairs with the same offset x − s. Positive values at positive offsets: the response is carried toward +x.',
    alt: `Line plot of the mean antisymmetric kernel part against the offset x − s, from ${fmt(Math.min(...val))} to ${fmt(Math.max(...val))}.`,
    chart: { kind: 'xy', spec, width, height }, data: { offset: dx, mean_antisymmetric: val } };
}

/** G along the diagonal and two parallel offsets: flat curves in the interior suggest a uniform medium. */
export function diagonalsFigure(k: Kernel, L: Labels): Figure | null {
  if (k.dimension !== 1 || !samePoints(k) || k.components.in !== 1) return null;
  const n = k.pointsIn.rows, x = k.pointsIn.data;
  const layers: Layer[] = [], data: Record<string, unknown> = {};
  [0, Math.round(n / 20), Math.round(n / 8)].forEach((off, t) => {
    if (off >= n - 1 && off > 0) return;
    const idx = spreadIndices(n - off, 300);
    const xs = idx.map((i) => 0.5 * (x[i]! + x[i + off]!)), ys = idx.map((i) => k.G.data[(i + off) * n + i]!);
    const d = off === 0 ? 0 : x[off]! - x[0]!;
    layers.push({ kind: 'line', name: off === 0 ? 'diagonal G(x, x)' : `offset ${fmt(d, 2)}`, x: xs, y: ys, color: SERIES[t]! });
    data[`offset_${fmt(d, 6)}`] = { midpoint: xs, value: ys };
  });
  const { spec, width, height } = xySpec(layers, { xTitle: `midpoint (x + s)/2 (${L.x})`, yTitle: 'G(x, s)', legend: true, height: 200 });
  return { id: 'fig-diagonals', title: 'Kernel along diagonals', caption: 'G along its diagonal and two parallel offsets x − s. In a uniform medium these curves are flat away from the ends (the ends carry a boundary correction).',
    alt: 'Line plot of the kernel along the diagonal and two parallel offsets, against the midpoint position.', chart: { kind: 'xy', spec, width, height }, data };
}

/**
 * Plot data an analysis left in its evidence that no dedicated figure draws: named numeric
 * series against a shared `x`, or a matrix. Returns null when nothing drawable is there.
 */
export function evidenceFigure(key: string, F: Findings, L: Labels): Figure | null {
  const plot = F.evidence?.[key]?.plot as Record<string, unknown> | undefined;
  if (!plot || typeof plot !== 'object') return null;
  const x = pick(plot, ['x', 'positions', 'k', 'offset']);
  if (x) {
    const layers: Layer[] = [];
    const data: Record<string, unknown> = { x };
    for (const [name, v] of Object.entries(plot)) {
      const a = numArray(v);
      if (!a || a === x || a.length !== x.length || ['x', 'positions', 'k', 'offset'].includes(name)) continue;
      layers.push({ kind: 'line', name, x, y: a, color: SERIES[layers.length % SERIES.length]! });
      data[name] = a;
      if (layers.length >= 5) break;
    }
    if (layers.length === 0) return null;
    const { spec, width, height } = xySpec(layers, { xTitle: `${Object.keys(plot).find((n) => ['x', 'positions', 'k', 'offset'].includes(n))} ${'(' + L.x + ')'}`, yTitle: 'value', legend: true, height: 200 });
    return { id: `fig-ev-${key}`, title: `Evidence: ${key.replace(/_/g, ' ')}`, caption: `The data the ${key.replace(/_/g, ' ')} analysis reported with its verdict.`,
      alt: `Line plot of ${layers.map((l) => l.name).join(', ')} against ${Object.keys(plot).find((n) => ['x', 'positions', 'k', 'offset'].includes(n))}.`,
      chart: { kind: 'xy', spec, width, height }, data };
  }
  const mat = Object.entries(plot).find(([, v]) => Array.isArray(v) && v.length > 1 && Array.isArray(v[0]) && (v[0] as unknown[]).every((e) => typeof e === 'number'));
  if (mat) {
    const m = mat[1] as number[][];
    const g: HeatGrid = { rowCoord: m.map((_, i) => i), colCoord: m[0]!.map((_, j) => j), values: m.map((r) => r.map(Number)) };
    const sub = spreadIndices(m.length, HEAT_MAX), subc = spreadIndices(m[0]!.length, HEAT_MAX);
    const gg: HeatGrid = { rowCoord: sub, colCoord: subc, values: sub.map((i) => subc.map((j) => g.values[i]![j]!)) };
    const heat = heatSpec(cellsOf(gg), { xTitle: 'column', yTitle: 'row', colorTitle: mat[0], diverging: true });
    return { id: `fig-ev-${key}`, title: `Evidence: ${key.replace(/_/g, ' ')} (${mat[0]})`, caption: `The matrix "${mat[0]}" the ${key.replace(/_/g, ' ')} analysis reported.`,
      alt: `Heat map of the ${mat[0]} matrix (${m.length} × ${m[0]!.length}) reported by the ${key} analysis.`, chart: { kind: 'heat', heat, width: heat.width, height: heat.height }, data: { [mat[0]]: gg.values } };
  }
  return null;
}
