/**
 * `kerneldx design`: an excitation plan — Gaussian-process forcing patterns on the actuator
 * points, written as the forcing side of a study folder, plus design.json saying what was done
 * and how many experiments to run.
 */
import type { Command } from 'commander';
import { UsageError } from '../errors.js';
import { Progress, parseIntOpt, parseNumOpt, parseGrid, gridBounds, type Io } from './common.js';
import type { Register } from './commands.js';
import { readArray } from '../io/arrays.js';
import { withOutput } from '../io/output.js';
import { writeStudy } from '../io/study.js';
import { makePlan } from '../design/plan.js';
import { TOOL } from '../version.js';
import { zeros, type Mat } from '../linalg/dense.js';
import type { Domain, Dimension, Study } from '../types.js';
import { InputError } from '../errors.js';

interface DesignOpts {
  points?: string; grid?: string; count?: string; lengthScale?: string; seed?: string;
  covariance?: string; targetRank?: string; oversampling?: string; noise?: string;
  method?: string; tolerance?: string; maxRank?: string; responsePoints?: string;
  out: string; quiet?: boolean; json?: boolean;
}

function readPointsFile(path: string, what: string): Mat {
  const r = readArray(path, { label: path });
  let m = r.matrix;
  if (m.rows === 1 && m.cols > 2) m = { rows: m.cols, cols: 1, data: m.data };
  if (m.cols !== 1 && m.cols !== 2) {
    throw new InputError({ file: path, column: m.cols > 2 ? 3 : undefined }, `${what} must have 1 (x) or 2 (x, y) columns, found ${m.cols}`);
  }
  const seen = new Map<string, number>();
  for (let i = 0; i < m.rows; i++) {
    const key = Array.from(m.data.subarray(i * m.cols, (i + 1) * m.cols), (v) => v.toPrecision(12)).join(',');
    const prev = seen.get(key);
    if (prev !== undefined) throw new InputError({ file: path, row: r.rowOf(i) }, `duplicate point (same as row ${r.rowOf(prev)})`);
    seen.set(key, i);
  }
  return m;
}

