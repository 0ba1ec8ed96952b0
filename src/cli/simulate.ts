/**
 * `kerneldx simulate --operator SPEC (--points FILE | --grid A:B:N) --count N [--noise LEVEL] [--seed S] --out DIR`
 * A synthetic study from a known operator, plus truth/ with the exact kernel and homogeneous part.
 */
import { existsSync, readFileSync, statSync } from 'node:fs';
import type { Register } from './commands.js';
import { Progress, parseGrid, parseIntOpt, parseNumOpt } from './common.js';
import { UsageError, InputError } from '../errors.js';
import { readMatrix } from '../io/arrays.js';
import { writeStudy } from '../io/study.js';
import { writeKernel } from '../io/kernel.js';
import { withOutput } from '../io/output.js';
import type { Mat } from '../linalg/dense.js';
import { parseOperator, simulateStudy, describeOperator, type OperatorSpec } from '../simulate/index.js';

const SPEC_HELP = `
Operator spec (full guide: docs/operator-spec.md) — inline "key=value; key=value" or a JSON file:
  1-D   (e u'')'' - (a u')' + b u' + c u [+ cubic u^3] = f on domain=A:B (default 0:1)
        a, b, c, e: numbers, formulas of x (e.g. 1+x^2), or pw(v0, x1, v1, ...) with interfaces x1, ...
        left=, right=: dirichlet(g) neumann(g) robin(alpha,beta,g) clamped(g0,g1) supported(g0,g2) free(g2,g3)
        systems: a1, a2, c11, c12, c21, ..., left1, right2 (up to 3 components)
  2-D   domain=box(ax,bx,ay,by) or disk(cx,cy,r); a, c constants; boundary=, left=, right=, bottom=, top=
  kernel=FORMULA of x, s (1-D) or x, y, s, t (2-D) [homogeneous=FORMULA]
Examples:
  --operator "a=0.05; b=1"                      -0.05 u'' + u' = f, u(0) = u(1) = 0
  --operator "a=pw(1,0.4,10); left=dirichlet(1); right=neumann(0)"
  --operator "e=1; left=supported; right=supported"
  --operator "domain=disk(0,0,1)"               --grid is 1-D only: pass 2-D points with --points
`;

interface Opts {
  operator: string; points?: string; grid?: string; sensors?: string; sensorGrid?: string;
  count: string; noise?: string; seed?: string; lengthScale?: string; covariance?: string;
  amplitudes?: string; title?: string; stateNoise?: boolean; format?: string; out: string;
  quiet?: boolean; json?: boolean;
}

function readPoints(file: string, dimension: number): Mat {
  const m = readMatrix(file, { label: file });
  return dimension === 1 && m.rows === 1 && m.cols > 1 ? { rows: m.cols, cols: 1, data: m.data } : m;
}

function loadOperator(value: string): OperatorSpec {
  const looksLikeFile = /\.json$/i.test(value.trim()) || (existsSync(value) && statSync(value).isFile());
  if (looksLikeFile) {
    if (!existsSync(value)) throw new InputError({ file: value }, 'operator spec file not found');
    return parseOperator(readFileSync(value, 'utf8'), { label: value });
  }
  return parseOperator(value, { label: '--operator' });
}

