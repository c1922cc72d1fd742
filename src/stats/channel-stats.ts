import type { ChannelSummary } from './channel-accumulator.js';
import { frameCount, frameMoments, type FrameTable } from './frames.js';
import { emptyMoments, mergeMoments, type Moments } from './moments.js';
import { kurtosis, excessKurtosisG2 } from './kurtosis.js';
import { skewness, skewnessG1 } from './skewness.js';
import { populationVariance, rms, sampleVariance } from './variance.js';
import { crestFactor } from './crest-factor.js';
import { largerSide, symmetryRatio } from './symmetry.js';
import { reverseArrangements, reverseArrangementsBounds } from './reverse-arrangements.js';

/** Where a frame-wise statistic is smallest and largest. Times are frame start times. */
export interface FrameExtremes {
  min: number;
  minTimeS: number;
  max: number;
  maxTimeS: number;
}

export interface StationarityResult {
  /** What the test ran on: `rms` or `mean` of consecutive record segments. */
  of: 'rms' | 'mean';
  /** Number of segments the record was cut into (each a whole number of frames). */
  segments: number;
  arrangements: number;
  lower: number;
  upper: number;
  alpha: number;
  /** lower < arrangements ≤ upper. */
  stationary: boolean;
  z: number;
}

/**
 * The statistics of one channel, derived from its summary. Conventions: `std` is the
 * population standard deviation (divides by n), `stdSample` divides by n − 1; `skewness` is
 * population g1; `kurtosis` is population NON-excess β2 (3 for Gaussian data); `skewnessG1` and
 * `excessKurtosisG2` are the bias-corrected ones (Joanes & Gill 1998). All moments are over
 * the finite samples. Times are seconds from the start of the record.
 */
export interface ChannelStats {
  samples: number;
  finiteSamples: number;
  nonFinite: number;
  firstNonFiniteTimeS: number | null;
  mean: number;
  std: number;
  stdSample: number;
  rms: number;
  min: number;
  minTimeS: number | null;
  max: number;
  maxTimeS: number | null;
  peak: number;
  crestFactor: number;
  skewness: number;
  kurtosis: number;
  skewnessG1: number;
  excessKurtosisG2: number;
  /** Larger of max and −min over the smaller (1: symmetric about zero). */
  symmetryRatio: number;
  largerSide: 'positive' | 'negative';
  /** Longest run of identical consecutive samples. */
  longestRun: { samples: number; seconds: number; startTimeS: number; value: number };
  /** Longest run of exact zeros. */
  longestZeroRun: { samples: number; seconds: number; startTimeS: number };
  /** Samples equal to the channel's own min or max, and those of them in runs of ≥ 2 (flat tops). */
  extremes: {
    atMin: number;
    atMax: number;
    flatAtMin: number;
    flatAtMax: number;
    /** (flatAtMin + flatAtMax) / samples: clipping seen as flat tops at the channel's extremes. */
    flatFraction: number;
    /** 20·log10(Σr²/Σr) over the runs r at the min or max (0 dB: no repeats). */
    flatFactorDb: number;
  };
  /** Samples at or beyond the converter's clip levels, when known. */
  fullScale: { low: number | null; high: number | null; atLow: number; atHigh: number; fraction: number } | null;
  frames: {
    frameS: number;
    hopS: number;
    /** Frames used for the frame-wise figures below (those holding at least half a frame). */
    used: number;
    /** Partial frames (under half a frame, at the record's end) left out of them. */
    leftOut: number;
    mean: FrameExtremes;
    rms: FrameExtremes;
    min: FrameExtremes;
    max: FrameExtremes;
    skewness: FrameExtremes;
    kurtosis: FrameExtremes;
    crestFactor: FrameExtremes;
  } | null;
}

export interface DeriveOptions {
  sampleRate: number;
}

