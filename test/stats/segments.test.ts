import { describe, expect, it } from 'vitest';
import { SEGMENT_BUDGET, SegmentCollector, sectionBounds, segmentPlan } from '../../src/stats/segments.js';

/** Streams `x` (one channel per array) in blocks of `block` samples from `start` to `end`. */
function collect(xs: Float64Array[], plan: ReturnType<typeof segmentPlan>, block: number, start = 0, end = xs[0].length) {
  const got: Array<{ first: number; values: number[][] }> = [];
  const collector = new SegmentCollector(plan, xs.length, start, (segs) => {
    got.push({ first: segs[0][0], values: segs.map((s) => Array.from(s)) });
  });
  for (let at = start; at < end; at += block) {
    const n = Math.min(block, end - at);
    collector.push(xs.map((x) => x.subarray(at, at + n)), n);
  }
  return { got, used: collector.used };
}

const ramp = (n: number, offset = 0) => Float64Array.from({ length: n }, (_, i) => i + offset);

describe('segmentPlan', () => {
  it('takes two seconds of data as a power of two, within 2048 … 65536 samples', () => {
    expect(segmentPlan(2048, 122880).segmentSamples).toBe(4096);
    expect(segmentPlan(25600, undefined).segmentSamples).toBe(65536);
    expect(segmentPlan(100, undefined).segmentSamples).toBe(2048);
    expect(segmentPlan(51200, undefined).segmentSamples).toBe(65536);
  });

  it('uses every segment of a short record and spreads at most the budget over a long one', () => {
    // a minute at 2048 Hz: 30 segments of 4096, well within 2^18 samples
    expect(segmentPlan(2048, 122880)).toEqual({ segmentSamples: 4096, strideSamples: 4096 });
    // an hour at 25.6 kHz: 1406 segments of 65536 available, 4 wanted
    const plan = segmentPlan(25600, 3600 * 25600);
    const used = Math.floor(3600 * 25600 / plan.strideSamples);
    expect(plan.strideSamples % plan.segmentSamples).toBe(0);
    expect(used * plan.segmentSamples).toBeLessThanOrEqual(SEGMENT_BUDGET + plan.segmentSamples);
    expect(used).toBeGreaterThanOrEqual(3);
  });
});

describe('SegmentCollector', () => {
  const plan = { segmentSamples: 8, strideSamples: 24 };

  it('hands on the samples [j·stride, j·stride + M) of every channel, whatever the block size', () => {
    const xs = [ramp(100), ramp(100, 1000)];
    for (const block of [1, 3, 7, 8, 24, 25, 100]) {
      const { got } = collect(xs, plan, block);
      // segments start at 0, 24, 48, 72; the one at 96 is cut short by the end
      expect(got.map((g) => g.first)).toEqual([0, 24, 48, 72]);
      expect(got[1].values[1]).toEqual([1024, 1025, 1026, 1027, 1028, 1029, 1030, 1031]);
    }
  });

  it('skips a segment holding a non-finite sample', () => {
    const x = ramp(100);
    x[30] = NaN;
    x[50] = -Infinity;
    expect(collect([x], plan, 16).got.map((g) => g.first)).toEqual([0, 72]);
  });

  it('sees the same segments in sections snapped to the stride as in one pass', () => {
    const x = ramp(1000);
    const whole = collect([x], plan, 10).got.map((g) => g.first);
    const bounds = sectionBounds(1000, 3, plan.strideSamples);
    const parts = bounds.slice(0, -1).flatMap((s, k) => collect([x], plan, 10, s, bounds[k + 1]).got.map((g) => g.first));
    expect(parts).toEqual(whole);
  });

  it('skips the segment a span starts inside (a window not on the grid)', () => {
    expect(collect([ramp(100)], plan, 5, 3).got.map((g) => g.first)).toEqual([24, 48, 72]);
  });
});

describe('sectionBounds', () => {
  it('cuts at multiples of the grid, from 0 to the record length', () => {
    expect(sectionBounds(1000, 4, 1)).toEqual([0, 250, 500, 750, 1000]);
    expect(sectionBounds(1000, 3, 64)).toEqual([0, 320, 640, 1000]);
    expect(sectionBounds(10, 4, 64)).toEqual([0, 0, 0, 0, 10]);
  });
});
