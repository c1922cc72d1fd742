/**
 * The partial-summary file: what one CI job writes when it summarises a share of a
 * screening campaign (some recordings, or one section of each), so that a later job can
 * merge the shares exactly and judge the whole. Pure: text in, data out; the CLI reads and
 * writes the files (src/cli/merge.ts).
 *
 * Format 1, one JSON document on one line (a machine file: frame tables are long), with a
 * trailing newline:
 *
 * ```
 * { "kind": "vibgate partial summary", "format": 1,
 *   "tool": { "name", "version" }, "createdAt",
 *   "rules": { "path", "sha256", "files": [{ "path", "sha256" }] },
 *   "analysis": { "frameSeconds", "overlap" },
 *   "job": { "shard": { "index", "count" } | null, "section": { "index", "count" } | null },
 *   "selection": { "recordings", "sha256" },
 *   "parts": [{ "order", "recording": { "path", "sha256", "bytes", "format", "sampleRate",
 *               "sampleCount", "channels": [ChannelInfo], "notes": [] },
 *               "section": { "index", "count", "startFrame", "endFrame" },
 *               "error": null | "why it could not be read",
 *               "summary": null | { "sampleRate", "geometry", "start", "samples",
 *                                   "channels": [ChannelSummary] } }] }
 * ```
 *
 * `selection` describes the whole list of recordings the campaign was given (before
 * `--shard` took its share): how many distinct paths and the SHA-256 of their sorted list,
 * one per line. Every job of one campaign writes the same selection, which is how the merge
 * knows the files belong together.
 *
 * JSON has no NaN, ±Infinity or −0, and the summaries hold them by design (the minimum of
 * an empty part is +Infinity, the first value of a part that starts on a NaN is NaN). Inside
 * `summary` (which holds only numbers, arrays, objects and the null clip levels) such a
 * number is written as the string "NaN", "Infinity", "-Infinity" or "-0", and read back to
 * the same double; every finite number is written by JSON.stringify's shortest round-trip
 * form, so reading a file gives back bit-identical summaries.
 */
import type { ChannelInfo } from '../readers/types.js';
import type { ChannelSummary } from './channel-accumulator.js';
import { mergeRecordingSummaries, type RecordingSummary } from './summarise.js';
import type { SegmentSummary } from './segment-analyses.js';

export const PARTIAL_KIND = 'vibgate partial summary';
export const PARTIAL_FORMAT = 1;

/** i of n, 1-based, as users write it (`2/4`). */
export interface Share {
  index: number;
  count: number;
}

export interface PartialRecording {
  /** The path as the job was given it: the recording's identity in the merge. */
  path: string;
  /** SHA-256 of the whole file (hex), null when it could not be read. */
  sha256: string | null;
  /** File size in bytes, null when unknown. */
  bytes: number | null;
  format: string | null;
  sampleRate: number | null;
  /** Sample frames in the file as the header says; null when the format learns it only at the end. */
  sampleCount: number | null;
  channels: ChannelInfo[];
  notes: string[];
}

/** Section `index` of `count` of a recording: sample frames [startFrame, endFrame). */
export interface PartialSection extends Share {
  startFrame: number;
  endFrame: number;
}

export interface PartialPart {
  /** Position of the recording in the list the job was given (the report keeps that order). */
  order: number;
  recording: PartialRecording;
  /** Null for a recording that could not be read: no frames are known. */
  section: PartialSection | null;
  /** Why the recording could not be read; null when it was. */
  error: string | null;
  summary: RecordingSummary | null;
}

export interface PartialFile {
  kind: typeof PARTIAL_KIND;
  format: typeof PARTIAL_FORMAT;
  tool: { name: string; version: string };
  createdAt: string;
  rules: { path: string; sha256: string; files: Array<{ path: string; sha256: string }> };
  analysis: { frameSeconds: number; overlap: number };
  job: { shard: Share | null; section: Share | null };
  selection: { recordings: number; sha256: string };
  parts: PartialPart[];
}

/** A partial-summary file that cannot be used: the message names the file. */
export class PartialFileError extends Error {
  override readonly name = 'PartialFileError';
  readonly file: string;
  constructor(file: string, message: string) {
    super(message);
    this.file = file;
  }
}

// ---------------------------------------------------------------------------------------
// Numbers JSON cannot hold.

const SPECIAL: Record<string, number> = { NaN: NaN, Infinity: Infinity, '-Infinity': -Infinity, '-0': -0 };

