import { describe, expect, it } from 'vitest';
import {
  DistinctLevelCounter,
  distinctLevelCount,
  emptyDistinctLevels,
  mergeDistinctLevels,
  smallestLevelStep,
  type DistinctLevels,
} from '../../src/stats/distinct-levels.js';
import { quantise, whiteNoise } from '../helpers/simulate.js';

// Integer PCM scaled to ±1 has a step of 2^−(bits−1) of full scale (references.md §5: sox and
// most tools divide by 2^(bits−1)); a mid-tread quantiser (test/helpers/simulate.ts `quantise`)
// maps a slowly varying signal onto every code between the rounded extremes.

const M = 4096;

function levelsOf(x: Float64Array, cap: number, m = M): DistinctLevels {
  const acc = new DistinctLevelCounter(cap);
  for (let i = 0; i < x.length; i += m) acc.addSegment(x.subarray(i, Math.min(x.length, i + m)));
  return acc.sums();
}

/** A 16-bit quantised sine using the codes −499 … 500: 1000 of the 65 536. */
function sixteenBitSine(n: number): Float64Array {
  // 0.5 + 499.7·sin in steps spans [−499.2, 500.2]: codes −499 … 500. At 0.3 Hz and 1024 Hz
  // the sine moves at most 2π·0.3/1024·499.7 ≈ 0.92 steps per sample, so no code is skipped.
  const step = 2 ** -15;
  const x = new Float64Array(n);
  for (let i = 0; i < n; i++) x[i] = step * (0.5 + 499.7 * Math.sin((2 * Math.PI * 0.3 * i) / 1024 + 0.1));
  return quantise(x, 1, 16);
}

describe('distinct levels of quantised data', () => {
  it('a 16-bit sine over 1000 codes has exactly 1000 levels and the step 2^−15', () => {
    const s = levelsOf(sixteenBitSine(2 ** 16), 65536);
    expect(distinctLevelCount(s)).toEqual({ count: 1000, exact: true });
    expect(smallestLevelStep(s)).toBe(2 ** -15);
    expect(s.values[0]).toBe(-499 * 2 ** -15);
    expect(s.values[999]).toBe(500 * 2 ** -15);
  });

  it('a dead 24-bit channel (noise of 1.5 codes RMS) uses a handful of levels', () => {
    // the largest of 65 536 Gaussian samples is about 4.3 σ (normal table: P(z > 4.3) ≈
    // 8.5·10⁻⁶, so about 0.6 samples beyond on each side): ±6.5 steps, 13–15 codes, where a
    // live channel uses thousands
    const step = 2 ** -23;
    const s = levelsOf(quantise(whiteNoise(2 ** 16, 3, 1.5 * step), 1, 24), 65536);
    const { count, exact } = distinctLevelCount(s);
    expect(exact).toBe(true);
    expect(count).toBeGreaterThanOrEqual(11);
    expect(count).toBeLessThanOrEqual(19);
    expect(smallestLevelStep(s)).toBe(step);
  });

  it('float noise has every value distinct: the count stops at the cap and the set is dropped', () => {
    const x = whiteNoise(2 ** 16, 4);
    const s = levelsOf(x, 4096);
    expect(distinctLevelCount(s)).toEqual({ count: 4096, exact: false });
    expect(s.values).toEqual([]);
    expect(JSON.stringify(s).length).toBeLessThan(200);
    // past the cap the step is not kept: resolution is not in question there
    expect(smallestLevelStep(s)).toBeNaN();
    expect(s.samples).toBe(2 ** 16);
  });

  it('exactly cap distinct values are still an exact count', () => {
    const x = Float64Array.from({ length: 3000 }, (_, i) => i % 100);
    expect(distinctLevelCount(levelsOf(x, 100, 512))).toEqual({ count: 100, exact: true });
    expect(distinctLevelCount(levelsOf(x, 99, 512))).toEqual({ count: 99, exact: false });
  });
});

describe('merging', () => {
  const cases: Array<[string, Float64Array, number]> = [
    ['16-bit sine, below the cap', sixteenBitSine(40_000), 65536],
    ['float noise, past the cap', whiteNoise(40_000, 5), 3000],
  ];
  for (const [name, x, cap] of cases) {
    it(`${name}: two parts merged equal one counter fed all segments, bit for bit, in either order`, () => {
      const whole = levelsOf(x, cap);
      const a = levelsOf(x.subarray(0, 5 * M), cap);
      const b = levelsOf(x.subarray(5 * M), cap);
      expect(mergeDistinctLevels(a, b)).toEqual(whole);
      expect(mergeDistinctLevels(b, a)).toEqual(whole);
      expect(mergeDistinctLevels(emptyDistinctLevels(cap), whole)).toEqual(whole);
      // plain JSON holds the state below the cap; past it the step is Infinity, which the
      // partial summary files encode (test/cli/segments-parallel.test.ts)
      if (!whole.saturated) expect(JSON.parse(JSON.stringify(whole))).toEqual(whole);
    });
  }

  it('rejects states counted up to different caps', () => {
    expect(() => mergeDistinctLevels(emptyDistinctLevels(10), emptyDistinctLevels(20))).toThrow(
      new RangeError('Cannot merge distinct levels counted up to 10 with those counted up to 20'),
    );
    expect(() => new DistinctLevelCounter(0)).toThrow(new RangeError('Distinct-level cap must be a whole number of at least 1, not 0'));
  });
});

describe('edge cases', () => {
  it('skips and counts NaN and ±Infinity; −0 is the level 0', () => {
    const s = levelsOf(Float64Array.from([-0, 0, 1, NaN, Infinity, -Infinity, 1]), 10);
    expect(s.values).toEqual([0, 1]);
    expect(Object.is(s.values[0], 0)).toBe(true);
    expect([s.samples, s.nonFinite]).toEqual([4, 3]);
    expect(smallestLevelStep(s)).toBe(1);
  });

  it('a constant channel has one level and no step', () => {
    const s = levelsOf(new Float64Array(10_000).fill(0.25), 65536);
    expect(distinctLevelCount(s)).toEqual({ count: 1, exact: true });
    expect(smallestLevelStep(s)).toBeNaN();
    expect(smallestLevelStep(emptyDistinctLevels(8))).toBeNaN();
  });

  it('the step across segments is found in the kept set when no one segment holds both neighbours', () => {
    // segment 1 holds 0 and 10, segment 2 holds 3 and 20: gaps within segments 10 and 17,
    // the smallest between distinct values of the whole is 3
    const acc = new DistinctLevelCounter(100);
    acc.addSegment(Float64Array.from([0, 10]));
    acc.addSegment(Float64Array.from([3, 20]));
    expect(smallestLevelStep(acc.sums())).toBe(3);
  });
});
