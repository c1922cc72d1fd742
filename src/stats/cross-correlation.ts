/**
 * Correlation between every pair of channels over the sampled segments, and whether two
 * channels are identical sample for sample: what a patching or channel-table error looks
 * like (the same input recorded twice, or one channel copied into another's slot).
 *
 * Pearson's r of channels a and b over all sampled samples,
 *   r_ab = C_ab / √(C_aa · C_bb),   C_ab = Σ (x_a − x̄_a)(x_b − x̄_b),
 * with x̄ the mean over all sampled samples. The naive Σxy − Σx·Σy/n loses every digit
 * when a channel carries an offset large against its spread, so each segment is centred on
 * its own (corrected two-pass) mean first, its co-moments are summed from the centred values,
 * and segments are combined by the pairwise update of Chan, Golub & LeVeque (STAN-CS-79-773,
 * 1979; Pébay, SAND2008-6212, for co-moments):
 *   C_ab = C_ab,A + C_ab,B + δ_a·δ_b · n_A·n_B / n,   δ = x̄_B − x̄_A.
 * For a copy with noise 50 dB down (1 − r = 5·10⁻⁶), offsets of 10⁶ × the spread leave
 * 1 − r the same to 9 digits, and 10⁹ to 6 (measured; the rest is the rounding of the
 * offset samples themselves), where the naive formula keeps no digit of 1 − r.
 *
 * `identical` means the same float64 bit pattern at every sampled position (so −0 and +0
 * differ). A bitset keeps the pairs still identical;
 * only those are compared in the next segment, and a comparison stops at the first
 * difference, which for most pairs is the first sample: the cost is about C²/2 comparisons
 * once, then nothing.
 *
 * A channel that is constant over the sampled samples has no correlation (r = NaN), and is
 * never reported, even when another channel holds the same constant: two channels reading
 * the same constant are typically two open inputs at exactly 0, which says nothing about
 * patching, and the constant itself is what the flat-channel check reports. An identical pair
 * of non-constant channels has r = 1 exactly, whatever the rounding of the sums.
 *
 * Cost per segment of M samples: C(C−1)/2 dot products of length M (see `addDotProducts`):
 * about 0.3 s for 64 channels × 2^18 samples and 4–4.5 s for 256 channels (measured on a
 * 2-core x86-64 machine, Node 20).
 * JSON size: C(C−1)/2 co-moments (32 640 numbers, about 0.6 MB, for 256 channels).
 */

/**
 * Everything kept about the channel pairs over a set of segments: plain numbers and arrays,
 * JSON-serialisable, merged exactly by `mergeCrossSums`. Pair p of channels a < b is at
 * index p = a·(2C − a − 1)/2 + (b − a − 1): (0,1), (0,2) … (0,C−1), (1,2) …
 */
export interface CrossSums {
  /** C, the number of channels. */
  channels: number;
  /** Sets of segments summed. */
  segments: number;
  /** Sets of segments not used because one of them held a non-finite sample. */
  skippedSegments: number;
  /** Samples per channel summed. */
  n: number;
  /** Mean of each channel over the samples summed. */
  mean: number[];
  /** C_aa = Σ (x − x̄)² of each channel. */
  m2: number[];
  /** Smallest and largest sample of each channel (equal: the channel is constant). */
  min: number[];
  max: number[];
  /** C_ab of each pair a < b, in pair order. */
  comoment: number[];
  /** Bitset of the pairs identical so far: bit p % 32 of word ⌊p/32⌋ (unsigned 32-bit words). */
  identical: number[];
}

/** One pair reported by `correlatedPairs`. */
export interface CorrelatedPair {
  /** Channel indices, a < b. */
  a: number;
  b: number;
  /** Pearson's r over the sampled samples. */
  r: number;
  /** Every sampled sample is the same, bit for bit. */
  identical: boolean;
}

const pairCount = (c: number) => (c * (c - 1)) / 2;
const wordCount = (c: number) => Math.ceil(pairCount(c) / 32);

/** Index of pair (a, b), a < b, in `comoment` and `identical`. */
export function pairIndex(channels: number, a: number, b: number): number {
  return (a * (2 * channels - a - 1)) / 2 + (b - a - 1);
}

function assertChannels(channels: number): void {
  if (!Number.isInteger(channels) || channels < 1) {
    throw new RangeError(`Channel count must be a whole number of at least 1, not ${JSON.stringify(channels)}`);
  }
}

