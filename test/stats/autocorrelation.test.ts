import { describe, expect, it } from 'vitest';
import {
  AutocorrelationAccumulator,
  correlationShape,
  emptyAutocorrelation,
  mergeAutocorrelation,
  type AutocorrelationSums,
} from '../../src/stats/autocorrelation.js';
import { gaussian, normalSource } from '../helpers/random.js';

/** AR(1) x_t = φ x_{t−1} + e_t, started in its stationary distribution (simulated data). */
function ar1(n: number, phi: number, seed: number): Float64Array {
  const e = normalSource(seed);
  const x = new Float64Array(n);
  let v = e() / Math.sqrt(1 - phi * phi);
  for (let i = 0; i < n; i++) {
    v = phi * v + e();
    x[i] = v;
  }
  return x;
}

/** Segments of M samples spread evenly over x, as the engine samples a channel. */
function accumulate(x: Float64Array, m: number, segments: number): AutocorrelationSums {
  const acc = new AutocorrelationAccumulator(m);
  const stride = segments > 1 ? Math.floor((x.length - m) / (segments - 1)) : 0;
  for (let s = 0; s < segments; s++) acc.addSegment(x.subarray(s * stride, s * stride + m));
  return acc.sums();
}

/** Σ_i d_i d_{i+k} with the segment's own mean removed, by the definition (two-pass mean). */
function directLagSums(segments: Float64Array[], maxLag: number): number[] {
  const out = new Array<number>(maxLag + 1).fill(0);
  for (const x of segments) {
    const mean = x.reduce((a, b) => a + b, 0) / x.length;
    const d = Array.from(x, (v) => v - mean);
    for (let k = 0; k <= maxLag; k++) {
      let s = 0;
      for (let i = 0; i + k < d.length; i++) s += d[i] * d[i + k];
      out[k] += s;
    }
  }
  return out;
}

describe('AutocorrelationAccumulator', () => {
  it('gives the lag sums Σ d_i d_{i+k} of the definition, by FFT', () => {
    // random data with a large offset: each segment's mean must come off before the products
    const m = 512;
    const segs = [0, 1, 2].map((k) => gaussian(m, 40 + k).map((v) => 1000 + 3 * v));
    const acc = new AutocorrelationAccumulator(m);
    for (const s of segs) acc.addSegment(s);
    const got = acc.sums();
    const want = directLagSums(segs, m / 2);
    expect(got.segments).toBe(3);
    expect(got.lagSums).toHaveLength(m / 2 + 1);
    // FFT rounding is absolute, of the order of ε·Σd²: compare relative to the lag-0 sum
    for (let k = 0; k <= m / 2; k++) expect(Math.abs(got.lagSums[k] - want[k])).toBeLessThan(1e-9 * want[0]);
  });

  it('merges exactly: two accumulators merged equal one fed all segments (1e-12)', () => {
    const m = 1024;
    const x = gaussian(12 * m, 7);
    const whole = new AutocorrelationAccumulator(m);
    const first = new AutocorrelationAccumulator(m);
    const second = new AutocorrelationAccumulator(m);
    for (let s = 0; s < 12; s++) {
      const seg = x.subarray(s * m, (s + 1) * m);
      whole.addSegment(seg);
      (s < 5 ? first : second).addSegment(seg);
    }
    const merged = mergeAutocorrelation(first.sums(), second.sums());
    const all = whole.sums();
    expect(merged.segments).toBe(all.segments);
    for (let k = 0; k < all.lagSums.length; k++) expect(Math.abs(merged.lagSums[k] - all.lagSums[k])).toBeLessThan(1e-12 * all.lagSums[0]);
    // the empty sums are neutral, and the sums survive a JSON round trip (partial files)
    expect(mergeAutocorrelation(emptyAutocorrelation(m), all)).toEqual(all);
    expect(JSON.parse(JSON.stringify(all))).toEqual(all);
  });

  it('skips a segment holding a non-finite sample and counts only the segments used', () => {
    const acc = new AutocorrelationAccumulator(64);
    const bad = gaussian(64, 3);
    bad[10] = NaN;
    acc.addSegment(bad);
    acc.addSegment(gaussian(64, 4));
    const s = acc.sums();
    expect(s.segments).toBe(1);
    expect(s.lagSums.every(Number.isFinite)).toBe(true);
  });

  it('refuses a segment of the wrong length and a length that is not a power of two', () => {
    expect(() => new AutocorrelationAccumulator(1000)).toThrow(new RangeError('segmentSamples must be a power of two of at least 4, not 1000'));
    const acc = new AutocorrelationAccumulator(64);
    expect(() => acc.addSegment(new Float64Array(63))).toThrow(new RangeError('A segment must hold 64 samples, not 63'));
    expect(() => mergeAutocorrelation(emptyAutocorrelation(64), emptyAutocorrelation(128))).toThrow(
      new RangeError('Cannot merge autocorrelation sums of 64-sample segments with those of 128-sample segments'),
    );
  });
});

