import { describe, expect, it } from 'vitest';
import {
  broadbandRms,
  emptyLineSums,
  LineAccumulator,
  lineLevels,
  mergeLineSums,
  type LineAccumulatorOptions,
  type LineSums,
} from '../../src/stats/mains-lines.js';
import { resonate, rmsOf, whiteNoise } from '../helpers/simulate.js';

// Simulated data: sines of known amplitude (closed form: RMS A/√2) in seeded white Gaussian
// noise (test/helpers/simulate.ts), cut into consecutive segments as the engine's sampled
// segments would be. Window facts: Hann coherent gain 0.5, ENBW 1.5 bins, scalloping loss
// from the kernel |sin(πδ)/(πδ(1 − δ²))| (Harris 1978, Proc. IEEE 66, Table 1).

const dB = (ratio: number) => 20 * Math.log10(ratio);

function tone(n: number, fs: number, hz: number, amplitude: number, phase = 0.7): Float64Array {
  const x = new Float64Array(n);
  for (let i = 0; i < n; i++) x[i] = amplitude * Math.sin((2 * Math.PI * hz * i) / fs + phase);
  return x;
}

function plus(...xs: Float64Array[]): Float64Array {
  const y = new Float64Array(xs[0].length);
  for (const x of xs) for (let i = 0; i < y.length; i++) y[i] += x[i];
  return y;
}

/** Sums of the record `x` cut into consecutive segments of M samples. */
function sumsOf(x: Float64Array, o: LineAccumulatorOptions): LineSums {
  const acc = new LineAccumulator(o);
  for (let i = 0; i + o.segmentSamples <= x.length; i += o.segmentSamples) acc.addSegment(x.subarray(i, i + o.segmentSamples));
  return acc.sums();
}

// 1024 Hz: M = 2048 (the engine's rule: next power of two ≥ 2 s), bins of 0.5 Hz;
// 2^18 samples per channel (the engine's budget) = 128 segments.
const fs = 1024;
const M = 2048;
const N = 2 ** 18;
const mains: LineAccumulatorOptions = { sampleRate: fs, segmentSamples: M, fundamentalHz: 50, harmonics: 3 };

