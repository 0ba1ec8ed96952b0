/**
 * Operator specifications for `kerneldx simulate` (docs/operator-spec.md is the user's guide).
 *
 * Three kinds of operator:
 *  - 'ode'    1-D, one to three components c = 1..C:
 *               (e_c u_c'')'' − (a_c u_c')' + b_c u_c' + Σ_d c_cd u_d  [+ cubic·u³ when C = 1]  = f_c
 *             on [A, B]; coefficients constant, formulas of x or piecewise (breaks = interfaces);
 *             separated boundary conditions Σ_k α_k u^(k)(end) = g at each end.
 *  - 'pde'    2-D, −∇·(a ∇u) + c u = f with constant a > 0, c, on a box or a disk.
 *  - 'kernel' the Green's function given directly as a formula (non-local operators).
 *
 * Two spellings of the same thing: an inline string of `key=value` items separated by `;`,
 * and a JSON object with the same keys. Both are parsed here into plain, JSON-serialisable data.
 * This module does no file access: the CLI reads a spec file and hands its text over.
 */
import { InputError } from '../errors.js';
import { compileExpr, ExprError } from './expr.js';
import { diskResonance } from './disk.js';

/** Relative distance |λ² − j²|/j² to a disk eigenvalue below which c is rejected (the kernel would be ≥ 1e6 × its off-resonance size). */
const RESONANCE_GAP = 1e-6;

/** A coefficient: a number, a formula of x, or pieces separated by breaks (interfaces). */
export type CoefSpec =
  | number
  | string
  | { breaks: number[]; values: (number | string)[] };

/** One boundary condition Σ_k coefs[k]·u^(k)(end) = value (coefs[k] multiplies the k-th derivative). */
export interface EndCondition {
  coefs: number[];
  value: number;
  /** how the user wrote it, e.g. "dirichlet(1)" */
  label: string;
}

export interface ComponentSpec {
  a: CoefSpec;
  b: CoefSpec;
  /** the diagonal zero-order coefficient c_cc */
  c: CoefSpec;
  e: CoefSpec;
  left: EndCondition[];
  right: EndCondition[];
}

export interface OdeSpec {
  kind: 'ode';
  dimension: 1;
  domain: [number, number];
  components: ComponentSpec[];
  /** C × C zero-order coupling coefficients; diagonal entries are unused (see ComponentSpec.c) */
  coupling: CoefSpec[][];
  /** coefficient ε of the cubic term ε u³ (scalar operators only); 0 = linear */
  cubic: number;
  source: string;
}

export type SideCondition = { type: 'dirichlet' | 'neumann'; value: number };

export interface PdeSpec {
  kind: 'pde';
  dimension: 2;
  domain:
    | { kind: 'box'; bounds: [[number, number], [number, number]] }
    | { kind: 'disk'; center: [number, number]; radius: number };
  a: number;
  c: number;
  /** box: left (x = ax), right (x = bx), bottom (y = ay), top (y = by); disk: boundary */
  sides: { left: SideCondition; right: SideCondition; bottom: SideCondition; top: SideCondition; boundary: SideCondition };
  source: string;
}

export interface KernelFormulaSpec {
  kind: 'kernel';
  dimension: 1 | 2;
  /** 1-D: [A, B]; 2-D: box bounds, or null for scattered points */
  domain: [number, number] | [[number, number], [number, number]] | null;
  /** G as a formula of x, s (1-D) or x, y, s, t (2-D; (x, y) observation, (s, t) source) */
  kernel: string;
  /** u_h as a formula of x (or x, y); "0" when not given */
  homogeneous: string;
  source: string;
}

export type OperatorSpec = OdeSpec | PdeSpec | KernelFormulaSpec;

// ---------------------------------------------------------------------------------------------

class SpecError extends Error {
  constructor(message: string, readonly position?: number) { super(message); }
}

interface Item { key: string; value: unknown; pos?: number; keyPos?: number }

export interface ParseOptions {
  /** name used in messages: "--operator" for an inline spec, the file name for a JSON file */
  label?: string;
}

/**
 * Parse an operator spec: JSON text (starts with "{") or the inline `key=value; ...` syntax.
 * Throws InputError (exit code 3) naming the label and, for inline specs, the position.
 */
