import type { Severity } from '../checks/types.js';

/** Which channels a `channels:` entry applies to; every given field must match. */
export interface ChannelSelector {
  /** Glob(s) on the channel name: `*` any run of characters, `?` one character. */
  name?: string | string[];
  sensor?: string | string[];
  unit?: string | string[];
  group?: string | string[];
}

/** A check as switched on by the rule file: its severity and its options (kebab-case keys). */
export interface CheckSetting {
  severity: Severity;
  options: Record<string, unknown>;
}

/** Per-check overrides of a channel selector: `false` switches a check off for those channels. */
export type CheckOverrides = Record<string, false | Partial<{ severity: Severity }> & Record<string, unknown>>;

export interface ChannelRule {
  match: ChannelSelector;
  checks: CheckOverrides;
  /** Where the rule was written, for messages: `rules/lab.yaml:14:5`. */
  source: string;
}

/** Expectations on a recording as a whole. */
export interface RecordingExpectations {
  minDurationS?: number;
  /** Accepted sample rate range in Hz, inclusive. */
  sampleRate?: [number, number];
  channelCount?: number;
  channelNames?: string[];
  severity: Severity;
}

/** A rule file after `extends` has been resolved and everything validated. */
export interface ResolvedRules {
  name: string;
  description?: string;
  /** The kind of test it is for, in words (for example "random vibration"). */
  testKind?: string;
  owner?: string;
  /** The file given first, then the files it extends, depth first, with their hashes. */
  files: Array<{ path: string; sha256: string }>;
  analysis: { frameSeconds: number; overlap: number };
  /** Checks switched on, by id, in registry order. */
  checks: Record<string, CheckSetting>;
  /** Channel rules, base files' first, each file's in its own order. */
  channels: ChannelRule[];
  expect: RecordingExpectations;
}
