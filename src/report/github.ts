import type { Finding } from '../checks/types.js';
import type { ChannelVerdict, GateResult, RecordingVerdict, Verdict } from '../gate/types.js';
import { NOT_A_SIGN_OFF, durationText, numberText, spanText } from './terminal.js';

/**
 * GitHub Actions output of a gate run: workflow-command annotations for the step log and a
 * Markdown job summary (the CLI appends it to `$GITHUB_STEP_SUMMARY`). Both are pure
 * functions of the verdict, like every reporter; the CLI decides where they go.
 */

/**
 * GitHub shows at most 10 error and 10 warning annotations from one step (and 10 notices);
 * further workflow commands of a kind are silently dropped. So no more than that are
 * written, chosen so that every failing recording gets one before any gets a second, and a
 * final notice says how many were left out. The JUnit report and the JSON record still hold
 * every finding.
 */
export const ANNOTATIONS_PER_KIND = 10;

/**
 * Bytes of job summary written at most. GitHub refuses a step's summary over 1 MiB
 * (1024 KiB) and then shows none of it; 1000 KiB leaves room for whatever else the same
 * step appends.
 */
export const SUMMARY_MAX_BYTES = 1000 * 1024;

/** Table cells longer than this are cut (a read error may quote a file's bytes). */
const CELL_MAX_CHARS = 1000;

export interface AnnotationOptions {
  /** Annotations of each kind (error, warning) written at most; default ANNOTATIONS_PER_KIND. */
  perKind?: number;
}

export interface SummaryOptions {
  /** Size of the summary in UTF-8 bytes at most; default SUMMARY_MAX_BYTES. */
  maxBytes?: number;
}

type Kind = 'error' | 'warning';

interface Annotation {
  kind: Kind;
  file: string;
  title: string;
  message: string;
}

/**
 * GitHub Actions workflow commands, one line per failing (`::error`) or warning
 * (`::warning`) finding and one `::error` per recording that could not be read or none of
 * whose channels could be judged (both fail the gate), each with `file=<recording path>` and
 * `title=<channel> / <check>` (the JUnit testcase name, so the two can be matched). At most
 * `perKind` of each kind; when some are left out, a last `::notice` line counts them.
 * Empty when nothing fails or warns; otherwise ends with a newline.
 */
export function githubAnnotations(result: GateResult, options: AnnotationOptions = {}): string {
  const perKind = Math.max(0, Math.floor(options.perKind ?? ANNOTATIONS_PER_KIND));
  const perRecording = result.recordings.map(recordingAnnotations);
  const chosen = new Set<Annotation>();
  const leftOut: Record<Kind, number> = { error: 0, warning: 0 };
  for (const kind of ['error', 'warning'] as const) {
    const queues = perRecording.map((list) => list.filter((a) => a.kind === kind));
    let room = perKind;
    // round robin over the recordings: one bad file does not hide the others
    for (let round = 0; queues.some((q) => q.length > round); round++) {
      for (const q of queues) {
        if (round >= q.length) continue;
        if (room > 0) {
          chosen.add(q[round]);
          room--;
        } else {
          leftOut[kind]++;
        }
      }
    }
  }
  // written in report order (recording by recording), whatever order they were chosen in
  const lines = perRecording.flat().filter((a) => chosen.has(a)).map(command);
  if (leftOut.error + leftOut.warning > 0) {
    const counts = [
      leftOut.error ? `${leftOut.error} ${leftOut.error === 1 ? 'error' : 'errors'}` : '',
      leftOut.warning ? `${leftOut.warning} ${leftOut.warning === 1 ? 'warning' : 'warnings'}` : '',
    ].filter(Boolean);
    const text =
      `${counts.join(' and ')} not annotated: GitHub shows ${perKind} of each kind per step. ` +
      'Every finding is in the JUnit report and the JSON record.';
    lines.push(`::notice title=${property(`${result.tool.name}: annotations left out`)}::${data(text)}`);
  }
  return lines.length ? lines.join('\n') + '\n' : '';
}

/** What one recording contributes, in report order: read error, its own findings, channels. */
function recordingAnnotations(r: RecordingVerdict): Annotation[] {
  const out: Annotation[] = [];
  if (r.error !== null || r.verdict === 'error') {
    out.push({ kind: 'error', file: r.path, title: '(recording) / read', message: r.error ?? `The recording "${r.path}" could not be read` });
  }
  const add = (who: string, findings: Finding[]) => {
    for (const f of findings) {
      if (f.status !== 'fail' && f.status !== 'warn') continue;
      out.push({ kind: f.status === 'fail' ? 'error' : 'warning', file: r.path, title: `${who} / ${f.check}`, message: f.message });
    }
  };
  add('(recording)', r.findings);
  const labels = channelLabels(r.channels);
  r.channels.forEach((c, i) => add(labels[i], c.findings));
  if (r.verdict === 'skip' && r.error === null) {
    out.push({ kind: 'error', file: r.path, title: '(recording) / not judged', message: notJudgedText(r) });
  }
  return out;
}