describe('a sine of amplitude A in white noise reads RMS A/√2', () => {
  const A = 0.8;
  for (const hz of [50, 49.8, 50.2, 49.93]) {
    it(`at ${hz} Hz, within 2 % (closed form A/√2)`, () => {
      const x = plus(tone(N, fs, hz, A), whiteNoise(N, 11, A));
      const [line] = lineLevels(sumsOf(x, mains));
      expect(Math.abs(line.rms / (A / Math.SQRT2) - 1)).toBeLessThan(0.02);
      // the peak search finds the line's frequency to a small fraction of a bin
      expect(Math.abs(line.hz - hz)).toBeLessThan(0.02);
    });
  }

  it('60 Hz mains sampled at 2000 Hz (M = 4096, bins of 0.49 Hz): 59.8 Hz within 2 %', () => {
    const o = { sampleRate: 2000, segmentSamples: 4096, fundamentalHz: 60, harmonics: 2 };
    const x = plus(tone(2 ** 18, 2000, 59.8, 0.05), whiteNoise(2 ** 18, 14, 0.1));
    const [line] = lineLevels(sumsOf(x, o));
    expect(Math.abs(line.rms / (0.05 / Math.SQRT2) - 1)).toBeLessThan(0.02);
  });

  it('one Goertzel at 50 Hz exactly (driftHz 0) reads a 50.2 Hz line low by the Hann scalloping loss', () => {
    // 0.2 Hz = 0.4 bins: 20·log10|sin(0.4π)/(0.4π·(1 − 0.16))| = −0.906 dB (Harris 1978 kernel);
    // this is why each line is searched on a half-bin grid
    const x = tone(N, fs, 50.2, 1);
    const [fixed] = lineLevels(sumsOf(x, { ...mains, driftHz: 0 }));
    const d = 0.4;
    const loss = dB(Math.sin(Math.PI * d) / (Math.PI * d * (1 - d * d)));
    expect(dB(fixed.rms / Math.SQRT1_2)).toBeCloseTo(loss, 2);
    // the searched grid with log-parabolic interpolation is within 0.02 dB (computed from the
    // same kernel: at most 0.014 dB at half-bin spacing)
    const [searched] = lineLevels(sumsOf(x, mains));
    expect(Math.abs(dB(searched.rms / Math.SQRT1_2))).toBeLessThan(0.02);
  });

  it('is exact for a noise-free sine at a low normalised frequency (50 Hz at 51.2 kHz, M = 65 536)', () => {
    // ω = 0.006 rad per sample, the hardest case for the Goertzel recursion's rounding;
    // 1.28 s segments hold a non-integer number of cycles (64), the sine sits on a grid point
    const o = { sampleRate: 51200, segmentSamples: 65536, fundamentalHz: 50, harmonics: 1 };
    const A = 3;
    const x = tone(4 * 65536, 51200, 50, A, 0.2);
    const [line] = lineLevels(sumsOf(x, o));
    // only the negative-frequency image leaks in, 128 bins away: below 1e-6
    expect(Math.abs(line.rms / (A / Math.SQRT2) - 1)).toBeLessThan(1e-6);
  });

  it('decimates at high rates without moving a line or its floor: 25.6 kHz, 5 harmonics (sums of 16 samples)', () => {
    // fs/D = 1600 Hz ≥ 16 × the top floor point near 253 Hz: D = 16. The gain of the sum is
    // undone per frequency; white noise folding in from near 1600 Hz is attenuated by the
    // Dirichlet kernel's nulls, so the floor stays at 2σ²·ENBW/M (Harris 1978, Hann 1.5 bins)
    const hi = { sampleRate: 25600, segmentSamples: 65536, fundamentalHz: 50, harmonics: 5 };
    const n = 4 * 65536;
    const floors: number[] = [];
    for (let seed = 0; seed < 6; seed++) {
      const x = plus(tone(n, 25600, 50.1, 0.5, 0.4), tone(n, 25600, 250.5, 0.2, 1.3), whiteNoise(n, 300 + seed, 1));
      const levels = lineLevels(sumsOf(x, hi));
      // the noise in a line's bandwidth moves its RMS by about ±floorRms/rms (cross term of
      // line and noise, averaged over only 4 segments): allow 3 times that, plus 0.5 %
      for (const [l, a] of [[levels[0], 0.5], [levels[4], 0.2]] as const) {
        const rms = a / Math.SQRT2;
        expect(Math.abs(l.rms / rms - 1)).toBeLessThan(0.005 + (3 * l.floorRms) / rms);
      }
      for (const l of levels.slice(1, 4)) floors.push(l.floorRms ** 2 / ((2 * 1.5) / 65536));
    }
    const mean = floors.reduce((a, b) => a + b) / floors.length;
    // 18 floor estimates of 6 points × 4 segments: scatter about 1/√(18·24/1.5) ≈ 0.06
    expect(Math.abs(mean - 1)).toBeLessThan(0.15);
  });

  it('measures the harmonics at 100 and 150 Hz, each within 2 %, with the fundamental 0.2 Hz high', () => {
    // harmonic h drifts h × 0.2 Hz: 150.6 Hz is 1.2 bins from 150 Hz
    const [A1, A2, A3] = [1, 0.3, 0.2];
    const x = plus(tone(N, fs, 50.2, A1), tone(N, fs, 100.4, A2, 1.1), tone(N, fs, 150.6, A3, 2.3), whiteNoise(N, 12, 0.5));
    const levels = lineLevels(sumsOf(x, mains));
    expect(levels.map((l) => l.nominalHz)).toEqual([50, 100, 150]);
    for (const [k, A] of [A1, A2, A3].entries()) expect(Math.abs(levels[k].rms / (A / Math.SQRT2) - 1)).toBeLessThan(0.02);
  });
});

