import { emptyMoments, mergeMoments, momentsOf, type Moments } from './moments.js';
import { addToFrame, emptyFrameTable, type FrameTable } from './frames.js';
import type { RunState } from './runs.js';
import { available as wasmAvailable, KERNEL_CHUNK, wasmSums } from './wasm/kernel.js';

/** How frames are laid over the record. */
export interface FrameGeometry {
  /** Samples per frame (≥ 1). */
  frameSamples: number;
  /** Samples between frame starts, 1 ≤ hop ≤ frameSamples (hop < frameSamples: overlap). */
  hopSamples: number;
}

/** Converter clip levels of a channel, in its units. */
export interface ClipLevels {
  low: number | undefined;
  high: number | undefined;
}

/**
 * Everything the engine keeps about one channel over a span of the record: plain data,
 * JSON-serialisable, and mergeable with the summary of the span that follows
 * (`mergeChannelSummaries`).
 */
export interface ChannelSummary {
  /** Index of the first sample of the span in the record. */
  start: number;
  /** Samples in the span, finite or not. */
  count: number;
  /** Moment sums of the finite samples. */
  moments: Moments;
  /** NaN or ±Inf samples, and the first one's index (−1: none). */
  nonFinite: number;
  firstNonFinite: number;
  /** Runs of identical values, extremes and their runs (min = runs.low.value). */
  runs: RunState;
  /** Samples at or beyond the converter's clip levels, when these are known. */
  clip: { low: number | null; high: number | null; countLow: number; countHigh: number };
  frames: FrameTable;
}

const scratch = new Float64Array(8);
/** Samples per call of the hot loop. */
const CHUNK = 2048;

/**
 * The hot loop in JavaScript (used where WebAssembly SIMD is not; the kernel in wasm/ has the
 * same contract), as a plain function, which V8 optimises best outside the class: power
 * sums of x − K, extremes, the count of samples equal to their predecessor, and the samples
 * at or beyond the clip levels (±Infinity when unknown). Writes
 * [S1, S2, S3, S4, min, max, low count, high count] into `out`; returns the repeat count.
 */
export function sumsWithClip(x: Float64Array, from: number, to: number, K: number, prev: number, lo: number, hi: number, out: Float64Array): number {
  let reps = 0;
  let s1 = 0;
  let s2 = 0;
  let s3 = 0;
  let s4 = 0;
  let mn = Infinity;
  let mx = -Infinity;
  let cl = 0;
  let ch = 0;
  for (let i = from; i < to; i++) {
    const v = x[i];
    if (v === prev) reps++;
    prev = v;
    const d = v - K;
    const d2 = d * d;
    s1 += d;
    s2 += d2;
    s3 += d2 * d;
    s4 += d2 * d2;
    if (v < mn) mn = v;
    if (v > mx) mx = v;
    if (v <= lo) cl++;
    else if (v >= hi) ch++;
  }
  out[0] = s1; out[1] = s2; out[2] = s3; out[3] = s4; out[4] = mn; out[5] = mx; out[6] = cl; out[7] = ch;
  return reps;
}

/** Samples used to pick the shift of the first segment (see `push`). */
const SHIFT_PROBE = 64;
/**
 * A segment whose mean lies more than √64 = 8 standard deviations from the shift is summed
 * again two-pass: beyond that, Σd⁴ − 4m·Σd³ + … would cancel more than a few digits.
 */
const SHIFT_GUARD = 64;

/**
 * One pass over one channel's samples, block by block: the hot loop of vibgate.
 *
 * Per elementary segment (the block cut at every frame start and end) a single loop
 * tracks runs of identical values and the extremes with their runs, counts non-finite and
 * clipped samples, and sums the powers of d = x − K for a shift K close to the mean (the
 * running mean of the record so far; for the first segment the mean of its first 64 finite
 * samples). The shifted power sums give the segment's central moments exactly in algebra
 * (M2 = S2 − S1²/n, M3 = S3 − 3mS2 + 2nm³, M4 = S4 − 4mS3 + 6m²S2 − 3nm⁴ with m = S1/n);
 * with K near the mean the cancellation is negligible, and a segment far from K is summed
 * again two-pass (SHIFT_GUARD). Segments are merged into the whole and into their frames
 * with Pébay's formulas. `ReferenceAccumulator` is the plain version tests compare with.
 *
 * All state is plain number fields so that V8 keeps the loop monomorphic.
 */
