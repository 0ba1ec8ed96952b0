/** Shared helpers for the I/O and CLI tests: a scratch folder and an in-process CLI run. */
import { mkdtempSync, readdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../../src/cli/main.js';

export function scratch(tag: string): string {
  return mkdtempSync(join(tmpdir(), `kdx-${tag}-`));
}

export async function runCli(args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  let stdout = '', stderr = '';
  const code = await main(['node', 'kerneldx', ...args], { stdout: (s) => { stdout += s; }, stderr: (s) => { stderr += s; } });
  return { code, stdout, stderr };
}

/** every entry (recursively) under dir, as relative paths */
export function listTree(dir: string): string[] {
  const out: string[] = [];
  const walk = (d: string, pre: string) => {
    for (const e of readdirSync(d, { withFileTypes: true })) {
      out.push(pre + e.name);
      if (e.isDirectory()) walk(join(d, e.name), pre + e.name + '/');
    }
  };
  walk(dir, '');
  return out.sort();
}
