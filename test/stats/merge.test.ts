import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { ChannelAccumulator, type ChannelSummary } from '../../src/stats/channel-accumulator.js';
import { mergeChannelSummaries } from '../../src/stats/merge.js';
import { channelStats } from '../../src/stats/channel-stats.js';
import { gaussian } from '../helpers/random.js';

// Property: the summaries of adjacent parts of a record merge into the summary of the whole
// (references.md §1, Pébay 2008 merge formulas), to 1e-12 relative.

function summarise(x: Float64Array, from: number, to: number, frame: number, hop: number, pushSize: number): ChannelSummary {
  const acc = new ChannelAccumulator({ frameSamples: frame, hopSamples: hop }, { low: -2.5, high: 2.5 }, from);
  for (let p = from; p < to; p += pushSize) acc.push(x.subarray(p, Math.min(to, p + pushSize)));
  return acc.summary();
}

function closeRel(a: number, b: number, tol: number): boolean {
  if (Number.isNaN(a) && Number.isNaN(b)) return true;
  if (a === b) return true;
  return Math.abs(a - b) <= tol * Math.max(Math.abs(a), Math.abs(b), 1e-300);
}

function expectSameSummary(got: ChannelSummary, want: ChannelSummary, tol = 1e-12): void {
  expect(got.count).toBe(want.count);
  expect(got.moments.n).toBe(want.moments.n);
  for (const k of ['mean', 'm2', 'm3', 'm4'] as const) {
    // central sums are compared relative to their scale, m_k ~ n·σ^k
    const scale = Math.max(Math.abs(want.moments[k]), want.moments.n * Math.pow(want.moments.m2 / want.moments.n, k === 'mean' ? 0.5 : Number(k[1]) / 2));
    expect(Math.abs(got.moments[k] - want.moments[k])).toBeLessThanOrEqual(tol * scale);
  }
  expect(got.nonFinite).toBe(want.nonFinite);
  expect(got.firstNonFinite).toBe(want.firstNonFinite);
  expect(got.runs.longest).toEqual(want.runs.longest);
  expect(got.runs.longestZero).toEqual(want.runs.longestZero);
  expect(got.runs.low).toEqual(want.runs.low);
  expect(got.runs.high).toEqual(want.runs.high);
  expect(got.runs.leading).toBe(want.runs.leading);
  expect(got.runs.trailing).toBe(want.runs.trailing);
  expect(got.clip).toEqual(want.clip);
  expect(got.frames.firstFrame).toBe(want.frames.firstFrame);
  expect(got.frames.n).toEqual(want.frames.n);
  expect(got.frames.min).toEqual(want.frames.min);
  expect(got.frames.max).toEqual(want.frames.max);
  for (let i = 0; i < want.frames.n.length; i++) {
    expect(closeRel(got.frames.mean[i], want.frames.mean[i], 1e-9) || Math.abs(got.frames.mean[i] - want.frames.mean[i]) < 1e-12).toBe(true);
    expect(closeRel(got.frames.m2[i], want.frames.m2[i], tol * 10)).toBe(true);
  }
}

/** Test signal with the features that make merging hard: runs, zeros, clipping, NaN, offset. */
function awkwardSignal(seed: number, n: number): Float64Array {
  const x = gaussian(n, seed);
  for (let i = 0; i < n; i++) {
    x[i] += 0.3;
    if (x[i] > 2.5) x[i] = 2.5; // flat tops at the clip level
    if (x[i] < -2.5) x[i] = -2.5;
  }
  for (let i = Math.floor(n * 0.3); i < Math.floor(n * 0.3) + 40 && i < n; i++) x[i] = 0; // dropout
  for (let i = Math.floor(n * 0.6); i < Math.floor(n * 0.6) + 25 && i < n; i++) x[i] = 1.234; // frozen
  if (n > 10) x[Math.floor(n * 0.8)] = NaN;
  return x;
}

