import { describe, expect, it } from 'vitest';
import { statsOf } from '../helpers/summarise.js';

/** Relative difference, for tolerances stated as "relative". */
const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

// NIST Statistical Reference Datasets, univariate summary statistics: certified sample
// mean and standard deviation (s uses n − 1). NumAcc1–4 are constructed, so generated here.
function numAcc(first: number, low: number, high: number): number[] {
  const x = [first];
  for (let i = 0; i < 500; i++) x.push(low, high);
  return x;
}

// NIST StRD Michelso: A. A. Michelson's 1879 speed-of-light determinations in 1000 km/s,
// 100 values. The same measurements are distributed with R's MASS package as `michelson`
// (km/s less 299000); converted here as 299 + v/1000, which reproduces NIST's certified
// mean, s and lag-1 autocorrelation.
const michelsonKmS = [
  850, 740, 900, 1070, 930, 850, 950, 980, 980, 880, 1000, 980, 930, 650, 760, 810, 1000, 1000, 960, 960,
  960, 940, 960, 940, 880, 800, 850, 880, 900, 840, 830, 790, 810, 880, 880, 830, 800, 790, 760, 800,
  880, 880, 880, 860, 720, 720, 620, 860, 970, 950, 880, 910, 850, 870, 840, 840, 850, 840, 840, 840,
  890, 810, 810, 820, 800, 770, 760, 740, 750, 760, 910, 920, 890, 860, 880, 720, 840, 850, 850, 780,
  890, 840, 780, 810, 760, 810, 790, 810, 820, 850, 870, 870, 810, 740, 810, 940, 950, 800, 810, 870,
];

describe('NIST StRD univariate certified values', () => {
  const cases: Array<{ name: string; data: number[]; mean: number; s: number; tol: number }> = [
    { name: 'NumAcc1', data: [10000001, 10000003, 10000002], mean: 10000002, s: 1, tol: 1e-12 },
    { name: 'NumAcc2', data: numAcc(1.2, 1.1, 1.3), mean: 1.2, s: 0.1, tol: 1e-12 },
    // NumAcc3/4: the decimal inputs are themselves rounded in float64, so about 1e-8
    // relative is what any float64 method can reach (references.md §2).
    { name: 'NumAcc3', data: numAcc(1000000.2, 1000000.1, 1000000.3), mean: 1000000.2, s: 0.1, tol: 1e-8 },
    { name: 'NumAcc4', data: numAcc(10000000.2, 10000000.1, 10000000.3), mean: 10000000.2, s: 0.1, tol: 1e-8 },
    { name: 'Michelso', data: michelsonKmS.map((v) => 299 + v / 1000), mean: 299.8524, s: 0.0790105478190518, tol: 1e-10 },
  ];
  for (const c of cases) {
    it(`${c.name}: mean and s match the certified values`, () => {
      const st = statsOf(c.data);
      expect(rel(st.mean, c.mean)).toBeLessThan(1e-14);
      expect(rel(st.stdSample, c.s)).toBeLessThan(c.tol);
    });
    it(`${c.name}: the same when cut into frames of 10 samples and merged`, () => {
      const st = statsOf(c.data, { frameSamples: 10 });
      expect(rel(st.stdSample, c.s)).toBeLessThan(c.tol);
    });
  }

  it('NumAcc4 defeats the naive sum-of-squares formula, which vibgate does not use', () => {
    const x = numAcc(10000000.2, 10000000.1, 10000000.3);
    const n = x.length;
    const sum = x.reduce((a, b) => a + b, 0);
    const sumSq = x.reduce((a, b) => a + b * b, 0);
    const naive = Math.sqrt(Math.max(0, (sumSq - (sum * sum) / n) / (n - 1)));
    expect(rel(naive, 0.1)).toBeGreaterThan(1e-3); // the trap is real
    expect(rel(statsOf(x).stdSample, 0.1)).toBeLessThan(1e-8);
  });
});

describe('Apache Commons Math moment test vector', () => {
  // UnivariateStatisticAbstractTest.java: certified to 1e-11 by Commons Math.
  const data = [12.5, 12.0, 11.8, 14.2, 14.9, 14.5, 21.0, 8.2, 10.3, 11.3, 14.1, 9.9, 12.2, 12.0, 12.1, 11.0, 19.8, 11.0, 10.0, 8.8, 9.0, 12.3];
  const st = statsOf(data);
  it('mean and sample variance', () => {
    expect(st.mean).toBeCloseTo(12.404545454545455, 11);
    expect(st.stdSample ** 2).toBeCloseTo(10.00235930735931, 11);
  });
  it('bias-corrected skewness G1 and excess kurtosis G2', () => {
    expect(Math.abs(st.skewnessG1 - 1.43742372919619)).toBeLessThan(1e-11);
    expect(Math.abs(st.excessKurtosisG2 - 2.3771912648047)).toBeLessThan(1e-11);
  });
  it('population g1 and non-excess kurtosis g2 + 3', () => {
    // references.md §1: population values computed from the same data
    expect(Math.abs(st.skewness - 1.3375000836691457)).toBeLessThan(1e-11);
    expect(Math.abs(st.kurtosis - (1.6093844319374462 + 3))).toBeLessThan(1e-11);
  });
});
