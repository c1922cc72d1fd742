/**
 * Runs of identical consecutive samples. A dropout shows as a stretch of exact zeros or a
 * frozen value; clipping shows as runs at the channel's extremes (clean continuous data
 * rarely repeats its maximum: common practice, no source). Non-finite samples end a run and
 * never form one.
 *
 * Everything here merges exactly across a boundary: each part remembers its first and last
 * value and the lengths of the runs touching its edges, so a run cut in two is re-joined.
 */
export interface LongestRun {
  /** Length in samples (0 when there is no such run). */
  length: number;
  /** Index of its first sample in the record. */
  start: number;
  /** The repeated value. */
  value: number;
}

/**
 * Runs at one extreme (the minimum or the maximum) of the part: how many samples equal it,
 * and how they group into runs.
 */
export interface ExtremeRuns {
  /** The extreme value (min or max of the finite samples). */
  value: number;
  /** Samples equal to `value`. */
  count: number;
  /** Σ r² over the maximal runs (lengths r) of samples equal to `value`. */
  sumRunSquares: number;
  /** Samples equal to `value` that sit in runs of two or more: flat tops. */
  repeated: number;
  /** Index of the first sample equal to `value`. */
  firstIndex: number;
}

export interface RunState {
  /** Samples covered (finite and non-finite). */
  count: number;
  /** Index of the part's first sample in the record. */
  start: number;
  /** First and last sample (NaN when non-finite). */
  firstValue: number;
  lastValue: number;
  /** Length of the run of identical values at the start of the part, and at its end. */
  leading: number;
  trailing: number;
  longest: LongestRun;
  longestZero: LongestRun;
  low: ExtremeRuns;
  high: ExtremeRuns;
}

export function emptyRunState(start = 0): RunState {
  return {
    count: 0, start, firstValue: NaN, lastValue: NaN, leading: 0, trailing: 0,
    longest: { length: 0, start, value: NaN },
    longestZero: { length: 0, start, value: 0 },
    low: { value: Infinity, count: 0, sumRunSquares: 0, repeated: 0, firstIndex: -1 },
    high: { value: -Infinity, count: 0, sumRunSquares: 0, repeated: 0, firstIndex: -1 },
  };
}

/**
 * Streaming run tracker: feed samples in order with `push`, then `state()`.
 * Kept as a class with plain number fields so the per-sample loop stays monomorphic.
 */
export class RunTracker {
  private readonly begin: number;
  private next: number;
  private prev = NaN;
  private runStart = 0;
  private runLength = 0;
  private first = NaN;
  private leading = -1; // -1 until the first run closes
  private longest: LongestRun;
  private longestZero: LongestRun;
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

  constructor(start = 0) {
    this.begin = start;
    this.next = start;
    this.longest = { length: 0, start, value: NaN };
    this.longestZero = { length: 0, start, value: 0 };
  }

