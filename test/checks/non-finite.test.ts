import { describe, expect, it } from 'vitest';
import { nonFinite } from '../../src/checks/non-finite.js';
import { run } from '../helpers/context.js';
import { gaussian } from '../helpers/random.js';

describe('non-finite check', () => {
  it('passes finite data', () => expect(run(nonFinite, gaussian(1000, 1)).ok).toBe(true));

  it('fails NaN and ±Inf samples, counts them and gives the first time', () => {
    const x = gaussian(4096, 2);
    x[2048] = NaN;
    x[3000] = Infinity;
    x[3001] = -Infinity;
    const r = run(nonFinite, x);
    expect(r.ok).toBe(false);
    expect(r.value).toBe(3);
    expect(r.at!.startS).toBe(2);
    expect(r.message).toContain('3 NaN or infinite samples');
    expect(r.message).toContain('the first at 2 s');
  });

  it('accepts up to max-count', () => {
    const x = gaussian(100, 3);
    x[5] = NaN;
    expect(run(nonFinite, x, { 'max-count': 1 }).ok).toBe(true);
  });
});
