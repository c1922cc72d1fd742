import { channelTableOnce, openRecording } from '../readers/index.js';
import { unmatchedPatterns } from '../readers/channel-table.js';
import type { Recording } from '../readers/types.js';
import { readWindow } from '../readers/window.js';
import type { RecordingSummary } from '../stats/summarise.js';
import type { ChannelDetail, ReportDetail } from '../report/detail.js';
import { summariseRecording } from './parallel.js';
import { segmentNeedsFor } from '../gate/needs.js';
import { RecordingError } from '../errors.js';
import { judgeRecording, unreadableRecording } from '../gate/judge.js';
import type { RecordingVerdict } from '../gate/types.js';
import type { ResolvedRules } from '../rules/types.js';
import { sha256File } from './hash.js';
import { writeFileAtomic } from './write-atomic.js';
import { ExitCode, type CliIo } from './io.js';
import { AuditError } from '../audit/findings.js';
import { checkSignAndLedger, signAndLedger } from '../audit/sign-and-ledger.js';
import { frameTrends, gateExitCode, gateResult, loadRulesReporting, reportGate } from './screen-core.js';

export interface ScreenOptions {
  rules: string;
  junit?: string;
  json?: string;
  /** Self-contained HTML report for people. */
  html?: string;
  /** GitHub Actions: workflow annotations on stdout, a Markdown job summary to $GITHUB_STEP_SUMMARY. */
  github?: boolean;
  quiet?: boolean;
  maxWarnings?: number;
  sidecar?: string;
  /** Campaign channel table file (CSV) for recordings without a sidecar. */
  channelTable?: string;
  sampleRate?: number;
  decimalComma?: boolean;
  /** Directories `extends` may read from besides the rule file's own tree and rules/. */
  rulesRoots?: string[];
  /** Threads to use (default: the number of cores). */
  jobs?: number;
  /** Sign the JSON record with this Ed25519 private key file (needs `json`). */
  sign?: string;
  /** Append the JSON record to this ledger file (needs `json`). */
  ledger?: string;
  /** For reproducible records in tests: the time written into them. */
  now?: () => Date;
}

/** Reads, summarises and judges one recording; a read failure becomes an `error` verdict. */
export async function screenRecording(path: string, rules: ResolvedRules, options: ScreenOptions): Promise<RecordingVerdict> {
  return (await screenWithDetail(path, rules, options, false)).verdict;
}

/** As screenRecording, plus the report detail (frame trends, excerpts) when asked for. */
export async function screenWithDetail(
  path: string,
  rules: ResolvedRules,
  options: ScreenOptions,
  wantDetail: boolean,
): Promise<{ verdict: RecordingVerdict; detail: ChannelDetail[] | null }> {
  let sha256: string | null = null;
  try {
    const open = { sidecar: options.sidecar, channelTable: options.channelTable, sampleRate: options.sampleRate, decimalComma: options.decimalComma };
    const recording = await openRecording(path, open);
    // the hash is read alongside the statistics pass (from the page cache), not after it
    const hashing = sha256File(path).catch(() => null);
    const segments = segmentNeedsFor(rules, recording.channels);
    const summary = await summariseRecording(recording, open, rules.analysis, { jobs: options.jobs, segments });
    sha256 = await hashing;
    const verdict = judgeRecording(
      { path, sha256, format: recording.format, sampleRate: recording.sampleRate, channels: recording.channels, notes: recording.notes, summary },
      rules,
    );
    return { verdict, detail: wantDetail ? await reportDetail(recording, summary, verdict) : null };
  } catch (err) {
    if (err instanceof RecordingError) return { verdict: unreadableRecording(path, err.message, sha256), detail: null };
    if (err instanceof RangeError) return { verdict: unreadableRecording(path, `Cannot screen "${path}": ${err.message}`, sha256), detail: null };
    // A fault of vibgate's own (a bug) while reading this recording: the recording was not
    // screened, so it fails the gate, and the other recordings and the reports still go on.
    const what = err instanceof Error ? `${err.name}: ${err.message}` : String(err);
    return { verdict: unreadableRecording(path, `Cannot screen "${path}": internal error (${what}); please report it`, sha256), detail: null };
  }
}

/** Longest excerpt shown, and how much context either side of a finding's time span. */
const EXCERPT_MAX_S = 2;
const EXCERPT_CONTEXT_S = 0.25;

