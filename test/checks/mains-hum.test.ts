import { describe, expect, it } from 'vitest';
import { mainsHum } from '../../src/checks/mains-hum.js';
import { recordingContexts } from '../helpers/context.js';
import { gaussian } from '../helpers/random.js';
import { modalNoise, resonate } from '../helpers/simulate.js';

const fs = 2048;
const n = 30 * fs;
const tone = (hz: number, rms: number, phase = 0.3) => Float64Array.from({ length: n }, (_, i) => rms * Math.SQRT2 * Math.sin((2 * Math.PI * hz * i) / fs + phase));
const sum = (...xs: Float64Array[]) => xs.reduce((a, x) => a.map((v, i) => v + x[i]));
const judge = async (x: Float64Array, o: Partial<typeof mainsHum.defaults> = {}) => {
  const options = { ...mainsHum.defaults, ...o };
  const [ctx] = await recordingContexts([x], { sampleRate: fs, needs: mainsHum.needs!(options) });
  return mainsHum.evaluate(ctx, options);
};

describe('mains-hum check', () => {
  it('passes broadband response without lines', async () => {
    const r = await judge(modalNoise(n, fs, [{ hz: 35, damping: 0.02, weight: 1 }, { hz: 180, damping: 0.02, weight: 1 }], 3));
    expect(r.ok).toBe(true);
    expect(r.message).toMatch(/^no line at 50 Hz or its 4 harmonics stands 10 dB out of the spectrum/);
  });

  it('measures 50 Hz pick-up of 0.3 × the response RMS and fails it (limit 0.1)', async () => {
    const noise = gaussian(n, 4);
    const r = await judge(sum(noise, tone(50, 0.3)));
    expect(r.ok).toBe(false);
    // broadband RMS includes the line: 0.3 / √(1 + 0.09) (independent sum)
    expect(r.value!).toBeCloseTo(0.3 / Math.sqrt(1.09), 2);
    expect(r.message).toMatch(/^mains lines hold 0\.28\d* of the broadband RMS 1\.04\d* g: 50 Hz 0\.3\d* g \(\d+(\.\d+)? dB above its neighbours\), above the limit/);
    expect(r.message).toContain('ground loop');
  });

  it('adds the harmonics, and finds a line drifted to 49.8 Hz', async () => {
    const r = await judge(sum(gaussian(n, 5), tone(49.8, 0.1), tone(149.4, 0.1)));
    expect(r.ok).toBe(false);
    expect(r.value!).toBeCloseTo(Math.sqrt(0.02 / 1.02), 2);
  });

  it('does not take a structural resonance at 50 Hz for mains (it is broad, not a line)', async () => {
    const mode = resonate(gaussian(n + 4096, 6), fs, { hz: 50, damping: 0.02 }).subarray(4096);
    const r = await judge(mode);
    expect(r.ok).toBe(true);
  });

  it('cannot tell a line riding on a lightly damped mode at the same frequency from the mode (a known limit)', async () => {
    // 2 s segments resolve 0.5 Hz; a mode at 50 Hz with ζ 2 % is 2 Hz wide, so the floor
    // beside the line is the mode's own flank and the line stands only a few dB above it
    const mode = resonate(gaussian(n + 4096, 8), fs, { hz: 50, damping: 0.02 }).subarray(4096);
    const k = 1 / Math.sqrt(mode.reduce((a, v) => a + v * v, 0) / n);
    const r = await judge(sum(mode.map((v) => v * k), tone(50, 0.3)));
    expect(r.ok).toBe(true);
    expect(r.message).toMatch(/^no line at 50 Hz or its 4 harmonics stands 10 dB out of the spectrum \(most: 50 Hz, [0-9.]+ dB\)/);
  });

  it('judges 60 Hz mains when the rule file says so', async () => {
    const x = sum(gaussian(n, 7), tone(60, 0.3));
    expect((await judge(x)).ok).toBe(true);
    expect((await judge(x, { hz: 60 })).ok).toBe(false);
  });
});