function encodeNumber(x: number): number | string {
  if (Number.isNaN(x)) return 'NaN';
  if (x === Infinity) return 'Infinity';
  if (x === -Infinity) return '-Infinity';
  if (x === 0 && Object.is(x, -0)) return '-0';
  return x;
}

/** Copy of a summary's plain data with every number JSON-safe (see the file comment). */
function encodeTree(value: unknown): unknown {
  if (typeof value === 'number') return encodeNumber(value);
  if (Array.isArray(value)) return value.map(encodeTree);
  if (value !== null && typeof value === 'object') {
    const out: Record<string, unknown> = {};
    for (const [k, v] of Object.entries(value)) out[k] = encodeTree(v);
    return out;
  }
  return value;
}

/**
 * The shape of the summary data, for reading: `n` a number, `n?` a number or null, `[n]`
 * an array of numbers. A file missing a field, or holding anything else where a number
 * belongs, is refused rather than half read.
 */
type Shape = 'n' | 'n?' | '[n]' | 'b' | readonly ['array', Shape] | readonly ['nullable', Shape] | { [key: string]: Shape };

const RUN: Shape = { length: 'n', start: 'n', value: 'n' };
const EXTREME: Shape = { value: 'n', count: 'n', sumRunSquares: 'n', repeated: 'n', firstIndex: 'n' };
const CHANNEL_SUMMARY: Shape = {
  start: 'n',
  count: 'n',
  moments: { n: 'n', mean: 'n', m2: 'n', m3: 'n', m4: 'n' },
  nonFinite: 'n',
  firstNonFinite: 'n',
  runs: {
    count: 'n', start: 'n', firstValue: 'n', lastValue: 'n', leading: 'n', trailing: 'n',
    longest: RUN, longestZero: RUN, low: EXTREME, high: EXTREME,
  },
  clip: { low: 'n?', high: 'n?', countLow: 'n', countHigh: 'n' },
  frames: {
    frameSamples: 'n', hopSamples: 'n', firstFrame: 'n',
    n: '[n]', mean: '[n]', m2: '[n]', m3: '[n]', m4: '[n]', min: '[n]', max: '[n]',
  },
};
const DISTINCT_LEVELS: Shape = { cap: 'n', values: '[n]', saturated: 'b', segmentStep: 'n', samples: 'n', nonFinite: 'n' };
const LAG_SUMS: Shape = { segmentSamples: 'n', segments: 'n', lagSums: '[n]' };
const HARMONIC_SUMS: Shape = { harmonic: 'n', gridHz: '[n]', power: '[n]', floorHz: '[n]', floorPower: '[n]' };
const LINE_SUMS: Shape = {
  sampleRate: 'n', segmentSamples: 'n', fundamentalHz: 'n', harmonics: 'n', driftHz: 'n',
  segments: 'n', skippedSegments: 'n', sumSquares: 'n', lines: ['array', HARMONIC_SUMS],
};
const CROSS_SUMS: Shape = {
  channels: 'n', segments: 'n', skippedSegments: 'n', n: 'n',
  mean: '[n]', m2: '[n]', min: '[n]', max: '[n]', comoment: '[n]', identical: '[n]',
};
/** RecordingSummary.segments (segment-analyses.ts), present when checks asked for it. */
const SEGMENT_SUMMARY: Shape = {
  plan: { segmentSamples: 'n', strideSamples: 'n' },
  used: 'n',
  autocorrelation: ['nullable', ['array', LAG_SUMS]],
  lines: ['array', { fundamentalHz: 'n', harmonics: 'n', channels: ['array', LINE_SUMS] }],
  cross: ['nullable', CROSS_SUMS],
  levels: ['nullable', ['array', DISTINCT_LEVELS]],
};
const SUMMARY_HEAD: Shape = { sampleRate: 'n', geometry: { frameSamples: 'n', hopSamples: 'n' }, start: 'n', samples: 'n' };

class ShapeError extends Error {}

function decodeNumber(v: unknown, where: string): number {
  if (typeof v === 'number') return v;
  if (typeof v === 'string' && v in SPECIAL) return SPECIAL[v];
  throw new ShapeError(`${where} must be a number, not ${short(v)}`);
}

