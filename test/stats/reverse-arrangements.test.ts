import { describe, expect, it } from 'vitest';
import { reverseArrangements, reverseArrangementsBounds } from '../../src/stats/reverse-arrangements.js';
import { normalQuantile } from '../../src/stats/normal-quantile.js';
import { stationarity } from '../../src/stats/channel-stats.js';
import { summaryOf } from '../helpers/summarise.js';
import { gaussian } from '../helpers/random.js';

// Bendat & Piersol, Random Data, table of percentage points of the reverse arrangements
// distribution, α = 0.05 (references.md §4; the table itself is from memory there).
const table: Array<[number, number, number]> = [
  [10, 11, 33], [20, 64, 125], [30, 162, 272], [40, 305, 474], [50, 495, 729],
  [60, 731, 1038], [70, 1014, 1400], [80, 1344, 1815], [90, 1721, 2283], [100, 2145, 2804],
];

/**
 * Exact null distribution of A for n values in random order: the number of permutations
 * with k inversions, built as the product of (1 + x + … + x^{j−1}) for j = 1..n
 * (the Mahonian numbers), as counts in float64 divided by n! as we go to stay in range.
 */
function exactNull(n: number): Float64Array {
  let p = new Float64Array([1]);
  for (let j = 2; j <= n; j++) {
    const q = new Float64Array(p.length + j - 1);
    for (let k = 0; k < p.length; k++) for (let d = 0; d < j; d++) q[k + d] += p[k] / j;
    p = q;
  }
  return p;
}

describe('reverse arrangements test', () => {
  it('counts arrangements: A = Σ_{i<j} [x_i > x_j]', () => {
    expect(reverseArrangements([1, 2, 3, 4]).arrangements).toBe(0);
    expect(reverseArrangements([4, 3, 2, 1]).arrangements).toBe(6);
    expect(reverseArrangements([3, 1, 2, 2]).arrangements).toBe(3); // ties are not arrangements
    const x = gaussian(500, 3);
    let brute = 0;
    for (let i = 0; i < x.length; i++) for (let j = i + 1; j < x.length; j++) if (x[i] > x[j]) brute++;
    expect(reverseArrangements(x).arrangements).toBe(brute);
  });

  it('has the mean n(n−1)/4 and variance n(2n+5)(n−1)/72 of the exact null distribution', () => {
    for (const n of [10, 37, 100]) {
      const p = exactNull(n);
      let mean = 0;
      let second = 0;
      p.forEach((w, k) => { mean += w * k; second += w * k * k; });
      const r = reverseArrangements(new Float64Array(n).map((_, i) => i));
      expect(mean).toBeCloseTo(r.expected, 8);
      expect(second - mean * mean).toBeCloseTo(r.variance, 6);
    }
  });

  for (const [n, lower, upper] of table) {
    it(`n = ${n}: bounds ${lower} < A ≤ ${upper} agree with the table and the exact distribution`, () => {
      const b = reverseArrangementsBounds(n, 0.05);
      expect(b).toEqual({ lower, upper });
      // each pair sums to n(n−1)/2 − 1 (symmetry of the distribution)
      expect(lower + upper).toBe((n * (n - 1)) / 2 - 1);
      // exact two-sided level of the acceptance region: close to 5 % (normal approximation)
      const p = exactNull(n);
      let below = 0;
      let above = 0;
      p.forEach((w, k) => { if (k <= lower) below += w; if (k > upper) above += w; });
      expect(below).toBeGreaterThan(0.015);
      expect(below).toBeLessThan(0.035);
      expect(Math.abs(below - above)).toBeLessThan(1e-9);
    });
  }

  it('normal quantile matches standard normal table values (AS 241)', () => {
    expect(normalQuantile(0.975)).toBeCloseTo(1.959963984540054, 14); // standard normal table
    expect(normalQuantile(0.995)).toBeCloseTo(2.5758293035489, 12);
    expect(normalQuantile(0.9995)).toBeCloseTo(3.2905267314919, 12);
    expect(normalQuantile(0.5)).toBe(0);
    expect(normalQuantile(0.025)).toBeCloseTo(-normalQuantile(0.975), 15);
  });

  it('accepts a stationary Gaussian record and rejects one whose RMS grows', () => {
    const fs = 256;
    const steady = gaussian(fs * 60, 11);
    const growing = gaussian(fs * 60, 12).map((v, i) => v * (1 + i / (fs * 60)));
    const s1 = stationarity(summaryOf(steady, { frameSamples: fs }).frames, 'rms', { segments: 20 });
    const s2 = stationarity(summaryOf(growing, { frameSamples: fs }).frames, 'rms', { segments: 20 });
    expect(s1!.stationary).toBe(true);
    expect(s2!.stationary).toBe(false);
    expect(s2!.z).toBeLessThan(-3); // a rising trend: few arrangements
  });

  it('rejects a drifting mean', () => {
    const fs = 256;
    const drift = gaussian(fs * 60, 13).map((v, i) => v + (2 * i) / (fs * 60));
    const s = stationarity(summaryOf(drift, { frameSamples: fs }).frames, 'mean', { segments: 20 });
    expect(s!.stationary).toBe(false);
  });
});
