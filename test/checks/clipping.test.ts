import { describe, expect, it } from 'vitest';
import { clipping } from '../../src/checks/clipping.js';
import { run, sine } from '../helpers/context.js';
import { gaussian } from '../helpers/random.js';

const clip = (x: Float64Array, lo: number, hi: number) => x.map((v) => Math.min(hi, Math.max(lo, v)));

describe('clipping check', () => {
  it('passes a signal well inside the converter range', () => {
    const r = run(clipping, gaussian(50_000, 1, 0.1), {}, { clipLow: -1, clipHigh: 1 });
    expect(r.ok).toBe(true);
    expect(r.value).toBe(0);
  });

  it('fails a sine of amplitude 1.5 clipped at ±1: a fraction 1 − (2/π)·asin(1/1.5) at full scale (closed form)', () => {
    const x = clip(sine(64_000, 400, 1.5), -1, 1);
    const r = run(clipping, x, {}, { clipLow: -1, clipHigh: 1 });
    expect(r.ok).toBe(false);
    expect(r.value!).toBeCloseTo(1 - (2 / Math.PI) * Math.asin(1 / 1.5), 2);
    expect(r.message).toContain('at converter full scale (−1 g … 1 g)');
    expect(r.message).toContain('overload');
  });

  it('without a known range, counts flat runs at the channel’s own extremes', () => {
    const x = clip(gaussian(50_000, 2), -10, 1.5); // one-sided clipping at +1.5 σ
    const r = run(clipping, x);
    expect(r.ok).toBe(false);
    // white noise: a sample is clipped with p = P(Z > 1.5) = 0.0668 (standard normal table),
    // and sits in a run of two or more with probability 1 − (1 − p)² given its neighbours are
    // independent: expected fraction p·(1 − (1 − p)²) = 0.0086, binomial scatter ≈ 0.0004
    const p = 0.0668;
    expect(Math.abs(r.value! - p * (1 - (1 - p) ** 2))).toBeLessThan(0.0015);
    expect(r.message).toContain('converter range unknown');
  });

  it('does not count a single repeated extreme in clean data without a known range', () => {
    expect(run(clipping, gaussian(50_000, 3)).ok).toBe(true);
  });
});
