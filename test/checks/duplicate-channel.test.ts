import { describe, expect, it } from 'vitest';
import { duplicateChannel } from '../../src/checks/duplicate-channel.js';
import { recordingContexts } from '../helpers/context.js';
import { gaussian } from '../helpers/random.js';

const fs = 2048;
const n = 20 * fs;
const judge = async (xs: Float64Array[], o: Record<string, unknown> = {}) =>
  (await recordingContexts(xs, { sampleRate: fs, needs: duplicateChannel.needs!(duplicateChannel.defaults) }))
    .map((ctx) => duplicateChannel.evaluate(ctx, { ...duplicateChannel.defaults, ...o }));

/** y = x plus independent noise whose RMS is `db` dB below x's: r = 1/√(1 + 10^(db/10)) (closed form, independent sum). */
const plusNoise = (x: Float64Array, db: number, seed: number) => {
  const e = gaussian(x.length, seed, 10 ** (db / 20));
  return x.map((v, i) => v + e[i]);
};

describe('duplicate-channel check', () => {
  it('passes independent channels', async () => {
    const r = await judge([gaussian(n, 1), gaussian(n, 2), gaussian(n, 3)]);
    expect(r.map((o) => o.ok)).toEqual([true, true, true]);
    expect(r[0].message).toBe('no other channel correlates beyond |r| = 0.9 over 10 sampled segments');
  });

  it('fails both channels of an identical pair, each naming the other', async () => {
    const a = gaussian(n, 4);
    const r = await judge([a, gaussian(n, 5), a.slice()], {});
    expect(r.map((o) => o.ok)).toEqual([false, true, false]);
    expect(r[0].message).toBe(
      'has the same samples as "acc-03" in all 10 sampled segments, beyond the limit |r| < 0.9999 with every other channel: ' +
        'one input patched to two channels (a Y-cable, a bridged connector), or a channel table row pointing at the wrong input?',
    );
    expect(r[2].message).toContain('as "acc-01"');
  });

  it('fails the same signal at another gain and reversed polarity (r = −1)', async () => {
    const a = gaussian(n, 6);
    const r = await judge([a, a.map((v) => -2 * v)]);
    expect(r[0].ok).toBe(false);
    expect(r[0].value).toBeCloseTo(-1, 12);
    expect(r[0].message).toContain('at r = −1 (reversed polarity)');
  });

  it('tells a copy 50 dB above its own noise (r = 0.999995) from two sensors 30 dB apart (r = 0.9995)', async () => {
    const a = gaussian(n, 7);
    const near = await judge([a, plusNoise(a, -50, 8)]);
    expect(near[0].ok).toBe(false);
    expect(near[0].value!).toBeCloseTo(1 / Math.sqrt(1 + 1e-5), 6);
    const apart = await judge([a, plusNoise(a, -30, 9)]);
    expect(apart[0].ok).toBe(true);
    expect(apart[0].value!).toBeCloseTo(1 / Math.sqrt(1 + 1e-3), 4);
    expect(apart[0].message).toMatch(/^most alike: "acc-02" with r = 0\.9995\d+; limit/);
  });

  it('cannot judge a record shorter than one segment', async () => {
    const r = await judge([gaussian(3000, 1), gaussian(3000, 2)]);
    expect(r[0].ok).toBeNull();
  });
});
