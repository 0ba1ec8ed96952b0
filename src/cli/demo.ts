/**
 * `kerneldx demo [--out DIR] [--example NAME]`: the built-in scenarios end to end. The study is
 * simulated from examples/NAME/scenario.json (operator spec in the simulator's syntax, points,
 * count, noise, seed) into DIR/study/ when it is not there yet, then fit → diagnose → report
 * runs into DIR. Same seed ⇒ same study ⇒ same findings. Prints the dossier's path on stdout.
 */
import { existsSync, readFileSync, readdirSync } from 'node:fs';
import { join, resolve, relative } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Register } from './commands.js';
import { Progress, parseGrid, parseIntOpt } from './common.js';
import { UsageError, InputError } from '../errors.js';
import { withOutput } from '../io/output.js';
import { writeStudy } from '../io/study.js';

export const EXAMPLES_DIR = fileURLToPath(new URL('../../examples/', import.meta.url));
export const DEMO_EXAMPLE = 'conveyor-oven';

export interface Scenario {
  title: string; operator: string; grid: string; sensor_grid?: string;
  count: number; noise: number; seed: number; length_scale?: number;
  /** per-experiment forcing amplitude range [lo, hi] (simulator default [1, 1]) */
  amplitudes?: [number, number];
  units?: { x?: string; f?: string; u?: string };
}

export function listExamples(): string[] {
  return readdirSync(EXAMPLES_DIR, { withFileTypes: true }).filter((d) => d.isDirectory() && existsSync(join(EXAMPLES_DIR, d.name, 'scenario.json'))).map((d) => d.name).sort();
}

export function readScenario(name: string): Scenario {
  const p = join(EXAMPLES_DIR, name, 'scenario.json');
  if (!existsSync(p)) throw new UsageError(`--example: no scenario "${name}" (have: ${listExamples().join(', ')})`);
  let sc: Scenario;
  try { sc = JSON.parse(readFileSync(p, 'utf8')) as Scenario; } catch (e) {
    throw new InputError({ file: p }, `invalid JSON: ${(e as Error).message}`);
  }
  const a = sc.amplitudes;
  if (a !== undefined && !(Array.isArray(a) && a.length === 2 && a[0] > 0 && a[1] >= a[0])) {
    throw new InputError({ file: p }, '"amplitudes" must be [lo, hi] with 0 < lo ≤ hi');
  }
  return sc;
}

/** Simulate an example's study into `studyDir` (atomic). */
export async function makeExampleStudy(name: string, studyDir: string): Promise<void> {
  const sc = readScenario(name);
  const sim = await import('../simulate/index.js');
  const op = sim.parseOperator(sc.operator, { label: `examples/${name}/scenario.json operator` });
  const { study } = sim.simulateStudy(op, {
    pointsIn: parseGrid(sc.grid), pointsOut: sc.sensor_grid ? parseGrid(sc.sensor_grid) : undefined,
    count: sc.count, noise: sc.noise, seed: sc.seed, lengthScale: sc.length_scale, title: sc.title,
    amplitudes: sc.amplitudes,
  });
  study.title = sc.title;
  if (sc.units) study.units = sc.units;
  await withOutput(studyDir, (stage) => writeStudy(stage, study));
}

export const registerDemo: Register = (program, io) => {
  program.command('demo')
    .description(`Run a built-in scenario end to end (default "${DEMO_EXAMPLE}": a heated conveyor-oven bar whose middle carries a moving belt) and print the dossier's path.`)
    .option('--out <dir>', 'output folder', 'kerneldx-demo')
    .option('--example <name>', `scenario under examples/ (${DEMO_EXAMPLE}, coupled-fields, plate-2d)`, DEMO_EXAMPLE)
    .option('--seed <n>', 'seed of the diagnosis (the study has its own seed in scenario.json)')
    .option('--quiet', 'no progress on stderr')
    .option('--json', 'print the paths written as JSON on stdout')
    .action(async (o: { out: string; example: string; seed?: string; quiet?: boolean; json?: boolean }) => {
      const p = new Progress(io, !!o.quiet);
      const sc = readScenario(o.example);
      const out = resolve(o.out);
      const studyDir = join(out, 'study');
      if (!existsSync(join(studyDir, 'study.json'))) {
        p.say(`simulating the "${o.example}" study (${sc.count} experiments, noise ${sc.noise}) into ${relative(process.cwd(), studyDir) || '.'}`);
        await makeExampleStudy(o.example, studyDir);
      } else p.say(`using the existing study in ${relative(process.cwd(), studyDir)}`);
      const { runPipeline } = await import('../pipeline.js');
      const r = await runPipeline(studyDir, out, { seed: parseIntOpt('--seed', o.seed, 0) ?? sc.seed, quiet: !!o.quiet, argv: process.argv.slice(2), progress: (m) => p.say(m) });
      io.stdout(o.json ? JSON.stringify({ html: r.dossierHtml, pdf: r.dossierPdf, findings: r.findingsPath }) + '\n' : `${r.dossierHtml}\n`);
    });
};
