import { describe, it, expect } from 'vitest';
import { existsSync, writeFileSync, mkdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { withOutput } from '../../src/io/output.js';
import { scratch, listTree } from './helpers.js';

describe('atomic output (interface.md §4: on failure nothing half-written under --out)', () => {
  it('a command that fails after writing leaves no trace and no staging folder', async () => {
    const dir = scratch('atomic');
    const out = join(dir, 'deep', 'er', 'out');
    await expect(withOutput(out, (stage) => {
      stage.write('a.txt', 'first file');
      stage.write('sub/b.bin', Buffer.from([1, 2, 3]));
      throw new Error('failed half way');
    })).rejects.toThrow('failed half way');
    expect(existsSync(out)).toBe(false);
    // parent folders it had to create are gone too; no hidden *.kdx-partial-* folder remains
    expect(listTree(dir)).toEqual([]);
  });
  it('a failure leaves an existing --out exactly as it was', async () => {
    const dir = scratch('atomic2');
    const out = join(dir, 'out');
    mkdirSync(out);
    writeFileSync(join(out, 'keep.txt'), 'old');
    await expect(withOutput(out, async (stage) => { stage.write('keep.txt', 'new'); stage.write('x.txt', 'x'); await Promise.resolve(); throw new Error('late'); })).rejects.toThrow('late');
    expect(listTree(dir)).toEqual(['out', 'out/keep.txt']);
    expect(readFileSync(join(out, 'keep.txt'), 'utf8')).toBe('old');
  });
  it('success moves every staged file under --out and removes the stage', async () => {
    const dir = scratch('atomic3');
    const out = join(dir, 'out');
    const r = await withOutput(out, (stage) => { stage.write('a.txt', 'A'); stage.write('k/b.txt', 'B'); return 42; });
    expect(r).toBe(42);
    expect(listTree(dir)).toEqual(['out', 'out/a.txt', 'out/k', 'out/k/b.txt']);
  });
  it('refuses paths that escape the output folder', async () => {
    const dir = scratch('atomic4');
    await expect(withOutput(join(dir, 'out'), (stage) => stage.write('../evil.txt', 'x'))).rejects.toThrow(/escapes/);
    expect(listTree(dir)).toEqual([]);
  });
});