export function parseOperator(spec: string, opts: ParseOptions = {}): OperatorSpec {
  const trimmed = spec.trim();
  const isJson = trimmed.startsWith('{');
  const label = opts.label ?? '--operator';
  let items: Item[];
  try {
    items = isJson ? jsonItems(trimmed) : inlineItems(spec);
  } catch (e) {
    throw toInputError(e, label, isJson);
  }
  try {
    return interpret(items, spec.trim());
  } catch (e) {
    throw toInputError(e, label, isJson);
  }
}

function toInputError(e: unknown, label: string, isJson: boolean): Error {
  if (e instanceof SpecError) {
    const where = !isJson && e.position !== undefined ? `position ${e.position + 1}: ` : '';
    return new InputError({ file: label }, `${where}${e.message}`);
  }
  if (e instanceof SyntaxError) return new InputError({ file: label }, `invalid JSON: ${e.message}`);
  return e as Error;
}

function inlineItems(spec: string): Item[] {
  const items: Item[] = [];
  let start = 0;
  const parts: { text: string; pos: number }[] = [];
  let depth = 0;
  for (let i = 0; i <= spec.length; i++) {
    const ch = spec[i];
    if (ch === '(') depth++;
    else if (ch === ')') depth--;
    if (i === spec.length || (ch === ';' && depth === 0)) {
      parts.push({ text: spec.slice(start, i), pos: start });
      start = i + 1;
    }
  }
  for (const p of parts) {
    if (p.text.trim() === '') continue;
    const eq = p.text.indexOf('=');
    const lead = p.text.length - p.text.trimStart().length;
    if (eq < 0) throw new SpecError(`expected key=value, found "${p.text.trim()}"`, p.pos + lead);
    const key = p.text.slice(0, eq).trim();
    if (!/^[A-Za-z][A-Za-z0-9_]*$/.test(key)) throw new SpecError(`bad key "${key}"`, p.pos + lead);
    const raw = p.text.slice(eq + 1);
    const vlead = raw.length - raw.trimStart().length;
    const value = raw.trim();
    if (value === '') throw new SpecError(`"${key}" has no value`, p.pos + eq + 1);
    items.push({ key, value, pos: p.pos + eq + 1 + vlead, keyPos: p.pos + lead });
  }
  if (!items.length) throw new SpecError('empty operator spec', 0);
  return items;
}

function jsonItems(text: string): Item[] {
  const doc = JSON.parse(text) as unknown;
  if (!doc || typeof doc !== 'object' || Array.isArray(doc)) throw new SpecError('expected a JSON object');
  const items: Item[] = [];
  for (const [key, value] of Object.entries(doc as Record<string, unknown>)) {
    if (key === 'components') {
      if (!Array.isArray(value) || value.length < 1 || value.length > 3) throw new SpecError('"components" must be a list of 1 to 3 objects');
      value.forEach((comp, i) => {
        if (!comp || typeof comp !== 'object') throw new SpecError(`components[${i}] must be an object`);
        for (const [k, v] of Object.entries(comp as Record<string, unknown>)) items.push({ key: `${k}${i + 1}`, value: v });
      });
    } else if (key === 'coupling') {
      if (!Array.isArray(value)) throw new SpecError('"coupling" must be a matrix (list of rows)');
      value.forEach((r, i) => {
        if (!Array.isArray(r)) throw new SpecError(`coupling row ${i + 1} must be a list`);
        r.forEach((v, j) => { if (i !== j) items.push({ key: `c${i + 1}${j + 1}`, value: v }); });
      });
    } else if (key === 'title' || key === 'comment' || key === 'description') {
      continue;
    } else {
      items.push({ key, value });
    }
  }
  return items;
}

// ---------------------------------------------------------------------------------------------

const COEF_KEYS = ['a', 'b', 'c', 'e'] as const;

function interpret(items: Item[], source: string): OperatorSpec {
  const seen = new Map<string, Item>();
  for (const it of items) {
    if (seen.has(it.key)) throw new SpecError(`"${it.key}" is given twice`, it.keyPos ?? it.pos);
    seen.set(it.key, it);
  }
  const domainItem = seen.get('domain');
  let dimension: 1 | 2 = 1;
  let domain1: [number, number] = [0, 1];
  let domain2: PdeSpec['domain'] | null = null;
  if (domainItem) {
    const d = parseDomainValue(domainItem);
    if ('interval' in d) domain1 = d.interval;
    else { dimension = 2; domain2 = d.d2; }
  }
  if (seen.has('kernel')) return interpretKernel(seen, dimension, domain1, domain2, source);
  if (dimension === 2) return interpretPde(seen, domain2!, source);
  return interpretOde(seen, domain1, source);
}

