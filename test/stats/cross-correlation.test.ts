import { describe, expect, it } from 'vitest';
import * as ss from 'simple-statistics';
import {
  correlatedPairs,
  CrossCorrelationAccumulator,
  emptyCrossSums,
  mergeCrossSums,
  pairCorrelation,
  pairIndex,
  type CrossSums,
} from '../../src/stats/cross-correlation.js';
import { normalSource } from '../helpers/random.js';
import { whiteNoise } from '../helpers/simulate.js';

// Simulated data: seeded white Gaussian noise and AR(1) noise (test/helpers), fed as
// consecutive segments of every channel at the same positions, as the engine does.

const M = 4096;

/** Sums of whole records (one array per channel), cut into segments of `m` samples. */
function sumsOf(channels: Float64Array[], m = M): CrossSums {
  const acc = new CrossCorrelationAccumulator(channels.length);
  for (let i = 0; i + m <= channels[0].length; i += m) acc.addSegments(channels.map((x) => x.subarray(i, i + m)));
  return acc.sums();
}

const map = (x: Float64Array, f: (v: number, i: number) => number) => Float64Array.from(x, f);

/** AR(1) noise x_i = φ·x_{i−1} + e_i, started in its stationary distribution. */
function ar1(n: number, phi: number, seed: number): Float64Array {
  const g = normalSource(seed);
  const x = new Float64Array(n);
  x[0] = g() / Math.sqrt(1 - phi * phi);
  for (let i = 1; i < n; i++) x[i] = phi * x[i - 1] + g();
  return x;
}

describe('duplicate channels', () => {
  const n = 2 ** 16;
  const x = whiteNoise(n, 1);

  it('a copy is identical, r = 1', () => {
    const s = sumsOf([x, Float64Array.from(x)]);
    expect(correlatedPairs(s, 0.99)).toEqual([{ a: 0, b: 1, r: 1, identical: true }]);
  });

  it('a copy scaled by −2 has r = −1 and is not identical', () => {
    // closed form: r(x, kx) = sign(k)
    const s = sumsOf([x, map(x, (v) => -2 * v)]);
    const [pair] = correlatedPairs(s, 0.99);
    expect(pair.identical).toBe(false);
    expect(Math.abs(pair.r + 1)).toBeLessThan(1e-12);
  });

  it('a copy plus noise 50 dB down has r = 1/√(1 + 10⁻⁵), even on an offset of 10⁶ × the spread', () => {
    // closed form for y = x + e, independent e of variance 10⁻⁵σ²: r = 1/√(1 + 10⁻⁵), so
    // 1 − r ≈ 5·10⁻⁶; the sample value scatters by about √(2/n) ≈ 0.6 % relative (simulated)
    const e = whiteNoise(n, 2, Math.sqrt(1e-5));
    const y = map(x, (v, i) => v + e[i]);
    const expected = 1 - 1 / Math.sqrt(1 + 1e-5);
    const plain = pairCorrelation(sumsOf([x, y]), 0, 1);
    expect(Math.abs((1 - plain) / expected - 1)).toBeLessThan(0.03);
    const shifted = pairCorrelation(sumsOf([map(x, (v) => v + 1e6), map(y, (v) => v - 3e6)]), 0, 1);
    // the offset changes 1 − r by less than 1e-6 of itself (measured: about 1e-9)
    expect(Math.abs((1 - shifted) / (1 - plain) - 1)).toBeLessThan(1e-6);
    // whereas the naive Σxy − ΣxΣy/n formula loses 1 − r entirely at that offset
    let sx = 0, sy = 0, sxx = 0, syy = 0, sxy = 0;
    for (let i = 0; i < n; i++) {
      const a = x[i] + 1e6;
      const b = y[i] - 3e6;
      sx += a; sy += b; sxx += a * a; syy += b * b; sxy += a * b;
    }
    const naive = (sxy - (sx * sy) / n) / Math.sqrt((sxx - (sx * sx) / n) * (syy - (sy * sy) / n));
    expect(Math.abs((1 - naive) / (1 - plain) - 1)).toBeGreaterThan(0.1);
    const [pair] = correlatedPairs(sumsOf([x, y]), 0.9999);
    expect(pair).toMatchObject({ a: 0, b: 1, identical: false });
  });

  it('independent noise has |r| of about 1/√n', () => {
    // for independent Gaussian samples r has standard deviation ≈ 1/√n (Fisher 1915, large n);
    // the RMS of 120 pairs scatters by about 1/√240 ≈ 6.5 %
    const channels = Array.from({ length: 16 }, (_, k) => whiteNoise(n, 10 + k));
    const s = sumsOf(channels);
    const rs: number[] = [];
    for (let a = 0; a < 16; a++) for (let b = a + 1; b < 16; b++) rs.push(pairCorrelation(s, a, b));
    const rms = Math.sqrt(rs.reduce((t, r) => t + r * r, 0) / rs.length);
    console.log(`independent noise: RMS r ${rms.toExponential(3)} against 1/√n = ${(1 / Math.sqrt(n)).toExponential(3)}, max |r| ${Math.max(...rs.map(Math.abs)).toExponential(3)}`);
    expect(rms * Math.sqrt(n)).toBeGreaterThan(0.8);
    expect(rms * Math.sqrt(n)).toBeLessThan(1.2);
    expect(Math.max(...rs.map(Math.abs)) * Math.sqrt(n)).toBeLessThan(4.5);
    expect(correlatedPairs(s, 0.05)).toEqual([]);
  });

  it('a copy delayed by one sample has r ≈ ρ(1), the lag-1 autocorrelation, and is no duplicate', () => {
    // AR(1) with φ = 0.9: ρ(1) = φ (closed form); the sample value scatters by about
    // √((1 − φ²)/n) ≈ 0.002 (Bartlett's formula, from memory). White noise: ρ(1) = 0, scatter 1/√n.
    const a = ar1(n + 1, 0.9, 3);
    const s = sumsOf([a.subarray(1), a.subarray(0, n)]);
    expect(Math.abs(pairCorrelation(s, 0, 1) - 0.9)).toBeLessThan(0.01);
    expect(correlatedPairs(s, 0.99)).toEqual([]);
    const w = whiteNoise(n + 1, 4);
    expect(Math.abs(pairCorrelation(sumsOf([w.subarray(1), w.subarray(0, n)]), 0, 1))).toBeLessThan(4 / Math.sqrt(n));
  });

  it('identical means bit for bit: −0 in place of +0 is not identical (r still 1)', () => {
    const y = Float64Array.from(x);
    const z = Float64Array.from(x);
    y[5000] = 0;
    z[5000] = -0;
    const [pair] = correlatedPairs(sumsOf([y, z]), 0.99);
    expect(pair.identical).toBe(false);
    expect(pair.r).toBeCloseTo(1, 14);
  });

  it('a channel that differs from its copy in one sample of the last segment is not identical', () => {
    const y = Float64Array.from(x);
    y[n - 1] += 1e-12;
    const [pair] = correlatedPairs(sumsOf([x, y]), 0.99);
    expect(pair.identical).toBe(false);
  });
});

