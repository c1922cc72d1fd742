import type { Finding } from '../checks/types.js';
import type { ChannelStats } from '../stats/channel-stats.js';

/** Verdict words (design.md): `error` means unreadable, `skip` means nothing was judged. */
export type Verdict = 'pass' | 'warn' | 'fail' | 'error' | 'skip';

export interface ChannelVerdict {
  index: number;
  name: string;
  unit: string | null;
  sensor: string | null;
  group: string | null;
  verdict: Verdict;
  stats: ChannelStats;
  findings: Finding[];
  /** What the sampled segments showed, when a check asked for segment analyses. */
  content?: ChannelContent;
}

/** The record's view of a channel's segment analyses (see ChannelSegments in checks/types.ts). */
export interface ChannelContent {
  /** Samples per segment and the segments used. */
  segmentSamples: number;
  segmentsUsed: number;
  /** Autocorrelation sums that set the scatter of skewness and kurtosis (Lomnicki 1961). */
  correlation: {
    sumRho3: number;
    sumRho4: number;
    /** Decay length of the autocorrelation, samples. */
    correlationSamples: number;
    /** False when the correlation outlasts the lags estimated: bands are not set from it. */
    settled: boolean;
    /** Samples per frame / Σρ⁴: independent samples a frame holds, as kurtosis sees them. */
    effectiveSamplesPerFrame: number | null;
  } | null;
  /** Mains lines measured, by fundamental. */
  mains: Array<{ fundamentalHz: number; broadbandRms: number; lines: Array<{ hz: number; rms: number; prominenceDb: number }> }>;
  /** Distinct sample values in the segments (`exact` false: at least `count`). */
  levels: { count: number; exact: boolean; smallestStep: number | null } | null;
  /** Channels whose samples correlate with this one's by |r| ≥ 0.9. */
  correlatedWith: Array<{ name: string; r: number; identical: boolean }> | null;
}

export interface RecordingVerdict {
  /** The path as given. */
  path: string;
  /** SHA-256 of the file's bytes as read (hex), null when it could not be read at all. */
  sha256: string | null;
  verdict: Verdict;
  /** Why the recording could not be read, null when it was. */
  error: string | null;
  format: string | null;
  sampleRate: number | null;
  durationS: number | null;
  samples: number | null;
  /** Findings about the recording as a whole (duration, sample rate, channel list). */
  findings: Finding[];
  channels: ChannelVerdict[];
  notes: string[];
}

export interface GateResult {
  tool: { name: string; version: string };
  createdAt: string;
  rules: {
    name: string;
    path: string;
    sha256: string;
    /** Every file of the extends chain, the given one first. */
    files: Array<{ path: string; sha256: string }>;
  };
  verdict: Verdict;
  recordings: RecordingVerdict[];
}
