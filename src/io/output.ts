/**
 * Atomic output: everything a command writes is staged in a hidden sibling folder and
 * moved under --out only when the command has succeeded, so a failure leaves nothing
 * half-written (interface.md §4).
 */
import { mkdirSync, writeFileSync, renameSync, rmSync, rmdirSync, existsSync, readdirSync, statSync } from 'node:fs';
import { dirname, join, resolve, basename, relative, sep } from 'node:path';
import { createHash } from 'node:crypto';

/** stages not yet committed or aborted: removed if the process exits or is interrupted first */
const live = new Set<OutputStage>();
let hooked = false;
function hookExit(): void {
  if (hooked) return;
  hooked = true;
  process.once('exit', () => { for (const s of [...live]) s.abort(); });
  for (const sig of ['SIGINT', 'SIGTERM'] as const) {
    process.once(sig, () => {
      for (const s of [...live]) s.abort();
      process.exit(sig === 'SIGINT' ? 130 : 143);
    });
  }
}

export class OutputStage {
  readonly target: string;
  readonly stage: string;
  private done = false;
  /** the first parent folder this stage had to create (removed again on abort if still empty) */
  private createdParent: string | undefined;

  constructor(outDir: string) {
    this.target = resolve(outDir);
    const parent = dirname(this.target);
    this.createdParent = mkdirSync(parent, { recursive: true });
    const tag = createHash('sha1').update(`${process.pid}:${Date.now()}:${Math.random()}`).digest('hex').slice(0, 8);
    this.stage = join(parent, `.${basename(this.target)}.kdx-partial-${tag}`);
    mkdirSync(this.stage, { recursive: true });
    live.add(this);
    hookExit();
  }

  /** absolute path inside the stage for a relative output path */
  path(rel: string): string {
    const p = resolve(this.stage, rel);
    if (!p.startsWith(this.stage + sep) && p !== this.stage) throw new Error(`output path escapes the output folder: ${rel}`);
    mkdirSync(dirname(p), { recursive: true });
    return p;
  }

  write(rel: string, content: string | Buffer | Uint8Array): void {
    writeFileSync(this.path(rel), content);
  }

  /** move every staged file under the target, replacing files of the same name */
  commit(): void {
    if (this.done) return;
    mkdirSync(this.target, { recursive: true });
    for (const file of walk(this.stage)) {
      const rel = relative(this.stage, file);
      const dest = join(this.target, rel);
      mkdirSync(dirname(dest), { recursive: true });
      renameSync(file, dest);
    }
    rmSync(this.stage, { recursive: true, force: true });
    this.done = true;
    live.delete(this);
  }

  /** remove everything staged, and the parent folders this stage created if they are empty */
  abort(): void {
    if (this.done) return;
    rmSync(this.stage, { recursive: true, force: true });
    this.done = true;
    live.delete(this);
    if (this.createdParent) {
      for (let d = dirname(this.target); d.length >= this.createdParent.length; d = dirname(d)) {
        try { if (readdirSync(d).length === 0) rmdirSync(d); else break; } catch { break; }
        if (d === this.createdParent) break;
      }
    }
  }
}

function walk(dir: string): string[] {
  const out: string[] = [];
  for (const name of readdirSync(dir)) {
    const p = join(dir, name);
    if (statSync(p).isDirectory()) out.push(...walk(p));
    else out.push(p);
  }
  return out;
}

/** Run `fn` with a stage for `outDir`; commit on success, remove everything on failure. */
export async function withOutput<T>(outDir: string, fn: (stage: OutputStage) => T | Promise<T>): Promise<T> {
  const stage = new OutputStage(outDir);
  try {
    const r = await fn(stage);
    stage.commit();
    return r;
  } catch (e) {
    stage.abort();
    throw e;
  }
}

export function sha256File(buf: Buffer | string): string {
  return createHash('sha256').update(buf).digest('hex');
}

export { existsSync };
