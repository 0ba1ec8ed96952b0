/** `kerneldx diagnose (KERNEL_DIR | STUDY_DIR) --out DIR` and `kerneldx run STUDY_DIR --out DIR`. */
import type { Command } from 'commander';
import { Progress, parseIntOpt, type Io } from './common.js';
import { diagnoseDir } from '../pipeline.js';
import { UsageError } from '../errors.js';
import type { Register } from './commands.js';

interface Opts { out: string; seed?: string; assume?: string; refit: boolean; quiet?: boolean; json?: boolean }

function assumeOpt(v: string | undefined): 'none' | 'symmetric' | 'translation' {
  if (v === undefined) return 'none';
  if (v === 'none' || v === 'symmetric' || v === 'translation') return v;
  throw new UsageError(`--assume must be none, symmetric or translation, got "${v}"`);
}

function summary(f: import('../types.js').Findings): Record<string, unknown> {
  return {
    self_adjoint: f.self_adjoint.verdict, transport: f.transport.verdict, translation_invariant: f.translation_invariant.verdict,
    order: f.order.estimate, locality: f.locality.verdict, oscillation: f.oscillation.verdict, screening: f.screening.verdict,
    interfaces: f.interfaces.map((i) => i.location), singularities: f.singularities.map((s) => s.location),
    coupling: f.coupling.verdict, linearity: f.linearity.verdict, operator: f.operator.expression,
    hypotheses: f.hypotheses.map((h) => ({ statement: h.statement, confidence: h.confidence })),
  };
}

function command(program: Command, io: Io, name: 'diagnose' | 'run'): void {
  const c = program.command(`${name} <dir>`)
    .description(name === 'diagnose'
      ? 'Diagnose the hidden operator behind a kernel folder, or behind a study folder (fitted first); writes DIR/findings.json (and DIR/kernel/).'
      : 'Fit, diagnose and report in one go: DIR/kernel/, DIR/findings.json, DIR/dossier.html, DIR/dossier.pdf.')
    .requiredOption('--out <dir>', 'output folder')
    .option('--seed <n>', 'seed for resampling and every random choice (default 0)')
    .option('--assume <constraint>', 'fit under a structural constraint the user knows: none | symmetric | translation')
    .option('--no-refit', 'do not refit under symmetry when the diagnosis establishes self-adjointness')
    .option('--quiet', 'no progress on stderr')
    .option('--json', 'print a summary of the findings as JSON on stdout');
  c.action(async (dir: string, o: Opts) => {
    const seed = parseIntOpt('--seed', o.seed, 0) ?? 0;
    const p = new Progress(io, !!o.quiet);
    const r = await diagnoseDir(dir, o.out, {
      seed, quiet: o.quiet, assume: assumeOpt(o.assume), noRefit: !o.refit,
      argv: process.argv.slice(2), progress: (m) => p.say(m),
    }, name === 'run');
    if (o.json) io.stdout(JSON.stringify(summary(r.findings), null, 2) + '\n');
    else if (name === 'run') io.stdout(`${r.html}\n${r.pdf}\n`);
    p.say(`findings written to ${o.out}/findings.json`);
  });
}

export const registerDiagnose: Register = (program, io) => { command(program, io, 'diagnose'); };
export const registerRun: Register = (program, io) => { command(program, io, 'run'); };
