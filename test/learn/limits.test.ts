import { describe, expect, it } from 'vitest';
import { median as ssMedian, medianAbsoluteDeviation as ssMad } from 'simple-statistics';
import {
  learnBound,
  MAD_TO_SIGMA,
  median,
  medianAbsoluteDeviation,
  NORMAL_RANGE_D2,
  robustSpread,
  roundOutward,
} from '../../src/learn/limits.js';
import { normalQuantile } from '../../src/stats/normal-quantile.js';
import { normalSource, uniformSource } from '../helpers/random.js';

describe('median and MAD', () => {
  it('median() of worked examples', () => {
    // closed forms: the middle value, or the mean of the two middle ones
    expect(median([5, 1, 3])).toBe(3);
    expect(median([5, 1, 3, 2])).toBe(2.5);
    expect(median([])).toBeNaN();
  });

  it('medianAbsoluteDeviation() of a worked example ignores one wild value', () => {
    // |x − 3| = 2, 1, 0, 1, 97 → median 1 (worked by hand)
    expect(medianAbsoluteDeviation([1, 2, 3, 4, 100])).toBe(1);
  });

  it('median() and medianAbsoluteDeviation() agree with simple-statistics on seeded random data', () => {
    // reference library: simple-statistics median / medianAbsoluteDeviation (unscaled MAD)
    const u = uniformSource(7);
    for (const n of [1, 2, 5, 10, 11, 40]) {
      const x = Array.from({ length: n }, () => 10 * u() - 3);
      expect(median(x)).toBeCloseTo(ssMedian(x), 14);
      expect(medianAbsoluteDeviation(x)).toBeCloseTo(ssMad(x), 14);
    }
  });

  it('MAD_TO_SIGMA is 1 / Φ⁻¹(3/4) to the 4 decimals it is quoted with', () => {
    // Rousseeuw & Croux 1993: b = 1 / Φ⁻¹(3/4) = 1.4826
    expect(MAD_TO_SIGMA).toBeCloseTo(1 / normalQuantile(0.75), 4);
  });

  it('1.4826 × MAD of seeded normal samples estimates σ', () => {
    // simulation: 20 000 N(0, 2²) values; the scaled MAD is consistent for σ (Rousseeuw &
    // Croux 1993), its standard error ≈ 1.17 σ / √n = 0.017 here
    const g = normalSource(11);
    const x = Array.from({ length: 20000 }, () => 2 * g());
    expect(MAD_TO_SIGMA * medianAbsoluteDeviation(x)).toBeGreaterThan(2 * 0.97);
    expect(MAD_TO_SIGMA * medianAbsoluteDeviation(x)).toBeLessThan(2 * 1.03);
  });
});

describe('d₂(n), the expected range of n normal values', () => {
  it('matches a seeded simulation of normal ranges for n = 2, 5, 10, 25', () => {
    // simulation: mean range of 20 000 samples of n N(0, 1) values; the table's values are
    // the published control-chart constants (ASTM E2587); standard error < 0.01
    const g = normalSource(5);
    for (const n of [2, 5, 10, 25]) {
      let sum = 0;
      for (let t = 0; t < 20000; t++) {
        let lo = Infinity;
        let hi = -Infinity;
        for (let i = 0; i < n; i++) {
          const v = g();
          lo = Math.min(lo, v);
          hi = Math.max(hi, v);
        }
        sum += hi - lo;
      }
      expect(Math.abs(sum / 20000 - NORMAL_RANGE_D2[n])).toBeLessThan(0.03);
    }
  });

  it('2 values: d₂ = 2/√π, the mean of |X − Y| for independent standard normals', () => {
    // closed form: X − Y ~ N(0, 2), E|X − Y| = √2 · √(2/π) = 2/√π = 1.1284
    expect(NORMAL_RANGE_D2[2]).toBeCloseTo(2 / Math.sqrt(Math.PI), 3);
  });

  it('robustSpread() takes range / d₂ when it is larger, the scaled MAD otherwise, and the MAD alone beyond 25 values', () => {
    // [0, 0, 0, 0, 1]: MAD 0, range 1 → 1 / 2.326 (worked by hand)
    expect(robustSpread([0, 0, 0, 0, 1], 'high')).toEqual({ spread: 1 / 2.326, by: 'range' });
    // [1, 2, 3, 4, 5]: MAD 1 → 1.4826; range 4 / 2.326 = 1.72 is larger
    expect(robustSpread([1, 2, 3, 4, 5], 'low').by).toBe('range');
    // 26 values (13 zeros, 12 ones, 1000): median 0.5, every deviation on the low side 0.5;
    // no floor from the range 0 … 1000 beyond 25 values, so the wild value does not widen it
    const many = Array.from({ length: 26 }, (_, i) => (i === 25 ? 1000 : i % 2));
    expect(robustSpread(many, 'low')).toEqual({ spread: MAD_TO_SIGMA * 0.5, by: 'mad' });
  });
});

describe('roundOutward', () => {
  it.each([
    [3.1415, 'high', 3.15],
    [3.1415, 'low', 3.14],
    [-0.04137, 'low', -0.0414],
    [-0.04137, 'high', -0.0413],
    [0.000123456, 'high', 0.000124],
    [999.5, 'high', 1000],
    [2.4, 'low', 2.4],
    [0, 'high', 0],
  ] as const)('roundOutward(%d, %s) = %d (3 significant digits, away from the accepted side)', (value, side, expected) => {
    // worked by hand
    expect(roundOutward(value, side)).toBe(expected);
  });

  it('never moves a limit inward, for seeded random values of every magnitude', () => {
    const u = uniformSource(3);
    for (let i = 0; i < 2000; i++) {
      const v = (u() - 0.5) * 10 ** Math.floor(12 * u() - 6);
      expect(roundOutward(v, 'high')).toBeGreaterThanOrEqual(v);
      expect(roundOutward(v, 'low')).toBeLessThanOrEqual(v);
      // and it prints as at most 3 significant digits
      expect(Number(roundOutward(v, 'high').toPrecision(3))).toBe(roundOutward(v, 'high'));
    }
  });
});