describe('merging summaries of adjacent parts', () => {
  it('equals the whole record for random split points, frame geometries and push sizes', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 1_000_000 }),
        fc.integer({ min: 50, max: 3000 }),
        fc.array(fc.double({ min: 0, max: 1, noNaN: true }), { minLength: 1, maxLength: 5 }),
        fc.integer({ min: 1, max: 300 }),
        fc.constantFrom(1, 0.5, 0.75),
        fc.integer({ min: 1, max: 997 }),
        (seed, n, cutFractions, frame, hopFraction, pushSize) => {
          const x = awkwardSignal(seed, n);
          const hop = Math.max(1, Math.round(frame * hopFraction));
          const whole = summarise(x, 0, n, frame, hop, pushSize);
          const cuts = [...new Set(cutFractions.map((f) => Math.floor(f * n)))].sort((a, b) => a - b);
          const bounds = [0, ...cuts.filter((c) => c > 0 && c < n), n];
          let merged: ChannelSummary | undefined;
          for (let i = 0; i + 1 < bounds.length; i++) {
            const part = summarise(x, bounds[i], bounds[i + 1], frame, hop, pushSize);
            merged = merged ? mergeChannelSummaries(merged, part) : part;
          }
          expectSameSummary(merged!, whole);
        },
      ),
      { numRuns: 300, seed: 20261201 },
    );
  });

  it('joins a flat top cut in two into one run at the extreme', () => {
    const x = Float64Array.from([0, 1, 3, 3, 3, 3, 1, 0, -3, 2]);
    const whole = summarise(x, 0, 10, 10, 10, 10);
    const merged = mergeChannelSummaries(summarise(x, 0, 4, 10, 10, 10), summarise(x, 4, 10, 10, 10, 10));
    expect(merged.runs.high).toEqual(whole.runs.high);
    expect(merged.runs.high.repeated).toBe(4);
    expect(merged.runs.high.sumRunSquares).toBe(16);
    expect(merged.runs.longest).toEqual({ length: 4, start: 2, value: 3 });
  });

  it('joins a run that spans three parts', () => {
    const x = Float64Array.from([1, 0, 0, 0, 0, 0, 0, 2]);
    const parts = [[0, 3], [3, 5], [5, 8]].map(([a, b]) => summarise(x, a, b, 8, 8, 8));
    const merged = mergeChannelSummaries(mergeChannelSummaries(parts[0], parts[1]), parts[2]);
    expect(merged.runs.longestZero).toEqual({ length: 6, start: 1, value: 0 });
  });

  it('refuses parts that are not adjacent', () => {
    const x = gaussian(100, 1);
    expect(() => mergeChannelSummaries(summarise(x, 0, 40, 10, 10, 10), summarise(x, 50, 100, 10, 10, 10))).toThrow(
      'Cannot merge summaries: the first part ends at sample 40 but the second starts at 50',
    );
  });

  it('derived statistics of the merged summary equal those of the whole', () => {
    const x = awkwardSignal(7, 20_000);
    const whole = channelStats(summarise(x, 0, 20_000, 2048, 1024, 4096), { sampleRate: 2048 });
    const merged = channelStats(
      mergeChannelSummaries(summarise(x, 0, 7777, 2048, 1024, 4096), summarise(x, 7777, 20_000, 2048, 1024, 4096)),
      { sampleRate: 2048 },
    );
    expect(merged.kurtosis).toBeCloseTo(whole.kurtosis, 11);
    // the frame split at sample 7777 is re-assembled by the merge formulas: equal to rounding
    for (const key of ['mean', 'rms', 'min', 'max', 'skewness', 'kurtosis', 'crestFactor'] as const) {
      const g = merged.frames![key];
      const w = whole.frames![key];
      expect(closeRel(g.min, w.min, 1e-12) && closeRel(g.max, w.max, 1e-12)).toBe(true);
      expect([g.minTimeS, g.maxTimeS]).toEqual([w.minTimeS, w.maxTimeS]);
    }
    expect(merged.frames!.used).toBe(whole.frames!.used);
    expect(merged.longestZeroRun).toEqual(whole.longestZeroRun);
  });
});
