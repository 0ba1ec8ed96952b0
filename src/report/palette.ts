/**
 * The dossier's colours (our own): a slate-blue / paper / rust diverging ramp for signed
 * kernel values, a paper-to-pine ramp for magnitudes, and categorical colours for series and
 * region characters. `rampColor` reproduces vega's piecewise RGB interpolation so the raster
 * of a heat map's cells (src/report/raster.ts) matches its vega legend.
 */
export const DIVERGING = ['#2b5c8a', '#f4f1e8', '#b5542d'] as const;
export const SEQUENTIAL = ['#f4f1e8', '#8fb8a8', '#1f5a4c'] as const;
export const SERIES = ['#1f5a4c', '#b5542d', '#2b5c8a', '#8a6d1f', '#6b3d7a', '#4d4d4d'] as const;
export const INK = '#22262b';
export const MUTED = '#6a6f76';
export const CHARACTER_COLOURS: Record<string, string> = {
  'diffusion': '#8fb8a8',
  'advection-diffusion': '#e0a57e',
  'reaction-diffusion': '#a9c1df',
  'wave': '#d9c36c',
  'higher-order': '#c3a6cf',
  'nonlocal': '#b8b8b8',
  'other': '#dcd6c8',
};

const parsed = new Map<string, [number, number, number]>();
function hex(c: string): [number, number, number] {
  let v = parsed.get(c);
  if (!v) { v = [parseInt(c.slice(1, 3), 16), parseInt(c.slice(3, 5), 16), parseInt(c.slice(5, 7), 16)]; parsed.set(c, v); }
  return v;
}

/** Colour of t ∈ [0, 1] on a ramp of evenly spaced stops, linear in RGB. */
export function rampColor(stops: readonly string[], t: number): [number, number, number] {
  const u = Math.min(1, Math.max(0, Number.isFinite(t) ? t : 0.5)) * (stops.length - 1);
  const i = Math.min(stops.length - 2, Math.floor(u)), f = u - i;
  const a = hex(stops[i]!), b = hex(stops[i + 1]!);
  return [0, 1, 2].map((k) => Math.round(a[k]! + f * (b[k]! - a[k]!))) as [number, number, number];
}