function decodeShape(v: unknown, shape: Shape, where: string): unknown {
  if (shape === 'n') return decodeNumber(v, where);
  if (shape === 'n?') return v === null ? null : decodeNumber(v, where);
  if (shape === 'b') {
    if (typeof v !== 'boolean') throw new ShapeError(`${where} must be true or false, not ${short(v)}`);
    return v;
  }
  if (Array.isArray(shape)) {
    const [kind, inner] = shape as readonly ['array' | 'nullable', Shape];
    if (kind === 'nullable') return v === null ? null : decodeShape(v, inner, where);
    if (!Array.isArray(v)) throw new ShapeError(`${where} must be an array, not ${short(v)}`);
    return v.map((item, i) => decodeShape(item, inner, `${where}[${i}]`));
  }
  if (shape === '[n]') {
    if (!Array.isArray(v)) throw new ShapeError(`${where} must be an array of numbers, not ${short(v)}`);
    const out = new Array<number>(v.length);
    for (let i = 0; i < v.length; i++) out[i] = decodeNumber(v[i], `${where}[${i}]`);
    return out;
  }
  if (v === null || typeof v !== 'object' || Array.isArray(v)) throw new ShapeError(`${where} must be an object, not ${short(v)}`);
  const o = v as Record<string, unknown>;
  const out: Record<string, unknown> = {};
  for (const [key, sub] of Object.entries(shape as { [key: string]: Shape })) {
    if (!(key in o)) throw new ShapeError(`${where}.${key} is missing`);
    out[key] = decodeShape(o[key], sub, `${where}.${key}`);
  }
  return out;
}

function short(v: unknown): string {
  const s = JSON.stringify(v);
  return s === undefined ? String(v) : s.length > 70 ? `${s.slice(0, 67)}...` : s;
}

// ---------------------------------------------------------------------------------------
// Writing and reading.

/** The file's text. Finite numbers round-trip exactly; non-finite ones are encoded. */
export function formatPartialFile(partial: PartialFile): string {
  const data = {
    kind: PARTIAL_KIND,
    format: PARTIAL_FORMAT,
    tool: partial.tool,
    createdAt: partial.createdAt,
    rules: partial.rules,
    analysis: partial.analysis,
    job: partial.job,
    selection: partial.selection,
    parts: partial.parts.map((p) => ({
      order: p.order,
      recording: encodeTree(p.recording),
      section: p.section,
      error: p.error,
      summary: p.summary === null ? null : encodeTree(p.summary),
    })),
  };
  return JSON.stringify(data) + '\n';
}

/**
 * Reads a partial-summary file's text; `file` names it in every error. Throws
 * PartialFileError when it is not JSON, not a partial-summary file, of another format
 * version, or when any field is missing or of the wrong kind.
 */
export function parsePartialFile(text: string, file: string): PartialFile {
  let data: unknown;
  try {
    data = JSON.parse(text);
  } catch (err) {
    throw new PartialFileError(file, `Cannot read "${file}": not JSON (${(err as Error).message})`);
  }
  const o = data as Record<string, unknown>;
  if (data === null || typeof data !== 'object' || Array.isArray(data) || o.kind !== PARTIAL_KIND) {
    throw new PartialFileError(file, `Cannot read "${file}": not a vibgate partial-summary file (it has no "kind": "${PARTIAL_KIND}")`);
  }
  if (o.format !== PARTIAL_FORMAT) {
    throw new PartialFileError(
      file,
      `Cannot read "${file}": it is a partial-summary file of format ${short(o.format)}, but this vibgate reads format ${PARTIAL_FORMAT}; merge with the vibgate version that wrote it`,
    );
  }
  try {
    const parts = arrayOf(o.parts, 'parts').map((p, i) => decodePart(p, `parts[${i}]`));
    const job = objectOf(o.job, 'job');
    const rules = objectOf(o.rules, 'rules');
    const analysis = objectOf(o.analysis, 'analysis');
    const selection = objectOf(o.selection, 'selection');
    const tool = objectOf(o.tool, 'tool');
    return {
      kind: PARTIAL_KIND,
      format: PARTIAL_FORMAT,
      tool: { name: stringOf(tool.name, 'tool.name'), version: stringOf(tool.version, 'tool.version') },
      createdAt: stringOf(o.createdAt, 'createdAt'),
      rules: {
        path: stringOf(rules.path, 'rules.path'),
        sha256: stringOf(rules.sha256, 'rules.sha256'),
        files: arrayOf(rules.files, 'rules.files').map((f, i) => {
          const e = objectOf(f, `rules.files[${i}]`);
          return { path: stringOf(e.path, `rules.files[${i}].path`), sha256: stringOf(e.sha256, `rules.files[${i}].sha256`) };
        }),
      },
      analysis: { frameSeconds: decodeNumber(analysis.frameSeconds, 'analysis.frameSeconds'), overlap: decodeNumber(analysis.overlap, 'analysis.overlap') },
      job: { shard: shareOf(job.shard, 'job.shard'), section: shareOf(job.section, 'job.section') },
      selection: { recordings: decodeNumber(selection.recordings, 'selection.recordings'), sha256: stringOf(selection.sha256, 'selection.sha256') },
      parts,
    };
  } catch (err) {
    if (err instanceof ShapeError) throw new PartialFileError(file, `Cannot read "${file}": ${err.message}`);
    throw err;
  }
}

