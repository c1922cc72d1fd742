/**
 * Crest factor = peak / RMS, linear (not dB), with peak = max(|min|, |max|) and the RMS
 * including the mean, as sox reports it. √2 for a sine, 1 for a square wave, √3 for
 * uniform noise; for Gaussian noise it grows like √(2 ln N) (about 4.8 for N = 10⁵).
 * NaN when the RMS is 0.
 */
export function crestFactor(peak: number, rmsValue: number): number {
  return rmsValue > 0 ? peak / rmsValue : NaN;
}
