import { describe, it, expect } from 'vitest';
import { oscillation, screening, localWaveNumber } from '../../src/analyses/oscillation.js';
import { kernel1d, laplace, helmholtz, screened } from '../helpers/closedForms.js';
import { noisy } from '../fixtures/anaA_ctx.js';

describe('oscillation and screening', () => {
  it('Helmholtz −u″ − 225u: wavenumber 15 (Duffy; Butkovskiy, from memory)', () => {
    for (const rel of [0, 0.003]) {
      const { kernel, ctx } = noisy(kernel1d(helmholtz(15), 160), rel, 51);
      const o = oscillation.run(kernel, ctx).finding;
      expect(o.verdict).toBe('yes');
      expect(Math.abs(o.wavenumber! - 15) / 15).toBeLessThan(0.005);
      expect(screening.run(kernel, ctx).finding.verdict).toBe('no');
    }
  });
  it('screened −u″ + 100u: screening length 0.1 (Duffy; Butkovskiy, from memory)', () => {
    const { kernel, ctx } = noisy(kernel1d(screened(10), 160), 0.003, 52);
    const s = screening.run(kernel, ctx).finding;
    expect(s.verdict).toBe('yes');
    expect(Math.abs(s.length! - 0.1) / 0.1).toBeLessThan(0.02);
    expect(oscillation.run(kernel, ctx).finding.verdict).toBe('no');
  });
  it('plain diffusion: neither', () => {
    const { kernel, ctx } = noisy(kernel1d(laplace(), 160), 0.003, 53);
    expect(oscillation.run(kernel, ctx).finding.verdict).toBe('no');
    expect(screening.run(kernel, ctx).finding.verdict).toBe('no');
  });
  it('localWaveNumber on a sub-interval', () => {
    const k = kernel1d(helmholtz(15), 160);
    const lw = localWaveNumber(k, [0.5, 1])!;
    expect(Math.abs(lw.wavenumber! - 15)).toBeLessThan(0.05);
    expect(lw.adequate).toBe(true);
  });
});
