/**
 * The evidence a learned rule file rests on: per recording known to be good, the SHA-256
 * of its bytes and, per channel, the statistics the learnable checks judge, computed
 * exactly as the checks compute them. It is kept beside the rule file
 * (`<rule file>.evidence.json`, docs/learning.md) so that learning again with more
 * recordings needs only the new ones, and a recording already in it (same bytes) is not
 * counted twice. Pure: no fs.
 */
import type { ChannelSummary } from '../stats/channel-accumulator.js';
import { frameSeries, type ChannelStats } from '../stats/channel-stats.js';
import type { ChannelInfo } from '../readers/types.js';
import type { CorrelationShape } from '../stats/autocorrelation.js';

/** Version of the evidence file's layout. */
export const EVIDENCE_FORMAT = 1;

/** What `kind` says in an evidence file, so that another JSON file is not taken for one. */
export const EVIDENCE_KIND = 'vibgate learn evidence';

/** The evidence file that belongs to a rule file. */
export const evidencePathFor = (rulesPath: string): string => `${rulesPath}.evidence.json`;

/**
 * The statistics learned per channel, as the checks judge them (null where the check
 * could not judge the channel: no variation, too few frames):
 * - meanToStd: mean / std (population), signed; mean-offset judges its magnitude
 *   (`max-ratio-to-std`);
 * - symmetryRatio: larger of max and −min over the smaller, symmetry `max-ratio`;
 * - skewness (population g1), kurtosis (population, non-excess), crestFactor (peak / RMS):
 *   the whole record, and the lowest and highest frame (`whole`, `frames`, `frames-max`);
 * - frameRmsMaxRatio / frameRmsMinRatio: the highest and lowest frame RMS over the median
 *   frame RMS, frame-rms-spread `max-ratio` / `min-ratio`;
 * - rms: RMS in the channel's unit, rms-level `min` / `max`;
 * - kurtosisScatter / skewnessScatter: the standard deviation that a stationary Gaussian
 *   process with this channel's autocorrelation gives the whole-record kurtosis and
 *   skewness, √(24·Σρ⁴/N) and √(6·Σρ³/N) (Lomnicki 1961, from memory; domain.md): the
 *   floor of the spread a limit on them is learned with (null: the autocorrelation did
 *   not settle within the lags estimated, or was not measured).
 */
export interface LearnedStatistics {
  meanToStd: number | null;
  symmetryRatio: number | null;
  skewness: number | null;
  frameSkewnessMin: number | null;
  frameSkewnessMax: number | null;
  kurtosis: number | null;
  frameKurtosisMin: number | null;
  frameKurtosisMax: number | null;
  crestFactor: number | null;
  frameCrestFactorMax: number | null;
  frameRmsMaxRatio: number | null;
  frameRmsMinRatio: number | null;
  rms: number | null;
  kurtosisScatter: number | null;
  skewnessScatter: number | null;
}

export type StatisticName = keyof LearnedStatistics;

/** The statistics in the order they are written to the evidence file. */
export const STATISTIC_NAMES: readonly StatisticName[] = [
  'meanToStd', 'symmetryRatio', 'skewness', 'frameSkewnessMin', 'frameSkewnessMax', 'kurtosis', 'frameKurtosisMin',
  'frameKurtosisMax', 'crestFactor', 'frameCrestFactorMax', 'frameRmsMaxRatio', 'frameRmsMinRatio', 'rms',
  'kurtosisScatter', 'skewnessScatter',
];

export interface ChannelEvidence {
  name: string;
  unit: string | null;
  sensor: string | null;
  group: string | null;
  stats: LearnedStatistics;
}

export interface RecordingEvidence {
  /** Relative to the rule file's directory, with `/` separators (as the user's files travel together). */
  path: string;
  sha256: string;
  sampleRate: number;
  durationS: number;
  channels: ChannelEvidence[];
}

/** How the rule file was learned; `--update` learns again with these unless told otherwise. */
export interface LearnSettings {
  /** The base as the rule file's `extends` names it: `bundled:NAME` or a path relative to the rule file. */
  extends: string;
  by: 'channel' | 'sensor' | 'all';
  margin: number;
  name: string;
  /** Ids of the checks learned. */
  checks: string[];
  /** The base's frame analysis the statistics were computed with. */
  frameSeconds: number;
  overlap: number;
}

export interface Evidence {
  format: typeof EVIDENCE_FORMAT;
  kind: typeof EVIDENCE_KIND;
  settings: LearnSettings;
  /** Sorted by path, then SHA-256; one entry per distinct SHA-256. */
  recordings: RecordingEvidence[];
}

/** An evidence file that cannot be used: `Cannot read "FILE": detail`. */
export class EvidenceError extends Error {
  override readonly name = 'EvidenceError';
  readonly file: string;

  constructor(file: string, detail: string) {
    super(`Cannot read "${file}": ${detail}`);
    this.file = file;
  }
}

