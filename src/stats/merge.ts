import { mergeMoments } from './moments.js';
import { mergeFrameTables } from './frames.js';
import { mergeRunStates } from './runs.js';
import type { ChannelSummary } from './channel-accumulator.js';

/**
 * Summary of a span made of span `a` followed immediately by span `b` (b.start must equal
 * a.start + a.count). Exact: merging the summaries of any split of a record gives the
 * summary of the whole record, up to floating-point rounding of the moment formulas.
 */
export function mergeChannelSummaries(a: ChannelSummary, b: ChannelSummary): ChannelSummary {
  if (a.count > 0 && b.count > 0 && a.start + a.count !== b.start) {
    throw new RangeError(
      `Cannot merge summaries: the first part ends at sample ${a.start + a.count} but the second starts at ${b.start}`,
    );
  }
  if (a.clip.low !== b.clip.low || a.clip.high !== b.clip.high) {
    throw new RangeError('Cannot merge summaries made with different clip levels');
  }
  return {
    start: a.count > 0 ? a.start : b.start,
    count: a.count + b.count,
    moments: mergeMoments(a.moments, b.moments),
    nonFinite: a.nonFinite + b.nonFinite,
    firstNonFinite: a.firstNonFinite >= 0 ? a.firstNonFinite : b.firstNonFinite,
    runs: mergeRunStates(a.runs, b.runs),
    clip: {
      low: a.clip.low,
      high: a.clip.high,
      countLow: a.clip.countLow + b.clip.countLow,
      countHigh: a.clip.countHigh + b.clip.countHigh,
    },
    frames: mergeFrameTables(a.frames, b.frames),
  };
}
