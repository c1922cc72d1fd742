/**
 * Screening a campaign across CI jobs, and putting it back together.
 *
 * - `vibgate screen --partial FILE [--shard i/n] [--section j/m]`: each job summarises its
 *   share (`runPartialScreen`): the recordings `--shard` gives it, whole, or section j of m
 *   of each (`screenSection`), and writes the summaries to a partial-summary file
 *   (src/stats/summary-file.ts). It judges nothing: the gate is the merge.
 * - `vibgate merge PARTS...` (`runMerge`): reads the files, checks they are the complete
 *   output of one campaign and tile every recording, merges the summaries exactly, loads the
 *   rule file the jobs used (refusing it when its SHA-256 changed), judges each recording
 *   once, and writes the same terminal report, JUnit, JSON record and HTML as a single
 *   `vibgate screen` of all the recordings would. The HTML frame trends come from the merged
 *   summaries; the waveform excerpts are left out (the merge job need not have the
 *   recordings).
 */
import { readFile, stat } from 'node:fs/promises';
import { openRecording } from '../readers/index.js';
import { RecordingError } from '../errors.js';
import { judgeRecording, unreadableRecording } from '../gate/judge.js';
import type { RecordingVerdict } from '../gate/types.js';
import type { ResolvedRules } from '../rules/types.js';
import type { ReportDetail } from '../report/detail.js';
import {
  assemblePartials,
  formatPartialFile,
  parsePartialFile,
  PartialFileError,
  PARTIAL_FORMAT,
  PARTIAL_KIND,
  type PartialFile,
  type PartialPart,
  type Share,
} from '../stats/summary-file.js';
import type { RecordingSummary } from '../stats/summarise.js';
import { tool } from '../version.js';
import { sha256File } from './hash.js';
import { ExitCode, type CliIo } from './io.js';
import { UsageError } from '../errors.js';
import { SEEKABLE, sectionGrid, summariseRecording, summariseSection } from './parallel.js';
import { segmentNeedsFor } from '../gate/needs.js';
import { sectionBounds } from '../stats/segments.js';
import { runScreen, type ScreenOptions } from './screen.js';
import { frameTrends, gateExitCode, gateResult, loadRulesReporting, reportGate, type ReportOptions } from './screen-core.js';
import { selectionOf, selectShard } from './shard.js';
import { describeWriteError, writeFileAtomic } from './write-atomic.js';

// Formats whose readers start at any sample frame (SEEKABLE) are cut into sections; others
// (CSV, UFF) are summarised whole by the job of section 1 and left out by the other jobs.

/** Writes a partial-summary file atomically. */
export async function writePartial(file: string, partial: PartialFile): Promise<void> {
  await writeFileAtomic(file, formatPartialFile(partial));
}

/** Reads and validates a partial-summary file; throws PartialFileError naming it. */
export async function readPartial(file: string): Promise<PartialFile> {
  let text: string;
  try {
    text = await readFile(file, 'utf8');
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    throw new PartialFileError(file, `Cannot read "${file}": ${code === 'ENOENT' ? 'no such file' : (err as Error).message}`);
  }
  return parsePartialFile(text, file);
}

/**
 * Summarises section `section.index` of `section.count` of one recording: sample frames
 * [⌊(i−1)·N/n⌋, ⌊i·N/n⌋) of its N, read in this thread. With count 1 the whole record is
 * summarised, on `options.jobs` threads. A recording whose format cannot start at a given
 * frame (CSV) is summarised whole as its section 1/1 by section 1, and section i > 1 gives
 * null (nothing to do). A recording that cannot be read gives a part with its `error`.
 * The SHA-256 of the whole file is read alongside, in every section, so that the merge can
 * prove every job read the same bytes.
 */
