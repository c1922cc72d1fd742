import { describe, expect, it } from 'vitest';
import { frameLength } from '../../src/checks/frame-length.js';
import { recordingContexts } from '../helpers/context.js';
import { gaussian } from '../helpers/random.js';
import { modalNoise } from '../helpers/simulate.js';

const fs = 2048;
const judge = async (x: Float64Array, frameSeconds: number, o: Partial<typeof frameLength.defaults> = {}) => {
  const [ctx] = await recordingContexts([x], { sampleRate: fs, frameSeconds, needs: frameLength.needs!(frameLength.defaults) });
  return frameLength.evaluate(ctx, { ...frameLength.defaults, ...o });
};

describe('frame-length check', () => {
  it('passes white noise in one-second frames: every sample independent (Σρ⁴ = 1, AR(0))', async () => {
    const r = await judge(gaussian(60 * fs, 1), 1);
    expect(r.ok).toBe(true);
    // Σρ⁴ of white noise is 1 plus estimation noise: about 2048 independent samples per frame
    expect(r.value!).toBeGreaterThan(1500);
    expect(r.message).toMatch(/^frames of 1 s hold \d+ independent samples \(Σρ⁴ = 1(\.\d+)?\); the correlation decays in/);
  });

  it('warns of quarter-second frames of a lightly damped 20 Hz mode: few independent samples', async () => {
    // one mode at f with damping ζ: ρ(k) ≈ e^(−ζωkT) cos(ωkT), so Σρ⁴ ≈ 3/(16ζωT) (worked by
    // hand in rules/random-vibration.yaml): 3·2048/(16·0.01·2π·20) ≈ 306, and a frame of 512
    // samples holds about 2 independent samples
    const x = modalNoise(120 * fs, fs, [{ hz: 20, damping: 0.01, weight: 1 }], 2);
    const r = await judge(x, 0.25);
    expect(r.ok).toBe(false);
    expect(r.value!).toBeLessThan(10);
    expect(r.message).toContain('a longer analysis.frame-seconds?');
  });

  it('accepts the same mode in frames long enough for it', async () => {
    const x = modalNoise(300 * fs, fs, [{ hz: 60, damping: 0.03, weight: 1 }], 3);
    const r = await judge(x, 4);
    expect(r.ok).toBe(true);
  });

  it('cannot judge a record shorter than one segment', async () => {
    const r = await judge(gaussian(3000, 4), 1);
    expect(r.ok).toBeNull();
  });
});