/** Sums of no segment at all: the neutral element of `mergeCrossSums`. */
export function emptyCrossSums(channels: number): CrossSums {
  assertChannels(channels);
  return {
    channels,
    segments: 0,
    skippedSegments: 0,
    n: 0,
    mean: new Array<number>(channels).fill(0),
    m2: new Array<number>(channels).fill(0),
    min: new Array<number>(channels).fill(Infinity),
    max: new Array<number>(channels).fill(-Infinity),
    comoment: new Array<number>(pairCount(channels)).fill(0),
    identical: Array.from(allPairs(channels)),
  };
}

/** Samples per chunk of the dot-product loop: the rows of a tile stay in the cache. */
const CHUNK = 1024;

/** Σ_i rows[x+i]·rows[y+i] for i in [i0, i1), two sums in flight. */
function dot(rows: Float64Array, x: number, y: number, i0: number, i1: number): number {
  let s = 0;
  let t = 0;
  let i = i0;
  for (; i + 1 < i1; i += 2) {
    s += rows[x + i] * rows[y + i];
    t += rows[x + i + 1] * rows[y + i + 1];
  }
  if (i < i1) s += rows[x + i] * rows[y + i];
  return s + t;
}

/**
 * Adds Σ_i row_a[i]·row_b[i] of every pair a < b into `out` (pair order). `rows` holds
 * `channels` rows of `len` samples back to back. Written for V8, which does not vectorise:
 * one typed array and integer offsets, and tiles of 2 × 4 rows, so that six loads feed eight
 * independent multiply-add chains (the adds' latency, not the loads, bounds a plain dot
 * product). Measured 1.5× faster than tiles of 1 × 4 (about 0.4 ns per pair and sample on a
 * 2-core x86-64 machine).
 */
function addDotProducts(rows: Float64Array, channels: number, len: number, out: Float64Array): void {
  const c = channels;
  for (let i0 = 0; i0 < len; i0 += CHUNK) {
    const i1 = Math.min(len, i0 + CHUNK);
    // rows a and a + 1 against each other, then against every later row b
    for (let a = 0; a + 1 < c; a += 2) {
      const oa = a * len;
      out[pairIndex(c, a, a + 1)] += dot(rows, oa, oa + len, i0, i1);
      const pa = pairIndex(c, a, a + 2);
      const pb = pairIndex(c, a + 1, a + 2);
      let b = a + 2;
      for (; b + 3 < c; b += 4) {
        const o0 = b * len - oa;
        const o1 = o0 + len;
        const o2 = o1 + len;
        const o3 = o2 + len;
        let s0 = 0, s1 = 0, s2 = 0, s3 = 0;
        let t0 = 0, t1 = 0, t2 = 0, t3 = 0;
        for (let i = oa + i0, end = oa + i1; i < end; i++) {
          const u = rows[i];
          const v = rows[i + len];
          const y0 = rows[i + o0];
          const y1 = rows[i + o1];
          const y2 = rows[i + o2];
          const y3 = rows[i + o3];
          s0 += u * y0; s1 += u * y1; s2 += u * y2; s3 += u * y3;
          t0 += v * y0; t1 += v * y1; t2 += v * y2; t3 += v * y3;
        }
        const q = b - a - 2;
        out[pa + q] += s0; out[pa + q + 1] += s1; out[pa + q + 2] += s2; out[pa + q + 3] += s3;
        out[pb + q] += t0; out[pb + q + 1] += t1; out[pb + q + 2] += t2; out[pb + q + 3] += t3;
      }
      for (; b < c; b++) {
        const o = b * len - oa;
        let s = 0;
        let t = 0;
        for (let i = oa + i0, end = oa + i1; i < end; i++) {
          const y = rows[i + o];
          s += rows[i] * y;
          t += rows[i + len] * y;
        }
        const q = b - a - 2;
        out[pa + q] += s;
        out[pb + q] += t;
      }
    }
  }
}

/** The bitset with every pair set (the bits past the last pair clear). */
function allPairs(channels: number): Uint32Array {
  const pairs = pairCount(channels);
  const words = new Uint32Array(wordCount(channels)).fill(0xffffffff);
  if (pairs % 32 !== 0) words[words.length - 1] = (2 ** (pairs % 32) - 1) >>> 0;
  return words;
}

/** True when u and v (float64 samples seen as 32-bit words) hold the same bits. */
function sameBits(u: Int32Array, v: Int32Array): boolean {
  for (let i = 0; i < u.length; i++) if (u[i] !== v[i]) return false;
  return true;
}

