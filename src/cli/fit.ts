/** `kerneldx fit STUDY_DIR --out DIR`: kernel folder (kernel.json + arrays) and fit.json, written atomically. */
import { Progress, parseIntOpt } from './common.js';
import { UsageError } from '../errors.js';
import { readStudy } from '../io/study.js';
import { writeKernel } from '../io/kernel.js';
import { withOutput } from '../io/output.js';
import { fitStudy } from '../fit/index.js';
import type { Register } from './commands.js';

interface Opts { out: string; seed?: string; assume?: string; replicates?: string; quiet?: boolean; json?: boolean }

export const registerFit: Register = (program, io) => {
  program.command('fit <study>')
    .description('Fit the Green\'s function G(x, s) and the homogeneous part u_h of a study; writes DIR/kernel.json with arrays and DIR/fit.json (method, hyper-parameters, noise, uncertainty, coverage, linearity).')
    .requiredOption('--out <dir>', 'output folder')
    .option('--seed <n>', 'seed for the resampling (default 0)')
    .option('--assume <constraint>', 'structure the user knows: none | symmetric (refit under self-adjointness)')
    .option('--replicates <n>', 'number of bootstrap replicates (default 20)')
    .option('--quiet', 'no progress on stderr')
    .option('--json', 'print a summary of fit.json on stdout')
    .action(async (dir: string, o: Opts) => {
      const seed = parseIntOpt('--seed', o.seed, 0) ?? 0;
      const replicates = parseIntOpt('--replicates', o.replicates, 2);
      const assume = o.assume ?? 'none';
      if (assume !== 'none' && assume !== 'symmetric' && assume !== 'translation') throw new UsageError(`--assume must be none, symmetric or translation, got "${assume}"`);
      const p = new Progress(io, !!o.quiet);
      p.say(`reading ${dir}`);
      const study = readStudy(dir);
      const res = fitStudy(study, { seed, assume, replicates, progress: (m) => p.say(m) });
      await withOutput(o.out, (stage) => {
        writeKernel(stage, res.kernel);
        stage.write('fit.json', JSON.stringify(res.report, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? null : v), 2) + '\n');
      });
      const r = res.report;
      if (o.json) {
        io.stdout(JSON.stringify({
          out: o.out, method: r.method, experiments: r.experiments, relative_residual: r.relative_residual,
          noise_estimate: r.noise_estimate, noise_source: r.noise_source,
          relative_kernel_error: r.uncertainty.relative_kernel_error, complete: r.coverage.complete,
          identified_energy_fraction: r.coverage.identified_energy_fraction, linearity: r.linearity.verdict,
          refits: r.refits, seconds: r.seconds, seed: r.seed,
        }, null, 2) + '\n');
      }
      p.say(`kernel and fit.json written to ${o.out} (predicted relative kernel error ${r.uncertainty.relative_kernel_error.toPrecision(2)}${r.coverage.complete ? '' : '; restricted kernel: see fit.json coverage'})`);
    });
};
