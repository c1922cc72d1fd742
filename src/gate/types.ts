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
