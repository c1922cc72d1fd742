import { describe, expect, it } from 'vitest';
import jStat from 'jstat';
import * as ss from 'simple-statistics';
import { statsOf } from '../helpers/summarise.js';
import { gaussian, uniformSource } from '../helpers/random.js';

// Skewness and kurtosis of random data compared with general reference libraries from the
// npm registry, with matching conventions:
//  - jStat.skewness = population g1; jStat.kurtosis = population excess g2 (β2 − 3)
//    (jstat 1.9.6, src: stanMoment with population σ);
//  - simple-statistics sampleSkewness = G1 (bias-corrected), sampleKurtosis = G2 (excess, bias-corrected).

function laplace(n: number, seed: number): Float64Array {
  const u = uniformSource(seed);
  return new Float64Array(n).map(() => {
    const v = u() - 0.5;
    return -Math.sign(v) * Math.log(1 - 2 * Math.abs(v));
  });
}

function exponential(n: number, seed: number): Float64Array {
  const u = uniformSource(seed);
  return new Float64Array(n).map(() => -Math.log(1 - u()));
}

const datasets: Array<[string, Float64Array]> = [
  ['Gaussian', gaussian(50_000, 5)],
  ['skewed (exponential)', exponential(20_000, 9)],
  ['heavy-tailed (Laplace)', laplace(30_000, 17)],
  ['small sample', gaussian(7, 99)],
];

describe('against jstat and simple-statistics', () => {
  for (const [name, x] of datasets) {
    it(`${name}: population g1 and β2 match jstat to 1e-10`, () => {
      const st = statsOf(x);
      const arr = Array.from(x);
      expect(Math.abs(st.skewness - jStat.skewness(arr))).toBeLessThan(1e-10);
      expect(Math.abs(st.kurtosis - (jStat.kurtosis(arr) + 3))).toBeLessThan(1e-10);
    });
    it(`${name}: bias-corrected G1 and G2 match simple-statistics to 1e-10`, () => {
      const st = statsOf(x);
      const arr = Array.from(x);
      expect(Math.abs(st.skewnessG1 - ss.sampleSkewness(arr))).toBeLessThan(1e-10);
      expect(Math.abs(st.excessKurtosisG2 - ss.sampleKurtosis(arr))).toBeLessThan(1e-10);
    });
  }
  it('Laplace data has kurtosis near 6 and Gaussian data near 3 (references.md §3)', () => {
    // scatter of β2 for Gaussian data √(24/n) ≈ 0.022 at n = 50 000 (Lomnicki 1961, white noise)
    expect(Math.abs(statsOf(datasets[0][1]).kurtosis - 3)).toBeLessThan(0.1);
    expect(Math.abs(statsOf(datasets[2][1]).kurtosis - 6)).toBeLessThan(0.6);
  });
});
