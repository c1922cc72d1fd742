import type { Finding, TimeSpan } from '../checks/types.js';
import type { ChannelVerdict, GateResult, RecordingVerdict, Verdict } from '../gate/types.js';

/**
 * The summary a person reads at the end of `vibgate screen`: one line per recording, then
 * only what warns or fails, then the overall verdict. The checks' messages already say what
 * was seen, where, against which limit and what usually causes it, so they are shown whole.
 */
export interface TerminalOptions {
  /** ANSI colour on the verdict words; the CLI decides (TTY, NO_COLOR). */
  color: boolean;
  /**
   * Only the recordings that fail the gate (fail or unreadable), with their failing findings
   * (warnings left out), and the final lines.
   */
  quiet?: boolean;
}

/** Said by every report: design.md, "Screening data is not a safety sign-off". */
export const NOT_A_SIGN_OFF =
  'Screening flags data that looks wrong; it is not a sign-off: decisions rest with qualified engineers.';

const WORD: Record<Verdict, string> = { pass: 'PASS', warn: 'WARN', fail: 'FAIL', error: 'ERROR', skip: 'SKIP' };
const WORD_WIDTH = 5;

// SGR codes: red, yellow, green, bold red, dim. Reset after each word so nothing leaks.
const SGR: Record<Verdict, string> = { fail: '31', warn: '33', pass: '32', error: '1;31', skip: '2' };

/** Terminal summary of a gate run; ends with a newline. */
export function terminalReport(result: GateResult, options: TerminalOptions): string {
  const quiet = options.quiet === true;
  const paint = (verdict: Verdict, text: string, bold = false) =>
    options.color ? `\x1b[${bold && !SGR[verdict].startsWith('1;') ? '1;' : ''}${SGR[verdict]}m${text}\x1b[0m` : text;
  const word = (verdict: Verdict, bold = false) => paint(verdict, WORD[verdict], bold) + ' '.repeat(WORD_WIDTH - WORD[verdict].length);

  const shown = quiet ? result.recordings.filter(failsGate) : result.recordings;
  const heads = shown.map((r) => ({ recording: r, counts: countsText(r), facts: factsText(r) }));
  const pathWidth = Math.max(0, ...heads.map((h) => width(h.recording.path)));
  const countsWidth = Math.max(0, ...heads.map((h) => width(h.counts)));

  const lines: string[] = [];
  for (const { recording, counts, facts } of heads) {
    const head = [word(recording.verdict), pad(recording.path, pathWidth)];
    if (counts || facts) head.push(pad(counts, countsWidth), facts);
    lines.push(head.join('  ').trimEnd());
    if (!quiet) for (const note of recording.notes) lines.push(`${INDENT}note: ${note}`);
    lines.push(...detailRows(recording, quiet, word));
  }

  if (lines.length > 0) lines.push('');
  lines.push(`${word(result.verdict, true)}  ${totalsText(result)}`);
  lines.push(NOT_A_SIGN_OFF);
  return lines.join('\n') + '\n';
}

const INDENT = ' '.repeat(WORD_WIDTH + 2);

/** What fails the gate (design.md, exit code 1): a failed check or an unreadable recording. */
function failsGate(r: RecordingVerdict): boolean {
  return r.verdict === 'fail' || r.verdict === 'error';
}

/** The rows under a recording line: who, status, check, message; columns aligned per recording. */
function detailRows(recording: RecordingVerdict, quiet: boolean, word: (v: Verdict) => string): string[] {
  const wanted = (f: Finding) => f.status === 'fail' || (!quiet && f.status === 'warn');
  const rows: Array<{ who: string; status: Verdict; check: string; message: string }> = [];
  if (recording.error !== null || recording.verdict === 'error') {
    rows.push({ who: '(recording)', status: 'error', check: 'read', message: recording.error ?? 'the recording could not be read' });
  }
  const add = (who: string, findings: Finding[]) => {
    let first = true;
    for (const f of findings.filter(wanted)) {
      rows.push({ who: first ? who : '', status: f.status === 'fail' ? 'fail' : 'warn', check: f.check, message: f.message });
      first = false;
    }
  };
  add('(recording)', recording.findings);
  for (const channel of recording.channels) add(channelLabel(channel), channel.findings);

  const whoWidth = Math.max(0, ...rows.map((r) => width(r.who)));
  const checkWidth = Math.max(0, ...rows.map((r) => width(r.check)));
  const messageColumn = INDENT.length + whoWidth + 2 + WORD_WIDTH + 2 + checkWidth + 2;
  return rows.map((r) => {
    // a message of several lines keeps its continuation lines under its first
    const message = r.message.split('\n').join('\n' + ' '.repeat(messageColumn));
    return `${INDENT}${pad(r.who, whoWidth)}  ${word(r.status)}  ${pad(r.check, checkWidth)}  ${message}`.trimEnd();
  });
}

