/**
 * Real programs the dossier tests use: Debian's chromium (through playwright-core, never a
 * browser download) and poppler's pdftotext / pdftoppm. On a developer machine without them
 * the tests skip with a message; in CI (CI=true, where .ci/run installs them) they fail.
 */
import { existsSync } from 'node:fs';
import { execFileSync } from 'node:child_process';

export const CHROMIUM = '/usr/bin/chromium';
export const CHROMIUM_ARGS = ['--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run',
  '--disable-background-networking', '--disable-component-update', '--disable-sync'];

function onPath(cmd: string): boolean {
  try { execFileSync('sh', ['-c', `command -v ${cmd}`], { stdio: 'ignore' }); return true; } catch { return false; }
}

/** true when the tool is there; false (with a message) when absent off CI; throws when absent in CI. */
export function haveTool(name: 'chromium' | 'pdftotext' | 'pdftoppm'): boolean {
  const ok = name === 'chromium' ? existsSync(CHROMIUM) : onPath(name);
  if (ok) return true;
  const msg = `${name} is not installed (${name === 'chromium' ? 'apt-get install chromium' : 'apt-get install poppler-utils'})`;
  if (process.env.CI === 'true') throw new Error(`CI: ${msg}; .ci/run should have installed it`);
  console.warn(`skipping: ${msg}`);
  return false;
}
