import { describe, expect, it } from 'vitest';
import { skewness } from '../../src/checks/skewness.js';
import { run, sine } from '../helpers/context.js';
import { gaussian } from '../helpers/random.js';

describe('skewness check', () => {
  it('passes Gaussian noise and a sine (skewness 0: references.md §3)', () => {
    expect(run(skewness, gaussian(30 * 1024, 3)).ok).toBe(true);
    const r = run(skewness, sine(10 * 1024, 640, 2));
    expect(r.ok).toBe(true);
    expect(Math.abs(r.value!)).toBeLessThan(1e-9);
  });

  it('fails one-sided positive spikes in a frame, located in time', () => {
    const x = gaussian(20 * 1024, 4);
    for (let k = 0; k < 5; k++) x[9 * 1024 + 100 + 150 * k] = 10;
    const r = run(skewness, x);
    expect(r.ok).toBe(false);
    expect(r.at).toEqual({ startS: 9, endS: 10 });
    expect(r.message).toContain('one-sided positive spikes');
  });

  it('fails negative skew over the whole record with the whole-record wording', () => {
    // one spike of −h in N zeros: skewness −(N−2)/√(N−1) (references.md §3, sign reversed)
    const x = new Float64Array(4096);
    x[10] = -1;
    const r = run(skewness, x, { frames: undefined });
    expect(r.ok).toBe(false);
    expect(r.value!).toBeCloseTo(-(4096 - 2) / Math.sqrt(4095), 8);
    expect(r.message).toMatch(/^skewness −63\.98 over the whole record is below the range −0\.5 … 0\.5/);
  });
});
