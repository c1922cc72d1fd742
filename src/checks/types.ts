import type { ChannelInfo } from '../readers/types.js';
import type { ChannelStats } from '../stats/channel-stats.js';
import type { ChannelSummary } from '../stats/channel-accumulator.js';
import type { SegmentNeeds } from '../stats/segment-analyses.js';
import type { CorrelationShape } from '../stats/autocorrelation.js';
import type { LineLevel } from '../stats/mains-lines.js';
import type { DistinctLevels } from '../stats/distinct-levels.js';

/** How a failed limit counts: an error fails the gate, a warning is reported only. */
export type Severity = 'error' | 'warning';

/** Outcome of one check on one channel. */
export type FindingStatus = 'pass' | 'warn' | 'fail' | 'skip';

/** A stretch of the record, in seconds from its start. */
export interface TimeSpan {
  startS: number;
  endS: number;
}

/** What a check reports for one channel (design.md: the JSON record's `findings`). */
export interface Finding {
  /** Check id, e.g. `kurtosis`. */
  check: string;
  status: FindingStatus;
  severity: Severity;
  /** The measured value the verdict rests on (null when it could not be measured). */
  value: number | null;
  /** Unit of `value`: a channel unit, `s`, or '' for a ratio. */
  unit: string;
  /** The limit as a person reads it, e.g. `≤ 0.1`, `2.5 … 3.6`. */
  limit: string;
  /** Plain words: what was seen, where, against which limit, and what usually causes it. */
  message: string;
  /** Where in the record it happened, when that is known. */
  at: TimeSpan | null;
}

/** What a check sees of one channel. */
export interface ChannelContext {
  recording: { path: string; sampleRate: number; durationS: number };
  channel: ChannelInfo;
  stats: ChannelStats;
  summary: ChannelSummary;
  /**
   * The channels this one is compared with: those of the same recording in the same group
   * (the sidecar's `group`, else those with the same unit), this channel included.
   */
  peers: ReadonlyArray<{ channel: ChannelInfo; stats: ChannelStats }>;
  /** Every channel of the recording, this one included, in file order (for groups a check forms itself). */
  channels?: ReadonlyArray<{ channel: ChannelInfo; stats: ChannelStats }>;
  /** What the sampled segments showed of this channel, when a check asked for them. */
  segments?: ChannelSegments;
}

/** A channel's share of the segment analyses (segment-analyses.ts), derived for the checks. */
export interface ChannelSegments {
  /** M, samples per segment, and the segments used. */
  segmentSamples: number;
  used: number;
  /** Autocorrelation and its sums (Gaussian bands), when asked for. */
  correlation: CorrelationShape | null;
  /** Mains lines by fundamental, when asked for. */
  lines: Array<{ fundamentalHz: number; levels: LineLevel[]; broadbandRms: number }>;
  /** Distinct sample values in the segments, when asked for. */
  levels: DistinctLevels | null;
  /** Other channels whose samples correlate with this one's by |r| ≥ 0.9, when asked for. */
  correlated: Array<{ channel: ChannelInfo; r: number; identical: boolean }> | null;
}

/** A check's verdict before severity is applied: `ok` null means it could not be judged. */
export interface CheckOutcome {
  ok: boolean | null;
  value: number | null;
  unit?: string;
  limit: string;
  message: string;
  at?: TimeSpan | null;
}

/** A JSON Schema fragment (draft 2020-12). */
export type JsonSchema = Record<string, unknown>;

/**
 * A check: one file in src/checks, registered in registry.ts. Its options schema feeds the
 * rule-file schema (schemas/rules.schema.json is generated from the registry). Options are
 * kebab-case as in the rule file; `severity` is added to every check by the registry.
 */
export interface Check<O extends object = Record<string, unknown>> {
  id: string;
  /** One line for docs and `vibgate rules validate`. */
  description: string;
  /** JSON Schema of each option (kebab-case keys), with a description. */
  options: Record<string, JsonSchema>;
  /** Option values used when the rule file switches the check on without setting them. */
  defaults: O;
  /** Severity when the rule file does not say. */
  defaultSeverity: Severity;
  /**
   * What the check needs computed on sampled segments during the streaming pass (the
   * autocorrelation, mains lines, correlation between channels, distinct levels), for these
   * options; absent: nothing beyond the whole-record and frame sums.
   */
  needs?(options: O): SegmentNeeds;
  evaluate(context: ChannelContext, options: O): CheckOutcome;
}