function decodePart(v: unknown, where: string): PartialPart {
  const p = objectOf(v, where);
  const r = objectOf(p.recording, `${where}.recording`);
  const nullableNumber = (x: unknown, w: string) => (x === null ? null : decodeNumber(x, w));
  const nullableString = (x: unknown, w: string) => (x === null ? null : stringOf(x, w));
  const recording: PartialRecording = {
    path: stringOf(r.path, `${where}.recording.path`),
    sha256: nullableString(r.sha256, `${where}.recording.sha256`),
    bytes: nullableNumber(r.bytes, `${where}.recording.bytes`),
    format: nullableString(r.format, `${where}.recording.format`),
    sampleRate: nullableNumber(r.sampleRate, `${where}.recording.sampleRate`),
    sampleCount: nullableNumber(r.sampleCount, `${where}.recording.sampleCount`),
    channels: arrayOf(r.channels, `${where}.recording.channels`).map((c, i) => channelInfoOf(c, `${where}.recording.channels[${i}]`)),
    notes: arrayOf(r.notes, `${where}.recording.notes`).map((n, i) => stringOf(n, `${where}.recording.notes[${i}]`)),
  };
  let section: PartialSection | null = null;
  if (p.section !== null) {
    const s = objectOf(p.section, `${where}.section`);
    section = {
      index: decodeNumber(s.index, `${where}.section.index`),
      count: decodeNumber(s.count, `${where}.section.count`),
      startFrame: decodeNumber(s.startFrame, `${where}.section.startFrame`),
      endFrame: decodeNumber(s.endFrame, `${where}.section.endFrame`),
    };
  }
  let summary: RecordingSummary | null = null;
  if (p.summary !== null) {
    const head = decodeShape(p.summary, SUMMARY_HEAD, `${where}.summary`) as Omit<RecordingSummary, 'channels'>;
    const channels = arrayOf((p.summary as Record<string, unknown>).channels, `${where}.summary.channels`).map(
      (c, i) => decodeShape(c, CHANNEL_SUMMARY, `${where}.summary.channels[${i}]`) as ChannelSummary,
    );
    summary = { ...head, channels };
    const segments = (p.summary as Record<string, unknown>).segments;
    if (segments !== undefined) summary.segments = decodeShape(segments, SEGMENT_SUMMARY, `${where}.summary.segments`) as SegmentSummary;
  }
  const error = nullableString(p.error, `${where}.error`);
  if (error === null && (summary === null || section === null)) throw new ShapeError(`${where} has neither a summary and section nor an error`);
  return { order: decodeNumber(p.order, `${where}.order`), recording, section, error, summary };
}

function channelInfoOf(v: unknown, where: string): ChannelInfo {
  const c = objectOf(v, where);
  const info: ChannelInfo = { index: decodeNumber(c.index, `${where}.index`), name: stringOf(c.name, `${where}.name`) };
  for (const key of ['unit', 'sensor', 'sensitivityUnit', 'group'] as const) if (c[key] !== undefined) info[key] = stringOf(c[key], `${where}.${key}`);
  for (const key of ['sensitivity', 'clipLow', 'clipHigh'] as const) if (c[key] !== undefined) info[key] = decodeNumber(c[key], `${where}.${key}`);
  return info;
}

function objectOf(v: unknown, where: string): Record<string, unknown> {
  if (v === null || typeof v !== 'object' || Array.isArray(v)) throw new ShapeError(`${where} must be an object, not ${short(v)}`);
  return v as Record<string, unknown>;
}
function arrayOf(v: unknown, where: string): unknown[] {
  if (!Array.isArray(v)) throw new ShapeError(`${where} must be an array, not ${short(v)}`);
  return v;
}
function stringOf(v: unknown, where: string): string {
  if (typeof v !== 'string') throw new ShapeError(`${where} must be a string, not ${short(v)}`);
  return v;
}
function shareOf(v: unknown, where: string): Share | null {
  if (v === null) return null;
  const s = objectOf(v, where);
  return { index: decodeNumber(s.index, `${where}.index`), count: decodeNumber(s.count, `${where}.count`) };
}