function channelLabel(c: ChannelVerdict): string {
  return c.name === '' ? `#${c.index}` : c.name;
}

/** `3 channels: 1 failed, 1 warned, 1 passed`; empty for a recording without channels. */
function countsText(r: RecordingVerdict): string {
  if (r.channels.length === 0) return r.verdict === 'error' ? 'not read' : 'no channels';
  const n = tally(r.channels.map((c) => c.verdict));
  const parts = [
    n.fail ? `${n.fail} failed` : '',
    n.warn ? `${n.warn} warned` : '',
    n.pass ? `${n.pass} passed` : '',
    n.skip ? `${n.skip} not judged` : '',
    n.error ? `${n.error} unreadable` : '',
  ].filter(Boolean);
  return `${r.channels.length} ${r.channels.length === 1 ? 'channel' : 'channels'}: ${parts.join(', ')}`;
}

function factsText(r: RecordingVerdict): string {
  const parts: string[] = [];
  if (r.durationS !== null) parts.push(durationText(r.durationS));
  if (r.sampleRate !== null) parts.push(`${numberText(r.sampleRate, 6)} Hz`);
  return parts.join('  ');
}

function totalsText(result: GateResult): string {
  const rec = tally(result.recordings.map((r) => r.verdict));
  const n = result.recordings.length;
  const recordings = [
    rec.fail ? `${rec.fail} failed` : '',
    rec.error ? `${rec.error} unreadable` : '',
    rec.warn ? `${rec.warn} warned` : '',
    rec.pass ? `${rec.pass} passed` : '',
    rec.skip ? `${rec.skip} not judged` : '',
  ].filter(Boolean);
  const ch = tally(result.recordings.flatMap((r) => r.channels.map((c) => c.verdict)));
  const channels = [
    `${ch.fail} failed`,
    `${ch.warn} warned`,
    `${ch.pass} passed`,
    ch.skip ? `${ch.skip} not judged` : '',
  ].filter(Boolean);
  const head = `${n} ${n === 1 ? 'recording' : 'recordings'}${recordings.length ? ': ' + recordings.join(', ') : ''}`;
  return `${head}; channels: ${channels.join(', ')}`;
}

function tally(verdicts: Verdict[]): Record<Verdict, number> {
  const n: Record<Verdict, number> = { pass: 0, warn: 0, fail: 0, error: 0, skip: 0 };
  for (const v of verdicts) n[v]++;
  return n;
}

/**
 * A number as reports show it: `digits` significant digits without trailing zeros, an
 * exponent only outside 1e-3 … 1e6, ASCII minus so it can be pasted into a calculator.
 * Shared with the JUnit reporter so both read alike.
 */
export function numberText(value: number | null, digits = 4): string {
  if (value === null || Number.isNaN(value)) return 'n/a';
  if (value === Infinity) return 'inf';
  if (value === -Infinity) return '-inf';
  if (value === 0) return '0';
  const abs = Math.abs(value);
  if (abs >= 1e-3 && abs < 1e6) return Number(value.toPrecision(digits)).toString();
  return value.toExponential(digits - 1).replace(/\.?0+e/, 'e');
}

/** `12–13 s`, or `12 s` for an instant; times to the microsecond (a sample at 1 MHz). */
export function spanText(at: TimeSpan): string {
  const t = (s: number) => Number(s.toFixed(6)).toString();
  return at.endS > at.startS ? `${t(at.startS)}–${t(at.endS)} s` : `${t(at.startS)} s`;
}

/** `12.5 s`, `4 min 05.0 s`, `1 h 02 min`. */
export function durationText(seconds: number): string {
  if (!Number.isFinite(seconds)) return 'n/a';
  if (seconds < 60) return `${numberText(seconds)} s`;
  // round once, in the smallest unit shown, so 59.96 s reads `1 min 00.0 s`, never `60.0 s`
  const tenths = Math.round(seconds * 10);
  if (tenths < 36000) {
    const m = Math.floor(tenths / 600);
    return `${m} min ${((tenths - m * 600) / 10).toFixed(1).padStart(4, '0')} s`;
  }
  const minutes = Math.round(seconds / 60);
  const h = Math.floor(minutes / 60);
  return `${h} h ${String(minutes - h * 60).padStart(2, '0')} min`;
}

const width = (s: string) => [...s].length;
const pad = (s: string, w: number) => s + ' '.repeat(Math.max(0, w - width(s)));