async function reportDetail(recording: Recording, summary: RecordingSummary, verdict: RecordingVerdict): Promise<ChannelDetail[]> {
  const fs = recording.sampleRate;
  const details: ChannelDetail[] = frameTrends(summary);
  for (const [i, ch] of verdict.channels.entries()) {
    if (ch.verdict !== 'fail' && ch.verdict !== 'warn') continue;
    // the first failing finding that is located in time (warnings if nothing failed)
    const located = ch.findings.filter((f) => f.at && f.at.endS - f.at.startS <= EXCERPT_MAX_S * 4);
    const pick = located.find((f) => f.status === 'fail') ?? located.find((f) => f.status === 'warn');
    if (!pick?.at) continue;
    const mid = (pick.at.startS + pick.at.endS) / 2;
    const half = Math.min(EXCERPT_MAX_S / 2, (pick.at.endS - pick.at.startS) / 2 + EXCERPT_CONTEXT_S);
    const startS = Math.max(0, mid - half);
    const [values] = await readWindow(recording, [i], Math.floor(startS * fs), Math.ceil((mid + half) * fs));
    details[i].excerpt = { startS: Math.floor(startS * fs) / fs, sampleRate: fs, values: Array.from(values), check: pick.check };
  }
  return details;
}

/** `vibgate screen`: the gate. Exit 0 pass (warnings allowed), 1 failed or unreadable, 2 usage or rules. */
/**
 * Reads the channel table before any recording, as the rule file is: a broken table is a
 * setting error (exit 2, nothing screened), not a fault of every recording. Patterns that
 * match none of the recordings are named (a typo, or a recording missing from the run).
 */
async function checkChannelTable(file: string, paths: string[], io: CliIo): Promise<boolean> {
  try {
    const table = await channelTableOnce(file);
    for (const { pattern, line } of unmatchedPatterns(table, paths)) {
      io.stderr.write(`vibgate: note: "${file}" line ${line}: the pattern "${pattern}" matches none of the recordings given\n`);
    }
    return true;
  } catch (err) {
    if (err instanceof RecordingError) {
      io.stderr.write(`vibgate: ${err.message}\nvibgate: nothing was screened\n`);
      return false;
    }
    throw err;
  }
}

export async function runScreen(paths: string[], options: ScreenOptions, io: CliIo): Promise<number> {
  if ((options.sign !== undefined || options.ledger !== undefined) && options.json === undefined) {
    io.stderr.write(`vibgate: ${options.sign !== undefined ? '--sign' : '--ledger'} needs --json FILE: it applies to the JSON record\n`);
    return ExitCode.usage;
  }
  try {
    // a wrong key or a broken ledger is a usage error found before a long run, not after
    await checkSignAndLedger({ sign: options.sign, ledger: options.ledger, cwd: io.cwd });
  } catch (err) {
    if (err instanceof AuditError) {
      io.stderr.write(`vibgate: ${err.message}\nvibgate: nothing was screened\n`);
      return ExitCode.usage;
    }
    throw err;
  }
  const rules = await loadRulesReporting(options.rules, options, io);
  if (rules === null) return ExitCode.usage;
  if (options.channelTable !== undefined && !(await checkChannelTable(options.channelTable, paths, io))) return ExitCode.usage;
  const recordings: RecordingVerdict[] = [];
  const detail: ReportDetail = new Map();
  for (const path of paths) {
    const screened = await screenWithDetail(path, rules, options, options.html !== undefined);
    recordings.push(screened.verdict);
    if (screened.detail) detail.set(path, screened.detail);
  }
  const result = gateResult(recordings, rules, options.rules, options.now);
  const written = await reportGate(
    result,
    detail,
    {
      ...options,
      // signed and written, then entered in the ledger: the ledger never lists an unwritten record
      writeRecord: (file, text) =>
        signAndLedger(text, {
          sign: options.sign,
          ledger: options.ledger,
          cwd: io.cwd,
          write: (signed) => writeFileAtomic(file, signed),
          onLedger: (a) => io.stdout.write(`ledger: the record is line ${a.line} of "${options.ledger}" (head sha256 ${a.headSha256})\n`),
        }),
      describeError: (_file, err) => (err instanceof AuditError ? err.message : undefined),
    },
    io,
  );
  if (!written) return ExitCode.failed;
  return gateExitCode(result, options, io);
}