const finiteOrNull = (v: number): number | null => (Number.isFinite(v) ? v : null);

/**
 * The learned statistics of one channel from its statistics and summary. Each is the
 * value its check would judge, with the check's own conditions for "cannot judge"
 * (src/checks/*.ts): so a limit learned from it is a limit on exactly that value.
 */
export function learnedStatistics(
  stats: ChannelStats,
  summary: ChannelSummary,
  sampleRate: number,
  correlation: CorrelationShape | null = null,
): LearnedStatistics {
  const n = stats.finiteSamples;
  const settled = correlation !== null && correlation.settled && n > 0;
  const f = stats.frames;
  const frame = (v: number | undefined) => (v === undefined ? null : finiteOrNull(v));
  // frame-rms-spread: frame RMS over the median frame RMS, from 3 frames on
  const { value: frameRms } = frameSeries(summary.frames, 'rms', sampleRate);
  let frameRmsMaxRatio: number | null = null;
  let frameRmsMinRatio: number | null = null;
  if (frameRms.length >= 3) {
    const sorted = Array.from(frameRms).sort((a, b) => a - b);
    const mid = sorted.length >> 1;
    const medianRms = sorted.length % 2 ? sorted[mid] : (sorted[mid - 1] + sorted[mid]) / 2;
    if (medianRms > 0) {
      frameRmsMaxRatio = finiteOrNull(sorted[sorted.length - 1] / medianRms);
      frameRmsMinRatio = finiteOrNull(sorted[0] / medianRms);
    }
  }
  return {
    meanToStd: Number.isFinite(stats.mean) && stats.std > 0 ? finiteOrNull(stats.mean / stats.std) : null,
    symmetryRatio: finiteOrNull(stats.symmetryRatio),
    skewness: finiteOrNull(stats.skewness),
    frameSkewnessMin: frame(f?.skewness.min),
    frameSkewnessMax: frame(f?.skewness.max),
    kurtosis: finiteOrNull(stats.kurtosis),
    frameKurtosisMin: frame(f?.kurtosis.min),
    frameKurtosisMax: frame(f?.kurtosis.max),
    crestFactor: finiteOrNull(stats.crestFactor),
    frameCrestFactorMax: frame(f?.crestFactor.max),
    frameRmsMaxRatio,
    frameRmsMinRatio,
    rms: stats.rms > 0 ? finiteOrNull(stats.rms) : null,
    kurtosisScatter: settled ? finiteOrNull(Math.sqrt((24 * correlation.sumRho4) / n)) : null,
    skewnessScatter: settled ? finiteOrNull(Math.sqrt((6 * Math.max(1, correlation.sumRho3)) / n)) : null,
  };
}

/** A channel's evidence: what a `channels:` selector can match on, and its statistics. */
export function channelEvidence(channel: ChannelInfo, stats: LearnedStatistics): ChannelEvidence {
  // an empty unit or sensor says nothing: stored as unknown
  return { name: channel.name, unit: channel.unit || null, sensor: channel.sensor || null, group: channel.group || null, stats };
}

/** Sort order of recordings in the evidence: by path, then by SHA-256 (byte order, not locale). */
function byPathThenHash(a: RecordingEvidence, b: RecordingEvidence): number {
  if (a.path !== b.path) return a.path < b.path ? -1 : 1;
  return a.sha256 < b.sha256 ? -1 : a.sha256 > b.sha256 ? 1 : 0;
}

/**
 * `existing` plus `added`, one entry per SHA-256, sorted by path then SHA-256. A recording
 * whose bytes are already there keeps the entry already there (its path too); among new
 * recordings with the same bytes, the first in sort order is kept. So the same set of
 * recordings, given in any order or over several updates, gives the same evidence.
 */
export function addRecordings(
  existing: readonly RecordingEvidence[],
  added: readonly RecordingEvidence[],
): { recordings: RecordingEvidence[]; duplicates: Array<{ path: string; sameAs: string }> } {
  const byHash = new Map<string, RecordingEvidence>();
  for (const r of existing) byHash.set(r.sha256, r);
  const duplicates: Array<{ path: string; sameAs: string }> = [];
  for (const r of [...added].sort(byPathThenHash)) {
    const there = byHash.get(r.sha256);
    if (there) duplicates.push({ path: r.path, sameAs: there.path });
    else byHash.set(r.sha256, r);
  }
  return { recordings: [...byHash.values()].sort(byPathThenHash), duplicates };
}

/**
 * The evidence file's text: JSON with a fixed key order, numbers as JavaScript prints them
 * (the shortest text that reads back as the same double), so the same evidence gives the
 * same bytes and reading it back gives the same numbers.
 */
