import { describe, expect, it } from 'vitest';
import { statsOf } from '../helpers/summarise.js';
import { uniformSource } from '../helpers/random.js';

// Closed-form values, references.md §3 (handbook facts, derivable): population, non-excess
// kurtosis β2; RMS includes the mean; crest factor = peak/RMS.

function sine(n: number, cycles: number, amplitude: number, offset = 0, phase = 0): Float64Array {
  const x = new Float64Array(n);
  for (let i = 0; i < n; i++) x[i] = offset + amplitude * Math.sin((2 * Math.PI * cycles * i) / n + phase);
  return x;
}

describe('sampled sine with an integer number of cycles', () => {
  // 8192 samples, 64 cycles: 128 samples per period, a multiple of 4, so the sampled peak is A
  const A = 2.5;
  const st = statsOf(sine(8192, 64, A));
  it('has RMS A/√2', () => expect(st.rms).toBeCloseTo(A / Math.SQRT2, 12));
  it('has crest factor √2', () => expect(st.crestFactor).toBeCloseTo(Math.SQRT2, 12));
  it('has kurtosis 1.5 and skewness 0', () => {
    expect(st.kurtosis).toBeCloseTo(1.5, 12);
    expect(st.skewness).toBeCloseTo(0, 12);
  });
  it('is symmetric: max / −min = 1', () => expect(st.symmetryRatio).toBeCloseTo(1, 12));
  it('has mean(sin⁴)/mean(sin²)² = 1.5 even when the period is not a multiple of 4 samples', () => {
    // 7 samples per period (> 4), 100 cycles: mean(sin²) = 1/2 and mean(sin⁴) = 3/8 exactly
    expect(statsOf(sine(700, 100, 1, 0, 0.3)).kurtosis).toBeCloseTo(1.5, 12);
  });
});

describe('c + A·sin', () => {
  const c = 0.7;
  const A = 2;
  const st = statsOf(sine(4096, 32, A, c));
  it('has RMS √(c² + A²/2)', () => expect(st.rms).toBeCloseTo(Math.sqrt(c * c + (A * A) / 2), 12));
  it('has crest factor (|c| + A)/√(c² + A²/2)', () =>
    expect(st.crestFactor).toBeCloseTo((Math.abs(c) + A) / Math.sqrt(c * c + (A * A) / 2), 12));
  it('has kurtosis 1.5 about its mean and mean c', () => {
    expect(st.kurtosis).toBeCloseTo(1.5, 12);
    expect(st.mean).toBeCloseTo(c, 12);
  });
});

describe('square wave, 50 % duty', () => {
  const x = new Float64Array(1000).map((_, i) => (Math.floor(i / 25) % 2 === 0 ? 3 : -3));
  const st = statsOf(x);
  it('has kurtosis 1, RMS A and crest factor 1', () => {
    expect(st.kurtosis).toBeCloseTo(1, 12);
    expect(st.rms).toBeCloseTo(3, 12);
    expect(st.crestFactor).toBeCloseTo(1, 12);
  });
  it('sits at its extremes throughout, in runs of 25', () => {
    expect(st.extremes.atMin + st.extremes.atMax).toBe(1000);
    expect(st.longestRun.samples).toBe(25);
  });
});

describe('uniform distribution', () => {
  it('sampled discrete uniform with M levels has β2 = 3(3M² − 7)/(5(M² − 1))', () => {
    const M = 11;
    const x: number[] = [];
    for (let rep = 0; rep < 3; rep++) for (let k = 0; k < M; k++) x.push(k - (M - 1) / 2);
    expect(statsOf(x).kurtosis).toBeCloseTo((3 * (3 * M * M - 7)) / (5 * (M * M - 1)), 12);
  });
  it('random uniform on [−A, A] approaches RMS A/√3, crest √3, kurtosis 1.8', () => {
    const u = uniformSource(42);
    const n = 400_000;
    const x = new Float64Array(n).map(() => 4 * (2 * u() - 1));
    const st = statsOf(x);
    // sampling scatter of β2 for uniform data is about √((μ8/σ⁸ − β2²)/n) ≈ 0.0013 here
    expect(st.kurtosis).toBeCloseTo(1.8, 2);
    expect(st.rms).toBeCloseTo(4 / Math.sqrt(3), 2);
    expect(st.crestFactor).toBeCloseTo(Math.sqrt(3), 2);
  });
});

describe('one spike of height h in N samples, else 0', () => {
  for (const N of [10, 1000, 65536]) {
    it(`N = ${N}: RMS h/√N, crest √N, skewness (N−2)/√(N−1), β2 = (N² − 3N + 3)/(N − 1)`, () => {
      const h = 5;
      const x = new Float64Array(N);
      x[Math.floor(N / 3)] = h;
      const st = statsOf(x);
      // rounding of sums over N terms: allow 1e-11 relative
      expect(rel(st.rms, h / Math.sqrt(N))).toBeLessThan(1e-11);
      expect(rel(st.crestFactor, Math.sqrt(N))).toBeLessThan(1e-11);
      expect(rel(st.skewness, (N - 2) / Math.sqrt(N - 1))).toBeLessThan(1e-11);
      expect(rel(st.kurtosis, (N * N - 3 * N + 3) / (N - 1))).toBeLessThan(1e-11);
    });
  }
});

const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);