/** Derived statistics of a channel summary. Pure; costs O(frames). */
export function channelStats(s: ChannelSummary, options: DeriveOptions): ChannelStats {
  const fs = options.sampleRate;
  const t = (index: number) => index / fs;
  const m = s.moments;
  const min = m.n > 0 ? s.runs.low.value : NaN;
  const max = m.n > 0 ? s.runs.high.value : NaN;
  const peak = Math.max(Math.abs(min), Math.abs(max));
  const r = rms(m);
  const lowRuns = s.runs.low;
  const highRuns = s.runs.high;
  const sameExtreme = min === max; // a constant channel: both extremes are the same runs
  const runCount = sameExtreme ? lowRuns.count : lowRuns.count + highRuns.count;
  const runSq = sameExtreme ? lowRuns.sumRunSquares : lowRuns.sumRunSquares + highRuns.sumRunSquares;
  const flatAtMin = lowRuns.repeated;
  const flatAtMax = sameExtreme ? 0 : highRuns.repeated;
  return {
    samples: s.count,
    finiteSamples: m.n,
    nonFinite: s.nonFinite,
    firstNonFiniteTimeS: s.firstNonFinite >= 0 ? t(s.firstNonFinite) : null,
    mean: m.n > 0 ? m.mean : NaN,
    std: Math.sqrt(populationVariance(m)),
    stdSample: Math.sqrt(sampleVariance(m)),
    rms: r,
    min,
    minTimeS: lowRuns.firstIndex >= 0 ? t(lowRuns.firstIndex) : null,
    max,
    maxTimeS: highRuns.firstIndex >= 0 ? t(highRuns.firstIndex) : null,
    peak,
    crestFactor: crestFactor(peak, r),
    skewness: skewness(m),
    kurtosis: kurtosis(m),
    skewnessG1: skewnessG1(m),
    excessKurtosisG2: excessKurtosisG2(m),
    symmetryRatio: symmetryRatio(min, max),
    largerSide: largerSide(min, max),
    longestRun: {
      samples: s.runs.longest.length,
      seconds: s.runs.longest.length / fs,
      startTimeS: t(s.runs.longest.start),
      value: s.runs.longest.value,
    },
    longestZeroRun: {
      samples: s.runs.longestZero.length,
      seconds: s.runs.longestZero.length / fs,
      startTimeS: t(s.runs.longestZero.start),
    },
    extremes: {
      atMin: lowRuns.count,
      atMax: sameExtreme ? lowRuns.count : highRuns.count,
      flatAtMin,
      flatAtMax,
      flatFraction: s.count > 0 ? (flatAtMin + flatAtMax) / s.count : 0,
      flatFactorDb: runCount > 0 ? 20 * Math.log10(runSq / runCount) : 0,
    },
    fullScale:
      s.clip.low === null && s.clip.high === null
        ? null
        : {
            low: s.clip.low,
            high: s.clip.high,
            atLow: s.clip.countLow,
            atHigh: s.clip.countHigh,
            fraction: s.count > 0 ? (s.clip.countLow + s.clip.countHigh) / s.count : 0,
          },
    frames: frameStats(s.frames, fs),
  };
}

/** Frames holding fewer than half a frame's samples (the record's tail) are left out. */
export function usableFrames(table: FrameTable): number[] {
  const slots: number[] = [];
  const half = table.frameSamples / 2;
  for (let i = 0; i < frameCount(table); i++) if (table.n[i] >= half) slots.push(i);
  return slots;
}