describe('correlationShape', () => {
  it('of a sampled sine is ρ(k) = cos(ωk), and never settles', () => {
    // closed form: with an integer number of cycles per segment the mean is exactly 0 and
    // ĉ(k) = cos(ωk)/2 − (1/2n)Σ_{i<n} cos(2ωi + θ), n = M − k, whose sum is at most
    // 1/|sin ω| in size, so |ρ̂(k) − cos(ωk)| ≤ 1/((M − k)|sin ω|) ≤ 2/(M|sin ω|) for k ≤ M/2
    const m = 4096;
    const omega = (2 * Math.PI * 64) / m;
    const acc = new AutocorrelationAccumulator(m);
    for (const phase of [0.3, 1.1, 2.0]) acc.addSegment(Float64Array.from({ length: m }, (_, i) => 2.5 * Math.sin(omega * i + phase)));
    const shape = correlationShape(acc.sums());
    const bound = 2 / (m * Math.sin(omega));
    for (let k = 0; k <= m / 2; k++) expect(Math.abs(shape.rho[k] - Math.cos(omega * k))).toBeLessThan(bound);
    expect(shape.settled).toBe(false);
  });

  it('of a constant channel is undefined (NaN) and not settled', () => {
    const acc = new AutocorrelationAccumulator(256);
    acc.addSegment(new Float64Array(256).fill(0.25));
    const shape = correlationShape(acc.sums());
    expect(shape.sumRho4).toBeNaN();
    expect(shape.settled).toBe(false);
    expect(correlationShape(emptyAutocorrelation(256)).sumRho3).toBeNaN();
  });

  // AR(1): ρ(k) = φ^|k| (Box & Jenkins, Time Series Analysis, the autocorrelation of a
  // first-order autoregressive process), so the two-sided sums are closed forms:
  //   Σρ² = (1+φ²)/(1−φ²),  Σρ³ = (1+φ³)/(1−φ³),  Σρ⁴ = (1+φ⁴)/(1−φ⁴).
  // Each estimate uses 2^18 samples in 64 segments of 4096, as the engine samples a channel.
  // Simulated: 8 seeded channels per φ. Tolerance: 4 standard errors of their mean (from
  // their own scatter) plus the tail the truncation at K drops, 2φ^{p(K+1)}/(1 − φ^p), also a
  // closed form; and a floor of 0.2 % for φ = 0, where the estimates have no scatter at all.
  const cases = [0, 0.5, 0.9, 0.98];
  it.each(cases)('recovers Σρ², Σρ³, Σρ⁴ of AR(1) with φ = %s', (phi) => {
    const est: { p: number; values: number[]; tails: number[] }[] = [2, 3, 4].map((p) => ({ p, values: [], tails: [] }));
    let decay = 0;
    for (let seed = 1; seed <= 8; seed++) {
      const shape = correlationShape(accumulate(ar1(2 ** 18, phi, 100 * seed + Math.round(phi * 100)), 4096, 64));
      expect(shape.settled).toBe(true);
      const sums = [shape.sumRho2, shape.sumRho3, shape.sumRho4];
      est.forEach((e, i) => {
        e.values.push(sums[i]);
        e.tails.push(phi === 0 ? 0 : (2 * phi ** (e.p * (shape.truncationLag + 1))) / (1 - phi ** e.p));
      });
      decay = shape.correlationSamples;
    }
    for (const e of est) {
      const closed = (1 + phi ** e.p) / (1 - phi ** e.p);
      const mean = e.values.reduce((a, b) => a + b, 0) / e.values.length;
      const sd = Math.sqrt(e.values.reduce((a, b) => a + (b - mean) ** 2, 0) / (e.values.length - 1));
      const tail = e.tails.reduce((a, b) => a + b, 0) / e.tails.length;
      const tolerance = 4 * (sd / Math.sqrt(e.values.length)) + tail + 0.002 * closed;
      expect(Math.abs(mean - closed), `Σρ^${e.p}: mean ${mean} vs ${closed}`).toBeLessThan(tolerance);
    }
    // decay length to 1/e: the first lag with φ^k < 1/e, i.e. ⌊−1/ln φ⌋ + 1 (1 for φ = 0);
    // ρ̂ scatters by se ≈ √(Σρ²/n) there (Bartlett), which moves the crossing by
    // se/|dρ/dk| = se/(e^{−1}|ln φ|) lags: allow one lag plus 4 of those
    const expected = phi === 0 ? 1 : Math.floor(-1 / Math.log(phi)) + 1;
    const se = Math.sqrt((1 + phi ** 2) / (1 - phi ** 2) / 2 ** 18);
    const slack = phi === 0 ? 1 : 1 + (4 * se) / (Math.exp(-1) * Math.abs(Math.log(phi)));
    expect(Math.abs(decay - expected)).toBeLessThanOrEqual(slack);
  });
});
