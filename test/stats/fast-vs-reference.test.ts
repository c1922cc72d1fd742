import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { ChannelAccumulator, type ChannelSummary } from '../../src/stats/channel-accumulator.js';
import { ReferenceAccumulator } from '../../src/stats/reference-accumulator.js';
import { gaussian } from '../helpers/random.js';

// The fused one-pass kernel (shifted power sums) against the plain reference (one loop per
// concern, corrected two-pass moments): same summary on random data, to rounding.

function both(x: Float64Array, frame: number, hop: number, push: number, clip: boolean) {
  const g = { frameSamples: frame, hopSamples: hop };
  const c = clip ? { low: -2, high: 2 } : undefined;
  const fast = new ChannelAccumulator(g, c);
  const ref = new ReferenceAccumulator(g, c);
  for (let p = 0; p < x.length; p += push) {
    fast.push(x.subarray(p, Math.min(x.length, p + push)));
    ref.push(x.subarray(p, Math.min(x.length, p + push)));
  }
  return [fast.summary(), ref.summary()] as const;
}

const close = (a: number, b: number, scale: number, tol: number) => Math.abs(a - b) <= tol * Math.max(scale, 1e-300);

function expectSame(f: ChannelSummary, r: ChannelSummary): void {
  const { runs: fr, frames: ff, moments: fm, ...fRest } = f;
  const { runs: rr, frames: rf, moments: rm, ...rRest } = r;
  expect(fRest).toEqual(rRest);
  expect(fr).toEqual(rr);
  expect(fm.n).toBe(rm.n);
  const sd = Math.sqrt(rm.m2 / Math.max(rm.n, 1));
  expect(close(fm.mean, rm.mean, Math.abs(rm.mean) + sd, 1e-13)).toBe(true);
  for (const [k, p] of [['m2', 2], ['m3', 3], ['m4', 4]] as const) {
    expect(close(fm[k], rm[k], rm.n * sd ** p, 1e-11)).toBe(true);
  }
  expect(ff.n).toEqual(rf.n);
  expect(ff.min).toEqual(rf.min);
  expect(ff.max).toEqual(rf.max);
  ff.m2.forEach((v, i) => expect(close(v, rf.m2[i], Math.abs(rf.m2[i]) + 1e-300, 1e-9) || Math.abs(v - rf.m2[i]) < 1e-9).toBe(true));
}

describe('fast accumulator against the reference implementation', () => {
  it('agrees on random signals with offsets, steps, runs, clipping and non-finite samples', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 1e6 }),
        fc.integer({ min: 1, max: 5000 }),
        fc.double({ min: -1e6, max: 1e6, noNaN: true }),
        fc.integer({ min: 1, max: 400 }),
        fc.constantFrom(1, 0.5, 0.25),
        fc.integer({ min: 1, max: 2000 }),
        fc.boolean(),
        fc.boolean(),
        (seed, n, offset, frame, hopFraction, push, clip, quantise) => {
          const x = gaussian(n, seed).map((v, i) => {
            let y = v + (clip ? 0.5 : offset) + (i > n / 2 ? 30 : 0); // a step of 30 σ half-way
            if (quantise) y = Math.round(y * 8) / 8; // coarse codes: many runs
            return y;
          });
          if (n > 20) { x[5] = NaN; x[n - 3] = Infinity; x.fill(0, Math.floor(n / 3), Math.floor(n / 3) + 7); }
          const [f, r] = both(x, frame, Math.max(1, Math.round(frame * hopFraction)), push, clip);
          expectSame(f, r);
        },
      ),
      { numRuns: 200, seed: 424242 },
    );
  });

  it('is exact for a constant channel and for NIST-like large offsets', () => {
    const [f, r] = both(new Float64Array(1000).fill(10000000.2), 100, 100, 333, false);
    expect(f.moments).toEqual(r.moments);
    const x = Float64Array.from({ length: 1001 }, (_, i) => (i === 0 ? 10000000.2 : i % 2 ? 10000000.1 : 10000000.3));
    const [f2, r2] = both(x, 64, 64, 1001, false);
    expect(Math.abs(f2.moments.m2 - r2.moments.m2) / r2.moments.m2).toBeLessThan(1e-9);
  });
});