describe('constant channels', () => {
  it('have no correlation and are never reported, even two identical constants', () => {
    // 0.1 is not a binary fraction: its segment mean need not equal it, which must not create
    // a spurious spread; two open inputs at the same constant say nothing about patching
    const n = 4 * M;
    const k1 = new Float64Array(n).fill(0.1);
    const k2 = new Float64Array(n).fill(0.1);
    const noise = whiteNoise(n, 5);
    const s = sumsOf([k1, k2, noise]);
    expect(pairCorrelation(s, 0, 1)).toBeNaN();
    expect(pairCorrelation(s, 0, 2)).toBeNaN();
    expect(correlatedPairs(s, 0)).toEqual([]);
    // the identity itself is still recorded in the sums
    expect((s.identical[0] & 1) === 1).toBe(true);
  });
});

describe('against simple-statistics', () => {
  it("r of every pair matches sampleCorrelation to 1e-12 on random data with offsets and mixed correlation", () => {
    // simple-statistics 7.12.1 sampleCorrelation = sampleCovariance / (s_x·s_y), two-pass
    const n = 8 * M;
    const base = [whiteNoise(n, 61), whiteNoise(n, 62), whiteNoise(n, 63)];
    const channels = [
      map(base[0], (v) => 3 * v + 100),
      map(base[0], (v, i) => -0.5 * v + 0.2 * base[1][i] - 7),
      map(base[1], (v, i) => v + 0.01 * base[2][i] + 1e4),
      base[2],
      map(base[0], (v, i) => 0.7 * v + 0.7 * base[2][i]),
      whiteNoise(n, 64, 1e-3),
    ];
    const s = sumsOf(channels);
    const arrays = channels.map((x) => Array.from(x));
    for (let a = 0; a < channels.length; a++) {
      for (let b = a + 1; b < channels.length; b++) {
        expect(Math.abs(pairCorrelation(s, a, b) - ss.sampleCorrelation(arrays[a], arrays[b]))).toBeLessThan(1e-12);
      }
    }
  });
});

