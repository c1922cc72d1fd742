import { emptyMoments, mergeMoments, momentsOf, type Moments } from './moments.js';
import { addToFrame, emptyFrameTable, type FrameTable } from './frames.js';
import { RunTracker } from './runs.js';

import type { ChannelSummary, ClipLevels, FrameGeometry } from './channel-accumulator.js';

/**
 * The plain reference implementation of the channel accumulator: simple loops, one concern
 * each (runs, non-finite and clip counts, then per elementary segment a corrected two-pass
 * moment computation and the extremes). The fast ChannelAccumulator is tested against it.
 */
export class ReferenceAccumulator {
  private readonly geometry: FrameGeometry;
  private readonly clipLow: number;
  private readonly clipHigh: number;
  private readonly hasClip: boolean;
  private readonly begin: number;
  private next: number;
  private readonly whole: Moments = emptyMoments();
  private nonFinite = 0;
  private firstNonFinite = -1;
  private countLow = 0;
  private countHigh = 0;
  private readonly runs: RunTracker;
  private readonly frames: FrameTable;

  constructor(geometry: FrameGeometry, clip: ClipLevels = { low: undefined, high: undefined }, start = 0) {
    if (!(geometry.frameSamples >= 1) || !(geometry.hopSamples >= 1) || geometry.hopSamples > geometry.frameSamples) {
      throw new RangeError(`Frame of ${geometry.frameSamples} samples with hop ${geometry.hopSamples} is not valid`);
    }
    this.geometry = geometry;
    this.clipLow = clip.low ?? -Infinity;
    this.clipHigh = clip.high ?? Infinity;
    this.hasClip = clip.low !== undefined || clip.high !== undefined;
    this.begin = start;
    this.next = start;
    this.runs = new RunTracker(start);
    this.frames = emptyFrameTable(geometry.frameSamples, geometry.hopSamples);
  }

  /** Feeds x[0..length), the samples that follow those fed so far. */
  push(x: Float64Array, length = x.length): void {
    const base = this.next;
    this.runs.push(x, length);

    let nonFinite = 0;
    if (this.hasClip) {
      const lo = this.clipLow;
      const hi = this.clipHigh;
      let cl = 0;
      let ch = 0;
      for (let i = 0; i < length; i++) {
        const v = x[i];
        if (v <= lo) cl++;
        else if (v >= hi) ch++;
        else if (v - v !== 0) nonFinite++;
      }
      // ±Inf sit beyond the clip levels; count them as non-finite only
      this.countLow += cl;
      this.countHigh += ch;
      if (cl + ch > 0) {
        for (let i = 0; i < length; i++) {
          const v = x[i];
          if (v === Infinity) { this.countHigh--; nonFinite++; }
          else if (v === -Infinity) { this.countLow--; nonFinite++; }
        }
      }
    } else {
      for (let i = 0; i < length; i++) {
        const v = x[i];
        if (v - v !== 0) nonFinite++;
      }
    }
    if (nonFinite > 0) {
      if (this.firstNonFinite < 0) {
        for (let i = 0; i < length; i++) {
          const v = x[i];
          if (v - v !== 0) { this.firstNonFinite = base + i; break; }
        }
      }
      this.nonFinite += nonFinite;
    }

    // Elementary segments: cut at every frame start (k·hop) and frame end (k·hop + L).
    const L = this.geometry.frameSamples;
    const hop = this.geometry.hopSamples;
    const end = base + length;
    let p = base;
    while (p < end) {
      const nextStart = (Math.floor(p / hop) + 1) * hop;
      const kEnd = Math.max(0, Math.floor((p - L) / hop) + 1);
      const nextEnd = kEnd * hop + L;
      const q = Math.min(end, nextStart, nextEnd);
      const seg = momentsOf(x, p - base, q - base);
      let segMin = Infinity;
      let segMax = -Infinity;
      if (nonFinite === 0) {
        for (let i = p - base; i < q - base; i++) {
          const v = x[i];
          if (v < segMin) segMin = v;
          if (v > segMax) segMax = v;
        }
      } else {
        // NaN compares false anyway, but ±Inf must not become a frame's extreme
        for (let i = p - base; i < q - base; i++) {
          const v = x[i];
          if (v - v !== 0) continue;
          if (v < segMin) segMin = v;
          if (v > segMax) segMax = v;
        }
      }
      mergeMoments(this.whole, seg, this.whole);
      // frames k with k·hop ≤ p and q ≤ k·hop + L
      const kFirst = Math.max(0, Math.ceil((q - L) / hop));
      const kLast = Math.floor(p / hop);
      for (let k = kFirst; k <= kLast; k++) addToFrame(this.frames, k, seg, segMin, segMax);
      p = q;
    }
    this.next = end;
  }

  summary(): ChannelSummary {
    return {
      start: this.begin,
      count: this.next - this.begin,
      moments: { ...this.whole },
      nonFinite: this.nonFinite,
      firstNonFinite: this.firstNonFinite,
      runs: this.runs.state(),
      clip: {
        low: Number.isFinite(this.clipLow) ? this.clipLow : null,
        high: Number.isFinite(this.clipHigh) ? this.clipHigh : null,
        countLow: this.countLow,
        countHigh: this.countHigh,
      },
      frames: structuredClone(this.frames),
    };
  }
}