  /** Feeds samples x[0..length) which follow the ones fed so far. */
  push(x: Float64Array, length = x.length): void {
    let prev = this.prev;
    let runStart = this.runStart;
    let runLength = this.runLength;
    let lowValue = this.lowValue;
    let highValue = this.highValue;
    const base = this.next;
    if (base === this.begin && length > 0) this.first = x[0] - x[0] === 0 ? x[0] : NaN;
    for (let i = 0; i < length; i++) {
      const v = x[i];
      if (v === prev) {
        runLength++;
        continue;
      }
      if (runLength > 0) this.closeRun(prev, runStart, runLength);
      if (v - v !== 0) {
        // NaN or ±Inf: ends the run, forms none
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
    this.next = base + length;
  }

  private closeRun(value: number, start: number, length: number): void {
    if (this.leading < 0) this.leading = start === this.begin ? length : 0;
    if (length > this.longest.length) this.longest = { length, start, value };
    // a single zero sample is no dropout: zero runs count from two samples
    if (value === 0 && length > 1 && length > this.longestZero.length) this.longestZero = { length, start, value: 0 };
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

  state(): RunState {
    // Close the open run on a copy so that pushing can continue afterwards.
    const saved = this.snapshot();
    if (this.runLength > 0) this.closeRun(this.prev, this.runStart, this.runLength);
    const count = this.next - this.begin;
    const trailing = this.runLength;
    const s: RunState = {
      count,
      start: this.begin,
      firstValue: this.first,
      lastValue: this.runLength > 0 ? this.prev : NaN,
      leading: this.leading < 0 ? 0 : this.leading,
      trailing,
      longest: { ...this.longest },
      longestZero: { ...this.longestZero },
      low: { value: this.lowValue, count: this.lowCount, sumRunSquares: this.lowSq, repeated: this.lowRepeated, firstIndex: this.lowFirst },
      high: { value: this.highValue, count: this.highCount, sumRunSquares: this.highSq, repeated: this.highRepeated, firstIndex: this.highFirst },
    };
    this.restore(saved);
    return s;
  }

  private snapshot() {
    return {
      leading: this.leading, longest: this.longest, longestZero: this.longestZero,
      lowCount: this.lowCount, lowSq: this.lowSq, lowRepeated: this.lowRepeated,
      highCount: this.highCount, highSq: this.highSq, highRepeated: this.highRepeated,
    };
  }

  private restore(s: ReturnType<RunTracker['snapshot']>): void {
    this.leading = s.leading; this.longest = s.longest; this.longestZero = s.longestZero;
    this.lowCount = s.lowCount; this.lowSq = s.lowSq; this.lowRepeated = s.lowRepeated;
    this.highCount = s.highCount; this.highSq = s.highSq; this.highRepeated = s.highRepeated;
  }
}

/** Run state of part `a` immediately followed by part `b`. */
export function mergeRunStates(a: RunState, b: RunState): RunState {
  if (a.count === 0) return structuredClone(b);
  if (b.count === 0) return structuredClone(a);
  if (a.start + a.count !== b.start) {
    throw new Error(`Cannot merge run states: part ending at sample ${a.start + a.count} is not followed by one starting at ${b.start}`);
  }
  const joins = a.trailing > 0 && b.leading > 0 && a.lastValue === b.firstValue;
  const ta = a.trailing;
  const lb = b.leading;
  const aAllOneRun = a.leading === a.count;
  const bAllOneRun = b.leading === b.count;

  const longestOf = (x: LongestRun, y: LongestRun): LongestRun => (y.length > x.length ? { ...y } : { ...x });
  let longest = longestOf(a.longest, b.longest);
  let longestZero = longestOf(a.longestZero, b.longestZero);
  if (joins) {
    const joined: LongestRun = { length: ta + lb, start: a.start + a.count - ta, value: a.lastValue };
    if (joined.length > longest.length) longest = joined;
    if (joined.value === 0 && joined.length > longestZero.length) longestZero = { ...joined, value: 0 };
  }

  const mergeExtreme = (x: ExtremeRuns, y: ExtremeRuns, lower: boolean): ExtremeRuns => {
    if (x.value !== y.value) {
      const xWins = lower ? x.value < y.value : x.value > y.value;
      return { ...(xWins ? x : y) };
    }
    const out: ExtremeRuns = {
      value: x.value,
      count: x.count + y.count,
      sumRunSquares: x.sumRunSquares + y.sumRunSquares,
      repeated: x.repeated + y.repeated,
      firstIndex: x.firstIndex >= 0 ? x.firstIndex : y.firstIndex,
    };
    if (joins && a.lastValue === x.value) {
      // (ta + lb)² = ta² + lb² + 2·ta·lb; runs of one sample become flat once joined
      out.sumRunSquares += 2 * ta * lb;
      if (ta === 1) out.repeated += 1;
      if (lb === 1) out.repeated += 1;
    }
    return out;
  };

  return {
    count: a.count + b.count,
    start: a.start,
    firstValue: a.firstValue,
    lastValue: b.lastValue,
    leading: aAllOneRun && joins ? a.count + lb : a.leading,
    trailing: bAllOneRun && joins ? b.count + ta : b.trailing,
    longest,
    longestZero,
    low: mergeExtreme(a.low, b.low, true),
    high: mergeExtreme(a.high, b.high, false),
  };
}
