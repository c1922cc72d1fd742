import { describe, expect, it } from 'vitest';
import { groupOutlier, modifiedZ } from '../../src/checks/group-outlier.js';
import { recordingContexts, run } from '../helpers/context.js';
import { gaussian } from '../helpers/random.js';

// five ordinary channels of one group: Gaussian, RMS 0.8 … 2 g
const peers = [gaussian(8192, 21, 1), gaussian(8192, 22, 1.3), gaussian(8192, 23, 0.8), gaussian(8192, 24, 2), gaussian(8192, 25, 1.6)];

describe('modifiedZ', () => {
  it('is 0.6745 (x − median) / MAD (Iglewicz & Hoaglin 1993, from memory)', () => {
    // median 3, absolute deviations 2 1 0 1 97 → MAD 1
    expect(modifiedZ(100, [1, 2, 3, 4, 100])).toBeCloseTo(0.6745 * 97, 12);
  });

  it('reads as an ordinary z-score on normal data: MAD = 0.6745 σ (standard normal table, Φ⁻¹(0.75))', () => {
    const values = Array.from(gaussian(20001, 7, 3));
    expect(modifiedZ(6, values)).toBeCloseTo(2, 1);
  });

  it('falls back to the mean absolute deviation when most values are equal (MAD = 0)', () => {
    // median 5, MeanAD = 4/5 → (9 − 5) / (1.253314 · 0.8)
    expect(modifiedZ(9, [5, 5, 5, 5, 9])).toBeCloseTo(4 / (1.253314 * 0.8), 12);
    expect(modifiedZ(5, [5, 5, 5])).toBe(0);
  });
});

describe('group-outlier check', () => {
  it('passes a channel like the others of its group', () => {
    const r = run(groupOutlier, gaussian(8192, 1, 1.2), {}, { peerSignals: peers });
    expect(r.ok).toBe(true);
    expect(Math.abs(r.value!)).toBeLessThan(2);
  });

  it('flags a channel 30 times louder than its group (a sensitivity entered in the wrong unit)', () => {
    const r = run(groupOutlier, gaussian(8192, 2, 36), {}, { peerSignals: peers });
    expect(r.ok).toBe(false);
    expect(r.message).toMatch(/^RMS 3\d(\.\d+)? g against the median 1\.\d+ g of the g channels \(6 channels\): z = \d+(\.\d+)?, beyond the limit \|z\| ≤ 5 in a group of ≥ 4: wrong sensitivity/);
  });

  it('flags spikes only one channel sees, by its kurtosis and crest factor', () => {
    const x = gaussian(8192, 3, 1.2);
    for (let i = 500; i < 8192; i += 1000) x[i] = 14;
    const r = run(groupOutlier, x, { of: ['kurtosis'] }, { peerSignals: peers });
    expect(r.ok).toBe(false);
    expect(r.message).toMatch(/^kurtosis \d+(\.\d+)? against the median 2\.\d+ of the g channels/);
    expect(r.message).toContain('spikes or rattle');
  });

  it('cannot judge a group smaller than min-peers', () => {
    const r = run(groupOutlier, gaussian(8192, 4), {}, { peerSignals: peers.slice(0, 2) });
    expect(r.ok).toBeNull();
    expect(r.message).toBe('fewer than 4 channels with finite statistics in the g channels: nothing to compare with');
  });
});

describe('group-outlier check with groups by channel name', () => {
  it('compares deck channels with deck channels and pier channels with pier channels', async () => {
    const fs = 1024;
    const deck = [1, 1.4, 0.8, 1.2, 30].map((s, i) => gaussian(8 * fs, 40 + i, s)); // the last: 30 × its group
    const pier = [0.02, 0.03, 0.025, 0.018].map((s, i) => gaussian(8 * fs, 50 + i, s));
    const names = [...deck.map((_, i) => `deck-${i + 1}`), ...pier.map((_, i) => `pier-${i + 1}`)];
    const ctxs = await recordingContexts([...deck, ...pier], { sampleRate: fs, needs: {}, names });
    const o = { ...groupOutlier.defaults, groups: ['deck-*', 'pier-*'] };
    const r = ctxs.map((ctx) => groupOutlier.evaluate(ctx, o));
    expect(r.map((x) => x.ok)).toEqual([true, true, true, true, false, true, true, true, true]);
    expect(r[4].message).toMatch(/^RMS (29|30)\.\d+ g against the median 1\.\d+ g of the channels named "deck-\*" \(5 channels\)/);
    // grouped by unit alone, the quiet pier channels share the deck's yardstick
    expect(groupOutlier.evaluate(ctxs[5], groupOutlier.defaults).message).toContain('of the g channels (9 channels)');
  });
});
