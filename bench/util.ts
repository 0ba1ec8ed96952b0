/** Shared helpers for benchmarks: CPU time of a call and peak resident memory. */
export function cpuSeconds<T>(fn: () => T): { value: T; cpu: number; wall: number } {
  const c0 = process.cpuUsage();
  const w0 = performance.now();
  const value = fn();
  const c = process.cpuUsage(c0);
  return { value, cpu: (c.user + c.system) / 1e6, wall: (performance.now() - w0) / 1000 };
}

export function peakRssMb(): number {
  return process.resourceUsage().maxRSS / 1024;
}

export function row(cells: (string | number)[], widths: number[]): string {
  return cells.map((c, i) => String(typeof c === 'number' ? (Math.abs(c) >= 1000 || Math.abs(c) < 1e-3 && c !== 0 ? c.toExponential(2) : c.toPrecision(3)) : c).padEnd(widths[i] ?? 12)).join(' ');
}
