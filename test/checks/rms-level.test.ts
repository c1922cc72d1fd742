import { describe, expect, it } from 'vitest';
import { rmsLevel } from '../../src/checks/rms-level.js';
import { run, sine } from '../helpers/context.js';

describe('rms-level check', () => {
  it('a sine of amplitude A has RMS A/√2 (references.md §3), judged against limits in units', () => {
    const x = sine(8192, 64, 2);
    const ok = run(rmsLevel, x, { min: 1, max: 2 });
    expect(ok.ok).toBe(true);
    expect(ok.value!).toBeCloseTo(Math.SQRT2, 10);
    expect(run(rmsLevel, x, { max: 1.2 }).message).toContain('wrong sensitivity or units');
    expect(run(rmsLevel, x, { min: 1.5 }).ok).toBe(false);
  });

  it('skips when no limit is given', () => {
    expect(run(rmsLevel, sine(1024, 8, 1)).ok).toBeNull();
  });
});
