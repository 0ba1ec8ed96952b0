/** The packaged CLI: the launcher runs the built dist, and the versions agree. */
import { describe, it, expect, beforeAll } from 'vitest';
import { existsSync, readFileSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { join } from 'node:path';
import { VERSION } from '../../src/version.js';

const root = fileURLToPath(new URL('../..', import.meta.url));
const bin = join(root, 'bin', 'kerneldx.js');

beforeAll(() => {
  if (!existsSync(join(root, 'dist', 'cli', 'main.js')) || !existsSync(join(root, 'dist', 'cli', 'design.js'))) {
    // tsc emits even when some other file has a type error; the launcher test only needs the output
    spawnSync(process.execPath, [join(root, 'node_modules', 'typescript', 'bin', 'tsc'), '-p', join(root, 'tsconfig.json')], { stdio: 'inherit' });
  }
  if (!existsSync(join(root, 'dist', 'cli', 'main.js'))) throw new Error('build failed: dist/cli/main.js missing');
}, 300_000);

const run = (...args: string[]) => spawnSync(process.execPath, [bin, ...args], { encoding: 'utf8', cwd: root });

describe('kerneldx launcher', () => {
  it('--help lists the commands on stdout and exits 0', () => {
    const r = run('--help');
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/Usage: kerneldx/);
    expect(r.stdout).toMatch(/design/);
  });
  it('design --help documents the contract options and exits 0', () => {
    const r = run('design', '--help');
    expect(r.status).toBe(0);
    for (const opt of ['--points', '--grid', '--count', '--length-scale', '--seed', '--out', '--covariance', '--target-rank', '--oversampling', '--quiet', '--json']) {
      expect(r.stdout).toContain(opt);
    }
  });
  it('--version prints the version of package.json, which equals src/version.ts', () => {
    const pkg = JSON.parse(readFileSync(join(root, 'package.json'), 'utf8')) as { version: string };
    expect(pkg.version).toBe(VERSION);
    const r = run('--version');
    expect(r.status).toBe(0);
    expect(r.stdout.trim()).toBe(pkg.version);
  });
  it('an unknown option is wrong usage: exit 2', () => {
    expect(run('design', '--frobnicate').status).toBe(2);
  });
});