/**
 * Pair sums of C channels, fed one set of sampled segments at a time (one segment per
 * channel, all at the same sample positions). Segment sets may come in any order and may
 * differ in length from one call to the next.
 */
export class CrossCorrelationAccumulator {
  private readonly channels: number;
  /** The current segments, centred, one row per channel. */
  private rows = new Float64Array(0);
  /** Mean and centred sum of squares of each channel's current segment. */
  private readonly segMean: Float64Array;
  private readonly segSquares: Float64Array;
  private readonly mean: Float64Array;
  private readonly m2: Float64Array;
  private readonly min: Float64Array;
  private readonly max: Float64Array;
  private readonly comoment: Float64Array;
  private readonly identical: Uint32Array;
  private n = 0;
  private segments = 0;
  private skippedSegments = 0;

  constructor(channels: number) {
    assertChannels(channels);
    this.channels = channels;
    this.segMean = new Float64Array(channels);
    this.segSquares = new Float64Array(channels);
    this.mean = new Float64Array(channels);
    this.m2 = new Float64Array(channels);
    this.min = new Float64Array(channels).fill(Infinity);
    this.max = new Float64Array(channels).fill(-Infinity);
    this.comoment = new Float64Array(pairCount(channels));
    this.identical = allPairs(channels);
  }

  /** Adds one set of segments. A set in which any segment holds NaN or ±Infinity is counted and not used. */
  addSegments(segments: Float64Array[]): void {
    const c = this.channels;
    if (segments.length !== c) {
      throw new RangeError(`Correlation needs one segment per channel: got ${segments.length}, expected ${c}`);
    }
    const len = segments[0].length;
    for (let k = 0; k < c; k++) {
      if (segments[k].length !== len) {
        throw new RangeError(`Segments of one set must have the same length: channel ${k} has ${segments[k].length} samples, channel 0 ${len}`);
      }
    }
    if (len === 0) return;
    const segMean = this.segMean;
    for (let k = 0; k < c; k++) {
      const x = segments[k];
      let s = 0;
      for (let i = 0; i < len; i++) s += x[i];
      // NaN or ±Infinity anywhere makes the sum non-finite: one test covers every sample
      if (!Number.isFinite(s)) {
        this.skippedSegments++;
        return;
      }
      segMean[k] = s / len;
    }
    if (this.rows.length !== c * len) this.rows = new Float64Array(c * len);
    const rows = this.rows;
    for (let k = 0; k < c; k++) {
      const x = segments[k];
      // corrected two-pass mean (Chan, Golub & LeVeque 1979): removes the rounding of sum/len
      let m = segMean[k];
      let r = 0;
      for (let i = 0; i < len; i++) r += x[i] - m;
      m += r / len;
      segMean[k] = m;
      let ss = 0;
      let lo = this.min[k];
      let hi = this.max[k];
      const o = k * len;
      for (let i = 0; i < len; i++) {
        const v = x[i];
        const d = v - m;
        rows[o + i] = d;
        ss += d * d;
        if (v < lo) lo = v;
        if (v > hi) hi = v;
      }
      this.segSquares[k] = ss;
      this.min[k] = lo;
      this.max[k] = hi;
    }
    // pairwise update with the segment's means first, then its own centred co-moments
    const na = this.n;
    const n = na + len;
    const mean = this.mean;
    if (na > 0) {
      const f = (na * len) / n;
      let p = 0;
      for (let a = 0; a < c - 1; a++) {
        const da = (segMean[a] - mean[a]) * f;
        for (let b = a + 1; b < c; b++) this.comoment[p++] += da * (segMean[b] - mean[b]);
      }
      for (let a = 0; a < c; a++) {
        const d = segMean[a] - mean[a];
        this.m2[a] += this.segSquares[a] + d * d * f;
        mean[a] += (d * len) / n;
      }
    } else {
      this.m2.set(this.segSquares);
      mean.set(segMean);
    }
    addDotProducts(rows, c, len, this.comoment);
    this.n = n;
    this.compareIdentical(segments);
    this.segments++;
  }

  /** Clears the bit of every pair still marked identical whose segments differ. */
  private compareIdentical(segments: Float64Array[]): void {
    const bits = this.identical;
    if (bits.every((w) => w === 0)) return;
    const c = this.channels;
    const words = segments.map((x) => new Int32Array(x.buffer, x.byteOffset, 2 * x.length));
    let p = 0;
    for (let a = 0; a < c - 1; a++) {
      for (let b = a + 1; b < c; b++, p++) {
        const word = p >>> 5;
        const mask = 1 << (p & 31);
        if ((bits[word] & mask) !== 0 && !sameBits(words[a], words[b])) bits[word] &= ~mask;
      }
    }
  }

