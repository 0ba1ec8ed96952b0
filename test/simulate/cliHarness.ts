/**
 * Runs `kerneldx simulate` in-process with only the simulate command registered (so the test
 * does not depend on other commands' modules), mapping errors to exit codes as src/cli/main.ts does.
 */
import { Command, CommanderError } from 'commander';
import { KdxError } from '../../src/errors.js';
import { registerSimulate } from '../../src/cli/simulate.js';

export async function runSimulate(args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  let stdout = '', stderr = '';
  const io = { stdout: (s: string) => { stdout += s; }, stderr: (s: string) => { stderr += s; } };
  const program = new Command().name('kerneldx').exitOverride().configureOutput({ writeOut: io.stdout, writeErr: io.stderr });
  registerSimulate(program, io, () => {});
  try {
    await program.parseAsync(['node', 'kerneldx', 'simulate', ...args]);
    return { code: 0, stdout, stderr };
  } catch (e) {
    if (e instanceof CommanderError) return { code: e.code === 'commander.helpDisplayed' || e.code === 'commander.help' ? 0 : 2, stdout, stderr };
    if (e instanceof KdxError) return { code: e.exitCode, stdout, stderr: stderr + e.message };
    return { code: 1, stdout, stderr: stderr + String((e as Error)?.stack ?? e) };
  }
}
