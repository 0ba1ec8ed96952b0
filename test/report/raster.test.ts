/**
 * Heat maps drawn as a raster must show what the vector chart shows: the PNG decodes (checked
 * by python3's own zlib and CRC-32), and at the centre of every cell the raster has the colour
 * vega itself gives that cell when it draws the cells as rectangles. Charts drawn straight into
 * the PDF keep their text (read back by pdftotext).
 */
import { describe, it, expect } from 'vitest';
import { execFileSync } from 'node:child_process';
import { inflateSync } from 'node:zlib';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import PDFDocument from 'pdfkit';
import { encodePng, heatRaster, crc32, withRaster } from '../../src/report/raster.js';
import { cssColor, drawChart } from '../../src/report/pdfdraw.js';
import { renderChart, renderSvg } from '../../src/report/vega.js';
import { kernelFigures } from '../../src/report/figures.js';
import { xySpec } from '../../src/report/charts.js';
import { ovenKernel, tmp } from './helpers.js';
import { haveTool } from './tools.js';

/** A reader for the PNGs encodePng writes (8-bit RGB, filters None / Up), for the checks below. */
function decodeRgb(png: Buffer): { w: number; h: number; px: Uint8Array } {
  const w = png.readUInt32BE(16), h = png.readUInt32BE(20);
  let o = 8;
  const idat: Buffer[] = [];
  while (o < png.length) {
    const len = png.readUInt32BE(o), type = png.toString('latin1', o + 4, o + 8);
    if (type === 'IDAT') idat.push(png.subarray(o + 8, o + 8 + len));
    o += 12 + len;
  }
  const raw = inflateSync(Buffer.concat(idat)), stride = 3 * w, px = new Uint8Array(stride * h);
  for (let y = 0; y < h; y++) {
    const f = raw[y * (stride + 1)]!;
    for (let i = 0; i < stride; i++) {
      const v = raw[y * (stride + 1) + 1 + i]!;
      px[y * stride + i] = f === 2 && y > 0 ? (v + px[(y - 1) * stride + i]!) & 0xff : v;
    }
  }
  return { w, h, px };
}

describe('PNG encoder', () => {
  it('CRC-32 of "123456789" is 0xCBF43926 (the check value of CRC-32/ISO-HDLC in the CRC catalogue; the PNG spec annex D CRC)', () => {
    expect(crc32(Buffer.from('123456789', 'latin1'))).toBe(0xcbf43926);
  });

  it('python3 (zlib.crc32, zlib.decompress) reads back the chunks and the pixels', () => {
    const w = 7, h = 5, rgb = new Uint8Array(w * h * 3);
    for (let i = 0; i < rgb.length; i++) rgb[i] = (i * 37 + (i >> 3) * 11) & 0xff;
    rgb.copyWithin(2 * 21, 21, 42); rgb.copyWithin(3 * 21, 21, 42); // rows 1–3 equal: the "Up" filter path
    const file = join(tmp('kdx-png-'), 'a.png');
    writeFileSync(file, encodePng(w, h, rgb));
    const py = `
import sys, struct, zlib
d = open(sys.argv[1], 'rb').read()
assert d[:8] == b'\\x89PNG\\r\\n\\x1a\\n'
o, idat, ok = 8, b'', True
while o < len(d):
    n, = struct.unpack('>I', d[o:o+4]); t = d[o+4:o+8]; body = d[o+8:o+8+n]
    crc, = struct.unpack('>I', d[o+8+n:o+12+n]); ok &= zlib.crc32(t + body) == crc
    if t == b'IHDR': w, h, bits, ct = struct.unpack('>IIBB', body[:10])
    if t == b'IDAT': idat += body
    o += 12 + n
raw = zlib.decompress(idat); s = 3 * w; prev = bytearray(s); out = bytearray()
for y in range(h):
    f = raw[y*(s+1)]; row = bytearray(raw[y*(s+1)+1:(y+1)*(s+1)])
    if f == 2: row = bytearray((a + b) & 255 for a, b in zip(row, prev))
    else: assert f == 0
    out += row; prev = row
print(int(ok), w, h, bits, ct, ','.join(map(str, out)))
`;
    const [ok, W, H, bits, ct, px] = execFileSync('python3', ['-c', py, file], { encoding: 'utf8' }).trim().split(' ');
    expect([ok, W, H, bits, ct]).toEqual(['1', '7', '5', '8', '2']);
    expect(px).toBe(Array.from(rgb).join(','));
  });
});

