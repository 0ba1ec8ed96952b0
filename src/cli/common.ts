/**
 * What every command shares: progress on stderr (silenced by --quiet), a JSON summary on
 * stdout with --json, option parsing helpers that raise UsageError (exit 2).
 */
import { UsageError } from '../errors.js';
import type { Mat } from '../linalg/dense.js';

export interface Io {
  stdout: (s: string) => void;
  stderr: (s: string) => void;
}

export const processIo: Io = {
  stdout: (s) => process.stdout.write(s),
  stderr: (s) => process.stderr.write(s),
};

export class Progress {
  private t0 = Date.now();
  constructor(private readonly io: Io, private readonly quiet: boolean) {}
  /** one line of progress on stderr */
  say(msg: string): void {
    if (this.quiet) return;
    const t = ((Date.now() - this.t0) / 1000).toFixed(1);
    this.io.stderr(`[kerneldx ${t}s] ${msg}\n`);
  }
}

export function parseIntOpt(name: string, v: string | undefined, min = 1): number | undefined {
  if (v === undefined) return undefined;
  const n = Number(v);
  if (!Number.isInteger(n) || n < min) throw new UsageError(`${name} must be an integer ≥ ${min}, got "${v}"`);
  return n;
}

export function parseNumOpt(name: string, v: string | undefined, opts: { min?: number; positive?: boolean } = {}): number | undefined {
  if (v === undefined) return undefined;
  const n = Number(v);
  if (!Number.isFinite(n)) throw new UsageError(`${name} must be a number, got "${v}"`);
  if (opts.positive && !(n > 0)) throw new UsageError(`${name} must be > 0, got "${v}"`);
  if (opts.min !== undefined && n < opts.min) throw new UsageError(`${name} must be ≥ ${opts.min}, got "${v}"`);
  return n;
}

/** --grid A:B:N (1-D) or AX:BX:NX,AY:BY:NY (2-D tensor grid) → points (n × d). */
export function parseGrid(spec: string): Mat {
  const axes = spec.split(',').map((part) => {
    const f = part.split(':');
    if (f.length !== 3) throw new UsageError(`--grid expects A:B:N (or AX:BX:NX,AY:BY:NY), got "${spec}"`);
    const [a, b, n] = [Number(f[0]), Number(f[1]), Number(f[2])];
    if (!Number.isFinite(a) || !Number.isFinite(b) || !(b > a)) throw new UsageError(`--grid: need A < B, got "${part}"`);
    if (!Number.isInteger(n) || n < 2) throw new UsageError(`--grid: N must be an integer ≥ 2, got "${f[2]}"`);
    return Array.from({ length: n }, (_, i) => a + ((b - a) * i) / (n - 1));
  });
  if (axes.length === 1) {
    const xs = axes[0]!;
    return { rows: xs.length, cols: 1, data: Float64Array.from(xs) };
  }
  if (axes.length === 2) {
    const [xs, ys] = axes as [number[], number[]];
    const data = new Float64Array(xs.length * ys.length * 2);
    let k = 0;
    for (const y of ys) for (const x of xs) { data[k++] = x; data[k++] = y; }
    return { rows: xs.length * ys.length, cols: 2, data };
  }
  throw new UsageError(`--grid supports 1 or 2 axes, got ${axes.length}`);
}

export function gridBounds(spec: string): number[][] {
  return spec.split(',').map((p) => p.split(':').slice(0, 2).map(Number));
}
