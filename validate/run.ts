/**
 * `npm run validate [-- filter...]`: the diagnosis validation suite. Prints a score table
 * (case × noise level: checks right / unsure / wrong), the misses, and the issue's targets:
 * every verdict right at noise ≤ 0.1, no confident (≥ 0.8) wrong verdict at noise 1,
 * and ≥ 90 % right among verdicts given with confidence ≥ 0.9. Writes validate-output.json.
 */
import { writeFileSync } from 'node:fs';
import { cases, noiseLevels, seeds } from './cases.js';
import { runCase, targets, type CaseResult } from './suite.js';

const filters = process.argv.slice(2).filter((a) => !a.startsWith('--'));
const fastOnly = process.argv.includes('--fast');
const selected = cases.filter((c) => (filters.length === 0 || filters.some((f) => c.name.includes(f) || c.family.includes(f))) && (!fastOnly || c.fast));

const results: CaseResult[] = [];
for (const c of selected) {
  for (const noise of noiseLevels) {
    for (const seed of seeds) {
      const r = runCase(c, noise, seed);
      results.push(r);
      const tally = (o: string) => r.checks.filter((k) => k.outcome === o).length;
      process.stderr.write(`${c.name.padEnd(26)} noise ${String(noise).padEnd(5)} seed ${seed}: ${tally('right')} right, ${tally('unsure')} unsure, ${tally('wrong')} wrong (${r.seconds.toFixed(1)} s)${r.error ? `  ERROR ${r.error}` : ''}\n`);
    }
  }
}

console.log('\nScore table (right/unsure/wrong over seeds)');
console.log(['case'.padEnd(26), ...noiseLevels.map((n) => `noise ${n}`.padEnd(12))].join(' '));
for (const c of selected) {
  const cells = noiseLevels.map((n) => {
    const rs = results.filter((r) => r.name === c.name && r.noise === n);
    const t = (o: string) => rs.reduce((s, r) => s + r.checks.filter((k) => k.outcome === o).length, 0);
    const err = rs.some((r) => r.error) ? '!' : '';
    return `${t('right')}/${t('unsure')}/${t('wrong')}${err}`.padEnd(12);
  });
  console.log([c.name.padEnd(26), ...cells].join(' '));
}

console.log('\nMisses (noise ≤ 0.1: anything not right; noise 1: wrong)');
for (const r of results) {
  if (r.error) console.log(`  ${r.name} noise ${r.noise} seed ${r.seed}: ERROR ${r.error}`);
  for (const c of r.checks) {
    if ((r.noise <= 0.1 && c.outcome !== 'right') || (r.noise >= 1 && c.outcome === 'wrong')) {
      console.log(`  ${r.name} noise ${r.noise} seed ${r.seed}: ${c.what} ${c.outcome} — got ${c.got}, want ${c.want}, confidence ${c.confidence.toFixed(2)}`);
    }
  }
}

const t = targets(results);
console.log('\nTargets');
console.log(`  noise ≤ 0.1, every verdict right: ${t.lowNoiseAllRight ? 'met' : `NOT met (${t.lowNoiseMisses} misses, ${t.errors} errors)`}`);
console.log(`  noise 1, no wrong verdict with confidence ≥ 0.8: ${t.highNoiseConfidentWrong === 0 ? 'met' : `NOT met (${t.highNoiseConfidentWrong})`}`);
console.log(`  confidence ≥ 0.9 right ≥ 90 %: ${t.calibration.fraction >= 0.9 ? 'met' : 'NOT met'} (${t.calibration.right}/${t.calibration.count} = ${(100 * t.calibration.fraction).toFixed(1)} %)`);
writeFileSync('validate-output.json', JSON.stringify({ results, targets: t }, null, 2));
process.exitCode = t.lowNoiseAllRight && t.highNoiseConfidentWrong === 0 && t.calibration.fraction >= 0.9 ? 0 : 1;