describe('heat map raster', () => {
  // the 200-point oven kernel: 56 of 200 points per side, so the cells are of two widths (3 or 4 point steps)
  const fig = kernelFigures(ovenKernel(200), { x: 'm', u: 'K', f: 'W/m' }).main[0]!;
  if (fig.chart.kind !== 'heat') throw new Error('expected a heat map');
  const H = fig.chart.heat;

  it('has at each cell centre the colour vega gives that cell as a rectangle (2 px per unit)', async () => {
    const svg = await renderSvg(H.spec, 'ref');
    const cellGroup = svg.slice(svg.indexOf('<g class="mark-rect role-mark"'));
    const rects = [...cellGroup.matchAll(/<path d="M([-\d.e]+),([-\d.e]+)h([-\d.e]+)v([-\d.e]+)h[^"]*" fill="([^"]+)"\/>/g)].slice(0, H.cells.length);
    expect(rects.length).toBe(56 * 56);
    const widths = new Set(rects.map((r) => Number(r[3]).toFixed(2)));
    expect(widths.size).toBeGreaterThan(1);
    const r = heatRaster(H);
    const { w, h, px } = decodeRgb(r.png);
    expect([w, h]).toEqual([600, 600]);
    let worst = 0, edgeMiss = 0;
    for (const [, xs, ys, ws, hs, fill] of rects) {
      const x = Number(xs), y = Number(ys), cw = Number(ws), ch = Number(hs);
      const want = cssColor(fill)!.rgb;
      const at = (u: number, v: number) => { const i = (Math.floor(v * 2) * w + Math.floor(u * 2)) * 3; return [px[i]!, px[i + 1]!, px[i + 2]!]; };
      const got = at(x + cw / 2, y + ch / 2);
      worst = Math.max(worst, ...got.map((g, k) => Math.abs(g - want[k]!)));
      // a quarter unit inside each edge is still this cell (edges placed to within half a pixel)
      for (const [u, v] of [[x + 0.26, y + ch / 2], [x + cw - 0.26, y + ch / 2], [x + cw / 2, y + 0.26], [x + cw / 2, y + ch - 0.26]]) {
        const g = at(u!, v!);
        if (g.some((c, k) => Math.abs(c - want[k]!) > 1)) edgeMiss++;
      }
    }
    // vega's rgb interpolation and ours (palette.rampColor) may round one unit apart
    expect(worst).toBeLessThanOrEqual(1);
    expect(edgeMiss).toBe(0);
  });

  it('goes into the empty cell group of the frame in the HTML, under the plot border', async () => {
    const frame = await renderSvg(H.frame, 'f');
    const s = withRaster(frame, heatRaster(H));
    const img = s.indexOf('<image '), border = s.indexOf('<g class="mark-rect role-mark"', s.indexOf('</g>', img));
    expect(img).toBeGreaterThan(0);
    expect(border).toBeGreaterThan(img);
    expect(s).toContain(`width="${H.plot.width}" height="${H.plot.height}"`);
  });
});

describe('charts drawn into the PDF', () => {
  it('reads CSS colours as vega writes them (CSS Color Module: #rgb, #rrggbb, rgb(), rgba())', () => {
    expect(cssColor('#888')!.rgb).toEqual([136, 136, 136]);
    expect(cssColor('#2b5c8a')!.rgb).toEqual([43, 92, 138]);
    expect(cssColor('rgb(244, 241, 232)')!.rgb).toEqual([244, 241, 232]);
    expect(cssColor('rgba(10, 20, 30, 0.5)')).toEqual({ rgb: [10, 20, 30], alpha: 0.5 });
    expect(cssColor('transparent')).toBeNull();
    expect(() => cssColor('hsl(1, 2%, 3%)')).toThrow();
  });

  it.skipIf(!haveTool('pdftotext'))('keeps the axis titles and tick labels as text (pdftotext)', async () => {
    const { spec } = xySpec([{ kind: 'line', name: 'u', x: [0, 0.5, 1], y: [0, 2, 4], points: true }], { xTitle: 'position x (m)', yTitle: 'response u (K)', legend: true });
    const chart = await renderChart(spec, 't');
    const doc = new PDFDocument({ size: 'A4', autoFirstPage: true });
    const chunks: Buffer[] = [];
    doc.on('data', (b: Buffer) => chunks.push(b));
    const done = new Promise<Buffer>((res) => doc.on('end', () => res(Buffer.concat(chunks))));
    doc.translate(40, 40);
    drawChart(doc, chart, { regular: 'Helvetica', bold: 'Helvetica-Bold' });
    doc.end();
    const file = join(tmp('kdx-pdfdraw-'), 'c.pdf');
    writeFileSync(file, await done);
    // the rotated y title comes back one word a line: compare with the white space squashed
    const text = execFileSync('pdftotext', ['-raw', file, '-'], { encoding: 'utf8' }).replace(/\s+/g, ' ');
    for (const s of ['position x (m)', 'response u (K)', '0.4', '0.8']) expect(text).toContain(s);
  });
});
