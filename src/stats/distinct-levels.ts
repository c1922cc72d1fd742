/**
 * Range utilisation: how many distinct sample values a channel's sampled segments hold, and
 * the smallest positive difference between two of them — the converter step as the data
 * show it. An under-ranged channel (gain too low) uses few of its converter's codes and
 * shows a staircase; a dead channel holds a handful of codes of amplifier noise; float data
 * from a real converter still show its step, while resampled or filtered data use nearly
 * every value.
 *
 * The distinct values are kept as a sorted set, exactly up to `cap` values. When more are
 * seen the set is dropped and the state only says "more than cap" (saturated): the figures
 * that matter past the cap (float or high-resolution data using many codes) need no set, and
 * a saturated channel then costs almost nothing to keep or to write.
 *
 * The smallest step is the minimum of two figures, both exact for what they cover: the
 * smallest gap between neighbouring distinct values within any one segment, and the smallest
 * gap in the whole set. It is kept only below the cap: past it a channel uses so many codes
 * that its resolution is not in question, and forgetting the step there keeps merging exact
 * (whichever section saturates first, the state past the cap is the same).
 *
 * Merging is exact and independent of order: the union of two sets, dropped when it passes
 * the cap, and the minimum of the segment steps, are what one pass over all segments gives.
 *
 * NaN and ±Infinity are not levels: they are skipped and counted. −0 counts as 0.
 *
 * Cost per segment: a quick count with a hash set that stops as soon as the segment alone
 * holds more than `cap` values (float data: after about cap samples); below the cap a copy
 * and a numeric sort of its M samples (about 20 ms per 2^18 samples) and a linear merge into
 * the set. Past the cap only samples are counted. JSON size: up to `cap` numbers per channel
 * below the cap (values such as k/32768 print with up to about 20 characters: a 16-bit channel
 * using 17 000 codes costs 0.3 MB, one using nearly all 65 536 about 1.3 MB), a few numbers
 * past it.
 */

/** The distinct-level state of one channel: plain data, merged exactly by `mergeDistinctLevels`. */
export interface DistinctLevels {
  /** Distinct values counted exactly up to this many. */
  cap: number;
  /** Distinct finite values seen, ascending; empty when saturated. */
  values: number[];
  /** More than `cap` distinct values were seen. */
  saturated: boolean;
  /** Smallest positive difference between neighbouring distinct values of any one segment (Infinity: none). */
  segmentStep: number;
  /** Finite samples seen. */
  samples: number;
  /** NaN and ±Infinity samples skipped. */
  nonFinite: number;
}

function assertCap(cap: number): void {
  if (!Number.isInteger(cap) || cap < 1) {
    throw new RangeError(`Distinct-level cap must be a whole number of at least 1, not ${JSON.stringify(cap)}`);
  }
}

/** The state of no sample at all: the neutral element of `mergeDistinctLevels`. */
export function emptyDistinctLevels(cap: number): DistinctLevels {
  assertCap(cap);
  return { cap, values: [], saturated: false, segmentStep: Infinity, samples: 0, nonFinite: 0 };
}

/**
 * Merges the ascending distinct values a[0..na) and b[0..nb) into `out`, at most `cap` of
 * them; returns the number written, or −1 when the union has more than `cap` values.
 */
function mergeSorted(a: ArrayLike<number>, na: number, b: ArrayLike<number>, nb: number, cap: number, out: Float64Array | number[]): number {
  let i = 0;
  let j = 0;
  let k = 0;
  while (k < cap && (i < na || j < nb)) {
    if (j >= nb || (i < na && a[i] < b[j])) out[k++] = a[i++];
    else if (i >= na || b[j] < a[i]) out[k++] = b[j++];
    else {
      out[k++] = a[i++];
      j++;
    }
  }
  // equal values are taken together, so anything left over is a value beyond the cap
  return i < na || j < nb ? -1 : k;
}

/** Counts the distinct sample values of one channel's segments (see the file comment). */
export class DistinctLevelCounter {
  private readonly cap: number;
  private kept: Float64Array;
  private spare: Float64Array;
  private count = 0;
  private saturated = false;
  private segmentStep = Infinity;
  private samples = 0;
  private nonFinite = 0;

