import { describe, expect, it } from 'vitest';
import { stationarity } from '../../src/checks/stationarity.js';
import { run } from '../helpers/context.js';
import { gaussian } from '../helpers/random.js';

describe('stationarity check (reverse arrangements, Bendat & Piersol)', () => {
  it('passes stationary noise', () => {
    expect(run(stationarity, gaussian(60 * 1024, 1)).ok).toBe(true);
  });

  it('fails an RMS that doubles over the record, as "rises"', () => {
    const n = 60 * 1024;
    const x = gaussian(n, 2).map((v, i) => v * (1 + i / n));
    const r = run(stationarity, x);
    expect(r.ok).toBe(false);
    expect(r.message).toMatch(/^the RMS rises over the record/);
  });

  it('fails a drifting mean with the drift causes', () => {
    const n = 60 * 1024;
    const x = gaussian(n, 3).map((v, i) => v - (3 * i) / n);
    const r = run(stationarity, x, { of: ['mean'] });
    expect(r.ok).toBe(false);
    expect(r.message).toContain('the mean falls');
    expect(r.message).toContain('thermal transient');
  });

  it('skips a record too short for the segments asked for', () => {
    expect(run(stationarity, gaussian(5 * 1024, 4)).ok).toBeNull();
  });
});