describe('prominence over the floor beside the line', () => {
  it('of a pure tone is far above 20 dB', () => {
    for (const hz of [50, 50.2]) {
      const x = plus(tone(N, fs, hz, 1), whiteNoise(N, 13, 1e-3));
      const [line] = lineLevels(sumsOf(x, mains));
      // common practice, no source: a ground-loop line stands 20 dB and more above the floor
      expect(line.prominenceDb).toBeGreaterThan(40);
    }
  });

  it('of white noise is near 0 dB, and the floor is the noise within the line bandwidth', () => {
    // 24 seeded records of unit white noise, 128 segments each. The mean power of 128
    // segments scatters by 1/√128 (a χ² with 256 degrees of freedom), the floor of six
    // points less: σ(prominence) ≈ 4.34·√(1/128 + 1/(6·128)) ≈ 0.41 dB. The peak search takes
    // the largest of 5 grid points (interpolated), which biases noise up by a fraction of that.
    const prominences: number[] = [];
    const floorRatios: number[] = [];
    for (let seed = 0; seed < 24; seed++) {
      const [line] = lineLevels(sumsOf(whiteNoise(N, 100 + seed, 1), { ...mains, harmonics: 1 }));
      prominences.push(line.prominenceDb);
      // white noise of variance σ² has one-sided density 2σ²/fs: in bandwidthHz that is
      // 2σ²·ENBW/M (Harris 1978: ENBW of Hann 1.5 bins)
      floorRatios.push(line.floorRms ** 2 / ((2 * 1.5) / M));
      expect(line.bandwidthHz).toBe((1.5 * fs) / M);
    }
    const mean = prominences.reduce((a, b) => a + b) / prominences.length;
    const sd = Math.sqrt(prominences.reduce((a, b) => a + (b - mean) ** 2, 0) / (prominences.length - 1));
    const meanFloor = floorRatios.reduce((a, b) => a + b) / floorRatios.length;
    console.log(`white noise: prominence mean ${mean.toFixed(3)} dB, sd ${sd.toFixed(3)} dB; floor / expected ${meanFloor.toFixed(4)}`);
    expect(Math.abs(mean)).toBeLessThan(0.6);
    expect(sd).toBeLessThan(0.8);
    expect(Math.max(...prominences.map(Math.abs))).toBeLessThan(2);
    // mean of 24 × 6 floor points × 128 segments: scatter about 1/√(24·6·128/1.5) ≈ 0.01
    expect(Math.abs(meanFloor - 1)).toBeLessThan(0.04);
  });

  it('of a structural resonance at 50 Hz (ζ 2 %) is low, of a line of the same RMS high', () => {
    // A mode's response falls to half power ζ·f = 1 Hz from its peak (single-degree-of-freedom
    // half-power bandwidth 2ζf, a textbook fact); the floor points lie 1.75–2.75 Hz off, where
    // the response is 1/(1 + (Δ/1 Hz)²) of the peak: 0.25, 0.16, 0.12, so the prominence of
    // the mode is about 10·log10(1/0.176) ≈ 7.5 dB. A line of the same RMS over the same
    // broadband floor stands far higher.
    const R = 1;
    const mode = resonate(whiteNoise(N + 20_000, 21), fs, { hz: 50, damping: 0.02 }).subarray(20_000);
    const k = R / rmsOf(mode);
    for (let i = 0; i < N; i++) mode[i] *= k;
    const floor = whiteNoise(N, 22, 0.05);
    const [resonance] = lineLevels(sumsOf(plus(mode, floor), mains));
    const [line] = lineLevels(sumsOf(plus(tone(N, fs, 50, R * Math.SQRT2), floor), mains));
    console.log(`resonance: prominence ${resonance.prominenceDb.toFixed(2)} dB, rms ${resonance.rms.toFixed(4)}; line: ${line.prominenceDb.toFixed(2)} dB, rms ${line.rms.toFixed(4)}`);
    expect(resonance.prominenceDb).toBeGreaterThan(4);
    expect(resonance.prominenceDb).toBeLessThan(12);
    expect(line.prominenceDb).toBeGreaterThan(40);
    expect(Math.abs(line.rms / R - 1)).toBeLessThan(0.02);
    // the mode's power spreads over its noise bandwidth, π/2 × the half-power bandwidth 2ζf =
    // π Hz (single-degree-of-freedom resonance, from memory); the 0.75 Hz measurement band
    // holds about 0.75/π of it: rms ≈ √(0.75/π) · R ≈ 0.49 R
    expect(resonance.rms / (R * Math.sqrt(resonance.bandwidthHz / (Math.PI * 0.02 * 50)))).toBeGreaterThan(0.85);
    expect(resonance.rms / (R * Math.sqrt(resonance.bandwidthHz / (Math.PI * 0.02 * 50)))).toBeLessThan(1.15);
  });
});

