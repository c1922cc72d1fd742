import type { Moments } from './moments.js';

/**
 * Population variance m2 = M2/n (divides by n). Minimum n: 1. Example: {1, 2, 3, 4} → 1.25.
 * Used for RMS-related quantities and the moment ratios below.
 */
export function populationVariance(m: Moments): number {
  return m.n > 0 ? m.m2 / m.n : NaN;
}

/**
 * Bias-corrected sample variance s² = M2/(n − 1), the one NIST StRD certifies. Minimum n: 2.
 * Example: {1, 2, 3, 4} → 1.6667.
 */
export function sampleVariance(m: Moments): number {
  return m.n > 1 ? m.m2 / (m.n - 1) : NaN;
}

/** Root mean square including the mean: √(x̄² + M2/n). Minimum n: 1. Example: {3, 4} → 3.5355. */
export function rms(m: Moments): number {
  return m.n > 0 ? Math.sqrt(m.mean * m.mean + m.m2 / m.n) : NaN;
}
