import { describe, expect, it } from 'vitest';
import { frameRmsSpread } from '../../src/checks/frame-rms-spread.js';
import { run } from '../helpers/context.js';
import { gaussian } from '../helpers/random.js';

describe('frame-rms-spread check', () => {
  it('passes stationary noise: 1 s frames of 1024 white samples scatter by about ±2·√(1/2048) in RMS', () => {
    const r = run(frameRmsSpread, gaussian(60 * 1024, 1));
    expect(r.ok).toBe(true);
    expect(r.value!).toBeLessThan(1.2);
  });

  it('fails a burst of 5× in one frame and locates it', () => {
    const x = gaussian(60 * 1024, 2);
    for (let i = 40 * 1024; i < 41 * 1024; i++) x[i] *= 5;
    const r = run(frameRmsSpread, x);
    expect(r.ok).toBe(false);
    expect(r.at).toEqual({ startS: 40, endS: 41 });
    expect(r.value!).toBeCloseTo(5, 0);
    expect(r.message).toContain('passing disturbance');
  });

  it('fails a collapse of the level in one frame', () => {
    const x = gaussian(60 * 1024, 3);
    for (let i = 12 * 1024; i < 13 * 1024; i++) x[i] *= 0.05;
    const r = run(frameRmsSpread, x);
    expect(r.ok).toBe(false);
    expect(r.at).toEqual({ startS: 12, endS: 13 });
    expect(r.message).toContain('intermittent connection');
  });
});