export const registerSimulate: Register = (program, io) => {
  program.command('simulate')
    .description('Make a synthetic study from a known operator (for validation and demos), with truth/ holding the exact kernel and homogeneous part on the study\'s points.')
    .requiredOption('--operator <spec>', 'operator: inline spec or a JSON file (see below)')
    .option('--points <file>', 'actuator (forcing) points, one a row')
    .option('--grid <A:B:N>', 'actuator points on a uniform grid (AX:BX:NX,AY:BY:NY in 2-D)')
    .option('--sensors <file>', 'sensor (response) points, if different from the actuators')
    .option('--sensor-grid <A:B:N>', 'sensor points on a uniform grid')
    .requiredOption('--count <n>', 'number of experiments')
    .option('--noise <level>', 'iid Gaussian noise of std LEVEL × mean|u| (default 0)')
    .option('--seed <s>', 'random seed (default 0)')
    .option('--length-scale <l>', 'forcing correlation length (default 6 point spacings)')
    .option('--covariance <kind>', 'forcing covariance: se or matern52 (default se)')
    .option('--amplitudes <lo:hi>', 'per-experiment forcing amplitude drawn uniformly in [LO, HI]')
    .option('--title <text>', 'study title')
    .option('--state-noise', 'write the noise sigma into study.json noise.sigma')
    .option('--format <fmt>', 'array format of forcings/responses: npy or csv (default npy)')
    .requiredOption('--out <dir>', 'output study folder')
    .option('--quiet', 'no progress on stderr')
    .option('--json', 'print a JSON summary on stdout')
    .addHelpText('after', SPEC_HELP)
    .action(async (o: Opts) => {
      const progress = new Progress(io, !!o.quiet);
      if (!!o.points === !!o.grid) throw new UsageError('give exactly one of --points FILE or --grid A:B:N');
      if (o.sensors && o.sensorGrid) throw new UsageError('give at most one of --sensors and --sensor-grid');
      const count = parseIntOpt('--count', o.count)!;
      const noise = parseNumOpt('--noise', o.noise, { min: 0 });
      const seed = parseIntOpt('--seed', o.seed, 0);
      const lengthScale = parseNumOpt('--length-scale', o.lengthScale, { positive: true });
      if (o.covariance && o.covariance !== 'se' && o.covariance !== 'matern52') throw new UsageError(`--covariance must be se or matern52, got "${o.covariance}"`);
      if (o.format && o.format !== 'npy' && o.format !== 'csv') throw new UsageError(`--format must be npy or csv, got "${o.format}"`);
      let amplitudes: [number, number] | undefined;
      if (o.amplitudes) {
        const f = o.amplitudes.split(':').map(Number);
        if (f.length !== 2 || !f.every(Number.isFinite) || !(f[0]! > 0) || !(f[1]! >= f[0]!)) throw new UsageError(`--amplitudes expects LO:HI with 0 < LO ≤ HI, got "${o.amplitudes}"`);
        amplitudes = [f[0]!, f[1]!];
      }
      const op = loadOperator(o.operator);
      const pointsIn = o.points ? readPoints(o.points, op.dimension) : parseGrid(o.grid!);
      const pointsOut = o.sensors ? readPoints(o.sensors, op.dimension) : o.sensorGrid ? parseGrid(o.sensorGrid) : undefined;
      progress.say(`simulating ${describeOperator(op)}: ${count} experiments, ${pointsIn.rows} actuators${pointsOut ? `, ${pointsOut.rows} sensors` : ''}`);
      const t0 = Date.now();
      const { study, truth } = simulateStudy(op, {
        pointsIn, pointsOut, count, noise, seed, lengthScale, amplitudes, title: o.title, stateNoise: !!o.stateNoise,
        covariance: o.covariance as 'se' | 'matern52' | undefined,
        pointsInLabel: o.points ?? '--grid', pointsOutLabel: o.sensors ?? (o.sensorGrid ? '--sensor-grid' : o.points ?? '--grid'),
      });
      progress.say(`solved in ${((Date.now() - t0) / 1000).toFixed(1)} s; writing ${o.out}`);
      const sim = (study.extra?.simulation ?? {}) as Record<string, unknown>;
      await withOutput(o.out, (stage) => {
        writeStudy(stage, study, { format: (o.format as 'npy' | 'csv' | undefined) ?? 'npy' });
        writeKernel(stage, truth.kernel, 'truth');
        const notes = [
          'kernel.npy holds point values of the exact Green\'s function G(x, s) at (sensor, actuator) points (not G·W).',
          'homogeneous.npy holds u_h, the response to zero forcing with the operator\'s boundary data.',
        ];
        if (op.dimension === 2 && op.kind === 'pde') notes.push('G is logarithmically singular at x = s: where a sensor coincides with an actuator the kernel holds the average of G over a disk of area w (that actuator\'s quadrature weight) centred there.');
        if (truth.linearisation) notes.push('The operator is nonlinear (cubic term): no Green\'s function exists; kernel.npy is the Green\'s function of the linearisation at u = u_h, i.e. c(x) + 3·cubic·u_h(x)², and homogeneous.npy is the nonlinear u_h.');
        stage.write('truth/truth.json', JSON.stringify({
          format: 'kerneldx-truth/1',
          equation: describeOperator(op),
          operator: op,
          linearisation: !!truth.linearisation,
          simulation: sim,
          notes,
        }, null, 2) + '\n');
      });
      const summary = { out: o.out, experiments: count, actuators: pointsIn.rows, sensors: (pointsOut ?? pointsIn).rows, components: study.inputs.components, noise_level: noise ?? 0, noise_sigma: sim.noise_sigma, equation: describeOperator(op) };
      if (o.json) io.stdout(JSON.stringify(summary) + '\n');
      progress.say(`wrote ${o.out} (study.json, forcings, responses, truth/)`);
    });
};
