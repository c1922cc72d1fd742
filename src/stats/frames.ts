import { emptyMoments, mergeMoments, type Moments } from './moments.js';

/**
 * The per-frame table: for frame k (samples [k·hop, k·hop + length)), the moment sums and
 * the extremes of its finite samples. Moment sums, not derived values, are kept so that a
 * frame split between two parts of a record merges exactly. Seven numbers per frame: an
 * hour of 1 s frames is 200 kB per channel.
 */
export interface FrameTable {
  /** Samples per frame. */
  frameSamples: number;
  /** Samples between the starts of consecutive frames (= frameSamples without overlap). */
  hopSamples: number;
  /** Index of the first frame held (frame k starts at sample k·hopSamples). */
  firstFrame: number;
  n: number[];
  mean: number[];
  m2: number[];
  m3: number[];
  m4: number[];
  min: number[];
  max: number[];
}

export function emptyFrameTable(frameSamples: number, hopSamples: number): FrameTable {
  return { frameSamples, hopSamples, firstFrame: 0, n: [], mean: [], m2: [], m3: [], m4: [], min: [], max: [] };
}

export function frameCount(t: FrameTable): number {
  return t.n.length;
}

export function frameMoments(t: FrameTable, slot: number): Moments {
  return { n: t.n[slot], mean: t.mean[slot], m2: t.m2[slot], m3: t.m3[slot], m4: t.m4[slot] };
}

/** Makes sure frame `k` has a slot; returns the slot. Frames are only ever appended. */
export function ensureFrame(t: FrameTable, k: number): number {
  if (t.n.length === 0) t.firstFrame = k;
  while (t.firstFrame + t.n.length <= k) {
    t.n.push(0); t.mean.push(0); t.m2.push(0); t.m3.push(0); t.m4.push(0);
    t.min.push(Infinity); t.max.push(-Infinity);
  }
  return k - t.firstFrame;
}

const scratch = emptyMoments();

/** Adds a segment's moments and extremes to frame `k`. */
export function addToFrame(t: FrameTable, k: number, seg: Moments, min: number, max: number): void {
  const s = ensureFrame(t, k);
  scratch.n = t.n[s]; scratch.mean = t.mean[s]; scratch.m2 = t.m2[s]; scratch.m3 = t.m3[s]; scratch.m4 = t.m4[s];
  mergeMoments(scratch, seg, scratch);
  t.n[s] = scratch.n; t.mean[s] = scratch.mean; t.m2[s] = scratch.m2; t.m3[s] = scratch.m3; t.m4[s] = scratch.m4;
  // + 0 turns −0 into 0: which of two equal zeros is "smaller" depends on summation order
  if (min < t.min[s]) t.min[s] = min + 0;
  if (max > t.max[s]) t.max[s] = max + 0;
}

/** Frame table of a record made of part `a` followed by part `b`. */
export function mergeFrameTables(a: FrameTable, b: FrameTable): FrameTable {
  if (a.frameSamples !== b.frameSamples || a.hopSamples !== b.hopSamples) {
    throw new Error(`Cannot merge frame tables of ${a.frameSamples}/${a.hopSamples} and ${b.frameSamples}/${b.hopSamples} samples`);
  }
  const out: FrameTable = {
    frameSamples: a.frameSamples, hopSamples: a.hopSamples, firstFrame: a.firstFrame,
    n: a.n.slice(), mean: a.mean.slice(), m2: a.m2.slice(), m3: a.m3.slice(), m4: a.m4.slice(),
    min: a.min.slice(), max: a.max.slice(),
  };
  if (a.n.length === 0) out.firstFrame = b.firstFrame;
  for (let s = 0; s < b.n.length; s++) {
    addToFrame(out, b.firstFrame + s, frameMoments(b, s), b.min[s], b.max[s]);
  }
  return out;
}
