import { describe, expect, it } from 'vitest';
import { meanOffset } from '../../src/checks/mean-offset.js';
import { run, sine } from '../helpers/context.js';

describe('mean-offset check', () => {
  it('c + A·sin has |mean|/std = c/(A/√2) (references.md §3: std of A·sin is A/√2)', () => {
    const r = run(meanOffset, sine(8192, 64, 2, 0.5));
    expect(r.value!).toBeCloseTo(0.5 / (2 / Math.SQRT2), 10);
    expect(r.ok).toBe(false); // 0.354 > 0.1
    expect(r.message).toContain('DC offset');
  });

  it('passes a small offset', () => {
    expect(run(meanOffset, sine(8192, 64, 2, 0.05)).ok).toBe(true); // 0.035
  });

  it('fails an absolute offset in units when max-abs is set', () => {
    const r = run(meanOffset, sine(8192, 64, 20, 0.5), { 'max-abs': 0.2 });
    expect(r.ok).toBe(false);
    expect(r.limit).toBe('≤ 0.1 × std and |mean| ≤ 0.2 g');
  });

  it('skips a channel without variation', () => {
    expect(run(meanOffset, new Float64Array(100).fill(1)).ok).toBeNull();
  });
});