export const registerDesign: Register = (program: Command, io: Io, setExit) => {
  program.command('design')
    .description('Write an excitation plan: Gaussian-process forcing patterns on the actuator points (the forcing side of a study folder), and the number of experiments to run for a target rank.')
    .option('--points <file>', 'actuator points, one per row (x or x,y; .csv, .npy or .json)')
    .option('--grid <spec>', 'uniform grid A:B:N (1-D) or AX:BX:NX,AY:BY:NY (2-D)')
    .option('--count <n>', 'number of forcing patterns (experiments) to write')
    .option('--length-scale <l>', 'correlation length of the forcings (default: 6 point spacings)')
    .option('--covariance <kind>', 'se (squared exponential) or matern52', 'se')
    .option('--seed <s>', 'random seed', '0')
    .option('--target-rank <k>', 'rank of the kernel you want to identify (default: the number of directions the forcings excite above --noise)')
    .option('--oversampling <p>', 'extra experiments beyond the target rank', '10')
    .option('--noise <level>', 'expected relative noise of the responses; directions with relative amplitude below it count as not excited', '0.01')
    .option('--response-points <file>', 'sensor points, if not the actuator points')
    .option('--method <m>', 'sampler: auto, dense or low-rank', 'auto')
    .option('--tolerance <t>', 'low-rank sampler: largest fraction of the variance the draws may miss', '1e-3')
    .option('--max-rank <r>', 'low-rank sampler: cap on the factor rank', '2000')
    .requiredOption('--out <dir>', 'output folder')
    .option('--quiet', 'no progress on stderr')
    .option('--json', 'print a JSON summary on stdout')
    .action(async (o: DesignOpts) => {
      const progress = new Progress(io, !!o.quiet);
      if (!!o.points === !!o.grid) throw new UsageError('give exactly one of --points FILE or --grid A:B:N');
      const count = parseIntOpt('--count', o.count, 1);
      if (count === undefined) throw new UsageError('--count N is required');
      const lengthScale = parseNumOpt('--length-scale', o.lengthScale, { positive: true });
      const seed = parseIntOpt('--seed', o.seed, 0)!;
      if (o.covariance !== 'se' && o.covariance !== 'matern52') throw new UsageError(`--covariance must be se or matern52, got "${o.covariance}"`);
      const targetRank = parseIntOpt('--target-rank', o.targetRank, 1);
      const oversampling = parseIntOpt('--oversampling', o.oversampling, 0)!;
      const noise = parseNumOpt('--noise', o.noise, { positive: true })!;
      if (o.method !== 'auto' && o.method !== 'dense' && o.method !== 'low-rank') throw new UsageError(`--method must be auto, dense or low-rank, got "${o.method}"`);
      const tolerance = parseNumOpt('--tolerance', o.tolerance, { positive: true })!;
      if (tolerance >= 1) throw new UsageError('--tolerance must be below 1');
      const maxRank = parseIntOpt('--max-rank', o.maxRank, 1)!;

      let points: Mat, domain: Domain;
      if (o.grid) {
        points = parseGrid(o.grid);
        const b = gridBounds(o.grid);
        domain = points.cols === 1
          ? { kind: 'interval', bounds: [b[0]![0]!, b[0]![1]!] }
          : { kind: 'box', bounds: [[b[0]![0]!, b[0]![1]!], [b[1]![0]!, b[1]![1]!]] };
      } else {
        points = readPointsFile(o.points!, 'points');
        domain = { kind: 'points' };
      }
      if (points.rows < 2) throw new InputError({ file: o.points ?? '--grid' }, 'need at least 2 points');
      const dimension = points.cols as Dimension;
      let sensors = points;
      if (o.responsePoints) {
        sensors = readPointsFile(o.responsePoints, 'response points');
        if (sensors.cols !== dimension) throw new InputError({ file: o.responsePoints }, `response points have ${sensors.cols} column(s) but the actuator points have ${dimension}`);
      }

      const plan = makePlan(points, {
        count, covariance: o.covariance, lengthScale, seed, targetRank, oversampling, noise,
        method: o.method === 'auto' ? 'auto' : o.method === 'dense' ? 'dense' : 'low-rank', tolerance, maxRank, domain,
        say: (m) => progress.say(m),
      });
      const rec = plan.record;
      const todo = `Run the ${count} experiment(s): apply row j of forcings.npy (one value per forcing point, in the order of forcing_points.csv) and measure the response at every point of response_points.csv. ` +
        `Write responses.csv with one row per experiment in the same order and one column per response point (empty field or NaN = not measured). ` +
        `For another format or name, change "values" here. Optionally add "noise": {"sigma": ...} and "units". Then delete this "todo" key.`;
      const study: Study = {
        title: `Excitation plan: ${count} ${rec.covariance.kind} forcing pattern(s), length scale ${Number(rec.covariance.length_scale.toPrecision(4))}`,
        dimension, domain,
        inputs: { points, values: plan.forcings, components: 1 },
        outputs: { points: sensors, values: zeros(0, sensors.rows), components: 1 },
      };
      await withOutput(o.out, (stage) => {
        writeStudy(stage, study, { forcingsOnly: true, todo, responsesFile: 'responses.csv' });
        const design = {
          ...rec,
          tool: TOOL,
          files: {
            study: 'study.json', forcing_points: 'forcing_points.csv', forcings: 'forcings.npy',
            response_points: 'response_points.csv', responses_expected: 'responses.csv',
          },
          source: o.grid ? { grid: o.grid } : { points: o.points },
        };
        stage.write('design.json', JSON.stringify(design, null, 2) + '\n');
      });
      for (const w of rec.recommendation.warnings) progress.say(`note: ${w}`);
      progress.say(`wrote ${o.out}: ${count} forcing pattern(s); recommended ${rec.recommendation.recommended_count} experiment(s) for rank ${rec.recommendation.target_rank}`);
      if (o.json) {
        io.stdout(JSON.stringify({
          count, recommended_count: rec.recommendation.recommended_count, target_rank: rec.recommendation.target_rank,
          length_scale: rec.covariance.length_scale, covariance: rec.covariance.kind, method: rec.sampling.method,
          rank: rec.sampling.rank, captured_variance_fraction: rec.sampling.captured_variance_fraction, out: o.out,
        }) + '\n');
      }
      setExit(0);
    });
};
