import { ChannelAccumulator, type ChannelSummary, type FrameGeometry } from './channel-accumulator.js';
import { mergeChannelSummaries } from './merge.js';
import { mergeSegmentSummaries, needsNothing, SegmentAnalyses, type SegmentNeeds, type SegmentSummary } from './segment-analyses.js';
import { segmentPlan } from './segments.js';

export interface FrameOptions {
  /** Frame length in seconds (default 1 s, a usual length for vibration data). */
  frameSeconds?: number;
  /** Fraction of a frame shared with the next one, 0 ≤ overlap < 1 (default 0). */
  overlap?: number;
}

/** Summary of a span of a record (or a whole record): one ChannelSummary per channel. */
export interface RecordingSummary {
  sampleRate: number;
  geometry: FrameGeometry;
  /** Index of the first sample frame of the span, and the frames in it. */
  start: number;
  samples: number;
  channels: ChannelSummary[];
  /** Analyses of sampled segments, when the checks asked for any (segment-analyses.ts). */
  segments?: SegmentSummary;
}

/** Frame length and hop in samples for a sample rate and the user's frame options. */
export function frameGeometry(sampleRate: number, options: FrameOptions = {}): FrameGeometry {
  const frameSeconds = options.frameSeconds ?? 1;
  const overlap = options.overlap ?? 0;
  if (!(frameSeconds > 0) || !Number.isFinite(frameSeconds)) {
    throw new RangeError(`Frame length must be a positive number of seconds, not ${JSON.stringify(frameSeconds)}`);
  }
  if (!(overlap >= 0 && overlap < 1)) {
    throw new RangeError(`Frame overlap must be at least 0 and less than 1, not ${JSON.stringify(overlap)}`);
  }
  const frameSamples = Math.max(1, Math.round(frameSeconds * sampleRate));
  const hopSamples = Math.max(1, Math.round(frameSamples * (1 - overlap)));
  return { frameSamples, hopSamples };
}

export interface StreamMeta {
  sampleRate: number;
  /** Sample frames in the whole record, when known: fixes where the sampled segments lie. */
  sampleCount?: number;
  channels: ReadonlyArray<{ clipLow?: number; clipHigh?: number }>;
}

/**
 * Streams blocks of samples through one accumulator per channel: the single pass over the
 * data. Accepts any async iterable of `{start, length, channels}` blocks in order.
 */
export async function summariseBlocks(
  blocks: AsyncIterable<{ start: number; length: number; channels: Float64Array[] }>,
  meta: StreamMeta,
  options: FrameOptions & { start?: number; segments?: SegmentNeeds } = {},
): Promise<RecordingSummary> {
  const geometry = frameGeometry(meta.sampleRate, options);
  const start = options.start ?? 0;
  const accs = meta.channels.map(
    (c) => new ChannelAccumulator(geometry, { low: c.clipLow, high: c.clipHigh }, start),
  );
  const analyses = needsNothing(options.segments)
    ? null
    : new SegmentAnalyses(segmentPlan(meta.sampleRate, meta.sampleCount), options.segments!, { sampleRate: meta.sampleRate, channels: accs.length, start });
  let samples = 0;
  for await (const block of blocks) {
    if (block.start !== start + samples) {
      throw new RangeError(`Block starts at sample ${block.start}, expected ${start + samples}`);
    }
    for (let c = 0; c < accs.length; c++) accs[c].push(block.channels[c], block.length);
    analyses?.push(block.channels, block.length);
    samples += block.length;
  }
  const summary: RecordingSummary = { sampleRate: meta.sampleRate, geometry, start, samples, channels: accs.map((a) => a.summary()) };
  if (analyses) summary.segments = analyses.summary();
  return summary;
}

/** Summary of span `a` followed by span `b` of the same recording. */
export function mergeRecordingSummaries(a: RecordingSummary, b: RecordingSummary): RecordingSummary {
  if (a.sampleRate !== b.sampleRate || a.channels.length !== b.channels.length) {
    throw new RangeError('Cannot merge summaries of recordings with different sample rates or channel counts');
  }
  const merged: RecordingSummary = {
    sampleRate: a.sampleRate,
    geometry: a.geometry,
    start: a.start,
    samples: a.samples + b.samples,
    channels: a.channels.map((c, i) => mergeChannelSummaries(c, b.channels[i])),
  };
  if (a.segments && b.segments) merged.segments = mergeSegmentSummaries(a.segments, b.segments);
  else if (a.segments || b.segments) throw new RangeError('Cannot merge a summary with segment analyses and one without');
  return merged;
}
