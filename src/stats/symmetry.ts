/**
 * Min/max symmetry about zero: the larger of max and −min over the smaller. 1 for a
 * symmetric signal; one-sided spikes, clipping on one side or a rattling sensor make it
 * large (vibration signals are roughly symmetric: common practice, no source).
 * Infinity when the signal never crosses zero (max ≤ 0 or min ≥ 0); NaN without samples.
 */
export function symmetryRatio(min: number, max: number): number {
  if (!(min <= max)) return NaN;
  const up = max;
  const down = -min;
  if (up <= 0 || down <= 0) return up === 0 && down === 0 ? NaN : Infinity;
  return up >= down ? up / down : down / up;
}

/** Which side reaches further from zero: 'positive' when max ≥ −min. */
export function largerSide(min: number, max: number): 'positive' | 'negative' {
  return max >= -min ? 'positive' : 'negative';
}
