/**
 * The PDF dossier read back by poppler: pdftotext finds the hypotheses, the caution, the audit
 * hashes, the contents with page numbers, page footers and the mathematical glyphs (so the
 * embedded font really carries them); pdftoppm renders page 1.
 */
import { describe, it, expect, beforeAll } from 'vitest';
import { execFileSync } from 'node:child_process';
import { readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { buildDossier } from '../../src/report/index.js';
import { CAUTION } from '../../src/report/text.js';
import { dossierDir, fixtureFindings } from './helpers.js';
import { haveTool } from './tools.js';

const enabled = haveTool('pdftotext') && haveTool('pdftoppm');
const squash = (s: string) => s.replace(/\s+/g, ' ').trim();

describe.skipIf(!enabled)('PDF dossier through poppler', () => {
  let dir = '', pdf = '', text = '';
  beforeAll(async () => {
    // a caveat carrying the glyphs the embedded font must have (analyses write ′ ∂ ≈ ± ² Δ κ in their texts)
    const F = fixtureFindings();
    F.hypotheses[0]!.caveats = [...(F.hypotheses[0]!.caveats ?? []), 'Glyph check: u′, ∂G/∂x, κ ≈ 1.5 ± 0.1, k², Δu.'];
    dir = await dossierDir({ findings: F });
    pdf = (await buildDossier(dir, { quiet: true })).pdf;
    text = execFileSync('pdftotext', ['-enc', 'UTF-8', pdf, '-'], { encoding: 'utf8' });
  });

  it('contains every hypothesis, the caution and the contents', () => {
    const flat = squash(text);
    for (const h of fixtureFindings().hypotheses) expect(flat).toContain(squash(h.statement));
    expect(flat).toContain(squash(CAUTION));
    expect(flat).toContain('Contents');
    expect(flat).toContain('Audit trail');
  });

  it('carries the audit hashes of the study inputs and of findings.json (as sha256sum computes it)', () => {
    for (const f of fixtureFindings().inputs) expect(text).toContain(f.sha256);
    const own = execFileSync('sha256sum', [join(dir, 'findings.json')], { encoding: 'utf8' }).split(/\s+/)[0]!;
    expect(text).toContain(own);
  });

  it('has page numbers on every page and the mathematical glyphs survive the embedded font', () => {
    const pages = Number(/Pages:\s+(\d+)/.exec(execFileSync('pdfinfo', [pdf], { encoding: 'utf8' }))![1]);
    expect(pages).toBeGreaterThanOrEqual(5);
    for (let p = 1; p <= pages; p++) expect(text).toContain(`page ${p} of ${pages}`);
    for (const g of ['′', '∂', 'κ', '≈', '±', '²', 'Δ']) expect(text).toContain(g);
    const fonts = execFileSync('pdffonts', [pdf], { encoding: 'utf8' });
    expect(fonts).toMatch(/DejaVuSans\s.*yes\s+yes\s+yes/);
  });

  it('renders page 1 with pdftoppm', () => {
    execFileSync('pdftoppm', ['-f', '1', '-l', '1', '-r', '50', '-png', pdf, join(dir, 'page')]);
    const png = join(dir, 'page-01.png');
    const buf = readFileSync(png);
    expect(buf.subarray(1, 4).toString()).toBe('PNG');
    expect(statSync(png).size).toBeGreaterThan(5000);
    // width × height of the A4 page at 50 dpi (IHDR)
    expect(Math.abs(buf.readUInt32BE(16) - 413)).toBeLessThanOrEqual(1);
    expect(Math.abs(buf.readUInt32BE(20) - 585)).toBeLessThanOrEqual(1);
  });
});