export async function screenSection(
  path: string,
  rules: ResolvedRules,
  options: Pick<ScreenOptions, 'sidecar' | 'channelTable' | 'sampleRate' | 'decimalComma' | 'jobs'>,
  section: Share,
): Promise<PartialPart | null> {
  let sha256: string | null = null;
  const recording: PartialPart['recording'] = {
    path, sha256: null, bytes: null, format: null, sampleRate: null, sampleCount: null, channels: [], notes: [],
  };
  const failed = (error: string): PartialPart => ({ order: 0, recording: { ...recording, sha256 }, section: null, error, summary: null });
  try {
    const open = { sidecar: options.sidecar, channelTable: options.channelTable, sampleRate: options.sampleRate, decimalComma: options.decimalComma };
    const rec = await openRecording(path, open);
    const total = rec.sampleCount;
    const splittable = total !== undefined && SEEKABLE.has(rec.format);
    if (!splittable && section.index > 1) return null;
    const hashing = sha256File(path).catch(() => null);
    const bytes = await stat(path).then((s) => s.size, () => null);
    let summary: RecordingSummary;
    let startFrame = 0;
    let endFrame: number;
    let share: Share = section;
    const segments = segmentNeedsFor(rules, rec.channels);
    if (section.count === 1 || !splittable) {
      summary = await summariseRecording(rec, open, rules.analysis, { jobs: options.jobs, segments });
      endFrame = summary.samples;
      share = { index: 1, count: 1 };
    } else {
      const bounds = sectionBounds(total, section.count, sectionGrid(rec, segments));
      startFrame = bounds[section.index - 1];
      endFrame = bounds[section.index];
      summary = await summariseSection({ path, open, frames: rules.analysis, startFrame, endFrame, segments }, rec);
    }
    sha256 = await hashing;
    return {
      order: 0,
      recording: {
        path, sha256, bytes, format: rec.format, sampleRate: rec.sampleRate, sampleCount: total ?? null,
        channels: rec.channels.map((c) => ({ ...c })), notes: [...rec.notes],
      },
      section: { ...share, startFrame, endFrame },
      error: null,
      summary,
    };
  } catch (err) {
    if (err instanceof RecordingError) return failed(err.message);
    if (err instanceof RangeError) return failed(`Cannot screen "${path}": ${err.message}`);
    const what = err instanceof Error ? `${err.name}: ${err.message}` : String(err);
    return failed(`Cannot screen "${path}": internal error (${what}); please report it`);
  }
}

export interface PartialScreenOptions extends ScreenOptions {
  /** The partial-summary file to write. */
  partial: string;
  /** This job's share of the recordings (each screened whole unless `section` is given). */
  shard?: Share;
  /** This job's section of every recording. */
  section?: Share;
}

/**
 * `vibgate screen --partial FILE`: summarises this job's share and writes the partial file.
 * Judges nothing. Exit 0 when the file was written (recordings that could not be read are
 * in it as such, and the merge fails them), 1 when it could not be written, 2 on a rule-file
 * error.
 */
export async function runPartialScreen(paths: string[], options: PartialScreenOptions, io: CliIo): Promise<number> {
  const rules = await loadRulesReporting(options.rules, options, io);
  if (rules === null) return ExitCode.usage;
  const mine = options.shard ? selectShard(paths, options.shard) : [...new Set(paths)];
  const section = options.section ?? { index: 1, count: 1 };
  const parts: PartialPart[] = [];
  for (const path of mine) {
    const part = await screenSection(path, rules, options, section);
    const label = options.section ? ` section ${section.index}/${section.count}` : '';
    if (part === null) {
      io.stdout.write(`${path}: summarised whole by the job of section 1 (its format cannot start reading at a given frame)\n`);
      continue;
    }
    parts.push({ ...part, order: paths.indexOf(path) });
    if (part.error !== null) io.stdout.write(`${path}:${label} could not be read; the merge will fail it: ${part.error}\n`);
    else io.stdout.write(`${path}:${label} frames [${part.section!.startFrame}, ${part.section!.endFrame}) summarised\n`);
  }
  const partial: PartialFile = {
    kind: PARTIAL_KIND,
    format: PARTIAL_FORMAT,
    tool: { name: tool.name, version: tool.version },
    createdAt: (options.now?.() ?? new Date()).toISOString(),
    rules: { path: options.rules, sha256: rules.files[0].sha256, files: rules.files },
    analysis: { frameSeconds: rules.analysis.frameSeconds, overlap: rules.analysis.overlap },
    job: { shard: options.shard ?? null, section: options.section ?? null },
    selection: selectionOf(paths),
    parts,
  };
  try {
    await writePartial(options.partial, partial);
  } catch (err) {
    io.stderr.write(`vibgate: Cannot write "${options.partial}": ${describeWriteError(options.partial, err)}\n`);
    return ExitCode.failed;
  }
  io.stdout.write(`${parts.length} part${parts.length === 1 ? '' : 's'} written to ${options.partial}; judge them with vibgate merge\n`);
  return ExitCode.ok;
}

/**
 * `vibgate screen` with the scale-out options: `--partial FILE` writes this job's summaries
 * (runPartialScreen); without it, `--shard i/n` screens and judges this job's share as a
 * plain screen does (a share that is empty, because there are fewer recordings than jobs,
 * exits 0 with a note: nothing was this job's to check). `--section` needs `--partial`, and
 * the report options belong to the merge. Throws UsageError for a wrong combination.
 */
