import { ChannelAccumulator, type ChannelSummary, type FrameGeometry } from './channel-accumulator.js';
import { mergeChannelSummaries } from './merge.js';

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
  channels: ReadonlyArray<{ clipLow?: number; clipHigh?: number }>;
}

/**
 * Streams blocks of samples through one accumulator per channel: the single pass over the
 * data. Accepts any async iterable of `{start, length, channels}` blocks in order.
 */
export async function summariseBlocks(
  blocks: AsyncIterable<{ start: number; length: number; channels: Float64Array[] }>,
  meta: StreamMeta,
  options: FrameOptions & { start?: number } = {},
): Promise<RecordingSummary> {
  const geometry = frameGeometry(meta.sampleRate, options);
  const start = options.start ?? 0;
  const accs = meta.channels.map(
    (c) => new ChannelAccumulator(geometry, { low: c.clipLow, high: c.clipHigh }, start),
  );
  let samples = 0;
  for await (const block of blocks) {
    if (block.start !== start + samples) {
      throw new RangeError(`Block starts at sample ${block.start}, expected ${start + samples}`);
    }
    for (let c = 0; c < accs.length; c++) accs[c].push(block.channels[c], block.length);
    samples += block.length;
  }
  return { sampleRate: meta.sampleRate, geometry, start, samples, channels: accs.map((a) => a.summary()) };
}

/** Summary of span `a` followed by span `b` of the same recording. */
export function mergeRecordingSummaries(a: RecordingSummary, b: RecordingSummary): RecordingSummary {
  if (a.sampleRate !== b.sampleRate || a.channels.length !== b.channels.length) {
    throw new RangeError('Cannot merge summaries of recordings with different sample rates or channel counts');
  }
  return {
    sampleRate: a.sampleRate,
    geometry: a.geometry,
    start: a.start,
    samples: a.samples + b.samples,
    channels: a.channels.map((c, i) => mergeChannelSummaries(c, b.channels[i])),
  };
}
