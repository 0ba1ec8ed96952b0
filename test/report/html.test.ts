/**
 * The HTML dossier built from the hand-written findings fixture and a closed-form kernel:
 * content in reading order, hashes against the system's sha256sum, plot data against the
 * closed form, escaping of user strings, size for a 1,000-point kernel, determinism, CLI exit
 * codes and atomic output.
 */
import { describe, it, expect, beforeAll } from 'vitest';
import { readFileSync, existsSync, writeFileSync } from 'node:fs';
import { execFileSync } from 'node:child_process';
import { join } from 'node:path';
import { buildDossier, renderDossier, loadFindings } from '../../src/report/index.js';
import { CAUTION } from '../../src/report/text.js';
import { Command, CommanderError } from 'commander';
import { registerReport } from '../../src/cli/report.js';
import { KdxError } from '../../src/errors.js';
import type { Io } from '../../src/cli/common.js';
import { dossierDir, fixtureFindings, ovenKernel, OVEN_G, tmp } from './helpers.js';

function dataBlocks(html: string): Map<string, unknown> {
  const out = new Map<string, unknown>();
  for (const m of html.matchAll(/<script type="application\/json" id="data-([^"]+)">([\s\S]*?)<\/script>/g)) out.set(m[1]!, JSON.parse(m[2]!));
  return out;
}

