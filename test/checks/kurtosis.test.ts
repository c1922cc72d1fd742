import { describe, expect, it } from 'vitest';
import { kurtosis } from '../../src/checks/kurtosis.js';
import { recordingContexts, run, sine } from '../helpers/context.js';
import { modalNoise } from '../helpers/simulate.js';
import { gaussian } from '../helpers/random.js';

describe('kurtosis check', () => {
  it('passes Gaussian noise (kurtosis 3, scatter √(24/N): Lomnicki 1961, white noise)', () => {
    const r = run(kurtosis, gaussian(60 * 1024, 1));
    expect(r.ok).toBe(true);
    expect(r.value!).toBeCloseTo(3, 1);
  });

  it('fails a sine as too low: β2 = 1.5 (references.md §3) is below the random-data range', () => {
    const r = run(kurtosis, sine(60 * 1024, 60 * 50, 1));
    expect(r.ok).toBe(false);
    expect(r.value!).toBeCloseTo(1.5, 6);
    expect(r.message).toContain('below the frame range');
    expect(r.message).toContain('periodic component');
  });

  it('locates a spike in its frame and names the usual cause', () => {
    const x = gaussian(30 * 1024, 2);
    x[17 * 1024 + 300] = 12; // 12 σ in frame 17
    const r = run(kurtosis, x);
    expect(r.ok).toBe(false);
    expect(r.at).toEqual({ startS: 17, endS: 18 });
    expect(r.message).toMatch(/^frame kurtosis [\d.]+ at 17–18 s is above the frame range 1\.6 … 8 \(whole record [\d.]+\): short spikes/);
  });

  it('one spike in N zeros has β2 = (N² − 3N + 3)/(N − 1) (references.md §3), far above any range', () => {
    const x = new Float64Array(1024);
    x[100] = 1;
    const r = run(kurtosis, x, { whole: [2, 4], frames: undefined });
    expect(r.ok).toBe(false);
    expect(r.value!).toBeCloseTo((1024 * 1024 - 3 * 1024 + 3) / 1023, 8);
  });

  it('skips a constant channel, where kurtosis is undefined', () => {
    expect(run(kurtosis, new Float64Array(2048).fill(0.3)).ok).toBeNull();
  });
});

describe('kurtosis check with limits as a confidence level (Gaussian bands)', () => {
  const fs = 2048;
  const n = 120 * fs;
  // broadband response and a single lightly damped mode: the narrow-band channel's frame
  // kurtosis scatters far more (Lomnicki 1961: its variance grows with Σρ⁴)
  const broadband = modalNoise(n, fs, [{ hz: 80, damping: 0.03, weight: 1 }, { hz: 300, damping: 0.04, weight: 1 }, { hz: 700, damping: 0.05, weight: 1 }], 11);
  const narrow = modalNoise(n, fs, [{ hz: 100, damping: 0.02, weight: 1 }], 12);
  const judge = async (xs: Float64Array[], o: Record<string, unknown>) => {
    const options = { ...kurtosis.defaults, ...o };
    const ctxs = await recordingContexts(xs, { sampleRate: fs, needs: kurtosis.needs!(options) });
    return ctxs.map((ctx) => kurtosis.evaluate(ctx, options));
  };

  it('one setting fits broadband and narrow-band channels: both clean channels pass at 99.9 %', async () => {
    const [b, nb] = await judge([broadband, narrow], { confidence: 0.999 });
    expect(b.ok).toBe(true);
    expect(nb.ok).toBe(true);
    const range = (limit: string, part: 'whole record' | 'frames') => {
      const m = new RegExp(`${part} ([0-9.]+) … ([0-9.]+)`).exec(limit)!;
      return Number(m[2]) - Number(m[1]);
    };
    // the narrow-band channel's bands are the wider, as its autocorrelation says
    expect(range(nb.limit, 'whole record')).toBeGreaterThan(3 * range(b.limit, 'whole record'));
    expect(range(nb.limit, 'frames')).toBeGreaterThan(1.5 * range(b.limit, 'frames'));
    expect(b.message).toContain("99.9 % Gaussian bands of this channel's autocorrelation; frames each at 99.999166 % for 120 frames together");
  });

  it("the broadband channel's 99.9 % frame band fails the clean narrow-band channel: a fixed range cannot fit both", async () => {
    const [b] = await judge([broadband], { confidence: 0.999 });
    const m = /frames ([0-9.]+) … ([0-9.]+)/.exec(b.limit)!;
    const [nb] = await judge([narrow], { frames: [Number(m[1]), Number(m[2])] });
    expect(nb.ok).toBe(false);
  });

  it('still catches spikes in the narrow-band channel: five 8 σ spikes in one frame', async () => {
    const x = narrow.slice();
    for (let k = 0; k < 5; k++) x[70 * fs + 100 + 300 * k] += 8;
    const [r] = await judge([x], { confidence: 0.999 });
    expect(r.ok).toBe(false);
    expect(r.at).toEqual({ startS: 70, endS: 71 });
  });

  it('falls back to the fixed ranges, and says so, when no autocorrelation can be estimated', async () => {
    const [r] = await judge([gaussian(3000, 5)], { confidence: 0.999 });
    expect(r.ok).toBe(true);
    expect(r.message).toContain('(no 99.9 % Gaussian band: no autocorrelation could be estimated (record shorter than a segment?); fixed ranges used)');
  });
});
