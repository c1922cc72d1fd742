/**
 * `vibgate learn`: a rule file whose limits are learned from recordings known to be good
 * (docs/learning.md). Each recording is read once, as `screen` reads it (sidecars apply);
 * its channels' statistics go into the evidence file beside the rule file, and the rule
 * file is written from the whole evidence, so learning again with more recordings
 * (`--update`) reads only the new ones and gives the file learning from all at once gives.
 *
 * Exit codes: 0 written (or unchanged); 1 a recording could not be read, or a file could
 * not be written (nothing was written); 2 usage, the base rule file, the evidence file, or
 * too little data (nothing was written).
 */
import { randomBytes } from 'node:crypto';
import { readFile, stat, unlink, writeFile } from 'node:fs/promises';
import { basename, dirname, isAbsolute, relative, resolve, sep } from 'node:path';
import { openRecording } from '../readers/index.js';
import type { Recording } from '../readers/types.js';
import type { RecordingSummary } from '../stats/summarise.js';
import { channelStats } from '../stats/channel-stats.js';
import { RecordingError } from '../errors.js';
import { channelSegments, judgeRecording } from '../gate/judge.js';
import { unionNeeds } from '../stats/segment-analyses.js';
import { segmentNeedsFor } from '../gate/needs.js';
import { BUNDLED_PREFIX, formatProblem, loadRules, RulesError } from '../rules/load.js';
import type { ResolvedRules } from '../rules/types.js';
import {
  addRecordings,
  channelEvidence,
  EVIDENCE_FORMAT,
  EVIDENCE_KIND,
  EvidenceError,
  evidencePathFor,
  evidenceText,
  learnedStatistics,
  parseEvidence,
  type Evidence,
  type LearnSettings,
  type RecordingEvidence,
} from '../learn/evidence.js';
import { DEFAULT_LEARNED_CHECKS, LEARNABLE_CHECKS, PER_CHANNEL_ONLY, planLimits } from '../learn/plan.js';
import { learnedRulesText } from '../learn/write-rules.js';
import { sha256File } from './hash.js';
import { summariseRecording } from './parallel.js';
import { loadRulesReporting } from './screen-core.js';
import { describeWriteError, writeFileAtomic } from './write-atomic.js';
import { ExitCode, type CliIo } from './io.js';

/** Fewest distinct recordings learning starts from. */
export const MIN_RECORDINGS = 3;

/**
 * Default margin: limit = median ± 8 × spread. With the ~10 recordings a lab starts from,
 * the spread is itself uncertain and the statistics that matter here (extremes over frames,
 * crest factors, the kurtosis of narrow-band response) have long tails. In the seeded
 * simulation of test/learn/calibration.test.ts (a 5-channel shaker test, four training sets
 * of 10 runs, 300 other good channels each): margin 5 failed 2–8 good channels, margin 8
 * 0–1 (the bundled random-vibration file 0); both failed all 68 injected faults, and
 * margin 8 32–35 of 36 milder faults, the bundled file 4.
 */
export const DEFAULT_MARGIN = 8;

/** The base when none is given: the universal data faults only; the learned limits add the rest. */
export const DEFAULT_BASE = 'bundled:base';

export interface LearnOptions {
  /** The rule file to write; the evidence goes to `<output>.evidence.json`. */
  output: string;
  /** Base rule file (a path, or bundled:NAME). Default: the evidence's on --update, else bundled:base. */
  extends?: string;
  by?: LearnSettings['by'];
  margin?: number;
  name?: string;
  checks?: string[];
  /** Add the recordings to the evidence of an existing learned file and learn again. */
  update?: boolean;
  /** Replace an existing rule file and its evidence. */
  force?: boolean;
  /** More directories the base's `extends` may read from. */
  rulesRoots?: string[];
  sidecar?: string;
  /** Campaign channel table (CSV) naming channels of recordings without a sidecar. */
  channelTable?: string;
  sampleRate?: number;
  decimalComma?: boolean;
  jobs?: number;
}

/** A recording read in this run: its evidence, and what the self-check judges. */
interface ReadOne {
  given: string;
  evidence: RecordingEvidence;
  recording: Recording;
  summary: RecordingSummary;
}