const decode = (s: string) => s.replace(/&#x27;/g, "'").replace(/&quot;/g, '"').replace(/&#x3D;/g, '=').replace(/&#x60;/g, '`').replace(/&lt;/g, '<').replace(/&gt;/g, '>').replace(/&amp;/g, '&');

describe('HTML dossier', () => {
  let dir = '';
  let html = '';
  beforeAll(async () => {
    dir = await dossierDir();
    const r = await buildDossier(dir, { quiet: true, generated: '2024-05-01T12:00:00.000Z' });
    html = readFileSync(r.html, 'utf8');
    expect(existsSync(r.pdf)).toBe(true);
  });

  it('has the sections in reading order, the caution, and every hypothesis most probable first', () => {
    const order = ['id="hypotheses"', 'id="analyses"', 'id="quality"', 'id="caution"', 'id="kernel"', 'id="audit"'].map((s) => html.indexOf(s));
    expect(order.every((p) => p > 0)).toBe(true);
    expect([...order].sort((a, b) => a - b)).toEqual(order);
    expect(decode(html)).toContain(CAUTION);
    const F = fixtureFindings();
    const pos = [...F.hypotheses].sort((a, b) => b.confidence - a.confidence).map((h) => decode(html).indexOf(h.statement));
    expect(pos.every((p) => p > 0)).toBe(true);
    expect([...pos].sort((a, b) => a - b)).toEqual(pos);
  });

  it('lists the SHA-256 of findings.json and of every kernel file as sha256sum computes them', () => {
    for (const f of ['findings.json', 'kernel/kernel.npy', 'kernel/points_in.csv', 'kernel/homogeneous.npy']) {
      const ref = execFileSync('sha256sum', [join(dir, f)], { encoding: 'utf8' }).split(/\s+/)[0]!;
      expect(ref).toMatch(/^[0-9a-f]{64}$/);
      expect(html).toContain(ref);
    }
    expect(html).toContain('kerneldx report');
  });

  it('carries the data behind every figure, and the kernel data are the closed form at the shown points', () => {
    const figs = [...html.matchAll(/<figure class="fig" id="([^"]+)"/g)].map((m) => m[1]!);
    expect(figs.length).toBeGreaterThanOrEqual(10);
    const data = dataBlocks(html);
    for (const id of figs) expect(data.has(id)).toBe(true);
    const kd = data.get('fig-kernel') as { observation_x: number[]; source_s: number[]; values: number[][] };
    // (d) −0.05u'' + u' Dirichlet — derived in the reference from (i)
    let worst = 0;
    kd.observation_x.forEach((x, i) => kd.source_s.forEach((s, j) => { worst = Math.max(worst, Math.abs(kd.values[i]![j]! - OVEN_G(x, s))); }));
    expect(worst).toBeLessThan(1e-12);
    // every figure has alt text and a caption
    expect((html.match(/role="img" aria-label="[^"]{20,}"/g) ?? []).length).toBeGreaterThanOrEqual(figs.length);
    expect(html).not.toMatch(/(src|href)="https?:/);
  });

  it('escapes every user string: a title of <script>alert(1)</script> and hostile units are shown as text', async () => {
    const F = fixtureFindings() as unknown as Record<string, any>;
    F.study.title = '<script>alert(1)</script>';
    F.study.units = { x: '<b>m</b>', f: '"f"', u: "K' onload='x" };
    F.hypotheses[0].statement = 'Belt <img src=x onerror=alert(2)> at 0.3';
    F.inputs[0].path = '</script><script>alert(3)</script>.json';
    F.regions[0].character = 'diffusion';
    const d = await dossierDir({ findings: F as never });
    const r = await buildDossier(d, { quiet: true });
    const h = readFileSync(r.html, 'utf8');
    expect(h).not.toContain('<script>alert(');
    expect(h).not.toContain('<img src=x');
    expect(h).not.toContain('<b>m</b>');
    expect(h).toContain('&lt;script&gt;alert(1)&lt;/script&gt;');
    expect(h.match(/<script[\s>]/g)!.length).toBe(1 + (h.match(/<script type="application\/json"/g) ?? []).length);
  });

  it('stays under 5 MB for a 1,000-point kernel', async () => {
    const d = await dossierDir({ kernel: ovenKernel(1000) });
    const r = await buildDossier(d, { quiet: true });
    const size = readFileSync(r.html).length;
    expect(size).toBeLessThan(5e6);
  });

  it('is deterministic: the same findings give the same HTML except for the generation time', async () => {
    const L = loadFindings(dir);
    const a = await renderDossier(L.findings, L.kernel, L.files, { rebuild: 'kerneldx report x', generated: '2024-05-01T12:00:00.000Z' });
    const b = await renderDossier(L.findings, L.kernel, L.files, { rebuild: 'kerneldx report x', generated: '2025-02-03T04:05:06.000Z' });
    expect(a.html.length).toBeGreaterThan(1e5);
    const strip = (s: string) => s.replaceAll('2024-05-01T12:00:00.000Z', 'T').replaceAll('2025-02-03T04:05:06.000Z', 'T');
    expect(a.html).not.toBe(b.html);
    const sa = strip(a.html), sb = strip(b.html);
    let at = 0;
    while (at < sa.length && sa[at] === sb[at]) at++;
    expect(at === sa.length && sa.length === sb.length ? 'same' : `first difference at ${at}: ${sa.slice(at - 40, at + 40)}`).toBe('same');
    const c = await renderDossier(L.findings, L.kernel, L.files, { rebuild: 'kerneldx report x', generated: '2024-05-01T12:00:00.000Z' });
    expect(c.pdf.equals(a.pdf)).toBe(true);
  });

  it('works from the findings alone when there is no kernel folder', async () => {
    const d = await dossierDir({ kernel: null });
    const r = await buildDossier(d, { quiet: true });
    const h = readFileSync(r.html, 'utf8');
    expect(h).toContain('id="fig-poles"');
    expect(h).not.toContain('id="fig-kernel"');
  });
});

/**
 * The `report` command on its own, with the exit-code mapping of src/cli/main.ts (the full
 * program also loads the other commands' modules, which are built elsewhere).
 */
async function main(argv: string[], io: Io): Promise<number> {
  const program = new Command().exitOverride().configureOutput({ writeOut: io.stdout, writeErr: io.stderr });
  registerReport(program, io, () => {});
  try { await program.parseAsync(argv); return 0; } catch (e) {
    if (e instanceof CommanderError) return e.code === 'commander.helpDisplayed' ? 0 : 2;
    if (e instanceof KdxError) { io.stderr(`kerneldx: ${e.message}\n`); return e.exitCode; }
    throw e;
  }
}

describe('kerneldx report (CLI)', () => {
  const io = () => { const o = { out: '', err: '' }; return { o, io: { stdout: (s: string) => { o.out += s; }, stderr: (s: string) => { o.err += s; } } }; };

  it('prints the two paths and exits 0', async () => {
    const d = await dossierDir();
    const { o, io: x } = io();
    expect(await main(['node', 'kerneldx', 'report', d, '--quiet'], x)).toBe(0);
    expect(o.out.trim().split('\n')).toEqual([join(d, 'dossier.html'), join(d, 'dossier.pdf')]);
  });

  it('exits 3 naming the file for missing or malformed findings, and leaves nothing behind', async () => {
    const d = tmp();
    const a = io();
    expect(await main(['node', 'kerneldx', 'report', d, '--quiet'], a.io)).toBe(3);
    expect(a.o.err).toContain('findings.json');
    writeFileSync(join(d, 'findings.json'), '{"format": "something-else/1"}');
    const b = io();
    expect(await main(['node', 'kerneldx', 'report', d, '--quiet'], b.io)).toBe(3);
    expect(b.o.err).toMatch(/unknown format/);
    // a kernel whose matrix does not match its points: exit 3, no dossier written
    const e = await dossierDir();
    writeFileSync(join(e, 'kernel', 'points_in.csv'), 'x\n0\n0.5\n1\n');
    const c = io();
    expect(await main(['node', 'kerneldx', 'report', e, '--quiet'], c.io)).toBe(3);
    expect(existsSync(join(e, 'dossier.html'))).toBe(false);
  });

  it('exits 2 on wrong usage', async () => {
    const { io: x } = io();
    expect(await main(['node', 'kerneldx', 'report'], x)).toBe(2);
  });
});