describe('learnBound', () => {
  it('is median ± margin × spread when that lies beyond the observed range', () => {
    // values 1 … 11: median 6; the deviations on the high side, 0 … 5, have median 2.5, so
    // the spread is 1.4826 × 2.5 = 3.7065 (worked by hand); range 10 / 3.173 (d₂(11)) = 3.152
    // is smaller
    const x = Array.from({ length: 11 }, (_, i) => i + 1);
    const hi = learnBound(x, 'high', { margin: 2 });
    expect(hi).toMatchObject({ basis: 'margin', median: 6, n: 11, spreadBy: 'mad' });
    expect(hi.exact).toBeCloseTo(6 + 2 * 1.4826 * 2.5, 12);
    expect(hi.value).toBe(13.5); // 13.413 rounded up
    expect(learnBound(x, 'low', { margin: 2 }).value).toBe(-1.42); // 6 − 7.413 = −1.413 rounded down
  });

  it('measures the spread on the side of the limit, so a long tail widens only its own side', () => {
    // 15 values, a tight cluster 0 … 4 and a long tail 10 … 100 (worked by hand)
    const x = [0, 1, 2, 3, 4, 10, 20, 30, 40, 50, 60, 70, 80, 90, 100];
    expect(median(x)).toBe(30);
    // low side: |x − 30| for x ≤ 30 = 30, 29, 28, 27, 26, 20, 10, 0 → median 26.5
    expect(robustSpread(x, 'low').spread).toBeCloseTo(Math.max(1.4826 * 26.5, 100 / 3.472), 12);
    // high side: 0, 10, 20, …, 70 → median 35
    expect(robustSpread(x, 'high').spread).toBeCloseTo(Math.max(1.4826 * 35, 100 / 3.472), 12);
  });

  it('never lies inside the observed range plus the allowance, so every training value passes', () => {
    // one far value: 0 × 9, 10. MAD 0, range / d₂(10) = 3.249; median + 1 × spread = 3.25
    // lies inside the range, so the limit is the highest value + max(5 % of 10, 1 % of 10)
    const x = [0, 0, 0, 0, 0, 0, 0, 0, 0, 10];
    const hi = learnBound(x, 'high', { margin: 1 });
    expect(hi.basis).toBe('observed');
    expect(hi.exact).toBeCloseTo(10.5, 12);
    expect(hi.allowance).toBeCloseTo(0.5, 12);
  });

  it('gives identical values a thin but non-zero band: 1 % of the value', () => {
    const hi = learnBound([4, 4, 4, 4, 4, 4], 'high', { margin: 8 });
    expect(hi.value).toBeCloseTo(4.04, 12);
    expect(learnBound([4, 4, 4, 4, 4, 4], 'low', { margin: 8 }).value).toBeCloseTo(3.96, 12);
  });

  it('on a log scale bounds the value by a factor and stays above 0', () => {
    // ln of [1, e, e², …, e⁸]: median 4, MAD 2 → spread 2.965; low = e^(4 − 2 × 2.965) > 0
    const x = Array.from({ length: 9 }, (_, i) => Math.exp(i));
    const lo = learnBound(x, 'low', { margin: 2, scale: 'log' });
    expect(lo.exact).toBeCloseTo(Math.exp(4 - 2 * 1.4826 * 2), 12);
    expect(lo.value).toBeGreaterThan(0);
    expect(lo.median).toBeCloseTo(Math.exp(4), 10);
  });

  it('refuses to learn from no finite value', () => {
    expect(() => learnBound([NaN, Infinity], 'high', { margin: 8 })).toThrow(RangeError);
  });

  it('keeps good values passing: a new normal value rarely exceeds a bound learned from 10, thanks to the range floor', () => {
    // seeded simulation of the rationale in src/learn/limits.ts: 40 000 training sets of 10
    // N(0, 1) values and one new value each. The scaled MAD of 10 values is itself
    // uncertain, so median + 5 × (1.4826 × MAD) is exceeded in about 4e-3 of cases; with
    // the spread floored at range / d₂(10) in about 4e-4, and median + 8 × spread in about
    // 2e-5 (figures of this simulation, expected from it; the limits asserted are loose)
    const g = normalSource(29);
    let madOnly5 = 0;
    let floored5 = 0;
    let floored8 = 0;
    const trials = 40000;
    for (let t = 0; t < trials; t++) {
      const x = Array.from({ length: 10 }, g);
      const v = g();
      const m = median(x);
      const observed = Math.max(...x) + 0.05 * (Math.max(...x) - Math.min(...x));
      if (v > Math.max(m + 5 * MAD_TO_SIGMA * medianAbsoluteDeviation(x), observed)) madOnly5++;
      if (v > learnBound(x, 'high', { margin: 5 }).exact) floored5++;
      if (v > learnBound(x, 'high', { margin: 8 }).exact) floored8++;
    }
    console.log(`new N(0,1) value beyond a bound from 10 values: MAD only, margin 5: ${madOnly5 / trials}; floored, 5: ${floored5 / trials}; floored, 8: ${floored8 / trials}`);
    expect(madOnly5 / trials).toBeGreaterThan(2e-3);
    expect(floored5 / trials).toBeLessThan(1e-3);
    expect(floored8 / trials).toBeLessThan(2e-4);
  });
});