describe('merging', () => {
  const n = 12 * M;
  const x = whiteNoise(n, 71);
  const channels = [x, Float64Array.from(x), whiteNoise(n, 72), map(x, (v, i) => v + 1e3 + 0.1 * Math.sin(i)), whiteNoise(n, 73, 5)];

  it('the sums of two sets of segments merged equal one accumulator fed all of them', () => {
    const whole = sumsOf(channels);
    const a = sumsOf(channels.map((c) => c.subarray(0, 5 * M)));
    const b = sumsOf(channels.map((c) => c.subarray(5 * M)));
    for (const merged of [mergeCrossSums(a, b), mergeCrossSums(b, a)]) {
      expect(merged.n).toBe(whole.n);
      expect(merged.segments).toBe(whole.segments);
      expect(merged.identical).toEqual(whole.identical);
      expect(merged.min).toEqual(whole.min);
      expect(merged.max).toEqual(whole.max);
      merged.mean.forEach((v, k) => expect(Math.abs(v - whole.mean[k])).toBeLessThan(1e-12 * Math.max(1, Math.abs(whole.mean[k]))));
      merged.m2.forEach((v, k) => expect(Math.abs(v / whole.m2[k] - 1)).toBeLessThan(1e-12));
      merged.comoment.forEach((v, p) => expect(Math.abs(v - whole.comoment[p])).toBeLessThan(1e-12 * whole.n));
    }
    expect(mergeCrossSums(emptyCrossSums(5), whole)).toEqual(whole);
    expect(mergeCrossSums(whole, emptyCrossSums(5))).toEqual(whole);
    expect(JSON.parse(JSON.stringify(whole))).toEqual(whole);
  });

  it('the identical flag survives a merge only when both parts are identical', () => {
    const y = Float64Array.from(x);
    y[n - 1] = 0;
    const a = sumsOf([x, y].map((c) => c.subarray(0, 6 * M)));
    const b = sumsOf([x, y].map((c) => c.subarray(6 * M)));
    expect(correlatedPairs(a, 0.99)[0].identical).toBe(true);
    expect(correlatedPairs(mergeCrossSums(a, b), 0.99)[0].identical).toBe(false);
  });
});

describe('bookkeeping and bad input', () => {
  it('pair order is (0,1), (0,2) … (1,2) …', () => {
    expect([pairIndex(4, 0, 1), pairIndex(4, 0, 3), pairIndex(4, 1, 2), pairIndex(4, 2, 3)]).toEqual([0, 2, 3, 5]);
  });

  it('counts and skips a set of segments holding a non-finite sample', () => {
    const acc = new CrossCorrelationAccumulator(2);
    const x = whiteNoise(M, 81);
    const y = whiteNoise(M, 82);
    acc.addSegments([x, y]);
    y[7] = NaN;
    acc.addSegments([x, y]);
    const s = acc.sums();
    expect([s.segments, s.skippedSegments, s.n]).toEqual([1, 1, M]);
  });

  it('rejects a set with the wrong number of segments or unequal lengths', () => {
    const acc = new CrossCorrelationAccumulator(3);
    expect(() => acc.addSegments([new Float64Array(8), new Float64Array(8)])).toThrow(
      new RangeError('Correlation needs one segment per channel: got 2, expected 3'),
    );
    expect(() => acc.addSegments([new Float64Array(8), new Float64Array(8), new Float64Array(9)])).toThrow(
      new RangeError('Segments of one set must have the same length: channel 2 has 9 samples, channel 0 8'),
    );
    expect(() => mergeCrossSums(emptyCrossSums(3), emptyCrossSums(4))).toThrow(
      new RangeError('Cannot merge correlation sums of 3 channels with those of 4 channels'),
    );
    expect(() => new CrossCorrelationAccumulator(0)).toThrow(new RangeError('Channel count must be a whole number of at least 1, not 0'));
    expect(() => pairCorrelation(emptyCrossSums(3), 1, 3)).toThrow(new RangeError('No channel pair (1, 3) among 3 channels'));
  });

  it('tiles of four pairs and the remainder give the same sums as a plain loop (7 channels, 1000-sample segments)', () => {
    // 7 channels: rows of 6, 5 … pairs exercise both the 4-wide tile and the tail; 1000 is
    // not a multiple of the chunk
    const channels = Array.from({ length: 7 }, (_, k) => whiteNoise(3000, 90 + k));
    const s = sumsOf(channels, 1000);
    for (let a = 0; a < 7; a++) {
      for (let b = a + 1; b < 7; b++) {
        expect(Math.abs(pairCorrelation(s, a, b) - ss.sampleCorrelation(Array.from(channels[a]), Array.from(channels[b])))).toBeLessThan(1e-12);
      }
    }
  });
});