export class ChannelAccumulator {
  private readonly frameSamples: number;
  private readonly hopSamples: number;
  private readonly clipLow: number;
  private readonly clipHigh: number;
  private readonly begin: number;
  private next: number;
  private readonly whole: Moments = emptyMoments();
  private readonly seg: Moments = emptyMoments();
  private shift = NaN;
  private nonFinite = 0;
  private firstNonFinite = -1;
  private countLow = 0;
  private countHigh = 0;
  private readonly frames: FrameTable;
  // runs
  private prev = NaN;
  private runStart = 0;
  private runLength = 0;
  private first = NaN;
  private leading = -1;
  private longestLength = 0;
  private longestStart: number;
  private longestValue = NaN;
  private zeroLength = 0;
  private zeroStart: number;
  private lowValue = Infinity;
  private lowCount = 0;
  private lowSq = 0;
  private lowRepeated = 0;
  private lowFirst = -1;
  private highValue = -Infinity;
  private highCount = 0;
  private highSq = 0;
  private highRepeated = 0;
  private highFirst = -1;

  constructor(geometry: FrameGeometry, clip: ClipLevels = { low: undefined, high: undefined }, start = 0) {
    if (!(geometry.frameSamples >= 1) || !(geometry.hopSamples >= 1) || geometry.hopSamples > geometry.frameSamples) {
      throw new RangeError(`Frame of ${geometry.frameSamples} samples with hop ${geometry.hopSamples} is not valid`);
    }
    this.frameSamples = geometry.frameSamples;
    this.hopSamples = geometry.hopSamples;
    this.clipLow = clip.low ?? -Infinity;
    this.clipHigh = clip.high ?? Infinity;
    this.begin = start;
    this.next = start;
    this.longestStart = start;
    this.zeroStart = start;
    this.frames = emptyFrameTable(geometry.frameSamples, geometry.hopSamples);
  }

  /** Feeds x[0..length), the samples that follow those fed so far. */
  push(x: Float64Array, length = x.length): void {
    const base = this.next;
    if (length <= 0) return;
    if (base === this.begin) this.first = x[0] - x[0] === 0 ? x[0] : NaN;
    const L = this.frameSamples;
    const hop = this.hopSamples;
    const end = base + length;
    let p = base;
    while (p < end) {
      const nextStart = (Math.floor(p / hop) + 1) * hop;
      const kEnd = Math.max(0, Math.floor((p - L) / hop) + 1);
      const q = Math.min(end, nextStart, kEnd * hop + L);
      this.segment(x, p - base, q - base, base);
      p = q;
    }
    this.next = end;
  }

  /**
   * One elementary segment x[from..to) (block offsets; `base` is the block's first index).
   * Fast path: one loop of power sums, extremes and a count of repeated neighbours; when the
   * segment has no repeated neighbour and no non-finite sample (continuous data, nearly
   * always), every run in it is one sample long and the run bookkeeping needs only the
   * extremes, touched again only when the segment reaches the record's min or max. Else the
   * full loop (`slowSegment`) runs.
   */
  private segment(x: Float64Array, from: number, to: number, base: number): void {
    if (Number.isNaN(this.shift) || this.leading < 0) {
      this.slowSegment(x, from, to, base);
      return;
    }
    const K = this.shift;
    const out = scratch;
    // Measured on this kind of machine: the loop runs about twice as fast over runs of a few
    // thousand samples as over one long run, so long segments are summed in chunks.
    let reps = 0;
    let s1 = 0, s2 = 0, s3 = 0, s4 = 0, segMin = Infinity, segMax = -Infinity, cl = 0, ch = 0;
    let prev = this.prev;
    // (the WebAssembly kernel has no such preference: it takes up to KERNEL_CHUNK at a time)
    const step = wasmAvailable ? KERNEL_CHUNK : CHUNK;
    for (let a = from; a < to; a += step) {
      const b = Math.min(to, a + step);
      reps += wasmAvailable
        ? wasmSums(x, a, b, K, prev, this.clipLow, this.clipHigh, out)
        : sumsWithClip(x, a, b, K, prev, this.clipLow, this.clipHigh, out);
      prev = x[b - 1];
      s1 += out[0]; s2 += out[1]; s3 += out[2]; s4 += out[3];
      if (out[4] < segMin) segMin = out[4];
      if (out[5] > segMax) segMax = out[5];
      cl += out[6]; ch += out[7];
    }
    // a NaN or ±Inf anywhere makes the sums non-finite
    if (!(s4 - s4 === 0) || !(s1 - s1 === 0)) {
      // a NaN or ±Inf somewhere: the full loop counts and skips them
      this.slowSegment(x, from, to, base);
      return;
    }
    if (reps > 0) {
      // runs of two or more (quantised or held data): the sums stand, only runs need the loop
      this.runsOnly(x, from, to, base);
      this.countLow += cl;
      this.countHigh += ch;
      this.finishSegment(x, from, to, base, to - from, K, s1, s2, s3, s4, segMin, segMax);
      return;
    }
    if (this.runLength > 0) this.closeRun(this.prev, this.runStart, this.runLength);
    if (segMin <= this.lowValue || segMax >= this.highValue) {
      // the segment reaches the record's extremes: count its samples there (all in runs of
      // one); the last sample stays an open run, counted when it closes
      const last = to - 1;
      for (let i = from; i < to; i++) {
        const v = x[i];
        if (v < this.lowValue) {
          this.lowValue = v; this.lowCount = 0; this.lowSq = 0; this.lowRepeated = 0; this.lowFirst = base + i;
        }
        if (v === this.lowValue && i < last) { this.lowCount++; this.lowSq++; }
        if (v > this.highValue) {
          this.highValue = v; this.highCount = 0; this.highSq = 0; this.highRepeated = 0; this.highFirst = base + i;
        }
        if (v === this.highValue && i < last) { this.highCount++; this.highSq++; }
      }
    }
    this.prev = x[to - 1];
    this.runStart = base + to - 1;
    this.runLength = 1;
    this.countLow += cl;
    this.countHigh += ch;
    this.finishSegment(x, from, to, base, to - from, K, s1, s2, s3, s4, segMin, segMax);
  }

