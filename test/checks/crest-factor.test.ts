import { describe, expect, it } from 'vitest';
import { crestFactor } from '../../src/checks/crest-factor.js';
import { run, sine } from '../helpers/context.js';
import { gaussian } from '../helpers/random.js';

describe('crest-factor check', () => {
  it('passes a sine (crest √2: references.md §3) and Gaussian noise (max of 10⁵ samples ≈ 4.8 σ: extreme-value result, common practice)', () => {
    const s = run(crestFactor, sine(8192, 64, 1));
    expect(s.ok).toBe(true);
    expect(s.value!).toBeCloseTo(Math.SQRT2, 10);
    const g = run(crestFactor, gaussian(100_000, 5));
    expect(g.ok).toBe(true);
    expect(g.value!).toBeGreaterThan(4);
    expect(g.value!).toBeLessThan(5.6);
  });

  it('fails a spike of 20 σ in Gaussian noise', () => {
    const x = gaussian(100_000, 6);
    x[5000] = 20;
    const r = run(crestFactor, x);
    expect(r.ok).toBe(false);
    expect(r.message).toContain('isolated spikes');
  });

  it('fails a low crest factor when a minimum is set (a square wave has crest 1: references.md §3)', () => {
    const sq = new Float64Array(4096).map((_, i) => (Math.floor(i / 16) % 2 ? 1 : -1));
    const r = run(crestFactor, sq, { min: 2 });
    expect(r.ok).toBe(false);
    expect(r.value!).toBeCloseTo(1, 12);
    expect(r.message).toContain('compression, clipping');
  });

  it('judges the worst frame when frames-max is set', () => {
    const x = gaussian(10 * 1024, 7);
    x[3 * 1024 + 5] = 9;
    const r = run(crestFactor, x, { max: 100, 'frames-max': 6 });
    expect(r.ok).toBe(false);
    expect(r.at).toEqual({ startS: 3, endS: 4 });
  });
});
