import { describe, it, expect } from 'vitest';
import { coupling } from '../../src/analyses/coupling.js';
import type { Kernel } from '../../src/types.js';
import { kernel1d, laplace, simplyBeam, helmholtz, screened, uniformGrid, type G1 } from '../helpers/closedForms.js';
import { weightedNorm } from '../../src/analyses/util/a_common.js';
import { sampleKernel } from '../helpers/closedForms.js';
import { noisy } from '../fixtures/anaA_ctx.js';

function system(blocks: G1[][], n = 80): Kernel {
  const base = kernel1d(laplace(), n);
  const x = uniformGrid(n), c = blocks.length;
  const G = { rows: c * n, cols: c * n, data: new Float64Array(c * n * c * n) };
  for (let i = 0; i < c; i++) for (let j = 0; j < c; j++) {
    const B = sampleKernel(blocks[i]![j]!, x);
    for (let a = 0; a < n; a++) for (let b = 0; b < n; b++) G.data[(i * n + a) * c * n + j * n + b] = B.data[a * n + b]!;
  }
  return { ...base, G, components: { in: c, out: c } };
}
const zero: G1 = () => 0;

describe('coupling', () => {
  it('one-way: −u1″ = f1, −u2″ + 50 u1 = f2 has G21 = −50·(simply supported beam kernel)', () => {
    // composition identity G_beam = ∫ G_a G_a (references (f2), checked there to 2.8e-15)
    const G21: G1 = (x, s) => -50 * simplyBeam(x, s);
    const k = system([[laplace(), zero], [G21, laplace()]]);
    const { kernel, ctx } = noisy(k, 0.002, 61);
    const f = coupling.run(kernel, ctx).finding;
    expect(f.verdict).toBe('one-way');
    const n = 80, x = uniformGrid(n), w = k.weightsIn;
    const expected = weightedNorm(sampleKernel(G21, x), w, w) / weightedNorm(sampleKernel(laplace(), x), w, w);
    expect(Math.abs(f.matrix![1]![0]! - expected) / expected).toBeLessThan(0.02);
    expect(f.matrix![0]![1]!).toBeLessThan(0.02);
    expect(f.symmetric).toBe('no');
  });
  it('two-way symmetric: −u1″ + 25u2 = f1, −u2″ + 25u1 = f2 via u± = u1 ± u2 (screened κ=5 and Helmholtz k=5, Duffy)', () => {
    const gp = screened(5), gm = helmholtz(5);
    const d: G1 = (x, s) => 0.5 * (gp(x, s) + gm(x, s));
    const o: G1 = (x, s) => 0.5 * (gp(x, s) - gm(x, s));
    const { kernel, ctx } = noisy(system([[d, o], [o, d]]), 0.002, 62);
    const f = coupling.run(kernel, ctx).finding;
    expect(f.verdict).toBe('two-way');
    expect(f.symmetric).toBe('yes');
  });
  it('uncoupled fields: none; a scalar kernel: not-applicable', () => {
    const { kernel, ctx } = noisy(system([[laplace(), zero], [zero, screened(3)]]), 0.002, 63);
    expect(coupling.run(kernel, ctx).finding.verdict).toBe('none');
    const s = noisy(kernel1d(laplace(), 50), 0.002, 64);
    expect(coupling.run(s.kernel, s.ctx).finding.verdict).toBe('not-applicable');
  });
});
