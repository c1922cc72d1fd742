import { describe, expect, it } from 'vitest';
import { dropout } from '../../src/checks/dropout.js';
import { run } from '../helpers/context.js';
import { gaussian } from '../helpers/random.js';

describe('dropout check', () => {
  it('passes continuous noise (no repeated float samples)', () => {
    const r = run(dropout, gaussian(20_000, 1));
    expect(r.ok).toBe(true);
    expect(r.message).toBe('no repeated samples; limit ≤ 0.01 s');
  });

  it('fails a 0.5 s run of exact zeros and says where it is', () => {
    const x = gaussian(10 * 1024, 2);
    x.fill(0, 3 * 1024, 3.5 * 1024);
    const r = run(dropout, x);
    expect(r.ok).toBe(false);
    expect(r.value).toBe(0.5);
    expect(r.at).toEqual({ startS: 3, endS: 3.5 });
    expect(r.message).toBe('512 identical samples (0.5 s) of 0 g at 3–3.5 s, over the limit ≤ 0.01 s: dropout to zero: cable break, loose connector, or lost data?');
  });

  it('calls a frozen non-zero value a stuck converter or held value', () => {
    const x = gaussian(10 * 1024, 3);
    x.fill(0.731, 6 * 1024, 6 * 1024 + 100);
    const r = run(dropout, x);
    expect(r.ok).toBe(false);
    expect(r.message).toContain('frozen value');
  });

  it('applies a separate limit to zero runs', () => {
    const x = gaussian(10 * 1024, 4);
    x.fill(0, 1024, 1024 + 50); // 0.049 s
    expect(run(dropout, x, { 'max-seconds': 0.1 }).ok).toBe(true);
    expect(run(dropout, x, { 'max-seconds': 0.1, 'max-zero-seconds': 0.02 }).ok).toBe(false);
  });
});