export async function runScreenShare(
  paths: string[],
  options: ScreenOptions & { partial?: string; shard?: Share; section?: Share },
  io: CliIo,
): Promise<number> {
  const { partial, shard, section, ...screen } = options;
  if (partial !== undefined) {
    if (screen.sign !== undefined || screen.ledger !== undefined) {
      throw new UsageError('--sign and --ledger cannot be used with --partial: sign the record that vibgate merge writes');
    }
    const reports = (['junit', 'json', 'html'] as const).filter((k) => screen[k] !== undefined).map((k) => `--${k}`);
    if (screen.github) reports.push('--github');
    if (reports.length > 0) {
      throw new UsageError(`${reports.join(', ')} cannot be used with --partial: the reports are written by vibgate merge, which judges the whole campaign`);
    }
    return runPartialScreen(paths, { ...screen, partial, shard, section }, io);
  }
  if (section !== undefined) {
    throw new UsageError('--section needs --partial FILE: a section of a recording cannot be judged alone; merge the sections with vibgate merge');
  }
  if (shard === undefined) return runScreen(paths, screen, io);
  const mine = selectShard(paths, shard);
  if (mine.length === 0) {
    io.stdout.write(`Shard ${shard.index}/${shard.count} has no recordings: ${new Set(paths).size} recordings were dealt to ${shard.count} jobs\n`);
    return ExitCode.ok;
  }
  return runScreen(mine, screen, io);
}

export interface MergeOptions extends ReportOptions {
  /**
   * The rule file to judge by, when it is not where the jobs read it (`rules.path` in the
   * parts, taken from the working directory). Its SHA-256 must still match.
   */
  rules?: string;
  rulesRoots?: string[];
}

/**
 * `vibgate merge PARTS...`: the gate over partial-summary files. Exit codes as screen: 0
 * every recording passed (warnings allowed), 1 the gate failed or a report could not be
 * written, 2 the parts cannot be merged (unreadable, of another campaign or format, a gap
 * or overlap, a missing job) or the rule file is invalid or changed: nothing was judged.
 */
export async function runMerge(partFiles: string[], io: CliIo, options: MergeOptions = {}): Promise<number> {
  const nothing = () => {
    io.stderr.write('vibgate: nothing was merged\n');
    return ExitCode.usage;
  };
  let assembled;
  // the header only: the parts' summaries are let go once merged
  let first: Omit<PartialFile, 'parts'>;
  try {
    const files = [];
    for (const file of partFiles) files.push({ file, partial: await readPartial(file) });
    assembled = assemblePartials(files);
    const { parts: _parts, ...header } = files[0].partial;
    first = header;
    if (first.tool.version !== tool.version) {
      throw new PartialFileError(
        partFiles[0],
        `"${partFiles[0]}" was written by vibgate ${first.tool.version}, but this is vibgate ${tool.version}; merge with the version that screened`,
      );
    }
  } catch (err) {
    if (err instanceof PartialFileError) {
      io.stderr.write(`vibgate: ${err.message}\n`);
      return nothing();
    }
    throw err;
  }
  const rulesPath = options.rules ?? first.rules.path;
  const rules = await loadRulesReporting(rulesPath, options, io, 'nothing was merged');
  if (rules === null) return ExitCode.usage;
  // the rules the jobs summarised with (frame settings) must be the rules judged by
  const then = first.rules.files;
  const changed = rules.files.findIndex((f, i) => then[i] !== undefined && then[i].sha256 !== f.sha256);
  if (changed >= 0) {
    const f = rules.files[changed];
    io.stderr.write(
      `vibgate: The rule file "${f.path}" has changed since the recordings were summarised: its SHA-256 is now ${f.sha256}, the partial files were made with ${then[changed].sha256}; merge with the rule file the jobs used\n`,
    );
    return nothing();
  }
  if (rules.files.length !== then.length) {
    io.stderr.write(
      `vibgate: The rule file "${rulesPath}" reads ${rules.files.length} files with its extends, but the jobs used ${then.length} ("${then.map((f) => f.path).join('", "')}"); merge with the rule file the jobs used\n`,
    );
    return nothing();
  }

  const recordings: RecordingVerdict[] = [];
  const detail: ReportDetail = new Map();
  for (const a of assembled) {
    const r = a.recording;
    if (a.error !== null || a.summary === null) {
      recordings.push(unreadableRecording(r.path, a.error ?? `Cannot read "${r.path}"`, r.sha256));
      continue;
    }
    const verdict = judgeRecording(
      { path: r.path, sha256: r.sha256, format: r.format!, sampleRate: r.sampleRate!, channels: r.channels, notes: r.notes, summary: a.summary },
      rules,
    );
    recordings.push(verdict);
    if (options.html !== undefined) detail.set(r.path, frameTrends(a.summary));
    // the summaries (frame tables) are large; the verdict and trends are all that is kept
    a.summary = null;
  }
  const result = gateResult(recordings, rules, first.rules.path, options.now);
  if (!(await reportGate(result, detail, options, io))) return ExitCode.failed;
  return gateExitCode(result, options, io);
}