  /**
   * Run, extreme and non-finite bookkeeping over x[from..to) (the sums are done elsewhere).
   * A run of one sample that is neither an extreme nor zero changes nothing: the call to
   * closeRun is skipped. NaN or ±Inf is counted, ends the run and forms none.
   */
  private runsOnly(x: Float64Array, from: number, to: number, base: number): void {
    let prev = this.prev;
    let runStart = this.runStart;
    let runLength = this.runLength;
    let lowValue = this.lowValue;
    let highValue = this.highValue;
    for (let i = from; i < to; i++) {
      const v = x[i];
      if (v === prev) {
        runLength++;
        continue;
      }
      if (runLength > 1 || prev === lowValue || prev === highValue || prev === 0 || this.leading < 0) {
        if (runLength > 0) this.closeRun(prev, runStart, runLength);
      }
      if (v - v !== 0) {
        this.nonFinite++;
        if (this.firstNonFinite < 0) this.firstNonFinite = base + i;
        prev = NaN;
        runLength = 0;
        continue;
      }
      prev = v;
      runStart = base + i;
      runLength = 1;
      if (v < lowValue) {
        lowValue = this.lowValue = v;
        this.lowCount = 0; this.lowSq = 0; this.lowRepeated = 0; this.lowFirst = runStart;
      }
      if (v > highValue) {
        highValue = this.highValue = v;
        this.highCount = 0; this.highSq = 0; this.highRepeated = 0; this.highFirst = runStart;
      }
    }
    this.prev = prev;
    this.runStart = runStart;
    this.runLength = runLength;
  }

  /** The full path: the first segment, or one with non-finite samples. */
  private slowSegment(x: Float64Array, from: number, to: number, base: number): void {
    if (Number.isNaN(this.shift)) {
      // shift of the first segment: the mean of its first finite samples
      let n = 0;
      let sum = 0;
      for (let i = from; i < to && n < SHIFT_PROBE; i++) {
        const v = x[i];
        if (v - v === 0) { sum += v; n++; }
      }
      if (n > 0) this.shift = sum / n;
    }
    const K = Number.isNaN(this.shift) ? 0 : this.shift;
    this.runsOnly(x, from, to, base);
    // the sums over the finite samples only
    const lo = this.clipLow;
    const hi = this.clipHigh;
    let n = 0;
    let s1 = 0;
    let s2 = 0;
    let s3 = 0;
    let s4 = 0;
    let segMin = Infinity;
    let segMax = -Infinity;
    for (let i = from; i < to; i++) {
      const v = x[i];
      if (v - v !== 0) continue;
      const d = v - K;
      const d2 = d * d;
      s1 += d;
      s2 += d2;
      s3 += d2 * d;
      s4 += d2 * d2;
      n++;
      if (v < segMin) segMin = v;
      if (v > segMax) segMax = v;
      if (v <= lo) this.countLow++;
      else if (v >= hi) this.countHigh++;
    }
    this.finishSegment(x, from, to, base, n, K, s1, s2, s3, s4, segMin, segMax);
  }

