import { describe, expect, it } from 'vitest';
import { symmetry } from '../../src/checks/symmetry.js';
import { run, sine } from '../helpers/context.js';
import { gaussian } from '../helpers/random.js';

describe('symmetry check', () => {
  it('a sine is symmetric: ratio 1 (references.md §3)', () => {
    const r = run(symmetry, sine(8192, 64, 3));
    expect(r.ok).toBe(true);
    expect(r.value!).toBeCloseTo(1, 10);
  });

  it('fails one-sided spikes, at the time of the larger extreme', () => {
    const x = gaussian(10_240, 1);
    x[7 * 1024] = 15;
    const r = run(symmetry, x);
    expect(r.ok).toBe(false);
    expect(r.at!.startS).toBe(7);
    expect(r.message).toContain('the positive side reaches');
    expect(r.message).toContain('one-sided spikes');
  });

  it('a signal that never crosses zero is one-sided (ratio infinite, reported as no value)', () => {
    const r = run(symmetry, sine(1024, 8, 1, 5));
    expect(r.ok).toBe(false);
    expect(r.value).toBeNull();
  });
});
