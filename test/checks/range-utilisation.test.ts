import { describe, expect, it } from 'vitest';
import { rangeUtilisation } from '../../src/checks/range-utilisation.js';
import { recordingContexts } from '../helpers/context.js';
import { gaussian } from '../helpers/random.js';
import { quantise } from '../helpers/simulate.js';

const fs = 2048;
const n = 10 * fs;
const judge = async (x: Float64Array, o: Partial<typeof rangeUtilisation.defaults & { 'min-peak-fraction': number }> = {}, clip?: number) => {
  const [ctx] = await recordingContexts([x], { sampleRate: fs, needs: { levels: true } });
  if (clip !== undefined) ctx.channel = { ...ctx.channel, clipLow: -clip, clipHigh: clip };
  return rangeUtilisation.evaluate(ctx, { ...rangeUtilisation.defaults, ...o });
};

describe('range-utilisation check', () => {
  it('passes a 16-bit channel using a good part of its range', async () => {
    // σ = 0.1 of a ±10 g range: ±4σ spans ~5200 of 65536 codes, more than the 4096 counted
    const r = await judge(quantise(gaussian(n, 1, 1), 10, 16), {}, 10);
    expect(r.ok).toBe(true);
    expect(r.message).toMatch(/^at least 4096 distinct levels in 20480 sampled samples, peak \d+(\.\d+)? % of the ±10 g full scale; limit/);
  });

  it('flags a channel whose range is 300 times its signal: a few dozen codes', async () => {
    // σ = 0.01 g on a ±100 g 16-bit range: step 100/32768 = 0.00305 g, ±4σ ≈ 26 codes
    const r = await judge(quantise(gaussian(n, 2, 0.01), 100, 16), { 'min-peak-fraction': 0.01 }, 100);
    expect(r.ok).toBe(false);
    expect(r.value!).toBeLessThan(40);
    expect(r.message).toContain(`(smallest step ${Number((100 / 32768).toPrecision(4))} g)`);
    expect(r.message).toContain('the input range is set far too wide');
  });

  it('judges the peak against full scale when asked, even with many levels', async () => {
    const x = quantise(gaussian(n, 3, 0.005), 1, 24); // 24-bit: plenty of codes, peak ~2 % of range
    const r = await judge(x, { 'min-peak-fraction': 0.05 }, 1);
    expect(r.ok).toBe(false);
    expect(r.message).toMatch(/peak \d\.\d+ % of the ±1 g full scale, below the limit ≥ 256 levels, peak ≥ 0\.05 × full scale/);
  });

  it('passes float data (every value distinct)', async () => {
    expect((await judge(gaussian(n, 4))).ok).toBe(true);
  });
});
