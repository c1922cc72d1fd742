/**
 * Robust limits from the values a statistic took on recordings known to be good.
 *
 * A lab's training set is small (tens of recordings) and may hold a recording that is not
 * as good as believed, so the centre and spread are taken robustly: the median, and the
 * median absolute deviation scaled to a standard deviation. Minimum and maximum alone would
 * let one odd recording set a limit, and would say nothing about where the next good
 * recording may fall.
 */

/**
 * 1 / Φ⁻¹(3/4) = 1.482602…, rounded as it is usually quoted: the factor that makes the
 * MAD a consistent estimator of σ for normal data (Rousseeuw & Croux, "Alternatives to
 * the median absolute deviation", JASA 88:1273–1283, 1993; Hampel 1974).
 */
export const MAD_TO_SIGMA = 1.4826;

/** Fewest values a limit is learned from with the margin as given (docs/learning.md). */
export const MIN_VALUES_PER_LIMIT = 5;

/** Significant digits a learned limit is written with (rounded outward). */
export const LIMIT_DIGITS = 3;

/**
 * Median of the values: the middle one of the sorted values, or the mean of the two
 * middle ones for an even count. NaN for none. Example: median([5, 1, 3, 2]) = 2.5.
 */
export function median(values: readonly number[]): number {
  if (values.length === 0) return NaN;
  const sorted = [...values].sort((a, b) => a - b);
  const mid = sorted.length >> 1;
  return sorted.length % 2 ? sorted[mid] : (sorted[mid - 1] + sorted[mid]) / 2;
}

/**
 * Median absolute deviation from the median, unscaled: median(|x − median(x)|). Its
 * breakdown point is 50 %: up to half the values may be wild without making it
 * arbitrarily large. Example: MAD([1, 2, 3, 4, 100]) = 1.
 */
export function medianAbsoluteDeviation(values: readonly number[]): number {
  const m = median(values);
  return median(values.map((v) => Math.abs(v - m)));
}

/**
 * d₂(n): the expected range (max − min) of n independent standard normal values, for
 * n = 2…25, so that range / d₂(n) estimates σ (the control-chart constant; tabulated in
 * ASTM E2587, "Standard Practice for Use of Control Charts in Statistical Process
 * Control", and D. C. Montgomery, "Introduction to Statistical Quality Control",
 * appendix table VI).
 */
export const NORMAL_RANGE_D2: Readonly<Record<number, number>> = {
  2: 1.128, 3: 1.693, 4: 2.059, 5: 2.326, 6: 2.534, 7: 2.704, 8: 2.847, 9: 2.97, 10: 3.078, 11: 3.173, 12: 3.258,
  13: 3.336, 14: 3.407, 15: 3.472, 16: 3.532, 17: 3.588, 18: 3.64, 19: 3.689, 20: 3.735, 21: 3.778, 22: 3.819,
  23: 3.858, 24: 3.895, 25: 3.931,
};

/**
 * The spread a bound on `side` is learned with: MAD_TO_SIGMA × the median of |x − median|
 * over the values on that side of the median (for normal data the same as the MAD; for a
 * skewed statistic, and the extremes over frames and the kurtosis of narrow-band data are,
 * it measures the side the limit is on, not the short one), but for 25 values or fewer at
 * least range / d₂(n). From ten values the MAD is itself uncertain (its efficiency for
 * normal data is 37 %: Rousseeuw & Croux 1993), and a spread well below the scatter
 * actually seen makes a limit that the next good recording fails: in a seeded simulation
 * of 10 normal values, a new value fell beyond median + 5 × (1.4826 × MAD) about 4e-3 of
 * the time, beyond median + 5 × the floored spread about 3e-4 (test/learn/limits.test.ts).
 * The floor only ever widens a limit; beyond 25 values the MAD alone is used, so one odd
 * recording cannot widen the limits of a large group.
 */
export function robustSpread(values: readonly number[], side: Side): { spread: number; by: 'mad' | 'range' } {
  const m = median(values);
  const onSide = values.filter((v) => (side === 'high' ? v >= m : v <= m)).map((v) => Math.abs(v - m));
  const mad = MAD_TO_SIGMA * median(onSide);
  const d2 = NORMAL_RANGE_D2[values.length];
  if (d2 === undefined) return { spread: mad, by: 'mad' };
  const byRange = (Math.max(...values) - Math.min(...values)) / d2;
  return byRange > mad ? { spread: byRange, by: 'range' } : { spread: mad, by: 'mad' };
}

/** Which side of the distribution a limit bounds. */
export type Side = 'low' | 'high';

/** What decided a learned bound's value (said in the rule file's comment). */
export type Basis =
  /** median ± margin × spread */
  | 'margin'
  /** the observed extreme plus the allowance: it lay beyond median ± margin × spread */
  | 'observed';