function command(a: Annotation): string {
  return `::${a.kind} file=${property(a.file)},title=${property(a.title)}::${data(a.message)}`;
}

/** Workflow-command data: `%`, CR and LF are percent-encoded (`%` first, so nothing doubles). */
function data(text: string): string {
  return text.replaceAll('%', '%25').replaceAll('\r', '%0D').replaceAll('\n', '%0A');
}

/** A workflow-command property value: as data, and `:` and `,`, which end a value. */
function property(text: string): string {
  return data(text).replaceAll(':', '%3A').replaceAll(',', '%2C');
}

/**
 * A Markdown job summary: the overall verdict, a table of the recordings, then for each
 * recording that fails, warns or was not screened a table of its failing and warning
 * findings; the rule file with the SHA-256 of every file in its extends chain; and the
 * caution that screening is not a sign-off. Text from the data (paths, channel names,
 * messages) is escaped so that it renders as written and cannot break a table. When the
 * summary would be larger than `maxBytes`, whole rows and sections are left out from the
 * end, and a note says so; the caution is always last.
 */
export function markdownSummary(result: GateResult, options: SummaryOptions = {}): string {
  const maxBytes = options.maxBytes ?? SUMMARY_MAX_BYTES;
  // Each block is kept or left out whole; a table's head travels with its first row.
  const blocks: string[] = [];
  blocks.push(`## ${md(result.tool.name)}: ${VERDICT_WORD[result.verdict]}, ${OUTCOME[result.verdict]}\n`);
  blocks.push(totalsText(result) + '\n');
  blocks.push(rulesText(result) + '\n');

  if (result.recordings.length > 0) {
    const head = tableHead(['verdict', 'recording', 'failed', 'warned', 'passed', 'not judged', 'duration', 'sample rate'], [2, 3, 4, 5]);
    result.recordings.forEach((r, i) => {
      const row = tableRow([
        VERDICT_WORD[r.verdict],
        md(r.path),
        ...channelCounts(r),
        r.durationS === null ? '—' : durationText(r.durationS),
        r.sampleRate === null ? '—' : `${numberText(r.sampleRate, 6)} Hz`,
      ]);
      blocks.push(i === 0 ? head + row : row);
    });
    blocks.push('');
  }

  for (const r of result.recordings) blocks.push(...recordingSection(r));

  const caution = `---\n\n${NOT_A_SIGN_OFF}\n`;
  return fitToSize(blocks, caution, maxBytes);
}

const VERDICT_WORD: Record<Verdict, string> = { pass: 'PASS', warn: 'WARN', fail: 'FAIL', error: 'ERROR', skip: 'NOT JUDGED' };

const OUTCOME: Record<Verdict, string> = {
  pass: 'the gate passed',
  warn: 'the gate passed with warnings',
  fail: 'the gate failed',
  error: 'the gate failed: a recording could not be read',
  skip: 'the gate failed: nothing could be judged',
};

function totalsText(result: GateResult): string {
  const rec = tally(result.recordings.map((r) => r.verdict));
  const ch = tally(result.recordings.flatMap((r) => r.channels.map((c) => c.verdict)));
  const n = result.recordings.length;
  const recordings = [
    rec.fail ? `${rec.fail} failed` : '',
    rec.error ? `${rec.error} unreadable` : '',
    rec.skip ? `${rec.skip} not judged` : '',
    rec.warn ? `${rec.warn} warned` : '',
    rec.pass ? `${rec.pass} passed` : '',
  ].filter(Boolean);
  const channels = [`${ch.fail} failed`, `${ch.warn} warned`, `${ch.pass} passed`, ch.skip ? `${ch.skip} not judged` : ''].filter(Boolean);
  return `${n} ${n === 1 ? 'recording' : 'recordings'}${recordings.length ? ': ' + recordings.join(', ') : ''}; channels: ${channels.join(', ')}.`;
}

function rulesText(result: GateResult): string {
  const { rules } = result;
  const lines = [`Rules: **${md(rules.name)}** from ${md(rules.path)}, sha256 ${code(rules.sha256)}`];
  // the given file is files[0]; the rest is what it extends, each hashed for the audit trail
  for (const f of rules.files.slice(1)) lines.push(`- extends ${md(f.path)}, sha256 ${code(f.sha256)}`);
  lines.push('', `Screened by ${md(result.tool.name)} ${md(result.tool.version)} at ${md(result.createdAt)}.`);
  return lines.join('\n');
}

/** failed, warned, passed, not judged: counts of channel verdicts; dashes when not read. */
function channelCounts(r: RecordingVerdict): string[] {
  if (r.channels.length === 0) return ['—', '—', '—', '—'];
  const n = tally(r.channels.map((c) => c.verdict));
  return [n.fail, n.warn, n.pass, n.skip + n.error].map(String);
}