/** `vibgate learn`. Returns the exit code; messages go to io.stderr, the outcome to io.stdout. */
export async function runLearn(paths: string[], options: LearnOptions, io: CliIo): Promise<number> {
  const usage = (message: string) => {
    io.stderr.write(`vibgate: ${message}\nvibgate: nothing was written\n`);
    return ExitCode.usage;
  };
  const out = resolve(io.cwd, options.output);
  const outDir = dirname(out);
  const evidenceFile = evidencePathFor(out);
  const evidenceShown = evidencePathFor(options.output);

  if (paths.length === 0 && !options.update) return usage('no recordings given: name the recordings known to be good to learn from');
  let stored: Evidence | null = null;
  if (options.update) {
    let text: string;
    try {
      text = await readFile(evidenceFile, 'utf8');
    } catch (err) {
      const code = (err as NodeJS.ErrnoException).code;
      if (code === 'ENOENT') return usage(`Cannot update "${options.output}": its evidence file "${evidenceShown}" does not exist (learn without --update first)`);
      return usage(`Cannot read "${evidenceShown}": ${describeWriteError(evidenceShown, err)}`);
    }
    try {
      stored = parseEvidence(text, evidenceShown);
    } catch (err) {
      if (err instanceof EvidenceError) return usage(err.message);
      throw err;
    }
  } else if (!options.force) {
    for (const [file, shown] of [[out, options.output], [evidenceFile, evidenceShown]]) {
      if (await exists(file)) return usage(`"${shown}" exists: add recordings to it with --update, or replace it and its evidence with --force`);
    }
  }

  const baseValue = options.extends !== undefined ? extendsEntry(options.extends, io.cwd, outDir) : stored?.settings.extends ?? DEFAULT_BASE;
  const by = options.by ?? stored?.settings.by ?? 'channel';
  const checks = options.checks ?? stored?.settings.checks ?? [...DEFAULT_LEARNED_CHECKS];
  for (const id of checks) {
    if (!LEARNABLE_CHECKS.some((c) => c.id === id)) {
      return usage(`--checks: "${id}" is not a check that can be learned (${LEARNABLE_CHECKS.map((c) => c.id).join(', ')})`);
    }
    if (PER_CHANNEL_ONLY.includes(id) && by !== 'channel') {
      return usage(`--checks: ${id} is learned per channel only (--by channel): levels differ from point to point on a structure`);
    }
  }
  if (checks.length === 0) return usage('--checks: name at least one check to learn');

  // the base as the learned file will reach it: relative to the learned file's directory
  const basePath = baseValue.startsWith(BUNDLED_PREFIX) ? baseValue : relative(io.cwd, resolve(outDir, baseValue)) || '.';
  const base = await loadRulesReporting(basePath, { rulesRoots: options.rulesRoots }, io, 'nothing was written');
  if (base === null) return ExitCode.usage;
  if (stored && (stored.settings.frameSeconds !== base.analysis.frameSeconds || stored.settings.overlap !== base.analysis.overlap)) {
    return usage(
      `the evidence in "${evidenceShown}" was computed with frames of ${stored.settings.frameSeconds} s (overlap ${stored.settings.overlap}), ` +
        `but "${basePath}" uses frames of ${base.analysis.frameSeconds} s (overlap ${base.analysis.overlap}): learn afresh with --force`,
    );
  }
  const settings: LearnSettings = {
    extends: baseValue,
    by,
    margin: options.margin ?? stored?.settings.margin ?? DEFAULT_MARGIN,
    name: options.name ?? stored?.settings.name ?? defaultName(out),
    checks: LEARNABLE_CHECKS.map((c) => c.id).filter((id) => checks.includes(id)),
    frameSeconds: base.analysis.frameSeconds,
    overlap: base.analysis.overlap,
  };

  // Read every recording (all of them, so every unreadable one is reported), then decide.
  const read: ReadOne[] = [];
  let unreadable = 0;
  for (const path of paths) {
    try {
      read.push(await readOne(path, base, options, outDir, io.cwd));
    } catch (err) {
      if (err instanceof RecordingError) io.stderr.write(`vibgate: ${err.message}\n`);
      else if (err instanceof RangeError) io.stderr.write(`vibgate: Cannot read "${path}": ${err.message}\n`);
      else throw err;
      unreadable += 1;
    }
  }
  if (unreadable > 0) {
    io.stderr.write(`vibgate: ${unreadable} recording${unreadable === 1 ? '' : 's'} could not be read: nothing was learned, nothing was written\n`);
    return ExitCode.failed;
  }

  const given = new Map(read.map((r) => [r.evidence.path, r.given]));
  const { recordings, duplicates } = addRecordings(stored?.recordings ?? [], read.map((r) => r.evidence));
  for (const d of duplicates) {
    io.stderr.write(`vibgate: warning: "${given.get(d.path) ?? d.path}" has the same bytes as "${given.get(d.sameAs) ?? d.sameAs}"${stored?.recordings.some((r) => r.path === d.sameAs) ? ', already in the evidence' : ''}: counted once\n`);
  }
  if (recordings.length < MIN_RECORDINGS) {
    return usage(
      `too little data: ${recordings.length} distinct recording${recordings.length === 1 ? '' : 's'}; learning needs at least ${MIN_RECORDINGS} ` +
        'known to be good (and 5 or more per group to learn with the margin as given)',
    );
  }
  const evidence: Evidence = { format: EVIDENCE_FORMAT, kind: EVIDENCE_KIND, settings, recordings };

  let plan;
  try {
    plan = planLimits(evidence, base);
  } catch (err) {
    if (err instanceof RangeError) return usage(err.message);
    throw err;
  }
  for (const w of plan.warnings) io.stderr.write(`vibgate: warning: ${w}\n`);
  const text = learnedRulesText(plan, evidence, { evidenceFile: basename(evidenceFile), rulesFile: basename(out) });
  const json = evidenceText(evidence);

  // The file must load as it will be read: from its own directory, with the same roots.
  let learned: ResolvedRules;
  try {
    learned = await loadWritten(text, out, options.rulesRoots, io.cwd);
  } catch (err) {
    if (err instanceof RulesError) {
      const shownTmp = (p: string) => (p.includes('.learn-check-') ? options.output : p);
      for (const p of err.problems) io.stderr.write(`vibgate: ${formatProblem({ ...p, file: shownTmp(p.file) })}\n`);
      return usage(`the learned rule file would not load as written (allow the base's directory with --rules-root DIR, or write the file next to the base)`);
    }
    io.stderr.write(`vibgate: Cannot write "${options.output}": ${describeWriteError(options.output, err)}\nvibgate: nothing was written\n`);
    return ExitCode.failed;
  }

  // A recording of the training set that fails the learned file fails a limit of the base
  // that is not learned (a dropout, clipping, a short record): say so, it may not be good.
  for (const r of read) {
    const verdict = judgeRecording(
      { path: r.given, sha256: r.evidence.sha256, format: r.recording.format, sampleRate: r.recording.sampleRate, channels: r.recording.channels, notes: r.recording.notes, summary: r.summary },
      learned,
    );
    const failed = [
      ...verdict.findings.filter((f) => f.status === 'fail').map((f) => `(recording) / ${f.check}`),
      ...verdict.channels.flatMap((c) => c.findings.filter((f) => f.status === 'fail').map((f) => `${c.name} / ${f.check}`)),
    ];
    if (failed.length > 0) {
      const shown = failed.length <= 6 ? failed.join(', ') : `${failed.slice(0, 6).join(', ')} and ${failed.length - 6} more`;
      io.stderr.write(`vibgate: warning: "${r.given}", learned from, fails the learned file (limits of the base that are not learned): ${shown}: is it really a good recording?\n`);
    }
  }

  const learnedOptions = plan.groups.flatMap((g) => g.checks.flatMap((c) => c.options));
  const written = learnedOptions.filter((o) => o.value !== null).length;
  const kept = learnedOptions.flatMap((o) => o.baseKept).filter((b) => b !== undefined).length;
  const widened = learnedOptions.filter((o) => o.outcome === 'widened').length;
  const newCount = recordings.length - (stored?.recordings.length ?? 0);
  const counts =
    `${recordings.length} recordings` + (stored ? ` (${newCount} new)` : '') + `: ${written} limits written, ` +
    `${kept} bound${kept === 1 ? '' : 's'} of the base kept as tighter` + (widened > 0 ? `, ${widened} widened for too few values` : '');

  if (stored && (await sameText(out, text)) && (await sameText(evidenceFile, json))) {
    io.stdout.write(`"${options.output}" is unchanged: learned from ${counts}\n`);
    return ExitCode.ok;
  }
  // The evidence first: if the rule file cannot be written after it, --update with the
  // same recordings writes it (they are in the evidence already, and not counted twice).
  for (const [file, shown, content] of [[evidenceFile, evidenceShown, json], [out, options.output, text]]) {
    try {
      await writeFileAtomic(file, content);
    } catch (err) {
      io.stderr.write(`vibgate: Cannot write "${shown}": ${describeWriteError(shown, err)}\n`);
      return ExitCode.failed;
    }
  }
  io.stdout.write(`learned "${options.output}" from ${counts}; evidence in "${evidenceShown}"\n`);
  return ExitCode.ok;
}