function frameStats(table: FrameTable, fs: number): ChannelStats['frames'] {
  const slots = usableFrames(table);
  if (slots.length === 0) return null;
  const ext = () => ({ min: Infinity, minTimeS: NaN, max: -Infinity, maxTimeS: NaN });
  const out = {
    mean: ext(), rms: ext(), min: ext(), max: ext(), skewness: ext(), kurtosis: ext(), crestFactor: ext(),
  };
  const note = (e: FrameExtremes, v: number, time: number) => {
    if (v < e.min) { e.min = v; e.minTimeS = time; }
    if (v > e.max) { e.max = v; e.maxTimeS = time; }
  };
  for (const slot of slots) {
    const fm = frameMoments(table, slot);
    const time = ((table.firstFrame + slot) * table.hopSamples) / fs;
    const frameRms = rms(fm);
    const fmin = table.min[slot];
    const fmax = table.max[slot];
    note(out.mean, fm.mean, time);
    note(out.rms, frameRms, time);
    note(out.min, fmin, time);
    note(out.max, fmax, time);
    note(out.skewness, skewness(fm), time);
    note(out.kurtosis, kurtosis(fm), time);
    note(out.crestFactor, crestFactor(Math.max(Math.abs(fmin), Math.abs(fmax)), frameRms), time);
  }
  const clean = (e: FrameExtremes): FrameExtremes =>
    Number.isFinite(e.min) ? e : { min: NaN, minTimeS: NaN, max: NaN, maxTimeS: NaN };
  return {
    frameS: table.frameSamples / fs,
    hopS: table.hopSamples / fs,
    used: slots.length,
    leftOut: frameCount(table) - slots.length,
    mean: clean(out.mean), rms: clean(out.rms), min: clean(out.min), max: clean(out.max),
    skewness: clean(out.skewness), kurtosis: clean(out.kurtosis), crestFactor: clean(out.crestFactor),
  };
}

/**
 * Per-frame values of one statistic, in frame order, over the usable frames, with the
 * frame start times. For trend plots and stationarity tests.
 */
export function frameSeries(
  table: FrameTable,
  statistic: 'mean' | 'rms' | 'min' | 'max' | 'skewness' | 'kurtosis' | 'crestFactor',
  sampleRate: number,
): { timeS: Float64Array; value: Float64Array } {
  const slots = usableFrames(table);
  const timeS = new Float64Array(slots.length);
  const value = new Float64Array(slots.length);
  slots.forEach((slot, i) => {
    const fm = frameMoments(table, slot);
    timeS[i] = ((table.firstFrame + slot) * table.hopSamples) / sampleRate;
    const fr = rms(fm);
    switch (statistic) {
      case 'mean': value[i] = fm.mean; break;
      case 'rms': value[i] = fr; break;
      case 'min': value[i] = table.min[slot]; break;
      case 'max': value[i] = table.max[slot]; break;
      case 'skewness': value[i] = skewness(fm); break;
      case 'kurtosis': value[i] = kurtosis(fm); break;
      case 'crestFactor':
        value[i] = crestFactor(Math.max(Math.abs(table.min[slot]), Math.abs(table.max[slot])), fr);
        break;
    }
  });
  return { timeS, value };
}

/**
 * Reverse arrangements test for a trend in the RMS or mean of the record, computed over
 * `segments` consecutive stretches of whole frames (Bendat & Piersol apply it to some tens of
 * segment values; on thousands of one-second frames any slow drift of the excitation would
 * reject stationarity). Only non-overlapping frames are used, and the segments' moments are
 * merged exactly from them. Null when there are fewer than `segments` such frames.
 */
export function stationarity(
  table: FrameTable,
  of: 'rms' | 'mean',
  options: { segments?: number; alpha?: number } = {},
): StationarityResult | null {
  const alpha = options.alpha ?? 0.05;
  const stride = Math.max(1, Math.round(table.frameSamples / table.hopSamples));
  const full: number[] = [];
  for (let slot = 0; slot < frameCount(table); slot++) {
    if ((table.firstFrame + slot) % stride === 0 && table.n[slot] >= table.frameSamples / 2) full.push(slot);
  }
  const wanted = options.segments ?? Math.min(full.length, 20);
  if (wanted < 2 || full.length < wanted) return null;
  const values = new Float64Array(wanted);
  for (let g = 0; g < wanted; g++) {
    const from = Math.floor((g * full.length) / wanted);
    const to = Math.floor(((g + 1) * full.length) / wanted);
    let acc: Moments = emptyMoments();
    for (let i = from; i < to; i++) acc = mergeMoments(acc, frameMoments(table, full[i]));
    values[g] = of === 'rms' ? rms(acc) : acc.mean;
  }
  const result = reverseArrangements(values);
  const { lower, upper } = reverseArrangementsBounds(result.n, alpha);
  return {
    of,
    segments: result.n,
    arrangements: result.arrangements,
    lower,
    upper,
    alpha,
    stationary: result.arrangements > lower && result.arrangements <= upper,
    z: result.z,
  };
}
