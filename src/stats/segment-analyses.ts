/**
 * The analyses that run on sampled segments (segments.ts) during the streaming pass: each
 * channel's autocorrelation (Gaussian bands), mains lines (Goertzel), correlation between
 * channels (duplicates) and the distinct levels used (range utilisation). Only those some
 * check of the rule file needs are run (`SegmentNeeds`); their sums merge exactly by adding.
 */
import { AutocorrelationAccumulator, mergeAutocorrelation, type AutocorrelationSums } from './autocorrelation.js';
import { CrossCorrelationAccumulator, mergeCrossSums, type CrossSums } from './cross-correlation.js';
import { DistinctLevelCounter, mergeDistinctLevels, type DistinctLevels } from './distinct-levels.js';
import { LineAccumulator, mergeLineSums, type LineSums } from './mains-lines.js';
import { SegmentCollector, type SegmentPlan } from './segments.js';

/** What the checks of a rule file need computed on sampled segments. */
export interface SegmentNeeds {
  autocorrelation?: boolean;
  /** Mains fundamentals (with the harmonics wanted) whose lines are measured. */
  lines?: Array<{ fundamentalHz: number; harmonics: number }>;
  cross?: boolean;
  levels?: boolean;
}

/**
 * Samples of each segment that go into the correlation between channels: C²/2 dot products
 * per sample make it the costliest analysis for many channels, and 0.9999 needs far fewer
 * samples than the autocorrelation does — the scatter of r̂ is about (1 − r²)/√n (Fisher
 * z, from memory), 2e-6 at r = 0.9999 with n = 10^4, and independent channels scatter by
 * 1/√n = 0.01.
 */
export const CROSS_SAMPLES = 8192;

/**
 * Distinct levels counted exactly up to this many per channel: far more than the few
 * hundred levels below which a channel has visibly lost resolution, and small enough for
 * partial summary files (the values themselves are kept, to merge exactly).
 */
export const LEVELS_CAP = 4096;

/**
 * Samples of each segment whose levels are counted: a hash-set insertion a sample makes it
 * costly for integer data with a few thousand codes, and 16 384 samples of every segment
 * (65 536 or more a channel) meet every code of a signal's central ±3 σ many times over.
 */
export const LEVELS_SAMPLES = 16384;

export interface SegmentSummary {
  plan: SegmentPlan;
  /** Segments (of every channel at once) that were complete and finite. */
  used: number;
  autocorrelation: AutocorrelationSums[] | null;
  lines: Array<{ fundamentalHz: number; harmonics: number; channels: LineSums[] }>;
  cross: CrossSums | null;
  levels: DistinctLevels[] | null;
}

/** True when nothing is needed: the engine then collects no segments at all. */
export function needsNothing(n: SegmentNeeds | undefined): boolean {
  return !n || (!n.autocorrelation && !n.cross && !n.levels && !(n.lines && n.lines.length > 0));
}

/** Both sets of needs; lines of one fundamental keep the most harmonics asked for. */
export function unionNeeds(a: SegmentNeeds, b: SegmentNeeds): SegmentNeeds {
  const lines = new Map<number, number>();
  for (const l of [...(a.lines ?? []), ...(b.lines ?? [])]) lines.set(l.fundamentalHz, Math.max(lines.get(l.fundamentalHz) ?? 0, l.harmonics));
  return {
    autocorrelation: a.autocorrelation || b.autocorrelation || undefined,
    cross: a.cross || b.cross || undefined,
    levels: a.levels || b.levels || undefined,
    lines: lines.size ? [...lines].sort((x, y) => x[0] - y[0]).map(([fundamentalHz, harmonics]) => ({ fundamentalHz, harmonics })) : undefined,
  };
}

/** Collects the segments of a span of a record and runs every analysis needed on them. */
export class SegmentAnalyses {
  private readonly collector: SegmentCollector;
  private readonly autocorrelation: AutocorrelationAccumulator[] | null;
  private readonly lines: Array<{ fundamentalHz: number; harmonics: number; channels: LineAccumulator[] }>;
  private readonly cross: CrossCorrelationAccumulator | null;
  private readonly levels: DistinctLevelCounter[] | null;

