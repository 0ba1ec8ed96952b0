/**
 * Simulator speed (issue: `simulate` of a 1-D study with 1,000 sensors × 300 experiments and of a
 * 2-D study with 2,500 points × 300 experiments, each under 10 s CPU on a 2-core machine), plus
 * the 200-point standard case that other test suites call many times.
 */
import { parseOperator, simulateStudy } from '../src/simulate/index.js';
import type { Mat } from '../src/linalg/dense.js';
import { cpuSeconds, peakRssMb, row } from './util.js';

const grid1 = (n: number): Mat => ({ rows: n, cols: 1, data: Float64Array.from({ length: n }, (_, i) => i / (n - 1)) });
const grid2 = (n: number): Mat => {
  const d: number[] = [];
  for (let j = 0; j < n; j++) for (let i = 0; i < n; i++) d.push(i / (n - 1), j / (n - 1));
  return { rows: n * n, cols: 2, data: Float64Array.from(d) };
};

export async function run(): Promise<boolean> {
  const cases = [
    { name: '1-D -u\'\' 200 pts × 100 (standard)', spec: 'a=1', pts: grid1(200), count: 100, ls: 0.03, target: 1 },
    { name: '1-D -u\'\'-225u 1000 pts × 300', spec: 'c=-225', pts: grid1(1000), count: 300, ls: 0.03, target: 10 },
    { name: '1-D system (2 comp.) 1000 pts × 300', spec: 'a1=1; a2=0.5; c11=1; c12=0.3; c22=2', pts: grid1(1000), count: 300, ls: 0.03, target: 10 },
    { name: '1-D cubic 200 pts × 100, amp 0.2:5', spec: 'a=1; cubic=30', pts: grid1(200), count: 100, ls: 0.03, target: 10, amp: [0.2, 5] as [number, number] },
    { name: '2-D box -Δ 50×50 × 300', spec: 'domain=box(0,1,0,1)', pts: grid2(50), count: 300, ls: 0.1, target: 10 },
    { name: '2-D disk -Δ 2500 pts × 300', spec: 'domain=disk(0.5,0.5,0.5)', pts: diskPoints(2500), count: 300, ls: 0.1, target: 10 },
    { name: '2-D disk -Δu+100u 2500 pts × 300', spec: 'domain=disk(0.5,0.5,0.5); c=100', pts: diskPoints(2500), count: 300, ls: 0.1, target: 10 },
    { name: '2-D disk -Δu-100u 2500 pts × 300', spec: 'domain=disk(0.5,0.5,0.5); c=-100', pts: diskPoints(2500), count: 300, ls: 0.1, target: 10 },
  ];
  const W = [40, 10, 10, 10, 8];
  console.log(row(['case', 'cpu s', 'wall s', 'target s', 'met'], W));
  let ok = true;
  for (const c of cases) {
    const r = cpuSeconds(() => simulateStudy(parseOperator(c.spec), { pointsIn: c.pts, count: c.count, lengthScale: c.ls, seed: 1, noise: 0.01, amplitudes: c.amp }));
    const met = r.cpu < c.target;
    ok &&= met;
    console.log(row([c.name, r.cpu, r.wall, c.target, met ? 'yes' : 'NO'], W));
  }
  console.log(`peak RSS ${peakRssMb().toFixed(0)} MB`);
  return ok;
}

/** Points in a disk on a sunflower (Vogel) spiral: deterministic, near-uniform. */
function diskPoints(n: number): Mat {
  const d = new Float64Array(2 * n);
  const ga = Math.PI * (3 - Math.sqrt(5));
  for (let i = 0; i < n; i++) {
    const r = 0.5 * Math.sqrt((i + 0.5) / n) * 0.999;
    d[2 * i] = 0.5 + r * Math.cos(i * ga); d[2 * i + 1] = 0.5 + r * Math.sin(i * ga);
  }
  return { rows: n, cols: 2, data: d };
}

if (import.meta.url === `file://${process.argv[1]}`) run().then((ok) => { process.exitCode = ok ? 0 : 1; });