/** Reads one recording as screen does (sidecars apply) and returns its evidence. */
async function readOne(path: string, base: ResolvedRules, options: LearnOptions, outDir: string, cwd: string): Promise<ReadOne> {
  const open = { sidecar: options.sidecar, channelTable: options.channelTable, sampleRate: options.sampleRate, decimalComma: options.decimalComma };
  const recording = await openRecording(path, open);
  // hashed alongside the statistics pass (from the page cache), as screen does
  const hashing = sha256File(path).then(
    (h) => ({ h, err: null }),
    (err: unknown) => ({ h: null, err }),
  );
  // what the base's checks need on sampled segments too (mains hum ...), so that the
  // training recordings can be judged by the learned file below as screen would judge them
  // and each channel's autocorrelation: the Gaussian scatter floor of the kurtosis and
  // skewness limits (evidence.ts)
  const segments = unionNeeds(segmentNeedsFor(base, recording.channels), { autocorrelation: true });
  const summary = await summariseRecording(recording, open, base.analysis, { jobs: options.jobs, segments });
  const views = summary.segments ? channelSegments(summary.segments, recording.channels) : null;
  const { h: sha256, err } = await hashing;
  if (sha256 === null) throw new RecordingError(path, `cannot be hashed: ${err instanceof Error ? err.message : String(err)}`);
  const fs = recording.sampleRate;
  const channels = recording.channels.map((ch, i) => {
    const s = summary.channels[i];
    return channelEvidence(ch, learnedStatistics(channelStats(s, { sampleRate: fs }), s, fs, views?.[i].correlation ?? null));
  });
  const rel = relative(outDir, resolve(cwd, path)).split(sep).join('/');
  return {
    given: path,
    evidence: { path: rel, sha256, sampleRate: fs, durationS: summary.samples / fs, channels },
    recording,
    summary,
  };
}