export function evidenceText(e: Evidence): string {
  const ordered = {
    format: e.format,
    kind: e.kind,
    settings: {
      extends: e.settings.extends,
      by: e.settings.by,
      margin: e.settings.margin,
      name: e.settings.name,
      checks: [...e.settings.checks],
      frameSeconds: e.settings.frameSeconds,
      overlap: e.settings.overlap,
    },
    recordings: e.recordings.map((r) => ({
      path: r.path,
      sha256: r.sha256,
      sampleRate: r.sampleRate,
      durationS: r.durationS,
      channels: r.channels.map((c) => ({
        name: c.name,
        unit: c.unit,
        sensor: c.sensor,
        group: c.group,
        stats: Object.fromEntries(STATISTIC_NAMES.map((k) => [k, c.stats[k]])),
      })),
    })),
  };
  return JSON.stringify(ordered, null, 2) + '\n';
}

/**
 * Reads an evidence file's text. Throws an EvidenceError naming `file` and the first thing
 * wrong (`recordings[3].channels[0].stats.kurtosis: must be a number or null`).
 */
export function parseEvidence(text: string, file: string): Evidence {
  let data: unknown;
  try {
    data = JSON.parse(text);
  } catch (err) {
    throw new EvidenceError(file, `is not JSON (${err instanceof Error ? err.message : String(err)})`);
  }
  const fail = (path: string, what: string): never => {
    throw new EvidenceError(file, `${path}: ${what}`);
  };
  const object = (v: unknown, path: string): Record<string, unknown> =>
    typeof v === 'object' && v !== null && !Array.isArray(v) ? (v as Record<string, unknown>) : fail(path, 'must be an object');
  const string = (v: unknown, path: string): string => (typeof v === 'string' && v !== '' ? v : fail(path, 'must be a non-empty string'));
  const stringOrNull = (v: unknown, path: string): string | null => (v === null ? null : string(v, path));
  const number = (v: unknown, path: string): number => (typeof v === 'number' && Number.isFinite(v) ? v : fail(path, 'must be a number'));
  const positive = (v: unknown, path: string): number => (number(v, path) > 0 ? (v as number) : fail(path, 'must be positive'));
  const array = (v: unknown, path: string): unknown[] => (Array.isArray(v) ? v : fail(path, 'must be a list'));

  const top = object(data, '(top level)');
  if (top.kind !== EVIDENCE_KIND) fail('kind', `must be ${JSON.stringify(EVIDENCE_KIND)}: is this the evidence file of a learned rule file?`);
  if (top.format !== EVIDENCE_FORMAT) fail('format', `is ${JSON.stringify(top.format)}; this vibgate reads evidence format ${EVIDENCE_FORMAT}`);
  const s = object(top.settings, 'settings');
  const by = s.by;
  if (by !== 'channel' && by !== 'sensor' && by !== 'all') fail('settings.by', 'must be channel, sensor or all');
  const overlap = number(s.overlap, 'settings.overlap');
  if (!(overlap >= 0 && overlap < 1)) fail('settings.overlap', 'must be at least 0 and less than 1');
  const settings: LearnSettings = {
    extends: string(s.extends, 'settings.extends'),
    by: by as LearnSettings['by'],
    margin: positive(s.margin, 'settings.margin'),
    name: string(s.name, 'settings.name'),
    checks: array(s.checks, 'settings.checks').map((c, i) => string(c, `settings.checks[${i}]`)),
    frameSeconds: positive(s.frameSeconds, 'settings.frameSeconds'),
    overlap,
  };
  const seen = new Set<string>();
  const recordings = array(top.recordings, 'recordings').map((item, i): RecordingEvidence => {
    const at = `recordings[${i}]`;
    const r = object(item, at);
    const sha256 = string(r.sha256, `${at}.sha256`);
    if (!/^[0-9a-f]{64}$/.test(sha256)) fail(`${at}.sha256`, 'must be 64 lower-case hex digits');
    if (seen.has(sha256)) fail(`${at}.sha256`, 'is listed twice');
    seen.add(sha256);
    return {
      path: string(r.path, `${at}.path`),
      sha256,
      sampleRate: positive(r.sampleRate, `${at}.sampleRate`),
      durationS: number(r.durationS, `${at}.durationS`),
      channels: array(r.channels, `${at}.channels`).map((cItem, j): ChannelEvidence => {
        const cat = `${at}.channels[${j}]`;
        const c = object(cItem, cat);
        const st = object(c.stats, `${cat}.stats`);
        const stats = {} as LearnedStatistics;
        for (const k of STATISTIC_NAMES) {
          const v = st[k];
          stats[k] = v === null ? null : typeof v === 'number' && Number.isFinite(v) ? v : fail(`${cat}.stats.${k}`, 'must be a number or null');
        }
        return {
          name: string(c.name, `${cat}.name`),
          unit: stringOrNull(c.unit, `${cat}.unit`),
          sensor: stringOrNull(c.sensor, `${cat}.sensor`),
          group: stringOrNull(c.group, `${cat}.group`),
          stats,
        };
      }),
    };
  });
  return { format: EVIDENCE_FORMAT, kind: EVIDENCE_KIND, settings, recordings: [...recordings].sort(byPathThenHash) };
}