  constructor(private readonly plan: SegmentPlan, needs: SegmentNeeds, o: { sampleRate: number; channels: number; start: number }) {
    const m = plan.segmentSamples;
    const each = <T>(make: () => T): T[] => Array.from({ length: o.channels }, make);
    this.autocorrelation = needs.autocorrelation ? each(() => new AutocorrelationAccumulator(m)) : null;
    this.lines = (needs.lines ?? []).map((l) => ({
      ...l,
      channels: each(() => new LineAccumulator({ sampleRate: o.sampleRate, segmentSamples: m, fundamentalHz: l.fundamentalHz, harmonics: l.harmonics })),
    }));
    this.cross = needs.cross && o.channels > 1 ? new CrossCorrelationAccumulator(o.channels) : null;
    this.levels = needs.levels ? each(() => new DistinctLevelCounter(LEVELS_CAP)) : null;
    // whole segments only for the analyses that need them (lines, autocorrelation)
    const whole = needs.autocorrelation === true || this.lines.length > 0;
    const take = whole ? m : Math.min(m, Math.max(needs.cross ? CROSS_SAMPLES : 0, needs.levels ? LEVELS_SAMPLES : 0));
    this.collector = new SegmentCollector(plan, o.channels, o.start, (segments) => {
      for (let c = 0; c < segments.length; c++) {
        this.autocorrelation?.[c].addSegment(segments[c]);
        for (const l of this.lines) l.channels[c].addSegment(segments[c]);
        this.levels?.[c].addSegment(segments[c].length > LEVELS_SAMPLES ? segments[c].subarray(0, LEVELS_SAMPLES) : segments[c]);
      }
      if (this.cross) this.cross.addSegments(segments[0].length > CROSS_SAMPLES ? segments.map((s) => s.subarray(0, CROSS_SAMPLES)) : segments);
    }, take);
  }

  push(channels: ArrayLike<Float64Array>, length: number): void {
    this.collector.push(channels, length);
  }

  summary(): SegmentSummary {
    return {
      plan: { ...this.plan },
      used: this.collector.used,
      autocorrelation: this.autocorrelation?.map((a) => a.sums()) ?? null,
      lines: this.lines.map((l) => ({ fundamentalHz: l.fundamentalHz, harmonics: l.harmonics, channels: l.channels.map((a) => a.sums()) })),
      cross: this.cross?.sums() ?? null,
      levels: this.levels?.map((a) => a.sums()) ?? null,
    };
  }
}

/** Segment summaries of two spans of one record (made with the same plan and needs), together. */
export function mergeSegmentSummaries(a: SegmentSummary, b: SegmentSummary): SegmentSummary {
  if (a.plan.segmentSamples !== b.plan.segmentSamples || a.plan.strideSamples !== b.plan.strideSamples) {
    throw new RangeError('Cannot merge segment summaries made with different segment plans');
  }
  const both = <T>(x: T[] | null, y: T[] | null, merge: (p: T, q: T) => T): T[] | null => {
    if (x === null || y === null) {
      if (x !== y) throw new RangeError('Cannot merge segment summaries made for different checks');
      return null;
    }
    return x.map((v, i) => merge(v, y[i]));
  };
  if (a.lines.length !== b.lines.length || a.lines.some((l, i) => l.fundamentalHz !== b.lines[i].fundamentalHz)) {
    throw new RangeError('Cannot merge segment summaries made for different mains frequencies');
  }
  return {
    plan: { ...a.plan },
    used: a.used + b.used,
    autocorrelation: both(a.autocorrelation, b.autocorrelation, mergeAutocorrelation),
    lines: a.lines.map((l, i) => ({ ...l, channels: l.channels.map((s, c) => mergeLineSums(s, b.lines[i].channels[c])) })),
    cross: a.cross && b.cross ? mergeCrossSums(a.cross, b.cross) : a.cross ?? b.cross,
    levels: both(a.levels, b.levels, mergeDistinctLevels),
  };
}
