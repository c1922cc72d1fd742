/**
 * `vibgate run --rules FILE RECORDINGS... -- COMMAND [ARGS...]`: the gate as a filter.
 * Screens the recordings as `vibgate screen` does (same reports), then runs COMMAND once on
 * the recordings that passed (pass or warn): their paths replace an argument that is
 * exactly `{}`, or are appended when there is none. The recordings that did not pass (fail,
 * unreadable, not judged) are held back. The JSON record lists both (`handedOn`,
 * `heldBack`, paths as given).
 *
 * Exit code: COMMAND's own (128 + the signal number when a signal ended it, 127 when it
 * could not be started); 1 when no recording passed (COMMAND is not run) or a report could
 * not be written (COMMAND is not run: the audit record must exist first); 2 on a usage or
 * rule-file error (nothing was screened).
 */
import { constants } from 'node:os';
import { execa } from 'execa';
import type { RecordingVerdict } from '../gate/types.js';
import type { ReportDetail } from '../report/detail.js';
import { ExitCode, type CliIo } from './io.js';
import { screenWithDetail, type ScreenOptions } from './screen.js';
import { gateResult, loadRulesReporting, reportGate } from './screen-core.js';

export interface RunOptions extends Omit<ScreenOptions, 'maxWarnings'> {
  /** The command and its arguments; `{}` stands for the paths of the recordings that passed. */
  command: string[];
}

/**
 * Splits `vibgate run` arguments at the first `--`: vibgate's own before it, the
 * downstream command after it (which may have options of its own that vibgate must not
 * parse). `command` is empty when there is no `--`.
 */
export function splitRunArgv(argv: string[]): { ours: string[]; command: string[] } {
  const dash = argv.indexOf('--');
  return dash < 0 ? { ours: argv, command: [] } : { ours: argv.slice(0, dash), command: argv.slice(dash + 1) };
}

/** COMMAND's arguments with the passed recordings in place of `{}`, or appended. */
export function downstreamArgs(args: string[], paths: string[]): string[] {
  return args.includes('{}') ? args.flatMap((a) => (a === '{}' ? paths : [a])) : [...args, ...paths];
}

const passed = (r: RecordingVerdict) => r.verdict === 'pass' || r.verdict === 'warn';

export async function runGated(paths: string[], io: CliIo, options: RunOptions): Promise<number> {
  if (options.command.length === 0 || options.command[0] === '') {
    io.stderr.write('vibgate: run needs the command to run after "--", for example: vibgate run --rules lab.yaml data/*.wav -- python spectra.py\n');
    return ExitCode.usage;
  }
  const rules = await loadRulesReporting(options.rules, options, io);
  if (rules === null) return ExitCode.usage;

  const recordings: RecordingVerdict[] = [];
  const detail: ReportDetail = new Map();
  for (const path of paths) {
    const screened = await screenWithDetail(path, rules, options, options.html !== undefined);
    recordings.push(screened.verdict);
    if (screened.detail) detail.set(path, screened.detail);
  }
  const handedOn = recordings.filter(passed).map((r) => r.path);
  const heldBack = recordings.filter((r) => !passed(r)).map((r) => r.path);
  const result = gateResult(recordings, rules, options.rules, options.now);
  if (!(await reportGate(result, detail, { ...options, extraRecord: { handedOn, heldBack } }, io))) {
    io.stderr.write(`vibgate: "${options.command[0]}" was not run: a report could not be written\n`);
    return ExitCode.failed;
  }

  const [file, ...args] = options.command;
  if (handedOn.length === 0) {
    io.stderr.write(`vibgate: no recording passed the gate; "${file}" was not run\n`);
    return ExitCode.failed;
  }
  const held = recordings.filter((r) => !passed(r)).map((r) => `${r.path} (${r.verdict})`);
  io.stderr.write(
    `vibgate: handing ${handedOn.length} of ${recordings.length} recordings to "${file}"` +
      (held.length > 0 ? `; held back: ${held.join(', ')}` : '') + '\n',
  );

  const child = execa(file, downstreamArgs(args, handedOn), {
    cwd: io.cwd,
    env: io.env,
    extendEnv: false,
    stdin: 'ignore',
    stdout: 'pipe',
    stderr: 'pipe',
    buffer: false,
    reject: false,
  });
  child.stdout?.on('data', (chunk: Buffer) => io.stdout.write(chunk.toString()));
  child.stderr?.on('data', (chunk: Buffer) => io.stderr.write(chunk.toString()));
  const outcome = await child;
  if (typeof outcome.exitCode === 'number') return outcome.exitCode;
  if (outcome.signal) {
    const number = constants.signals[outcome.signal as keyof typeof constants.signals] ?? 0;
    io.stderr.write(`vibgate: "${file}" was ended by ${outcome.signal}\n`);
    return 128 + number;
  }
  const why = (outcome as { code?: string }).code === 'ENOENT' ? 'no such command' : outcome.shortMessage ?? 'it could not be started';
  io.stderr.write(`vibgate: Cannot run "${file}": ${why}\n`);
  return 127;
}
