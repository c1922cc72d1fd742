import { describe, expect, it } from 'vitest';
import { kurtosis } from '../../src/checks/kurtosis.js';
import { run, sine } from '../helpers/context.js';
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