/** A learned bound with the evidence it rests on. Values of a log-scale bound are in the statistic's unit. */
export interface LearnedBound {
  side: Side;
  /** The limit as written: rounded outward to LIMIT_DIGITS significant digits. */
  value: number;
  /** Before rounding. */
  exact: number;
  basis: Basis;
  /** The values learned from (those that were finite). */
  n: number;
  min: number;
  max: number;
  median: number;
  /**
   * robustSpread(values, side), in the statistic's unit on a linear scale; on a log scale
   * the factor exp(spread of ln x).
   */
  spread: number;
  /** Whether the spread is the scaled MAD, range / d₂(n), or the Gaussian scatter floor. */
  spreadBy: 'mad' | 'range' | 'gaussian';
  /** The margin used (the one asked for, or widened for few values). */
  margin: number;
  /** How far beyond the observed extreme the limit is at least (linear: in the unit; log: a factor). */
  allowance: number;
  scale: 'linear' | 'log';
}

export interface BoundOptions {
  /** Limit = median ± margin × spread (at least the observed extreme ± allowance). */
  margin: number;
  /**
   * The spread is at least this (linear scale only): the scatter sampling theory gives the
   * statistic (a Gaussian process's kurtosis and skewness), which a few good recordings
   * may not have shown.
   */
  minSpread?: number;
  /**
   * `log` for a level, whose natural variation is a factor (a gain, a sensitivity): the
   * bound is learned on ln x and is median ×/÷ spread^margin.
   */
  scale?: 'linear' | 'log';
}

/**
 * The learned low or high limit of a statistic from its values on good recordings:
 *
 *   limit = median ± margin × s,   s = robustSpread(values, side)
 *
 * but never inside the observed range widened by an allowance — max(5 % of the observed
 * range, 1 % of the observed extreme's magnitude) — so every good recording of the
 * training set passes, and a limit from nearly identical values is not razor thin.
 * The result is rounded outward to LIMIT_DIGITS significant digits (it never moves
 * inward). On a log scale (for levels and level ratios, which vary by a factor) the same
 * is done on ln x, so a low limit stays above 0. Throws a RangeError for no finite values
 * (the caller decides what to learn from).
 */
export function learnBound(values: readonly number[], side: Side, options: BoundOptions): LearnedBound {
  const scale = options.scale ?? 'linear';
  const finite = values.filter((v) => Number.isFinite(v) && (scale === 'linear' || v > 0));
  if (finite.length === 0) throw new RangeError('no finite values to learn a limit from');
  const t = scale === 'log' ? finite.map(Math.log) : finite;
  const lo = Math.min(...t);
  const hi = Math.max(...t);
  const centre = median(t);
  const robust = robustSpread(t, side);
  const floor = scale === 'linear' && options.minSpread !== undefined && options.minSpread > robust.spread ? options.minSpread : null;
  const s = floor ?? robust.spread;
  const spreadBy: LearnedBound['spreadBy'] = floor !== null ? 'gaussian' : robust.by;
  const extreme = side === 'high' ? hi : lo;
  const allowance = Math.max(0.05 * (hi - lo), scale === 'log' ? 0.01 : 0.01 * Math.abs(extreme));
  const byMargin = side === 'high' ? centre + options.margin * s : centre - options.margin * s;
  const byRange = side === 'high' ? hi + allowance : lo - allowance;
  const basis: Basis = (side === 'high' ? byMargin >= byRange : byMargin <= byRange) ? 'margin' : 'observed';
  const learned = side === 'high' ? Math.max(byMargin, byRange) : Math.min(byMargin, byRange);
  const exact = scale === 'log' ? Math.exp(learned) : learned;
  const back = (v: number) => (scale === 'log' ? Math.exp(v) : v);
  return {
    side,
    value: roundOutward(exact, side),
    exact,
    basis,
    n: finite.length,
    min: back(lo),
    max: back(hi),
    median: back(centre),
    spread: scale === 'log' ? Math.exp(s) : s,
    spreadBy,
    margin: options.margin,
    allowance: scale === 'log' ? Math.exp(allowance) : allowance,
    scale,
  };
}

/**
 * `value` rounded to `digits` significant digits away from the accepted region: up for a
 * high limit, down for a low one, so the written limit is never tighter than the learned
 * one. The result is the double nearest its decimal text (it prints as that text).
 * Examples: roundOutward(3.1415, 'high') = 3.15; roundOutward(3.1415, 'low') = 3.14;
 * roundOutward(-0.04137, 'low') = -0.0414.
 */
export function roundOutward(value: number, side: Side, digits = LIMIT_DIGITS): number {
  if (value === 0 || !Number.isFinite(value)) return value;
  const exponent = Math.floor(Math.log10(Math.abs(value)));
  const step = 10 ** (exponent - digits + 1);
  const stepsOf = side === 'high' ? Math.ceil : Math.floor;
  let steps = stepsOf(value / step);
  // value / step is inexact: make sure the decimal written is on the accepted side of value
  for (;;) {
    const written = Number((steps * step).toPrecision(digits + 1));
    if (side === 'high' ? written >= value : written <= value) return written;
    steps += side === 'high' ? 1 : -1;
  }
}
