import type { Moments } from './moments.js';

/**
 * Population skewness g1 = m3 / m2^1.5 with m_k = M_k/n (Joanes & Gill, The Statistician
 * 47:183–189, 1998, eq. for g1). 0 for any symmetric distribution, e.g. a sampled sine.
 * Minimum n: 2 and non-zero variance; otherwise NaN.
 */
export function skewness(m: Moments): number {
  if (m.n < 2 || !(m.m2 > 0)) return NaN;
  const m2 = m.m2 / m.n;
  return m.m3 / m.n / (m2 * Math.sqrt(m2));
}

/**
 * Bias-corrected skewness G1 = g1·√(n(n−1))/(n−2) (Joanes & Gill 1998; the one spreadsheets
 * and Apache Commons Math report). Minimum n: 3. Example: Commons Math test vector → 1.4374.
 */
export function skewnessG1(m: Moments): number {
  const n = m.n;
  if (n < 3) return NaN;
  return (skewness(m) * Math.sqrt(n * (n - 1))) / (n - 2);
}