// ---------------------------------------------------------------------------------------
// Putting the parts of a campaign together.

/** One recording of the campaign, its parts checked and merged. */
export interface AssembledRecording {
  order: number;
  recording: PartialRecording;
  /** Set when any part says the recording could not be read; `summary` is then null. */
  error: string | null;
  summary: RecordingSummary | null;
}

const share = (s: Share | null) => (s === null ? 'none' : `${s.index}/${s.count}`);
const frames = (s: PartialSection) => `[${s.startFrame}, ${s.endFrame})`;

/**
 * Checks that the given partial files are the complete output of one campaign (same tool
 * version, rule files, analysis settings and list of recordings; every shard and section
 * job present once) and that the parts of each recording tile it: frame 0 to its last frame,
 * no gap, no overlap. Then merges each recording's parts in frame order
 * (mergeRecordingSummaries, exact). Throws PartialFileError naming the files concerned.
 * Recordings come back in the order of the list the jobs were given.
 */
export function assemblePartials(files: Array<{ file: string; partial: PartialFile }>): AssembledRecording[] {
  if (files.length === 0) throw new PartialFileError('', 'No partial-summary files were given');
  const [first, ...rest] = files;
  const a = first.partial;
  for (const { file, partial: b } of rest) {
    const differ = (what: string, x: string, y: string) =>
      new PartialFileError(file, `"${first.file}" and "${file}" were written ${what}: ${x} and ${y}; they cannot be merged`);
    if (a.tool.version !== b.tool.version) throw differ('by different vibgate versions', a.tool.version, b.tool.version);
    if (a.rules.path !== b.rules.path || JSON.stringify(a.rules.files) !== JSON.stringify(b.rules.files)) {
      throw differ('with different rule files', `"${a.rules.path}" (SHA-256 ${a.rules.sha256})`, `"${b.rules.path}" (SHA-256 ${b.rules.sha256})`);
    }
    if (a.analysis.frameSeconds !== b.analysis.frameSeconds || a.analysis.overlap !== b.analysis.overlap) {
      const g = (p: PartialFile) => `frames of ${p.analysis.frameSeconds} s with overlap ${p.analysis.overlap}`;
      throw differ('with different frame settings', g(a), g(b));
    }
    if (a.selection.sha256 !== b.selection.sha256) {
      throw differ('for different lists of recordings', `${a.selection.recordings} recordings`, `${b.selection.recordings} recordings`);
    }
    const shardCount = (p: PartialFile) => p.job.shard?.count ?? 1;
    const sectionCount = (p: PartialFile) => p.job.section?.count ?? 1;
    if (shardCount(a) !== shardCount(b) || sectionCount(a) !== sectionCount(b)) {
      throw differ('by jobs that split the work differently', `shard ${share(a.job.shard)}, section ${share(a.job.section)}`, `shard ${share(b.job.shard)}, section ${share(b.job.section)}`);
    }
  }

  // Every job of the campaign, once: a missing shard's recordings would go unjudged.
  const shards = a.job.shard?.count ?? 1;
  const sections = a.job.section?.count ?? 1;
  const byJob = new Map<string, string>();
  for (const { file, partial } of files) {
    const key = `${partial.job.shard?.index ?? 1}/${partial.job.section?.index ?? 1}`;
    const other = byJob.get(key);
    if (other !== undefined) {
      throw new PartialFileError(file, `"${other}" and "${file}" were written by the same job (shard ${share(partial.job.shard)}, section ${share(partial.job.section)}); give each job's file once`);
    }
    byJob.set(key, file);
  }
  for (let i = 1; i <= shards; i++) {
    for (let j = 1; j <= sections; j++) {
      if (!byJob.has(`${i}/${j}`)) {
        const job = [shards > 1 ? `--shard ${i}/${shards}` : '', sections > 1 ? `--section ${j}/${sections}` : ''].filter(Boolean).join(' ');
        throw new PartialFileError(
          '',
          `The partial file of the job run with ${job} is missing: none of the ${files.length} files given was written by it, so its recordings would go unjudged`,
        );
      }
    }
  }

  const groups = new Map<string, Array<{ file: string; part: PartialPart }>>();
  for (const { file, partial } of files) {
    for (const part of partial.parts) {
      const list = groups.get(part.recording.path) ?? [];
      list.push({ file, part });
      groups.set(part.recording.path, list);
    }
  }
  if (groups.size !== a.selection.recordings) {
    throw new PartialFileError('', `The partial files hold ${groups.size} recordings, but the jobs were given ${a.selection.recordings}`);
  }
  const out = [...groups.entries()].map(([path, parts]) => assembleRecording(path, parts));
  return out.sort((x, y) => x.order - y.order || (x.recording.path < y.recording.path ? -1 : x.recording.path > y.recording.path ? 1 : 0));
}

