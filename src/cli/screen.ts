import { openRecording } from '../readers/index.js';
import { summariseBlocks } from '../stats/summarise.js';
import { RecordingError } from '../errors.js';
import { judgeRecording, unreadableRecording, worst } from '../gate/judge.js';
import type { GateResult, RecordingVerdict } from '../gate/types.js';
import { formatProblem, loadRules, RulesError } from '../rules/load.js';
import type { ResolvedRules } from '../rules/types.js';
import { junitReport } from '../report/junit.js';
import { jsonRecord } from '../report/json-record.js';
import { terminalReport } from '../report/terminal.js';
import { tool } from '../version.js';
import { sha256File } from './hash.js';
import { writeFileAtomic } from './write-atomic.js';
import { ExitCode, type CliIo } from './io.js';

export interface ScreenOptions {
  rules: string;
  junit?: string;
  json?: string;
  quiet?: boolean;
  maxWarnings?: number;
  sidecar?: string;
  sampleRate?: number;
  decimalComma?: boolean;
  /** Directories `extends` may read from besides the rule file's own tree and rules/. */
  rulesRoots?: string[];
  /** For reproducible records in tests: the time written into them. */
  now?: () => Date;
}

/** Reads, summarises and judges one recording; a read failure becomes an `error` verdict. */
export async function screenRecording(path: string, rules: ResolvedRules, options: ScreenOptions): Promise<RecordingVerdict> {
  let sha256: string | null = null;
  try {
    const recording = await openRecording(path, { sidecar: options.sidecar, sampleRate: options.sampleRate, decimalComma: options.decimalComma });
    // the hash is read alongside the statistics pass (from the page cache), not after it
    const hashing = sha256File(path).catch(() => null);
    const summary = await summariseBlocks(recording.blocks(), recording, rules.analysis);
    sha256 = await hashing;
    return judgeRecording(
      { path, sha256, format: recording.format, sampleRate: recording.sampleRate, channels: recording.channels, notes: recording.notes, summary },
      rules,
    );
  } catch (err) {
    if (err instanceof RecordingError) return unreadableRecording(path, err.message, sha256);
    if (err instanceof RangeError) return unreadableRecording(path, `Cannot screen "${path}": ${err.message}`, sha256);
    throw err;
  }
}

/** `vibgate screen`: the gate. Exit 0 pass (warnings allowed), 1 failed or unreadable, 2 usage or rules. */
export async function runScreen(paths: string[], options: ScreenOptions, io: CliIo): Promise<number> {
  let rules: ResolvedRules;
  try {
    rules = await loadRules(options.rules, { allowRoots: options.rulesRoots, cwd: io.cwd });
  } catch (err) {
    if (err instanceof RulesError) {
      for (const p of err.problems) io.stderr.write(`vibgate: ${formatProblem(p)}\n`);
      io.stderr.write('vibgate: nothing was screened\n');
      return ExitCode.usage;
    }
    throw err;
  }
  const recordings: RecordingVerdict[] = [];
  for (const path of paths) recordings.push(await screenRecording(path, rules, options));
  const result: GateResult = {
    tool,
    createdAt: (options.now?.() ?? new Date()).toISOString(),
    rules: { name: rules.name, path: options.rules, sha256: rules.files[0].sha256, files: rules.files },
    verdict: worst(recordings.map((r) => r.verdict)),
    recordings,
  };

  const color = io.stdout.isTTY === true && !io.env.NO_COLOR;
  io.stdout.write(terminalReport(result, { color, quiet: options.quiet }));

  const outputs: Array<[string | undefined, () => string]> = [
    [options.junit, () => junitReport(result)],
    [options.json, () => jsonRecord(result)],
  ];
  for (const [file, render] of outputs) {
    if (!file) continue;
    try {
      await writeFileAtomic(file, render());
    } catch (err) {
      io.stderr.write(`vibgate: Cannot write "${file}": ${(err as Error).message}\n`);
      return ExitCode.failed;
    }
  }

  const warnings = recordings.reduce(
    (n, r) => n + r.findings.filter((f) => f.status === 'warn').length + r.channels.reduce((m, c) => m + c.findings.filter((f) => f.status === 'warn').length, 0),
    0,
  );
  if (result.verdict === 'pass' || result.verdict === 'warn') {
    if (options.maxWarnings !== undefined && warnings > options.maxWarnings) {
      io.stderr.write(`vibgate: ${warnings} warnings, more than --max-warnings ${options.maxWarnings}: the gate fails\n`);
      return ExitCode.failed;
    }
    return ExitCode.ok;
  }
  return ExitCode.failed;
}
