import { ChannelAccumulator, type ChannelSummary } from '../../src/stats/channel-accumulator.js';
import { channelStats, type ChannelStats } from '../../src/stats/channel-stats.js';

/** Summary of one channel fed in one piece (or in `pieces` equal pushes). */
export function summaryOf(
  x: Float64Array,
  options: { frameSamples?: number; hopSamples?: number; clipLow?: number; clipHigh?: number; start?: number } = {},
): ChannelSummary {
  const frameSamples = options.frameSamples ?? Math.max(1, x.length);
  const acc = new ChannelAccumulator(
    { frameSamples, hopSamples: options.hopSamples ?? frameSamples },
    { low: options.clipLow, high: options.clipHigh },
    options.start ?? 0,
  );
  acc.push(x);
  return acc.summary();
}

export function statsOf(
  x: ArrayLike<number>,
  options: { sampleRate?: number; frameSamples?: number; hopSamples?: number; clipLow?: number; clipHigh?: number } = {},
): ChannelStats {
  return channelStats(summaryOf(Float64Array.from(x), options), { sampleRate: options.sampleRate ?? 1 });
}