function parseDomainValue(it: Item): { interval: [number, number] } | { d2: PdeSpec['domain'] } {
  const v = it.value;
  if (Array.isArray(v)) {
    if (v.length === 2 && v.every((t) => typeof t === 'number')) return { interval: checkInterval(v[0], v[1], it) };
    throw new SpecError('domain as a list must be [A, B]', it.pos);
  }
  if (v && typeof v === 'object') {
    const o = v as Record<string, unknown>;
    if (Array.isArray(o.box)) {
      const b = o.box as unknown[];
      const ok = b.length === 2 && b.every((p) => Array.isArray(p) && p.length === 2 && p.every((t) => typeof t === 'number'));
      if (!ok) throw new SpecError('domain.box must be [[ax, bx], [ay, by]]', it.pos);
      const [[ax, bx], [ay, by]] = b as [[number, number], [number, number]];
      checkInterval(ax, bx, it); checkInterval(ay, by, it);
      return { d2: { kind: 'box', bounds: [[ax, bx], [ay, by]] } };
    }
    if (o.disk && typeof o.disk === 'object') {
      const dk = o.disk as { center?: unknown; radius?: unknown };
      const c = dk.center ?? [0, 0];
      if (!Array.isArray(c) || c.length !== 2 || !c.every((t) => typeof t === 'number') || typeof dk.radius !== 'number' || !(dk.radius > 0)) {
        throw new SpecError('domain.disk must be {"center": [x, y], "radius": r > 0}', it.pos);
      }
      return { d2: { kind: 'disk', center: [c[0] as number, c[1] as number], radius: dk.radius } };
    }
    throw new SpecError('domain must be [A, B], {"box": [[ax, bx], [ay, by]]} or {"disk": {"center": [x, y], "radius": r}}', it.pos);
  }
  if (typeof v !== 'string') throw new SpecError('domain must be A:B, box(ax,bx,ay,by) or disk(cx,cy,r)', it.pos);
  const call = parseCall(v, it.pos, it.key);
  if (call) {
    const nums = call.args.map((a) => numberArg(a.text, it.pos === undefined ? undefined : it.pos + a.offset, `${call.name}()`));
    if (call.name === 'box') {
      if (nums.length !== 4) throw new SpecError('box() takes ax, bx, ay, by', it.pos);
      checkInterval(nums[0]!, nums[1]!, it); checkInterval(nums[2]!, nums[3]!, it);
      return { d2: { kind: 'box', bounds: [[nums[0]!, nums[1]!], [nums[2]!, nums[3]!]] } };
    }
    if (call.name === 'disk') {
      if (nums.length !== 3 || !(nums[2]! > 0)) throw new SpecError('disk() takes cx, cy, r with r > 0', it.pos);
      return { d2: { kind: 'disk', center: [nums[0]!, nums[1]!], radius: nums[2]! } };
    }
    throw new SpecError(`unknown domain "${call.name}"; use A:B, box(ax,bx,ay,by) or disk(cx,cy,r)`, it.pos);
  }
  const f = v.split(':');
  if (f.length !== 2) throw new SpecError(`domain must be A:B, box(ax,bx,ay,by) or disk(cx,cy,r), got "${v}"`, it.pos);
  return { interval: checkInterval(Number(f[0]), Number(f[1]), it) };
}

function checkInterval(a: unknown, b: unknown, it: Item): [number, number] {
  if (typeof a !== 'number' || typeof b !== 'number' || !Number.isFinite(a) || !Number.isFinite(b) || !(b > a)) {
    throw new SpecError(`domain needs finite A < B, got ${String(a)}, ${String(b)}`, it.pos);
  }
  return [a, b];
}

interface Call { name: string; args: { text: string; offset: number }[] }

