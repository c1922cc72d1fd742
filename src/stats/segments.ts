/**
 * Sampled segments: contiguous runs of every channel's samples, taken at fixed positions of
 * the record during the one streaming pass, for the statistics that need samples side by
 * side rather than sums — the autocorrelation (Gaussian bands), mains lines (Goertzel),
 * correlation between channels (duplicates) and the distinct levels a converter used.
 *
 * Segment j covers samples [j·stride, j·stride + M) of the record. M is the next power of
 * two at or above two seconds of data, within 2048 … 65 536 samples: two seconds resolve a
 * mode's half-power bandwidth down to about 0.5 Hz and give lags up to one second, longer
 * than the correlation of most structural response above ~10 Hz (a mode at f with damping ζ
 * correlates for about 1/(2πfζ) s: 0.16 s at 50 Hz, 2 %). The stride spreads at most
 * SEGMENT_BUDGET samples per channel evenly over the record, which bounds the cost (FFTs,
 * C²/2 dot products) whatever the record length.
 *
 * The positions depend only on the sample rate and the record length, so that every way of
 * cutting the record into sections (worker threads, `--section i/n`) sees the same segments:
 * section bounds are snapped to multiples of the stride (see `sectionBounds`), so no segment
 * straddles two sections and the merged sums equal those of one pass. A segment holding a
 * non-finite sample, or cut short by the end of the record, is not used.
 */

/** At most this many samples per channel go into segments (2^18: 128 s at 2048 Hz). */
export const SEGMENT_BUDGET = 2 ** 18;
const MIN_SEGMENT = 2048;
const MAX_SEGMENT = 65536;

export interface SegmentPlan {
  /** M, samples in a segment (a power of two). */
  segmentSamples: number;
  /** Samples from the start of one segment to the start of the next (a multiple of M). */
  strideSamples: number;
}

/** Where the segments of a record lie. `sampleCount` unknown (text formats): every M samples. */
export function segmentPlan(sampleRate: number, sampleCount: number | undefined): SegmentPlan {
  let m = MIN_SEGMENT;
  while (m < 2 * sampleRate && m < MAX_SEGMENT) m *= 2;
  const available = sampleCount === undefined ? 0 : Math.floor(sampleCount / m);
  const wanted = Math.max(1, Math.floor(SEGMENT_BUDGET / m));
  const every = available > wanted ? Math.ceil(available / wanted) : 1;
  return { segmentSamples: m, strideSamples: every * m };
}

/**
 * Bounds of `n` sections of a record of `total` sample frames: n + 1 increasing positions
 * from 0 to total, each inner one a multiple of `grid` (the segment stride) so that sections
 * share no segment. Sections may be empty when the record is short.
 */
export function sectionBounds(total: number, n: number, grid = 1): number[] {
  return Array.from({ length: n + 1 }, (_, k) => {
    if (k === 0) return 0;
    if (k === n) return total;
    return Math.min(total, Math.round(Math.floor((k * total) / n) / grid) * grid);
  });
}

/**
 * Copies the samples of each segment out of the blocks streaming past (a segment may span
 * blocks) and hands every complete, finite segment to `onSegment` — one array per channel,
 * reused for the next segment, so the consumer must not keep them.
 */
export class SegmentCollector {
  private readonly buffers: Float64Array[];
  private readonly m: number;
  private readonly stride: number;
  /** Absolute index of the next sample expected. */
  private position: number;
  /** Samples of the current segment copied so far. */
  private filled = 0;
  private finite = true;
  /** Complete, finite segments handed on. */
  used = 0;

  /**
   * `take`: only the first this many samples of each segment are collected and handed on
   * (analyses that need no more than that save the memory of whole segments).
   */
  constructor(
    plan: SegmentPlan,
    channels: number,
    start: number,
    private readonly onSegment: (segments: Float64Array[]) => void,
    take = plan.segmentSamples,
  ) {
    this.m = Math.min(take, plan.segmentSamples);
    this.stride = plan.strideSamples;
    this.buffers = Array.from({ length: channels }, () => new Float64Array(this.m));
    this.position = start;
  }

  push(channels: ArrayLike<Float64Array>, length: number): void {
    let i = 0;
    while (i < length) {
      const inStride = (this.position + i) % this.stride;
      if (inStride >= this.m) {
        i += Math.min(this.stride - inStride, length - i);
        continue;
      }
      if (inStride !== this.filled) {
        // a span that starts inside a segment (a window, or a section not on the grid) did
        // not see the segment's beginning: the segment is not whole here, skip it
        i += Math.min(this.m - inStride, length - i);
        this.filled = 0;
        this.finite = true;
        continue;
      }
      const take = Math.min(this.m - inStride, length - i);
      for (let c = 0; c < this.buffers.length; c++) {
        const src = channels[c];
        const dst = this.buffers[c];
        for (let k = 0; k < take; k++) {
          const v = src[i + k];
          dst[inStride + k] = v;
          if (v - v !== 0) this.finite = false; // NaN or ±Infinity
        }
      }
      this.filled = inStride + take;
      i += take;
      if (this.filled === this.m) {
        if (this.finite) {
          this.onSegment(this.buffers);
          this.used += 1;
        }
        this.filled = 0;
        this.finite = true;
      }
    }
    this.position += length;
  }
}
