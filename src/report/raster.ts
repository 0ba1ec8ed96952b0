/**
 * Heat maps as one embedded raster instead of thousands of vector cells: the cells painted onto
 * a pixel grid over the plot area (a pixel takes the colour of the cell holding its centre, so
 * non-uniform cells keep their true widths to half a pixel), encoded as an 8-bit RGB PNG by a
 * small encoder of our own over node:zlib. The HTML shows it as an SVG <image> (data: URI), the
 * PDF as an image XObject; the colours are the ramp vega uses for the legend (palette.rampColor).
 */
import { deflateSync } from 'node:zlib';
import type { HeatSpec } from './charts.js';
import { rampColor } from './palette.js';

/** Pixels per plot unit (px / pt) of the raster: 2 keeps cell edges within a quarter point. */
export const RASTER_SCALE = 2;

const CRC_TABLE = (() => {
  const t = new Uint32Array(256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
    t[n] = c >>> 0;
  }
  return t;
})();

// CRC-32 as the PNG specification defines it: ISO/IEC 15948 (W3C PNG, 2nd ed.), annex D
export function crc32(buf: Uint8Array): number {
  let c = 0xffffffff;
  for (let i = 0; i < buf.length; i++) c = CRC_TABLE[(c ^ buf[i]!) & 0xff]! ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

function chunk(type: string, data: Uint8Array): Buffer {
  const out = Buffer.alloc(12 + data.length);
  out.writeUInt32BE(data.length, 0);
  out.write(type, 4, 'latin1');
  out.set(data, 8);
  out.writeUInt32BE(crc32(out.subarray(4, 8 + data.length)), 8 + data.length);
  return out;
}

/**
 * PNG of an 8-bit RGB image (row-major, 3 bytes a pixel, top row first). A row equal to the one
 * above is written with the "Up" filter (all zeros, which deflate shrinks to nearly nothing),
 * any other row unfiltered.
 */
export function encodePng(width: number, height: number, rgb: Uint8Array): Buffer {
  if (!(width > 0 && height > 0 && Number.isInteger(width) && Number.isInteger(height))) throw new Error(`encodePng: bad size ${width} × ${height}`);
  if (rgb.length !== width * height * 3) throw new Error(`encodePng: ${rgb.length} bytes for ${width} × ${height} RGB`);
  const stride = width * 3;
  const raw = new Uint8Array((stride + 1) * height);
  const px = Buffer.from(rgb.buffer, rgb.byteOffset, rgb.byteLength);
  for (let y = 0; y < height; y++) {
    const o = y * (stride + 1), r = y * stride;
    if (y > 0 && px.compare(px, r - stride, r, r, r + stride) === 0) raw[o] = 2; // zeros follow
    else raw.set(rgb.subarray(r, r + stride), o + 1);
  }
  const ihdr = Buffer.alloc(13);
  ihdr.writeUInt32BE(width, 0); ihdr.writeUInt32BE(height, 4);
  ihdr[8] = 8; ihdr[9] = 2; ihdr[10] = 0; ihdr[11] = 0; ihdr[12] = 0;
  return Buffer.concat([Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]),
    chunk('IHDR', ihdr), chunk('IDAT', deflateSync(raw)), chunk('IEND', new Uint8Array(0))]);
}

export interface HeatRaster {
  png: Buffer;
  /** pixels */
  width: number; height: number;
  /** where it goes: the plot rectangle, in chart units (the same as HeatSpec.plot) */
  plot: { x: number; y: number; width: number; height: number };
}

/** Whether a heat map is drawn as a raster: every heat map whose cells carry no printed text. */
export function rasterises(H: HeatSpec): boolean {
  return H.cells.length > 0 && !H.cells.some((c) => c.t || c.t2);
}

/**
 * Paint the cells onto a white pixel grid over the plot (cells with a non-finite value stay
 * white, as in the vector chart where they get no fill). Pixel i covers the centre
 * (i + ½) / W of the plot's width; a cell [x0, x1) takes the pixels whose centre it holds.
 */
export function heatRaster(H: HeatSpec, scale = RASTER_SCALE): HeatRaster {
  const W = Math.max(1, Math.round(H.plot.width * scale)), Hh = Math.max(1, Math.round(H.plot.height * scale));
  const rgb = new Uint8Array(W * Hh * 3).fill(255);
  const [x0, x1] = H.xDomain, [y0, y1] = H.yDomain, [c0, c1] = H.colorDomain;
  // pixel-centre index range [a, b) whose centres fall in [lo, hi) along an axis of n pixels
  const span = (lo: number, hi: number, n: number): [number, number] => [Math.max(0, Math.ceil(lo * n - 0.5)), Math.min(n, Math.ceil(hi * n - 0.5))];
  for (const c of H.cells) {
    if (!Number.isFinite(c.v)) continue;
    const [r, g, b] = rampColor(H.stops, (c.v - c0) / (c1 - c0));
    const [i0, i1] = span((Math.min(c.x0, c.x1) - x0) / (x1 - x0), (Math.max(c.x0, c.x1) - x0) / (x1 - x0), W);
    // rows run top to bottom: fraction from the top is (y1 − y) / (y1 − y0)
    const [j0, j1] = span((y1 - Math.max(c.y0, c.y1)) / (y1 - y0), (y1 - Math.min(c.y0, c.y1)) / (y1 - y0), Hh);
    if (i1 <= i0 || j1 <= j0) continue;
    let o = (j0 * W + i0) * 3;
    for (let i = i0; i < i1; i++) { rgb[o++] = r; rgb[o++] = g; rgb[o++] = b; }
    const first = (j0 * W + i0) * 3, len = (i1 - i0) * 3;
    for (let j = j0 + 1; j < j1; j++) rgb.copyWithin((j * W + i0) * 3, first, first + len);
  }
  return { png: encodePng(W, Hh, rgb), width: W, height: Hh, plot: H.plot };
}

/**
 * The SVG of a heat map's frame (axes, legend, border; no cells) with the raster placed in its
 * empty cell group, beneath the border: vega writes that group as the first self-closing rect
 * mark container of the plot.
 */
export function withRaster(frameSvg: string, r: HeatRaster): string {
  const empty = '<g class="mark-rect role-mark" role="graphics-symbol" aria-roledescription="rect mark container"/>';
  const at = frameSvg.indexOf(empty);
  if (at < 0) throw new Error('heat map frame: no empty cell group to hold the raster');
  const img = `<image x="0" y="0" width="${r.plot.width}" height="${r.plot.height}" preserveAspectRatio="none" aria-hidden="true" href="data:image/png;base64,${r.png.toString('base64')}"/>`;
  return frameSvg.slice(0, at) + empty.replace('/>', `>${img}</g>`) + frameSvg.slice(at + empty.length);
}
