import { describe, expect, it } from 'vitest';
import { skewness } from '../../src/checks/skewness.js';
import { recordingContexts, run, sine } from '../helpers/context.js';
import { modalNoise } from '../helpers/simulate.js';
import { gaussian } from '../helpers/random.js';

describe('skewness check', () => {
  it('passes Gaussian noise and a sine (skewness 0: references.md §3)', () => {
    expect(run(skewness, gaussian(30 * 1024, 3)).ok).toBe(true);
    const r = run(skewness, sine(10 * 1024, 640, 2));
    expect(r.ok).toBe(true);
    expect(Math.abs(r.value!)).toBeLessThan(1e-9);
  });

  it('fails one-sided positive spikes in a frame, located in time', () => {
    const x = gaussian(20 * 1024, 4);
    for (let k = 0; k < 5; k++) x[9 * 1024 + 100 + 150 * k] = 10;
    const r = run(skewness, x);
    expect(r.ok).toBe(false);
    expect(r.at).toEqual({ startS: 9, endS: 10 });
    expect(r.message).toContain('one-sided positive spikes');
  });

  it('fails negative skew over the whole record with the whole-record wording', () => {
    // one spike of −h in N zeros: skewness −(N−2)/√(N−1) (references.md §3, sign reversed)
    const x = new Float64Array(4096);
    x[10] = -1;
    const r = run(skewness, x, { frames: undefined });
    expect(r.ok).toBe(false);
    expect(r.value!).toBeCloseTo(-(4096 - 2) / Math.sqrt(4095), 8);
    expect(r.message).toMatch(/^skewness −63\.98 over the whole record is below the range −0\.5 … 0\.5/);
  });
});

describe('skewness check with limits as a confidence level (Gaussian bands)', () => {
  it('passes clean broadband response at 99.9 % and fails one-sided spikes in it', async () => {
    const fs = 2048;
    const x = modalNoise(120 * fs, fs, [{ hz: 80, damping: 0.03, weight: 1 }, { hz: 300, damping: 0.04, weight: 1 }], 21);
    const options = { ...skewness.defaults, confidence: 0.999 };
    const [clean] = await recordingContexts([x], { sampleRate: fs, needs: skewness.needs!(options) });
    const r = skewness.evaluate(clean, options);
    expect(r.ok).toBe(true);
    // white-noise scale: whole-record skewness scatters by √(6Σρ³/N), Σρ³ ≈ 1 here, N = 245760:
    // the 99.9 % band is about ±3.29·0.0049 = ±0.016 (Lomnicki 1961)
    const m = /whole record (−?[0-9.]+) … ([0-9.]+)/.exec(r.limit)!;
    expect(Number(m[2])).toBeGreaterThan(0.008);
    expect(Number(m[2])).toBeLessThan(0.04);
    const y = x.slice();
    for (let k = 0; k < 6; k++) y[50 * fs + 200 * k] += 9;
    const [faulty] = await recordingContexts([y], { sampleRate: fs, needs: skewness.needs!(options) });
    const f = skewness.evaluate(faulty, options);
    expect(f.ok).toBe(false);
    expect(f.at).toEqual({ startS: 50, endS: 51 });
  });
});