describe('broadband RMS and bookkeeping', () => {
  it('broadbandRms is the RMS about each segment mean (closed form: √(σ² + A²/2) with the offset removed)', () => {
    const x = plus(tone(N, fs, 50, 1), whiteNoise(N, 31, 0.5));
    for (let i = 0; i < N; i++) x[i] += 1000;
    // σ = 0.5 simulated: the sample variance scatters by √(2/N) relative, ≈ 0.3 %
    expect(Math.abs(broadbandRms(sumsOf(x, mains)) / Math.sqrt(0.25 + 0.5) - 1)).toBeLessThan(0.01);
  });

  it('an offset of 1000 × the signal does not change the lines (each segment mean is removed)', () => {
    const x = plus(tone(N / 8, fs, 50.2, 1), whiteNoise(N / 8, 32, 0.2));
    const y = Float64Array.from(x, (v) => v + 1000);
    const a = lineLevels(sumsOf(x, mains));
    const b = lineLevels(sumsOf(y, mains));
    for (let h = 0; h < a.length; h++) expect(b[h].rms / a[h].rms).toBeCloseTo(1, 6);
  });

  it('merging the sums of two sets of segments equals one accumulator fed all of them', () => {
    const x = plus(tone(N / 4, fs, 49.9, 1), whiteNoise(N / 4, 41, 0.3));
    const whole = sumsOf(x, mains);
    const a = sumsOf(x.subarray(0, 11 * M), mains);
    const b = sumsOf(x.subarray(11 * M), mains);
    const merged = mergeLineSums(b, a);
    expect(merged.segments).toBe(whole.segments);
    expect(merged.sumSquares).toBeCloseTo(whole.sumSquares, 9);
    merged.lines.forEach((l, h) => {
      l.power.forEach((v, j) => expect(Math.abs(v / whole.lines[h].power[j] - 1)).toBeLessThan(1e-12));
      l.floorPower.forEach((v, j) => expect(Math.abs(v / whole.lines[h].floorPower[j] - 1)).toBeLessThan(1e-12));
    });
    expect(mergeLineSums(emptyLineSums(mains), whole)).toEqual(whole);
    // plain data: survives JSON unchanged
    expect(JSON.parse(JSON.stringify(whole))).toEqual(whole);
  });

  it('leaves out harmonics whose floor points pass the Nyquist frequency', () => {
    // 1024 Hz: Nyquist 512 Hz; the 10th harmonic's highest floor point is 500 + 2 + 2.5 Hz
    const s = emptyLineSums({ ...mains, harmonics: 12 });
    expect(s.lines.map((l) => l.harmonic)).toEqual([1, 2, 3, 4, 5, 6, 7, 8, 9, 10]);
  });

  it('counts and skips a segment holding a non-finite sample', () => {
    const acc = new LineAccumulator(mains);
    const x = whiteNoise(M, 51);
    acc.addSegment(x);
    x[100] = NaN;
    acc.addSegment(x);
    x[100] = Infinity;
    acc.addSegment(x);
    const s = acc.sums();
    expect([s.segments, s.skippedSegments]).toEqual([1, 2]);
    expect(Number.isFinite(lineLevels(s)[0].rms)).toBe(true);
  });

  it('with no segment every figure is NaN', () => {
    const [line] = lineLevels(emptyLineSums(mains));
    expect([line.rms, line.floorRms, line.prominenceDb]).toEqual([NaN, NaN, NaN]);
    expect(broadbandRms(emptyLineSums(mains))).toBeNaN();
  });

  it('rejects a segment of the wrong length and invalid options', () => {
    const acc = new LineAccumulator(mains);
    expect(() => acc.addSegment(new Float64Array(100))).toThrow(new RangeError('Mains-line segment has 100 samples, expected 2048'));
    expect(() => new LineAccumulator({ ...mains, harmonics: 0 })).toThrow(
      new RangeError('Number of mains harmonics must be a whole number of at least 1, not 0'),
    );
    expect(() => mergeLineSums(emptyLineSums(mains), emptyLineSums({ ...mains, fundamentalHz: 60 }))).toThrow(
      new RangeError(
        'Cannot merge mains-line sums of 50 Hz × 3 at 1024 Hz in 2048-sample segments with those of 60 Hz × 3 at 1024 Hz in 2048-sample segments',
      ),
    );
  });
});
