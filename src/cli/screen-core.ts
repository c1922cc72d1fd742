/**
 * What `vibgate screen`, `vibgate merge` and `vibgate run` share once the recordings are
 * judged: loading the rule file with its problems reported, the GateResult, the terminal
 * report, the GitHub annotations and job summary, the report files, and the exit code.
 */
import { appendFile } from 'node:fs/promises';
import { worst } from '../gate/judge.js';
import type { GateResult, RecordingVerdict } from '../gate/types.js';
import { formatProblem, loadRules, RulesError } from '../rules/load.js';
import type { ResolvedRules } from '../rules/types.js';
import { frameSeries } from '../stats/channel-stats.js';
import type { RecordingSummary } from '../stats/summarise.js';
import type { ChannelDetail, ReportDetail } from '../report/detail.js';
import { githubAnnotations, markdownSummary } from '../report/github.js';
import { htmlReport } from '../report/html.js';
import { jsonRecord } from '../report/json-record.js';
import { junitReport } from '../report/junit.js';
import { terminalReport } from '../report/terminal.js';
import { tool } from '../version.js';
import { ExitCode, type CliIo } from './io.js';
import { describeWriteError, writeFileAtomic } from './write-atomic.js';

/** Where the reports of a gate run go, and how they are printed. */
export interface ReportOptions {
  junit?: string;
  json?: string;
  html?: string;
  github?: boolean;
  quiet?: boolean;
  maxWarnings?: number;
  now?: () => Date;
}

/**
 * The resolved rules, or null after printing every problem (`file:line:column key: what`)
 * and `what` (for example "nothing was screened") to stderr: the caller exits 2.
 */
export async function loadRulesReporting(
  path: string,
  options: { rulesRoots?: string[] },
  io: CliIo,
  what = 'nothing was screened',
): Promise<ResolvedRules | null> {
  try {
    return await loadRules(path, { allowRoots: options.rulesRoots, cwd: io.cwd });
  } catch (err) {
    if (err instanceof RulesError) {
      for (const p of err.problems) io.stderr.write(`vibgate: ${formatProblem(p)}\n`);
      io.stderr.write(`vibgate: ${what}\n`);
      return null;
    }
    throw err;
  }
}

/** The result of judging `recordings` by `rules` (given as `rulesPath`). */
export function gateResult(recordings: RecordingVerdict[], rules: ResolvedRules, rulesPath: string, now?: () => Date): GateResult {
  return {
    tool,
    createdAt: (now?.() ?? new Date()).toISOString(),
    rules: { name: rules.name, path: rulesPath, sha256: rules.files[0].sha256, files: rules.files },
    verdict: worst(recordings.map((r) => r.verdict)),
    recordings,
  };
}

/** Per-frame trends of every channel from a summary, for the HTML report; no excerpts. */
export function frameTrends(summary: RecordingSummary): ChannelDetail[] {
  const fs = summary.sampleRate;
  return summary.channels.map((s) => {
    const series = (k: Parameters<typeof frameSeries>[1]) => Array.from(frameSeries(s.frames, k, fs).value);
    return {
      frames: { timeS: Array.from(frameSeries(s.frames, 'rms', fs).timeS), rms: series('rms'), mean: series('mean'), kurtosis: series('kurtosis'), skewness: series('skewness') },
      excerpt: null,
    };
  });
}

/**
 * Prints the terminal report (and the GitHub annotations), then writes every report file
 * asked for, atomically. `extraRecord` adds top-level fields to the JSON record (after the
 * standard ones). Every output is attempted even when one fails; returns false when any
 * could not be written (the message is on stderr): the caller exits 1.
 */
export async function reportGate(
  result: GateResult,
  detail: ReportDetail,
  options: ReportOptions & {
    extraRecord?: Record<string, unknown>;
    /** Writes the JSON record (screen --sign/--ledger sign it first); default: atomically. */
    writeRecord?: (file: string, text: string) => Promise<unknown>;
    /** Turns an error thrown while writing into the message shown after "vibgate: ". */
    describeError?: (file: string, err: unknown) => string | undefined;
  },
  io: CliIo,
): Promise<boolean> {
  let unwritten = 0;
  const color = io.stdout.isTTY === true && !io.env.NO_COLOR;
  io.stdout.write(terminalReport(result, { color, quiet: options.quiet }));
  if (options.github) {
    io.stdout.write(githubAnnotations(result));
    const summaryFile = io.env.GITHUB_STEP_SUMMARY;
    if (summaryFile) {
      try {
        // appended, as GitHub documents: other steps' summaries share the file
        await appendFile(summaryFile, markdownSummary(result) + '\n');
      } catch (err) {
        io.stderr.write(`vibgate: Cannot write the job summary to "${summaryFile}": ${describeWriteError(summaryFile, err)}\n`);
        unwritten += 1;
      }
    }
  }
  const record = () => {
    const text = jsonRecord(result);
    if (!options.extraRecord) return text;
    return JSON.stringify({ ...(JSON.parse(text) as Record<string, unknown>), ...options.extraRecord }, null, 2) + '\n';
  };
  const writeRecord = options.writeRecord ?? writeFileAtomic;
  const outputs: Array<[string | undefined, (file: string) => Promise<unknown>]> = [
    [options.junit, (file) => writeFileAtomic(file, junitReport(result))],
    [options.json, (file) => writeRecord(file, record())],
    [options.html, (file) => writeFileAtomic(file, htmlReport(result, detail))],
  ];
  // Every output is attempted even when one cannot be written (a full disk, a missing
  // directory): the others still tell the CI server what was screened.
  for (const [file, write] of outputs) {
    if (!file) continue;
    try {
      await write(file);
    } catch (err) {
      io.stderr.write(`vibgate: ${options.describeError?.(file, err) ?? `Cannot write "${file}": ${describeWriteError(file, err)}`}\n`);
      unwritten += 1;
    }
  }
  return unwritten === 0;
}

/** Warnings of a result: findings on recordings and on channels with status warn. */
export function warningCount(result: GateResult): number {
  return result.recordings.reduce(
    (n, r) => n + r.findings.filter((f) => f.status === 'warn').length + r.channels.reduce((m, c) => m + c.findings.filter((f) => f.status === 'warn').length, 0),
    0,
  );
}

/** The gate's exit code: 0 pass or warn (within --max-warnings), else 1. */
export function gateExitCode(result: GateResult, options: { maxWarnings?: number }, io: CliIo): number {
  if (result.verdict !== 'pass' && result.verdict !== 'warn') return ExitCode.failed;
  const warnings = warningCount(result);
  if (options.maxWarnings !== undefined && warnings > options.maxWarnings) {
    io.stderr.write(`vibgate: ${warnings} warnings, more than --max-warnings ${options.maxWarnings}: the gate fails\n`);
    return ExitCode.failed;
  }
  return ExitCode.ok;
}
