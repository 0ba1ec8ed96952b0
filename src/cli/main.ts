/**
 * Command-line entry. Each command lives in its own file and registers itself here.
 * Exit codes (interface.md §4): 0 done, 2 usage, 3 invalid input, 4 data insufficient, 1 other.
 */
import { Command, CommanderError } from 'commander';
import { KdxError } from '../errors.js';
import { processIo, type Io } from './common.js';
import { VERSION } from '../version.js';
import { commands } from './commands.js';

export async function main(argv: string[], io: Io = processIo): Promise<number> {
  const program = new Command();
  program
    .name('kerneldx')
    .description('Learn the Green\'s function of a system you can force and measure, diagnose what kind of hidden linear operator it is, and report ranked hypotheses with evidence.')
    .version(VERSION)
    .exitOverride()
    .configureOutput({ writeOut: io.stdout, writeErr: io.stderr })
    .showHelpAfterError('(run with --help for usage)');
  let code = 0;
  for (const register of commands) register(program, io, (c) => { code = c; });
  try {
    await program.parseAsync(argv);
    return code;
  } catch (e) {
    if (e instanceof CommanderError) {
      if (e.code === 'commander.helpDisplayed' || e.code === 'commander.version' || e.code === 'commander.help') return 0;
      return 2;
    }
    if (e instanceof KdxError) {
      io.stderr(`kerneldx: ${e.message}\n`);
      return e.exitCode;
    }
    io.stderr(`kerneldx: internal error: ${(e as Error)?.stack ?? String(e)}\n`);
    return 1;
  }
}