function assembleRecording(path: string, parts: Array<{ file: string; part: PartialPart }>): AssembledRecording {
  const order = Math.min(...parts.map((p) => p.part.order));
  const failed = parts.find((p) => p.part.error !== null);
  if (failed) {
    const known = parts.find((p) => p.part.recording.sha256 !== null);
    return { order, recording: (known ?? failed).part.recording, error: failed.part.error, summary: null };
  }
  const [head, ...others] = parts;
  const r = head.part.recording;
  for (const { file, part } of others) {
    const s = part.recording;
    const facts: Array<[string, unknown, unknown]> = [
      ['SHA-256', r.sha256, s.sha256],
      ['size in bytes', r.bytes, s.bytes],
      ['format', r.format, s.format],
      ['sample rate', r.sampleRate, s.sampleRate],
      ['sample frames', r.sampleCount, s.sampleCount],
      ['channels', JSON.stringify(r.channels), JSON.stringify(s.channels)],
      ['frame geometry', JSON.stringify(head.part.summary!.geometry), JSON.stringify(part.summary!.geometry)],
      ['section count', head.part.section!.count, part.section!.count],
    ];
    for (const [what, x, y] of facts) {
      if (what === 'SHA-256' && (x === null || y === null)) continue;
      if (x !== y) {
        throw new PartialFileError(
          file,
          `"${head.file}" and "${file}" describe different recordings under the path "${path}": ${what} ${short(x)} and ${short(y)}; were the jobs given different files?`,
        );
      }
    }
  }
  const sorted = [...parts].sort((x, y) => x.part.section!.startFrame - y.part.section!.startFrame || x.part.section!.endFrame - y.part.section!.endFrame);
  for (const { file, part } of sorted) {
    const s = part.section!;
    const sum = part.summary!;
    if (sum.start !== s.startFrame || sum.samples !== s.endFrame - s.startFrame) {
      throw new PartialFileError(file, `Cannot use "${file}": the summary of "${path}" section ${s.index}/${s.count} covers ${sum.samples} frames from ${sum.start}, not frames ${frames(s)}`);
    }
  }
  const end = r.sampleCount ?? sorted[sorted.length - 1].part.section!.endFrame;
  let reached = 0;
  let previous: { file: string; part: PartialPart } | null = null;
  for (const item of sorted) {
    const s = item.part.section!;
    if (s.startFrame > reached) {
      throw new PartialFileError(
        item.file,
        `Frames [${reached}, ${s.startFrame}) of "${path}" are in none of the partial files given (a gap before section ${s.index}/${s.count} in "${item.file}"): is a section's file missing?`,
      );
    }
    if (s.startFrame < reached && previous !== null) {
      const p = previous.part.section!;
      throw new PartialFileError(
        item.file,
        `Sections of "${path}" overlap: section ${p.index}/${p.count} in "${previous.file}" covers frames ${frames(p)} and section ${s.index}/${s.count} in "${item.file}" covers frames ${frames(s)}; was a job's file given twice?`,
      );
    }
    reached = s.endFrame;
    previous = item;
  }
  if (reached < end) {
    throw new PartialFileError(
      sorted[sorted.length - 1].file,
      `Frames [${reached}, ${end}) of "${path}" are in none of the partial files given (a gap at the end of the record): is a section's file missing?`,
    );
  }
  if (reached > end) {
    throw new PartialFileError(sorted[sorted.length - 1].file, `The sections of "${path}" reach frame ${reached}, past the ${end} frames of the record`);
  }
  const summary = sorted.map((p) => p.part.summary!).reduce((x, y) => mergeRecordingSummaries(x, y));
  return { order, recording: r, error: null, summary };
}
