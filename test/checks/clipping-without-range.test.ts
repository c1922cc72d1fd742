/**
 * The clipping check's `without-range: repeated-extremes` counting, which the bundled base
 * rule file uses: broadband data has clipped peaks one sample wide, which flat runs miss.
 */
import { describe, expect, it } from 'vitest';
import { clipping } from '../../src/checks/clipping.js';
import { run } from '../helpers/context.js';
import { gaussian } from '../helpers/random.js';

const clip = (x: Float64Array, lo: number, hi: number) => x.map((v) => Math.min(hi, Math.max(lo, v)));
const repeated = { 'without-range': 'repeated-extremes' as const };

describe('clipping check without a known range, counting repeated extremes', () => {
  it('counts every clipped sample of white noise clipped at +1.5 σ: P(Z > 1.5) = 0.0668', () => {
    const n = 50_000;
    const r = run(clipping, clip(gaussian(n, 21), -10, 1.5), repeated);
    expect(r.ok).toBe(false);
    // standard normal table: P(Z > 1.5) = 0.0668; binomial scatter √(p(1 − p)/n) = 0.0011
    expect(Math.abs(r.value! - 0.0668)).toBeLessThan(0.005);
    expect(r.message).toContain('repeated extreme');
    expect(r.message).toContain('converter range unknown');
  });

  it('catches isolated clipped samples that flat runs miss: white noise clipped at ±3 σ', () => {
    const n = 200_000;
    const x = clip(gaussian(n, 22), -3, 3);
    // standard normal table: 2·Φ(−3) = 0.0027 of samples clipped; in runs of two or more
    // only a fraction ≈ 2·Φ(−3)·(1 − (1 − Φ(−3))²) ≈ 7e-6 of them, under the 1e-4 limit
    expect(run(clipping, x).ok).toBe(true);
    const r = run(clipping, x, repeated);
    expect(r.ok).toBe(false);
    expect(Math.abs(r.value! - 0.0027)).toBeLessThan(0.0005);
  });

  it('passes clean Gaussian data: its extreme values occur once', () => {
    const r = run(clipping, gaussian(200_000, 23), repeated);
    expect(r.ok).toBe(true);
    expect(r.value).toBe(0);
  });

  it('counts a constant channel once, as all of its samples', () => {
    const r = run(clipping, new Float64Array(1000).fill(0.25), repeated);
    expect(r.value).toBe(1);
  });

  it('changes nothing when the converter range is known', () => {
    const x = clip(gaussian(50_000, 24), -1.5, 1.5);
    const a = run(clipping, x, {}, { clipLow: -1.5, clipHigh: 1.5 });
    const b = run(clipping, x, repeated, { clipLow: -1.5, clipHigh: 1.5 });
    expect(b.value).toBe(a.value);
    expect(b.message).toBe(a.message);
  });
});