  /** A copy of the sums so far. */
  sums(): CrossSums {
    return {
      channels: this.channels,
      segments: this.segments,
      skippedSegments: this.skippedSegments,
      n: this.n,
      mean: Array.from(this.mean),
      m2: Array.from(this.m2),
      min: Array.from(this.min),
      max: Array.from(this.max),
      comoment: Array.from(this.comoment),
      identical: Array.from(this.identical),
    };
  }
}

/** Sums of the segments of `a` and of `b` together (pairwise update; see the file comment). */
export function mergeCrossSums(a: CrossSums, b: CrossSums): CrossSums {
  if (a.channels !== b.channels) {
    throw new RangeError(`Cannot merge correlation sums of ${a.channels} channels with those of ${b.channels} channels`);
  }
  const c = a.channels;
  const skippedSegments = a.skippedSegments + b.skippedSegments;
  // the bitset of no segment is all ones, the neutral element of AND
  const identical = andWords(a.identical, b.identical);
  if (a.n === 0 || b.n === 0) {
    const from = a.n === 0 ? b : a;
    return { ...structuredClone(from), segments: a.segments + b.segments, skippedSegments, identical };
  }
  const n = a.n + b.n;
  const f = (a.n * b.n) / n;
  const delta = b.mean.map((v, k) => v - a.mean[k]);
  const comoment = new Array<number>(pairCount(c));
  let p = 0;
  for (let i = 0; i < c - 1; i++) {
    for (let j = i + 1; j < c; j++, p++) comoment[p] = a.comoment[p] + b.comoment[p] + delta[i] * delta[j] * f;
  }
  return {
    channels: c,
    segments: a.segments + b.segments,
    skippedSegments,
    n,
    mean: a.mean.map((v, k) => v + (delta[k] * b.n) / n),
    m2: a.m2.map((v, k) => v + b.m2[k] + delta[k] * delta[k] * f),
    min: a.min.map((v, k) => Math.min(v, b.min[k])),
    max: a.max.map((v, k) => Math.max(v, b.max[k])),
    comoment,
    identical,
  };
}

function andWords(x: number[], y: number[]): number[] {
  return x.map((w, i) => (w & y[i]) >>> 0);
}

function isConstant(s: CrossSums, k: number): boolean {
  return !(s.max[k] > s.min[k]);
}

/** Pearson's r of channels a and b (any order); NaN when either is constant or nothing was summed. */
export function pairCorrelation(s: CrossSums, a: number, b: number): number {
  const [i, j] = a < b ? [a, b] : [b, a];
  if (!Number.isInteger(i) || i < 0 || !Number.isInteger(j) || j >= s.channels) {
    throw new RangeError(`No channel pair (${a}, ${b}) among ${s.channels} channels`);
  }
  if (i === j) return s.n === 0 || isConstant(s, i) ? NaN : 1;
  if (s.n === 0 || isConstant(s, i) || isConstant(s, j)) return NaN;
  const p = pairIndex(s.channels, i, j);
  if (((s.identical[p >>> 5] >>> (p & 31)) & 1) === 1) return 1;
  const r = s.comoment[p] / Math.sqrt(s.m2[i] * s.m2[j]);
  // rounding can carry |r| a few ulps past 1
  return Math.max(-1, Math.min(1, r));
}

/**
 * The pairs whose |r| is at least `minAbs`, and every identical pair of non-constant
 * channels, in pair order. A pair with a constant channel is never reported (see the file comment).
 */
export function correlatedPairs(s: CrossSums, minAbs: number): CorrelatedPair[] {
  const out: CorrelatedPair[] = [];
  if (s.n === 0) return out;
  const c = s.channels;
  let p = 0;
  for (let a = 0; a < c - 1; a++) {
    for (let b = a + 1; b < c; b++, p++) {
      if (isConstant(s, a) || isConstant(s, b)) continue;
      const identical = ((s.identical[p >>> 5] >>> (p & 31)) & 1) === 1;
      const r = identical ? 1 : Math.max(-1, Math.min(1, s.comoment[p] / Math.sqrt(s.m2[a] * s.m2[b])));
      if (identical || Math.abs(r) >= minAbs) out.push({ a, b, r, identical });
    }
  }
  return out;
}