/**
 * Loads the text as the rule file at `out` would load: written to a temporary file beside
 * it (so `extends` resolves and is confined as it will be), read with loadRules, removed.
 */
async function loadWritten(text: string, out: string, rulesRoots: string[] | undefined, cwd: string): Promise<ResolvedRules> {
  const tmp = resolve(dirname(out), `.${basename(out)}.learn-check-${process.pid}-${randomBytes(4).toString('hex')}.yaml`);
  await writeFile(tmp, text, { flag: 'wx' });
  try {
    return await loadRules(tmp, { allowRoots: rulesRoots, cwd });
  } finally {
    await unlink(tmp).catch(() => {});
  }
}

/** `--extends` as the learned file's `extends` names it: bundled:NAME, or a path from the learned file's directory. */
function extendsEntry(value: string, cwd: string, outDir: string): string {
  if (value.startsWith(BUNDLED_PREFIX)) return value;
  const rel = relative(outDir, resolve(cwd, value));
  if (isAbsolute(rel)) return rel;
  const posix = rel.split(sep).join('/');
  return posix.startsWith('../') ? posix : `./${posix}`;
}

/** The rule file's name when --name is not given: its file name without .yaml / .yml. */
function defaultName(out: string): string {
  return basename(out).replace(/\.ya?ml$/i, '') || 'learned';
}

async function exists(path: string): Promise<boolean> {
  try {
    await stat(path);
    return true;
  } catch {
    return false;
  }
}

async function sameText(path: string, text: string): Promise<boolean> {
  try {
    return (await readFile(path, 'utf8')) === text;
  } catch {
    return false;
  }
}
