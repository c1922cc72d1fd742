import type { Moments } from './moments.js';

/**
 * Kurtosis β2 = m4 / m2² with m_k = M_k/n: population, NON-excess (3 for Gaussian data,
 * 1.5 for a sine, 1.8 for uniform, 1 for a square wave). This is vibgate's default
 * "kurtosis" everywhere. Minimum n: 2 and non-zero variance; otherwise NaN.
 */
export function kurtosis(m: Moments): number {
  if (m.n < 2 || !(m.m2 > 0)) return NaN;
  const m2 = m.m2 / m.n;
  return m.m4 / m.n / (m2 * m2);
}

/** Population excess kurtosis g2 = β2 − 3 (Joanes & Gill 1998). 0 for Gaussian data. */
export function excessKurtosis(m: Moments): number {
  return kurtosis(m) - 3;
}

/**
 * Bias-corrected excess kurtosis G2 = ((n+1)·g2 + 6)·(n−1)/((n−2)(n−3)) (Joanes & Gill 1998;
 * spreadsheets' KURT). Minimum n: 4. Example: Commons Math test vector → 2.3772.
 */
export function excessKurtosisG2(m: Moments): number {
  const n = m.n;
  if (n < 4) return NaN;
  return (((n + 1) * excessKurtosis(m) + 6) * (n - 1)) / ((n - 2) * (n - 3));
}
