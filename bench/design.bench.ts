/**
 * `kerneldx design` at scale: GP forcing patterns on 5,000 points with 300 draws, the whole
 * plan (draws + covariance spectrum + recommendation). Target: < 10 s CPU for 5,000 scattered
 * 2-D points (SE, default length scale). Other cases are printed for information.
 */
import { makePlan } from '../src/design/plan.js';
import { Rng } from '../src/linalg/rng.js';
import type { Mat } from '../src/linalg/dense.js';
import { cpuSeconds, peakRssMb, row } from './util.js';

function scattered(n: number, seed: number): Mat {
  const r = new Rng(seed);
  return { rows: n, cols: 2, data: Float64Array.from({ length: 2 * n }, () => r.uniform()) };
}
function grid2d(nx: number, ny: number): Mat {
  const d: number[] = [];
  for (let j = 0; j < ny; j++) for (let i = 0; i < nx; i++) d.push(i / (nx - 1), j / (ny - 1));
  return { rows: nx * ny, cols: 2, data: Float64Array.from(d) };
}

export async function run(): Promise<boolean> {
  const cases: { name: string; points: Mat; covariance: 'se' | 'matern52'; target?: number }[] = [
    { name: '5000 scattered 2-D, SE', points: scattered(5000, 1), covariance: 'se', target: 10 },
    { name: '4900 grid 70x70, SE', points: grid2d(70, 70), covariance: 'se' },
    { name: '5000 scattered 2-D, Matérn-5/2', points: scattered(5000, 1), covariance: 'matern52' },
    { name: '1500 grid 1-D, SE (dense)', points: { rows: 1500, cols: 1, data: Float64Array.from({ length: 1500 }, (_, i) => i / 1499) }, covariance: 'se' },
  ];
  const w = [34, 10, 10, 8, 12, 10, 10];
  console.log(row(['case', 'CPU s', 'wall s', 'rank', 'captured', 'excited', 'target s'], w));
  let ok = true;
  for (const c of cases) {
    const { value: plan, cpu, wall } = cpuSeconds(() => makePlan(c.points, { count: 300, covariance: c.covariance, seed: 1 }));
    const r = plan.record;
    const ex = r.spectrum.excited_directions;
    console.log(row([c.name, cpu, wall, r.sampling.rank, r.sampling.captured_variance_fraction.toFixed(5), ex.resolved ? `${ex.lower}` : `≥${ex.lower}`, c.target ?? '-'], w));
    if (c.target !== undefined && cpu > c.target) ok = false;
  }
  console.log(`peak RSS ${peakRssMb().toFixed(0)} MB; target (5000 scattered 2-D, 300 draws < 10 s CPU): ${ok ? 'met' : 'MISSED'}`);
  return ok;
}