/** "name(arg, arg, ...)" with top-level comma splitting; null when the text is not a call. */
function parseCall(text: string, pos: number | undefined, key?: string): Call | null {
  const m = /^\s*([A-Za-z_][A-Za-z0-9_]*)\s*\(/.exec(text);
  if (!m) return null;
  const open = m[0].length - 1;
  let depth = 0, close = -1;
  for (let i = open; i < text.length; i++) {
    if (text[i] === '(') depth++;
    else if (text[i] === ')') { depth--; if (depth === 0) { close = i; break; } }
  }
  if (close < 0) throw new SpecError(`${key ? `"${key}": ` : ''}unbalanced parentheses in "${text}"`, pos === undefined ? undefined : pos + open);
  if (text.slice(close + 1).trim() !== '') return null; // e.g. "exp(x)+1" is a formula, not a call
  const inner = text.slice(open + 1, close);
  const args: { text: string; offset: number }[] = [];
  let start = 0; depth = 0;
  for (let i = 0; i <= inner.length; i++) {
    const ch = inner[i];
    if (ch === '(') depth++;
    else if (ch === ')') depth--;
    if (i === inner.length || (ch === ',' && depth === 0)) {
      const raw = inner.slice(start, i);
      const lead = raw.length - raw.trimStart().length;
      if (raw.trim() !== '' || inner.trim() !== '') args.push({ text: raw.trim(), offset: open + 1 + start + lead });
      start = i + 1;
    }
  }
  return { name: m[1]!, args };
}

function numberArg(text: string, pos: number | undefined, what: string): number {
  // constants are allowed (e.g. pi/2)
  try {
    const c = compileExpr(text, []);
    return c({});
  } catch (e) {
    if (e instanceof ExprError) throw new SpecError(`${what}: ${e.message}`, pos === undefined ? undefined : pos + e.position);
    throw e;
  }
}

function checkFormula(text: string, vars: string[], pos: number | undefined, key: string): void {
  try {
    compileExpr(text, vars);
  } catch (e) {
    if (e instanceof ExprError) throw new SpecError(`"${key}": ${e.message}`, pos === undefined ? undefined : pos + e.position);
    throw e;
  }
}

/** A coefficient value: number, formula of x, pw(v0, x1, v1, ...), or {breaks, values}. */
function parseCoef(it: Item, domain: [number, number]): CoefSpec {
  const v = it.value;
  if (typeof v === 'number') {
    if (!Number.isFinite(v)) throw new SpecError(`"${it.key}" must be finite`, it.pos);
    return v;
  }
  if (v && typeof v === 'object' && !Array.isArray(v)) {
    const o = v as { breaks?: unknown; values?: unknown };
    if (!Array.isArray(o.breaks) || !Array.isArray(o.values) || o.values.length !== o.breaks.length + 1) {
      throw new SpecError(`"${it.key}": a piecewise coefficient is {"breaks": [x1, ...], "values": [v0, v1, ...]} with one more value than breaks`, it.pos);
    }
    const breaks = o.breaks.map((b) => { if (typeof b !== 'number') throw new SpecError(`"${it.key}": breaks must be numbers`, it.pos); return b; });
    const values = o.values.map((x) => {
      if (typeof x === 'number') return x;
      if (typeof x === 'string') { checkFormula(x, ['x'], undefined, it.key); return numOrText(x); }
      throw new SpecError(`"${it.key}": piece values must be numbers or formulas`, it.pos);
    });
    checkBreaks(breaks, domain, it);
    return { breaks, values };
  }
  if (typeof v !== 'string') throw new SpecError(`"${it.key}" must be a number, a formula of x or a piecewise value`, it.pos);
  const call = parseCall(v, it.pos, it.key);
  if (call && (call.name === 'pw' || call.name === 'piecewise')) {
    if (call.args.length < 3 || call.args.length % 2 === 0) {
      throw new SpecError(`"${it.key}": pw(v0, x1, v1, x2, v2, ...) needs an odd number ≥ 3 of arguments`, it.pos);
    }
    const breaks: number[] = [], values: (number | string)[] = [];
    call.args.forEach((a, i) => {
      const p = it.pos === undefined ? undefined : it.pos + a.offset;
      if (i % 2 === 1) breaks.push(numberArg(a.text, p, `"${it.key}" break`));
      else { checkFormula(a.text, ['x'], p, it.key); values.push(numOrText(a.text)); }
    });
    checkBreaks(breaks, domain, it);
    return { breaks, values };
  }
  checkFormula(v, ['x'], it.pos, it.key);
  return numOrText(v);
}

function numOrText(t: string): number | string {
  const n = Number(t);
  return t.trim() !== '' && Number.isFinite(n) ? n : t;
}

function checkBreaks(breaks: number[], [A, B]: [number, number], it: Item): void {
  for (let i = 0; i < breaks.length; i++) {
    const b = breaks[i]!;
    if (!Number.isFinite(b) || !(b > A && b < B)) throw new SpecError(`"${it.key}": break ${b} is not inside the domain (${A}, ${B})`, it.pos);
    if (i > 0 && !(b > breaks[i - 1]!)) throw new SpecError(`"${it.key}": breaks must increase`, it.pos);
  }
}

/** Boundary conditions at one end: named forms, joined by '&', or JSON objects/lists. */
function parseEnd(it: Item): EndCondition[] {
  const v = it.value;
  if (Array.isArray(v)) return v.flatMap((x) => parseEnd({ key: it.key, value: x, pos: it.pos }));
  if (v && typeof v === 'object') {
    const o = v as { type?: unknown; value?: unknown; values?: unknown; alpha?: unknown; beta?: unknown };
    if (typeof o.type !== 'string') throw new SpecError(`"${it.key}": a boundary condition object needs "type"`, it.pos);
    const args: number[] = [];
    if (o.type === 'robin') args.push(Number(o.alpha), Number(o.beta));
    if (Array.isArray(o.values)) args.push(...o.values.map(Number));
    else if (o.value !== undefined) args.push(Number(o.value));
    return namedEnd(o.type, args, it, JSON.stringify(v));
  }
  if (typeof v !== 'string') throw new SpecError(`"${it.key}" must be a boundary condition such as dirichlet(0)`, it.pos);
  const out: EndCondition[] = [];
  let offset = 0;
  for (const part of v.split('&')) {
    const p = it.pos === undefined ? undefined : it.pos + offset + (part.length - part.trimStart().length);
    offset += part.length + 1;
    const text = part.trim();
    const call = parseCall(text, p, it.key) ?? { name: text, args: [] };
    if (!/^[A-Za-z_][A-Za-z0-9_]*$/.test(call.name)) throw new SpecError(`"${it.key}": cannot read boundary condition "${text}"`, p);
    const nums = call.args.map((a) => numberArg(a.text, p === undefined ? undefined : p + a.offset, `"${it.key}"`));
    out.push(...namedEnd(call.name, nums, { ...it, pos: p }, text));
  }
  return out;
}

function namedEnd(name: string, args: number[], it: Item, label: string): EndCondition[] {
  const need = (n: number, usage: string) => {
    if (args.length > n) throw new SpecError(`"${it.key}": ${usage} takes at most ${n} value(s)`, it.pos);
    if (args.some((x) => !Number.isFinite(x))) throw new SpecError(`"${it.key}": ${usage} values must be finite numbers`, it.pos);
  };
  const g = (i: number) => args[i] ?? 0;
  const unit = (k: number) => { const c = [0, 0, 0, 0]; c[k] = 1; return c; };
  switch (name) {
    case 'dirichlet': need(1, 'dirichlet(g)'); return [{ coefs: unit(0), value: g(0), label }];
    case 'neumann': need(1, 'neumann(g)'); return [{ coefs: unit(1), value: g(0), label }];
    case 'robin': {
      if (args.length < 2) throw new SpecError(`"${it.key}": robin(alpha, beta, g) means alpha·u + beta·u' = g`, it.pos);
      need(3, 'robin(alpha, beta, g)');
      if (args[0] === 0 && args[1] === 0) throw new SpecError(`"${it.key}": robin needs alpha or beta nonzero`, it.pos);
      return [{ coefs: [args[0]!, args[1]!, 0, 0], value: g(2), label }];
    }
    case 'clamped': need(2, 'clamped(g0, g1)'); return [{ coefs: unit(0), value: g(0), label }, { coefs: unit(1), value: g(1), label }];
    case 'supported': case 'hinged': need(2, `${name}(g0, g2)`); return [{ coefs: unit(0), value: g(0), label }, { coefs: unit(2), value: g(1), label }];
    case 'free': need(2, 'free(g2, g3)'); return [{ coefs: unit(2), value: g(0), label }, { coefs: unit(3), value: g(1), label }];
    case 'derivative': case 'bc': {
      if (args.length < 1 || !Number.isInteger(args[0]) || args[0]! < 0 || args[0]! > 3) throw new SpecError(`"${it.key}": ${name}(k, g) means u^(k) = g with k = 0..3`, it.pos);
      need(2, `${name}(k, g)`);
      return [{ coefs: unit(args[0]!), value: g(1), label }];
    }
    default:
      throw new SpecError(`"${it.key}": unknown boundary condition "${name}" (known: dirichlet, neumann, robin, clamped, supported, free, derivative)`, it.pos);
  }
}

// ---------------------------------------------------------------------------------------------

function interpretOde(seen: Map<string, Item>, domain: [number, number], source: string): OdeSpec {
  // how many components? the largest index used by any key
  let C = 1;
  const keyRe = /^(a|b|c|e|left|right)([1-3])$|^c([1-3])([1-3])$/;
  for (const key of seen.keys()) {
    const m = keyRe.exec(key);
    if (m) C = Math.max(C, Number(m[2] ?? 0), Number(m[3] ?? 0), Number(m[4] ?? 0));
  }
  const used = new Set<string>(['domain']);
  const take = (key: string): Item | undefined => { const it = seen.get(key); if (it) used.add(key); return it; };
  const components: ComponentSpec[] = [];
  const bcAll = take('bc');
  for (let ci = 1; ci <= C; ci++) {
    const coef = (k: typeof COEF_KEYS[number]): CoefSpec => {
      const names = k === 'c' ? [`c${ci}${ci}`, `c${ci}`] : [`${k}${ci}`];
      if (C === 1) names.push(k);
      const hits = names.map((n) => seen.get(n)).filter((x): x is Item => !!x);
      if (hits.length > 1) throw new SpecError(`"${hits[1]!.key}" repeats "${hits[0]!.key}"`, hits[1]!.pos);
      if (!hits.length) return k === 'a' ? 0 : 0;
      used.add(hits[0]!.key);
      return parseCoef(hits[0]!, domain);
    };
    const a = coef('a'), b = coef('b'), c = coef('c'), e = coef('e');
    const hasA = !isZeroCoef(a), hasE = !isZeroCoef(e);
    if (!hasA && !hasE) {
      // a default diffusion coefficient of 1 when nothing of order ≥ 2 is given
      components.push({ a: 1, b, c, e, left: [], right: [] });
    } else {
      components.push({ a, b, c, e, left: [], right: [] });
    }
    const order = hasE ? 4 : 2;
    for (const side of ['left', 'right'] as const) {
      const names = [`${side}${ci}`];
      if (C === 1) names.push(side);
      const hits = names.map((n) => seen.get(n)).filter((x): x is Item => !!x);
      if (hits.length > 1) throw new SpecError(`"${hits[1]!.key}" repeats "${hits[0]!.key}"`, hits[1]!.pos);
      let conds: EndCondition[];
      if (hits.length) { used.add(hits[0]!.key); conds = parseEnd(hits[0]!); }
      else if (bcAll) conds = parseEnd(bcAll);
      else conds = order === 4 ? namedEnd("clamped", [], { key: side, value: null }, 'clamped (default)') : namedEnd("dirichlet", [], { key: side, value: null }, 'dirichlet (default)');
      const where = hits[0] ?? bcAll;
      if (conds.length !== order / 2) {
        throw new SpecError(`component ${ci} is of order ${order} and needs ${order / 2} condition(s) at the ${side} end, got ${conds.length}${order === 4 ? ' (e.g. clamped(0,0), supported(0,0), free(0,0), or two joined by &)' : ''}`, where?.pos);
      }
      for (const cd of conds) {
        const k = cd.coefs.reduce((m, v, i) => (v !== 0 ? i : m), -1);
        if (k >= order) throw new SpecError(`component ${ci} is of order ${order}: a boundary condition may use derivatives up to ${order - 1} only ("${cd.label}")`, where?.pos);
      }
      if (order === 4) {
        const [c0, c1] = conds;
        if (c0!.coefs.every((v, i) => v === c1!.coefs[i])) throw new SpecError(`component ${ci}: the two conditions at the ${side} end are the same`, where?.pos);
      }
      components[ci - 1]![side] = conds;
    }
  }
  const coupling: CoefSpec[][] = Array.from({ length: C }, () => Array.from({ length: C }, () => 0 as CoefSpec));
  for (let i = 1; i <= C; i++) {
    for (let j = 1; j <= C; j++) {
      if (i === j) continue;
      const it = take(`c${i}${j}`);
      if (it) coupling[i - 1]![j - 1] = parseCoef(it, domain);
    }
  }
  let cubic = 0;
  const cu = take('cubic');
  if (cu) {
    cubic = typeof cu.value === 'number' ? cu.value : numberArg(String(cu.value), cu.pos, '"cubic"');
    if (C > 1 && cubic !== 0) throw new SpecError('"cubic" is supported for scalar operators only', cu.pos);
  }
  for (const [key, it] of seen) {
    if (!used.has(key)) throw new SpecError(`unknown key "${key}" for a 1-D operator (known: domain, a, b, c, e, cubic, left, right, bc; for systems a1, c12, left2, ...; kernel)`, it.keyPos ?? it.pos);
  }
  return { kind: 'ode', dimension: 1, domain, components, coupling, cubic, source };
}

export function isZeroCoef(c: CoefSpec): boolean {
  if (typeof c === 'number') return c === 0;
  if (typeof c === 'string') return false;
  return c.values.every((v) => v === 0);
}

function interpretPde(seen: Map<string, Item>, domain: PdeSpec['domain'], source: string): PdeSpec {
  const used = new Set<string>(['domain']);
  const num = (key: string, dflt: number): number => {
    const it = seen.get(key);
    if (!it) return dflt;
    used.add(key);
    if (typeof it.value === 'number') return it.value;
    if (typeof it.value !== 'string') throw new SpecError(`"${key}" must be a number`, it.pos);
    try {
      return compileExpr(it.value, [])({});
    } catch (e) {
      if (e instanceof ExprError) throw new SpecError(`"${key}": in 2-D the coefficients must be constants (${e.message})`, it.pos === undefined ? undefined : it.pos + e.position);
      throw e;
    }
  };
  const a = num('a', 1), c = num('c', 0);
  if (!(a > 0)) throw new SpecError('"a" must be > 0', seen.get('a')?.pos);
  const side = (key: string, dflt: SideCondition): SideCondition => {
    const it = seen.get(key);
    if (!it) return dflt;
    used.add(key);
    const conds = parseEnd(it);
    if (conds.length !== 1 || conds[0]!.coefs[0]! + conds[0]!.coefs[1]! !== 1 || conds[0]!.coefs.slice(2).some((v) => v !== 0)) {
      throw new SpecError(`"${key}": in 2-D a side is dirichlet or neumann`, it.pos);
    }
    const cd = conds[0]!;
    if (cd.value !== 0) throw new SpecError(`"${key}": nonzero boundary data are supported in 1-D only (2-D sides take homogeneous data)`, it.pos);
    return { type: cd.coefs[0] === 1 ? 'dirichlet' : 'neumann', value: 0 };
  };
  const all = side('boundary', side('bc', { type: 'dirichlet', value: 0 }));
  const sides = { left: side('left', all), right: side('right', all), bottom: side('bottom', all), top: side('top', all), boundary: all };
  if (domain.kind === 'disk') {
    for (const k of ['left', 'right', 'bottom', 'top']) if (seen.has(k)) throw new SpecError(`"${k}" applies to a box; a disk has one "boundary"`, seen.get(k)!.pos);
    if (all.type !== 'dirichlet') throw new SpecError('the disk supports a Dirichlet boundary only (a Neumann disk is not implemented)', seen.get('boundary')?.pos ?? seen.get('bc')?.pos);
    if (c < 0) {
      // −aΔu + cu = f has no Green's function when −c/a is a Dirichlet eigenvalue j²/R² of the disk
      const R = domain.radius, lam = R * Math.sqrt(-c / a), res = diskResonance(lam);
      if (res && res.gap < RESONANCE_GAP) {
        throw new SpecError(`-c/a = ${-c / a} is within ${res.gap.toExponential(1)} (relative) of the disk's Dirichlet eigenvalue j²/R² = ${(res.zero / R) ** 2} (angular order ${res.n}): the Green's function does not exist or is dominated by that mode; move c away by more than ${RESONANCE_GAP} relative`, seen.get('c')?.pos);
      }
    }
  } else {
    const allNeumann = [sides.left, sides.right, sides.bottom, sides.top].every((s) => s.type === 'neumann');
    if (allNeumann && c === 0) throw new SpecError('pure Neumann with c = 0 has no Green\'s function (constants are in the null space); set c > 0 or a Dirichlet side', seen.get('c')?.pos);
  }
  for (const [key, it] of seen) {
    if (!used.has(key)) throw new SpecError(`unknown key "${key}" for a 2-D operator (known: domain, a, c, boundary, left, right, bottom, top; kernel)`, it.keyPos ?? it.pos);
  }
  return { kind: 'pde', dimension: 2, domain, a, c, sides, source };
}

function interpretKernel(seen: Map<string, Item>, dimension: 1 | 2, d1: [number, number], d2: PdeSpec['domain'] | null, source: string): KernelFormulaSpec {
  const k = seen.get('kernel')!;
  if (typeof k.value !== 'string') throw new SpecError('"kernel" must be a formula', k.pos);
  const vars = dimension === 1 ? ['x', 's'] : ['x', 'y', 's', 't'];
  checkFormula(k.value, vars, k.pos, 'kernel');
  let homogeneous = '0';
  const h = seen.get('homogeneous');
  if (h) {
    if (typeof h.value !== 'string' && typeof h.value !== 'number') throw new SpecError('"homogeneous" must be a formula', h.pos);
    homogeneous = String(h.value);
    checkFormula(homogeneous, dimension === 1 ? ['x'] : ['x', 'y'], h.pos, 'homogeneous');
  }
  for (const [key, it] of seen) {
    if (!['kernel', 'homogeneous', 'domain'].includes(key)) throw new SpecError(`"${key}" cannot be combined with "kernel" (known: kernel, homogeneous, domain)`, it.keyPos ?? it.pos);
  }
  let domain: KernelFormulaSpec['domain'];
  if (dimension === 1) domain = d1;
  else if (d2 && d2.kind === 'box') domain = d2.bounds;
  else domain = null;
  return { kind: 'kernel', dimension, domain, kernel: k.value, homogeneous, source };
}

/** A one-line human-readable statement of the operator, e.g. for titles and truth.json. */
export function describeOperator(op: OperatorSpec): string {
  const fmt = (c: CoefSpec): string => {
    if (typeof c === 'number') return String(c);
    if (typeof c === 'string') return `(${c})`;
    return `pw(${c.values.map((v, i) => (i ? `${c.breaks[i - 1]}, ${v}` : String(v))).join(', ')})`;
  };
  if (op.kind === 'kernel') return `u(x) = ∫ G(x, s) f(s) ds + u_h with G = ${op.kernel}`;
  if (op.kind === 'pde') {
    const dom = op.domain.kind === 'box' ? `box ${JSON.stringify(op.domain.bounds)}` : `disk centre ${JSON.stringify(op.domain.center)} radius ${op.domain.radius}`;
    const cu = op.c === 0 ? '' : op.c > 0 ? ` + ${op.c} u` : ` − ${-op.c} u`;
    return `-∇·(${op.a} ∇u)${cu} = f on the ${dom}`;
  }
  const C = op.components.length;
  const lines = op.components.map((cp, i) => {
    const u = C === 1 ? 'u' : `u${i + 1}`;
    const t: string[] = [];
    if (!isZeroCoef(cp.e)) t.push(`(${fmt(cp.e)} ${u}'')''`);
    if (!isZeroCoef(cp.a)) t.push(`-(${fmt(cp.a)} ${u}')'`);
    if (!isZeroCoef(cp.b)) t.push(`${fmt(cp.b)} ${u}'`);
    if (!isZeroCoef(cp.c)) t.push(`${fmt(cp.c)} ${u}`);
    for (let j = 0; j < C; j++) if (j !== i && !isZeroCoef(op.coupling[i]![j]!)) t.push(`${fmt(op.coupling[i]![j]!)} u${j + 1}`);
    if (op.cubic) t.push(`${op.cubic} ${u}^3`);
    const bc = `${cp.left.map((c) => c.label).join('&')} at ${op.domain[0]}, ${cp.right.map((c) => c.label).join('&')} at ${op.domain[1]}`;
    return `${t.join(' + ')} = f${C === 1 ? '' : i + 1} (${bc})`;
  });
  return lines.join('; ');
}