  /** Central moments of the segment from its shifted power sums; merge into whole and frames. */
  private finishSegment(
    x: Float64Array, from: number, to: number, base: number,
    n: number, K: number, s1: number, s2: number, s3: number, s4: number, segMin: number, segMax: number,
  ): void {
    const seg = this.seg;
    if (n === 0) {
      seg.n = 0; seg.mean = 0; seg.m2 = 0; seg.m3 = 0; seg.m4 = 0;
    } else {
      const m = s1 / n;
      const m2 = s2 - s1 * m;
      if (!(m2 >= 0) || m * m * n > SHIFT_GUARD * m2) {
        // far from the shift (or constant): exact two-pass over the segment
        const exact = momentsOf(x, from, to);
        seg.n = exact.n; seg.mean = exact.mean; seg.m2 = exact.m2; seg.m3 = exact.m3; seg.m4 = exact.m4;
      } else {
        const mm = m * m;
        seg.n = n;
        seg.mean = K + m;
        seg.m2 = m2;
        seg.m3 = s3 - 3 * m * s2 + 2 * n * mm * m;
        seg.m4 = s4 - 4 * m * s3 + 6 * mm * s2 - 3 * n * mm * mm;
      }
    }
    mergeMoments(this.whole, seg, this.whole);
    if (this.whole.n > 0) this.shift = this.whole.mean;
    const L = this.frameSamples;
    const hop = this.hopSamples;
    const p = base + from;
    const q = base + to;
    const kFirst = Math.max(0, Math.ceil((q - L) / hop));
    const kLast = Math.floor(p / hop);
    for (let k = kFirst; k <= kLast; k++) addToFrame(this.frames, k, seg, segMin, segMax);
  }

  private closeRun(value: number, start: number, length: number): void {
    if (this.leading < 0) this.leading = start === this.begin ? length : 0;
    if (length > this.longestLength) {
      this.longestLength = length;
      this.longestStart = start;
      this.longestValue = value;
    }
    if (value === 0 && length > 1 && length > this.zeroLength) {
      this.zeroLength = length;
      this.zeroStart = start;
    }
    if (value === this.lowValue) {
      this.lowCount += length;
      this.lowSq += length * length;
      if (length > 1) this.lowRepeated += length;
    }
    if (value === this.highValue) {
      this.highCount += length;
      this.highSq += length * length;
      if (length > 1) this.highRepeated += length;
    }
  }

  private runState(): RunState {
    // Close the open run on saved fields so that pushing can continue afterwards.
    const saved = [
      this.leading, this.longestLength, this.longestStart, this.longestValue, this.zeroLength, this.zeroStart,
      this.lowCount, this.lowSq, this.lowRepeated, this.highCount, this.highSq, this.highRepeated,
    ];
    if (this.runLength > 0) this.closeRun(this.prev, this.runStart, this.runLength);
    const state: RunState = {
      count: this.next - this.begin,
      start: this.begin,
      firstValue: this.first,
      lastValue: this.runLength > 0 ? this.prev : NaN,
      leading: this.leading < 0 ? 0 : this.leading,
      trailing: this.runLength,
      longest: { length: this.longestLength, start: this.longestStart, value: this.longestValue },
      longestZero: { length: this.zeroLength, start: this.zeroStart, value: 0 },
      low: { value: this.lowValue, count: this.lowCount, sumRunSquares: this.lowSq, repeated: this.lowRepeated, firstIndex: this.lowFirst },
      high: { value: this.highValue, count: this.highCount, sumRunSquares: this.highSq, repeated: this.highRepeated, firstIndex: this.highFirst },
    };
    [
      this.leading, this.longestLength, this.longestStart, this.longestValue, this.zeroLength, this.zeroStart,
      this.lowCount, this.lowSq, this.lowRepeated, this.highCount, this.highSq, this.highRepeated,
    ] = saved;
    return state;
  }

  summary(): ChannelSummary {
    return {
      start: this.begin,
      count: this.next - this.begin,
      moments: { ...this.whole },
      nonFinite: this.nonFinite,
      firstNonFinite: this.firstNonFinite,
      runs: this.runState(),
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