  constructor(cap: number) {
    assertCap(cap);
    this.cap = cap;
    // grown on demand: most channels of integer data never come near the cap
    this.kept = new Float64Array(Math.min(cap, 1024));
    this.spare = new Float64Array(this.kept.length);
  }

  addSegment(x: Float64Array): void {
    let finite = 0;
    for (let i = 0; i < x.length; i++) if (x[i] - x[i] === 0) finite++;
    this.samples += finite;
    this.nonFinite += x.length - finite;
    if (this.saturated) return;
    const distinct = this.distinctOf(x);
    if (distinct === null) {
      this.saturate();
      return;
    }
    const k = distinct.length;
    if (k === 0) return;
    const sorted = distinct.sort();
    let step = this.segmentStep;
    for (let i = 1; i < k; i++) if (sorted[i] - sorted[i - 1] < step) step = sorted[i] - sorted[i - 1];
    this.segmentStep = step;
    const room = Math.min(this.cap, this.count + k);
    if (this.spare.length < room) this.spare = new Float64Array(Math.min(this.cap, Math.max(room, 2 * this.spare.length)));
    const got = mergeSorted(this.kept, this.count, sorted, k, this.cap, this.spare);
    if (got < 0) {
      this.saturate();
      return;
    }
    [this.kept, this.spare] = [this.spare, this.kept];
    this.count = got;
  }

  /**
   * The segment's distinct finite values (−0 as 0), unsorted, or null when there are more
   * than `cap` of them: a hash set that stops as soon as it passes the cap, so float data
   * cost about cap insertions and integer data only their few codes to sort.
   */
  private distinctOf(x: Float64Array): Float64Array | null {
    const seen = new Set<number>();
    for (let i = 0; i < x.length; i++) {
      const v = x[i];
      // v − v is 0 for finite v and NaN otherwise; v + 0 turns −0 into 0
      if (v - v !== 0) continue;
      seen.add(v + 0);
      if (seen.size > this.cap) return null;
    }
    return Float64Array.from(seen);
  }

  private saturate(): void {
    this.saturated = true;
    this.segmentStep = Infinity;
    this.count = 0;
    this.kept = new Float64Array(0);
    this.spare = this.kept;
  }

  /** A copy of the state so far. */
  sums(): DistinctLevels {
    return {
      cap: this.cap,
      values: Array.from(this.kept.subarray(0, this.count)),
      saturated: this.saturated,
      segmentStep: this.segmentStep,
      samples: this.samples,
      nonFinite: this.nonFinite,
    };
  }
}

/** The state of the samples of `a` and of `b` together: exact (see the file comment). */
export function mergeDistinctLevels(a: DistinctLevels, b: DistinctLevels): DistinctLevels {
  if (a.cap !== b.cap) {
    throw new RangeError(`Cannot merge distinct levels counted up to ${a.cap} with those counted up to ${b.cap}`);
  }
  const values: number[] = [];
  const saturated = a.saturated || b.saturated || mergeSorted(a.values, a.values.length, b.values, b.values.length, a.cap, values) < 0;
  return {
    cap: a.cap,
    values: saturated ? [] : values,
    saturated,
    segmentStep: saturated ? Infinity : Math.min(a.segmentStep, b.segmentStep),
    samples: a.samples + b.samples,
    nonFinite: a.nonFinite + b.nonFinite,
  };
}

/** How many distinct values: `exact` false means more than `count` (the cap). */
export function distinctLevelCount(s: DistinctLevels): { count: number; exact: boolean } {
  return s.saturated ? { count: s.cap, exact: false } : { count: s.values.length, exact: true };
}

/**
 * The smallest positive difference between two distinct values (the converter step as the
 * data show it), below the cap; NaN past it, or with fewer than two values.
 */
export function smallestLevelStep(s: DistinctLevels): number {
  let step = s.segmentStep;
  for (let i = 1; i < s.values.length; i++) {
    const d = s.values[i] - s.values[i - 1];
    if (d < step) step = d;
  }
  return step === Infinity ? NaN : step;
}
