/**
 * Speed of the operator analysis (local coefficients by the weak form) on 200- and 1,000-point
 * kernels with 20 replicates, CPU seconds. Target: 200 points under 0.5 s (the analysis' share
 * of the 2 s budget for all analyses); 1,000 points under 5 s. The first run of the process includes
 * the JIT's compilation of the weak-form loops; a second (warm) run is shown beside it, the
 * target being checked on the first.
 */
import { kernel1d, advdiff } from '../test/helpers/closedForms.js';
import { fitStandIn } from '../test/analyses/op_fitStandIn.js';
import { operatorAnalysis } from '../src/analyses/operator.js';
import { Rng } from '../src/linalg/rng.js';
import { cpuSeconds, row } from './util.js';

export async function run(): Promise<boolean> {
  const widths = [10, 14, 12, 12, 12, 10];
  console.log(row(['points', 'order known', 'cpu s', 'warm cpu s', 'target s', 'met'], widths));
  let ok = true;
  for (const [n, target] of [[200, 0.5], [1000, 5]] as const) {
    for (const known of [true, false]) {
      const fit = fitStandIn(kernel1d(advdiff(0.05, 1), n), { noise: 0.01, err: 0.015, seed: 1 });
      const results = known ? { order: { finding: { estimate: 2, decay_exponent: 2, confidence: 0.9 }, evidence: {} } } : {};
      const go = () => operatorAnalysis.run(fit.kernel, { noise: fit.noise, rng: new Rng(1), options: {}, results } as never);
      const t = cpuSeconds(go);
      const warm = cpuSeconds(go);
      const met = !known || t.cpu <= target;
      if (!met) ok = false;
      console.log(row([n, known ? 'yes' : 'no', t.cpu, warm.cpu, known ? target : '-', met ? 'yes' : 'NO'], widths));
    }
  }
  return ok;
}
