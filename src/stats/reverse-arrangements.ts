import { normalQuantile } from './normal-quantile.js';

/** Result of the reverse arrangements test on a sequence (for example frame RMS values). */
export interface ReverseArrangements {
  /** Number of values in the sequence. */
  n: number;
  /** A = number of pairs i < j with x_i > x_j. */
  arrangements: number;
  /** Mean of A under stationarity: n(n−1)/4. */
  expected: number;
  /** Variance of A under stationarity: n(2n+5)(n−1)/72. */
  variance: number;
  /** (A − expected) / √variance: negative for a rising trend, positive for a falling one. */
  z: number;
}

/**
 * Reverse arrangements test for a monotonic trend (Bendat & Piersol, Random Data, section on
 * tests for stationarity). Counts A = Σ_{i<j} [x_i > x_j] by merge sort in O(n log n), so
 * thousands of frames cost nothing. Ties are not counted as arrangements. NaN values are
 * dropped first. Minimum n: 2 (the test has little power below about 10).
 */
export function reverseArrangements(values: ArrayLike<number>): ReverseArrangements {
  const xs: number[] = [];
  for (let i = 0; i < values.length; i++) if (!Number.isNaN(values[i])) xs.push(values[i]);
  const n = xs.length;
  const arrangements = countInversions(xs);
  const expected = (n * (n - 1)) / 4;
  const variance = (n * (2 * n + 5) * (n - 1)) / 72;
  const z = variance > 0 ? (arrangements - expected) / Math.sqrt(variance) : 0;
  return { n, arrangements, expected, variance, z };
}

/**
 * Acceptance region of the test at significance `alpha` (two-sided): stationarity is accepted
 * when lower < A ≤ upper. Bounds are the normal approximation's quantiles rounded down, which
 * reproduces Bendat & Piersol's table of percentage points for n ≥ 10.
 */
export function reverseArrangementsBounds(n: number, alpha = 0.05): { lower: number; upper: number } {
  const mean = (n * (n - 1)) / 4;
  const sd = Math.sqrt((n * (2 * n + 5) * (n - 1)) / 72);
  const q = normalQuantile(1 - alpha / 2);
  return { lower: Math.floor(mean - q * sd), upper: Math.floor(mean + q * sd) };
}

/** Two-sided p-value of the normal approximation for a test result. */
export function reverseArrangementsPValue(result: ReverseArrangements): number {
  return 2 * (1 - standardNormalCdf(Math.abs(result.z)));
}

function standardNormalCdf(z: number): number {
  // Φ(z) = ½·erfc(−z/√2); erfc by the Numerical Recipes Chebyshev fit (|error| < 1.2e-7),
  // ample for a significance level.
  const x = -z / Math.SQRT2;
  const t = 1 / (1 + 0.5 * Math.abs(x));
  const y =
    t *
    Math.exp(
      -x * x - 1.26551223 +
        t * (1.00002368 + t * (0.37409196 + t * (0.09678418 + t * (-0.18628806 +
        t * (0.27886807 + t * (-1.13520398 + t * (1.48851587 + t * (-0.82215223 + t * 0.17087277)))))))),
    );
  const erfc = x >= 0 ? y : 2 - y;
  return 0.5 * erfc;
}

function countInversions(xs: number[]): number {
  const n = xs.length;
  let a = Float64Array.from(xs);
  let b = new Float64Array(n);
  let count = 0;
  for (let width = 1; width < n; width *= 2) {
    for (let lo = 0; lo < n; lo += 2 * width) {
      const mid = Math.min(lo + width, n);
      const hi = Math.min(lo + 2 * width, n);
      let i = lo;
      let j = mid;
      let k = lo;
      while (i < mid && j < hi) {
        if (a[j] < a[i]) {
          // every remaining left value exceeds a[j]: each is one arrangement
          count += mid - i;
          b[k++] = a[j++];
        } else {
          b[k++] = a[i++];
        }
      }
      while (i < mid) b[k++] = a[i++];
      while (j < hi) b[k++] = a[j++];
    }
    const t = a;
    a = b;
    b = t;
  }
  return count;
}