function recordingSection(r: RecordingVerdict): string[] {
  const unreadable = r.error !== null || r.verdict === 'error';
  const bad = (f: Finding) => f.status === 'fail' || f.status === 'warn';
  const rows: string[] = [];
  const labels = channelLabels(r.channels);
  for (const f of r.findings.filter(bad)) rows.push(findingRow('(recording)', f));
  r.channels.forEach((c, i) => {
    for (const f of c.findings.filter(bad)) rows.push(findingRow(labels[i], f));
  });
  if (!unreadable && r.verdict !== 'skip' && rows.length === 0) return [];

  const blocks = [`### ${VERDICT_WORD[r.verdict]}: ${md(r.path)}\n`];
  if (unreadable) blocks.push(`Could not be read: ${md(cut(r.error ?? 'the recording could not be read'))}\n`);
  else if (r.verdict === 'skip') blocks.push(`${md(notJudgedText(r))}\n`);
  const head = tableHead(['channel', 'status', 'check', 'value', 'limit', 'where', 'message'], [3]);
  rows.forEach((row, i) => blocks.push(i === 0 ? head + row : row));
  if (rows.length > 0) blocks.push('');
  return blocks;
}

function findingRow(who: string, f: Finding): string {
  return tableRow([
    md(who),
    f.status === 'fail' ? 'FAIL' : 'WARN',
    md(f.check),
    f.value === null ? 'not measured' : md(numberText(f.value, 6) + (f.unit ? ` ${f.unit}` : '')),
    md(cut(f.limit)),
    f.at === null ? '—' : md(spanText(f.at)),
    md(cut(f.message)),
  ]);
}

function notJudgedText(r: RecordingVerdict): string {
  return r.channels.length === 0
    ? `No channel of "${r.path}" could be judged: it has none, so it was not screened and fails the gate.`
    : `None of the ${r.channels.length} channels of "${r.path}" could be judged, so it was not screened and fails the gate.`;
}

/** Keeps the blocks that fit, then a note on what was left out, then the caution. */
function fitToSize(blocks: string[], caution: string, maxBytes: number): string {
  const bytes = (s: string) => Buffer.byteLength(s, 'utf8') + 1; // + the newline that joins it
  const note = (rows: number) =>
    `*Summary cut to stay under GitHub's size limit: ${rows} more table ${rows === 1 ? 'row' : 'rows'} left out. ` +
    'Every finding is in the JUnit report and the JSON record.*\n';
  // room for the note with the largest count it could give
  const reserve = bytes(caution) + bytes(note(blocks.length)) + 1;
  const kept: string[] = [];
  let used = 0;
  for (const block of blocks) {
    // the heading always stays, so even a tiny budget says what the verdict was
    if (kept.length > 0 && used + bytes(block) + reserve > maxBytes) break;
    kept.push(block);
    used += bytes(block);
  }
  const left = blocks.slice(kept.length);
  if (left.length > 0) {
    if (kept.at(-1) !== '') kept.push(''); // end the table the cut stopped in
    kept.push(note(left.filter(isRow).length));
  }
  kept.push(caution);
  return kept.join('\n');
}

/** A block that holds a table's data row (a table's first row carries its head with it). */
const isRow = (block: string) => block.startsWith('|');

/** A table's header and separator lines; `right` are the columns aligned right (numbers). */
function tableHead(titles: string[], right: number[]): string {
  const rule = titles.map((_, i) => (right.includes(i) ? '---:' : '---'));
  return tableRow(titles) + '\n' + tableRow(rule) + '\n';
}

function tableRow(cells: string[]): string {
  return `| ${cells.join(' | ')} |`;
}

/**
 * Text from the data as Markdown that renders as written: every character GitHub's Markdown
 * would read as markup is backslash-escaped (`|` included, so a table keeps its columns, and
 * `$`, which starts math), and line breaks become `<br>`, since a table row is one line.
 */
function md(text: string): string {
  return text.replace(/[\\`*_[\]<>|~&$#]/g, (c) => `\\${c}`).replace(/\r\n|\r|\n/g, '<br>');
}

/** A hash or other token known to be plain: code span. */
function code(text: string): string {
  return /^[0-9A-Za-z.+-]*$/.test(text) ? `\`${text}\`` : md(text);
}

function cut(text: string): string {
  const chars = [...text];
  return chars.length > CELL_MAX_CHARS ? chars.slice(0, CELL_MAX_CHARS - 1).join('') + '…' : text;
}

/**
 * Channel names as annotation titles and table labels, the same as the JUnit testcase names:
 * an unnamed channel is `#<index>`, a name two channels share gets its index.
 */
function channelLabels(channels: ChannelVerdict[]): string[] {
  const seen = new Map<string, number>();
  for (const c of channels) seen.set(c.name, (seen.get(c.name) ?? 0) + 1);
  return channels.map((c) => (c.name === '' ? `#${c.index}` : seen.get(c.name)! > 1 ? `${c.name} #${c.index}` : c.name));
}

function tally(verdicts: Verdict[]): Record<Verdict, number> {
  const n: Record<Verdict, number> = { pass: 0, warn: 0, fail: 0, error: 0, skip: 0 };
  for (const v of verdicts) n[v]++;
  return n;
}
