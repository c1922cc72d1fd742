import { describe, expect, it } from 'vitest';
import type { Finding } from '../../src/checks/types.js';
import type { GateResult, RecordingVerdict } from '../../src/gate/types.js';
import { ANNOTATIONS_PER_KIND, SUMMARY_MAX_BYTES, githubAnnotations, markdownSummary } from '../../src/report/github.js';
import { NOT_A_SIGN_OFF } from '../../src/report/terminal.js';
import {
  FS,
  channel,
  durationFailure,
  finding,
  gaussianStats,
  kurtosisFailure,
  mixedResult,
  passingResult,
  readError,
  sha256,
  symmetryWarning,
} from '../helpers/gate-fixtures.js';

// ---------------------------------------------------------------------------------------
// Reading workflow commands back the way the runner does: `::kind k=v,k=v::data`, where a
// property value has `%`, CR, LF, `:` and `,` percent-encoded and the data `%`, CR and LF.

interface Command {
  kind: string;
  properties: Record<string, string>;
  data: string;
}

const unescapeData = (s: string) => s.replaceAll('%0D', '\r').replaceAll('%0A', '\n').replaceAll('%25', '%');
const unescapeProperty = (s: string) =>
  s.replaceAll('%0D', '\r').replaceAll('%0A', '\n').replaceAll('%3A', ':').replaceAll('%2C', ',').replaceAll('%25', '%');

function parseCommand(line: string): Command {
  // a property value holds no `:` (escaped), so the first `::` after the head ends them
  const m = /^::([a-z]+)(?: ([^:]*))?::(.*)$/.exec(line);
  expect(m, `a workflow command: ${line}`).not.toBeNull();
  const properties: Record<string, string> = {};
  for (const pair of (m![2] ?? '').split(',').filter(Boolean)) {
    const eq = pair.indexOf('=');
    expect(eq, `a key=value property in ${line}`).toBeGreaterThan(0);
    properties[pair.slice(0, eq)] = unescapeProperty(pair.slice(eq + 1));
  }
  return { kind: m![1], properties, data: unescapeData(m![3]) };
}

const commandLines = (text: string) => text.split('\n').filter((l) => l !== '');
const commands = (text: string) => commandLines(text).map(parseCommand);

/** What the reporter should annotate, computed from the result itself. */
function expectedAnnotations(result: GateResult) {
  const out: Array<{ kind: string; file: string; title: string; data: string }> = [];
  for (const r of result.recordings) {
    if (r.error !== null) out.push({ kind: 'error', file: r.path, title: '(recording) / read', data: r.error });
    const add = (who: string, findings: Finding[]) => {
      for (const f of findings) {
        if (f.status === 'fail') out.push({ kind: 'error', file: r.path, title: `${who} / ${f.check}`, data: f.message });
        if (f.status === 'warn') out.push({ kind: 'warning', file: r.path, title: `${who} / ${f.check}`, data: f.message });
      }
    };
    add('(recording)', r.findings);
    for (const c of r.channels) add(c.name, c.findings);
  }
  return out;
}

// ---------------------------------------------------------------------------------------
// Hand-built results beyond the shared fixtures.

const stats = gaussianStats(11);

function recording(path: string, channels: RecordingVerdict['channels'], verdict: RecordingVerdict['verdict'], findings: Finding[] = []): RecordingVerdict {
  return {
    path, sha256: sha256(path), verdict, error: null, format: 'wav', sampleRate: FS, durationS: 30, samples: 30 * FS,
    findings, channels, notes: [],
  };
}

function withRecordings(...recordings: RecordingVerdict[]): GateResult {
  return { ...mixedResult(), verdict: 'fail', recordings };
}

/** Recording `path` with `fails` failing and `warns` warning channels, named `<prefix>-NN`. */
function manyFindings(path: string, prefix: string, fails: number, warns: number, message = (i: number) => `fault number ${i}`): RecordingVerdict {
  const channels: RecordingVerdict['channels'] = [];
  for (let i = 0; i < fails + warns; i++) {
    const status = i < fails ? 'fail' : 'warn';
    const name = `${prefix}-${String(i).padStart(2, '0')}`;
    channels.push(channel(i, name, status, [finding('kurtosis', status, { message: message(i) })], stats));
  }
  return recording(path, channels, fails > 0 ? 'fail' : 'warn');
}

/** A recording whose names and message hold every character the formats must escape. */
function hostileResult(): GateResult {
  const message = '100% of frames over: 3, 4, and 5\r\nsee the | column $x$ and *this* <b>bold</b> `code`';
  const rec = recording('runs/day 2, rig:A|B.wav', [
    channel(0, 'acc,01:x|y', 'fail', [finding('crest-factor', 'fail', { message, limit: '≤ 6 | 7', at: { startS: 1.5, endS: 2 } })], stats),
  ], 'fail');
  return withRecordings(rec);
}

// ---------------------------------------------------------------------------------------

describe('githubAnnotations', () => {
  it('writes one line per failing or warning finding and per unreadable recording, nothing else', () => {
    const result = mixedResult();
    const text = githubAnnotations(result);
    const got = commands(text).map((c) => ({ kind: c.kind, file: c.properties.file, title: c.properties.title, data: c.data }));
    const want = expectedAnnotations(result);
    expect(want).toHaveLength(4); // kurtosis fail, symmetry warn, duration fail, read error
    expect(got).toEqual(want);
    expect(text.endsWith('\n')).toBe(true);
  });

  it('uses ::error for a failed check, ::warning for a warning, with the recording as file', () => {
    const lines = commandLines(githubAnnotations(mixedResult()));
    expect(lines).toContain(`::error file=runs/shaker-a.wav,title=acc-02 / kurtosis::${kurtosisFailure.message}`);
    expect(lines).toContain(`::warning file=runs/shaker-a.wav,title=mic-01 / symmetry::${symmetryWarning.message}`);
    expect(lines).toContain(`::error file=runs/short-b.csv,title=(recording) / min-duration::${durationFailure.message}`);
  });

  it('reports an unreadable recording as an error line with the read error', () => {
    const lines = commandLines(githubAnnotations(mixedResult()));
    expect(lines).toContain(`::error file=runs/broken.wav,title=(recording) / read::${readError}`);
  });

  it('leaves out passing and skipped findings', () => {
    const text = githubAnnotations(mixedResult());
    expect(text).not.toContain('crest-factor'); // passes on acc-01 and acc-02
    expect(text).not.toContain('skewness'); // skipped on acc-04
    expect(text).not.toContain('sample-rate'); // passes on shaker-a
    expect(githubAnnotations(passingResult())).toBe('');
  });

  it('annotates a recording none of whose channels could be judged, since it fails the gate', () => {
    const rec = recording('runs/quiet.wav', [channel(0, 'acc-01', 'skip', [finding('kurtosis', 'skip')], stats)], 'skip');
    const [only, ...rest] = commands(githubAnnotations(withRecordings(rec)));
    expect(rest).toEqual([]);
    expect(only.kind).toBe('error');
    expect(only.properties).toEqual({ file: 'runs/quiet.wav', title: '(recording) / not judged' });
    expect(only.data).toContain('could be judged');
  });

  it('escapes data and property values as GitHub documents', () => {
    const line = commandLines(githubAnnotations(hostileResult()))[0];
    // the exact bytes: `%` first, CR and LF in the data; `:` and `,` too in the properties
    expect(line).toBe(
      '::error file=runs/day 2%2C rig%3AA|B.wav,title=acc%2C01%3Ax|y / crest-factor::' +
        '100%25 of frames over: 3, 4, and 5%0D%0Asee the | column $x$ and *this* <b>bold</b> `code`',
    );
    // and read back they are what the result holds
    const c = parseCommand(line);
    expect(c.properties).toEqual({ file: 'runs/day 2, rig:A|B.wav', title: 'acc,01:x|y / crest-factor' });
    expect(c.data).toBe(hostileResult().recordings[0].channels[0].findings[0].message);
  });

  it('does not double-escape a message that already looks escaped', () => {
    const rec = recording('a.wav', [channel(0, 'c', 'fail', [finding('dropout', 'fail', { message: 'literally %0A and %25' })], stats)], 'fail');
    const c = commands(githubAnnotations(withRecordings(rec)))[0];
    expect(c.data).toBe('literally %0A and %25');
  });

  it(`writes at most ${ANNOTATIONS_PER_KIND} errors and ${ANNOTATIONS_PER_KIND} warnings, then a notice with the count left out`, () => {
    const result = withRecordings(
      manyFindings('runs/a.wav', 'a', 18, 7),
      manyFindings('runs/b.wav', 'b', 4, 9),
      { ...recording('runs/c.wav', [], 'error'), error: 'Cannot read "runs/c.wav": not a WAV file' },
    );
    const all = commands(githubAnnotations(result));
    const errors = all.filter((c) => c.kind === 'error');
    const warnings = all.filter((c) => c.kind === 'warning');
    expect(errors).toHaveLength(ANNOTATIONS_PER_KIND);
    expect(warnings).toHaveLength(ANNOTATIONS_PER_KIND);
    // 18 + 4 failures and an unreadable file = 23 errors; 7 + 9 = 16 warnings
    const notice = all.at(-1)!;
    expect(notice.kind).toBe('notice');
    expect(notice.data).toMatch(/^13 errors and 6 warnings not annotated/);
    expect(all).toHaveLength(2 * ANNOTATIONS_PER_KIND + 1);
    // every recording with errors gets one before any gets many
    expect(new Set(errors.map((c) => c.properties.file))).toEqual(new Set(['runs/a.wav', 'runs/b.wav', 'runs/c.wav']));
    expect(errors.filter((c) => c.properties.title === '(recording) / read')).toHaveLength(1);
    // each line written is a real finding, none twice
    const want = expectedAnnotations(result).map((a) => `${a.kind} ${a.file} ${a.title}`);
    const got = [...errors, ...warnings].map((c) => `${c.kind} ${c.properties.file} ${c.properties.title}`);
    expect(new Set(got).size).toBe(got.length);
    for (const g of got) expect(want).toContain(g);
  });

  it('follows a smaller cap when asked, and writes no notice when nothing is left out', () => {
    const result = withRecordings(manyFindings('runs/a.wav', 'a', 3, 2));
    const capped = commands(githubAnnotations(result, { perKind: 2 }));
    expect(capped.map((c) => c.kind)).toEqual(['error', 'error', 'warning', 'warning', 'notice']);
    expect(capped.at(-1)!.data).toMatch(/^1 error not annotated: GitHub shows 2 of each kind per step/);
    const whole = commands(githubAnnotations(result));
    expect(whole.map((c) => c.kind)).toEqual(['error', 'error', 'error', 'warning', 'warning']);
  });
});

// ---------------------------------------------------------------------------------------
// Reading Markdown tables back: rows are lines that start with `|`; cells are split at a `|`
// not escaped with a backslash.

function cells(row: string): string[] {
  expect(row.startsWith('| ') && row.endsWith(' |'), `a table row: ${row}`).toBe(true);
  const inner = row.slice(2, -2);
  const out: string[] = [];
  let cell = '';
  for (let i = 0; i < inner.length; i++) {
    if (inner[i] === '\\' && i + 1 < inner.length) {
      cell += inner[i] + inner[i + 1];
      i++;
    } else if (inner.startsWith(' | ', i)) {
      out.push(cell);
      cell = '';
      i += 2;
    } else {
      cell += inner[i];
    }
  }
  out.push(cell);
  return out;
}

/** Every table in the text: consecutive `|` lines, as rows of cells. */
function tables(text: string): string[][][] {
  const found: string[][][] = [];
  let current: string[][] | null = null;
  for (const line of text.split('\n')) {
    if (line.startsWith('|')) {
      if (current === null) found.push((current = []));
      current.push(cells(line));
    } else {
      current = null;
    }
  }
  return found;
}

function expectWellFormed(text: string) {
  const all = tables(text);
  for (const table of all) {
    const width = table[0].length;
    for (const row of table) expect(row, `row ${row.join(' | ')}`).toHaveLength(width);
    expect(table[1].every((c) => /^---:?$/.test(c)), 'the second row is the separator').toBe(true);
    expect(table.length, 'a table has a head and at least one row').toBeGreaterThanOrEqual(3);
  }
  // a table starts after a blank line and ends before one, or it swallows its neighbours
  const lines = text.split('\n');
  lines.forEach((line, i) => {
    if (!line.startsWith('|')) return;
    if (i > 0 && !lines[i - 1].startsWith('|')) expect(lines[i - 1]).toBe('');
    if (i + 1 < lines.length && !lines[i + 1].startsWith('|')) expect(lines[i + 1]).toBe('');
  });
  return all;
}

/** Markdown text back to what it shows: backslash escapes and `<br>` undone. */
const shown = (cell: string) => cell.replace(/\\(.)/g, '$1').replaceAll('<br>', '\n');

const rowOf = (table: string[][], first: string) => table.find((r) => shown(r[0]) === first || shown(r[1]) === first);

describe('markdownSummary', () => {
  const text = markdownSummary(mixedResult());

  it('opens with the overall verdict', () => {
    expect(text.split('\n')[0]).toBe('## vibgate: ERROR, the gate failed: a recording could not be read');
    expect(markdownSummary(passingResult()).split('\n')[0]).toBe('## vibgate: PASS, the gate passed');
  });

  it('has a table of the recordings: verdict, path, channel counts, duration, sample rate', () => {
    const [recordings] = expectWellFormed(text);
    expect(recordings[0]).toEqual(['verdict', 'recording', 'failed', 'warned', 'passed', 'not judged', 'duration', 'sample rate']);
    expect(recordings.slice(2)).toEqual([
      ['FAIL', 'runs/shaker-a.wav', '1', '1', '1', '1', '30 s', '1024 Hz'],
      ['FAIL', 'runs/short-b.csv', '0', '0', '1', '0', '12.5 s', '1024 Hz'],
      ['ERROR', 'runs/broken.wav', '—', '—', '—', '—', '—', '—'],
    ]);
  });

  it('has, per failing or warning recording, a table of its failing and warning findings', () => {
    const [, shaker, short] = expectWellFormed(text);
    expect(shaker[0]).toEqual(['channel', 'status', 'check', 'value', 'limit', 'where', 'message']);
    const kurtosis = rowOf(shaker, 'acc-02')!;
    expect(kurtosis.map(shown)).toEqual(['acc-02', 'FAIL', 'kurtosis', '9.5', kurtosisFailure.limit, '12–13 s', kurtosisFailure.message]);
    expect(rowOf(shaker, 'mic-01')!.map(shown)).toEqual(['mic-01', 'WARN', 'symmetry', '1.75', '≤ 1.4', '—', symmetryWarning.message]);
    expect(shaker).toHaveLength(4); // passing acc-01 and unjudged acc-04 are not listed
    expect(rowOf(short, '(recording)')!.map(shown)).toEqual(['(recording)', 'FAIL', 'min-duration', '12.5 s', '≥ 30 s', '—', durationFailure.message]);
    const headings = text.split('\n').filter((l) => l.startsWith('### '));
    expect(headings).toEqual(['### FAIL: runs/shaker-a.wav', '### FAIL: runs/short-b.csv', '### ERROR: runs/broken.wav']);
  });

  it('says why an unreadable recording could not be read', () => {
    const section = text.slice(text.indexOf('### ERROR: runs/broken.wav'));
    expect(section).toContain(`Could not be read: ${readError}`);
  });

  it('names the rule file and every file it extends with its sha256', () => {
    const { rules } = mixedResult();
    expect(text).toContain(`**${rules.name}** from ${rules.path}, sha256 \`${rules.sha256}\``);
    for (const f of rules.files.slice(1)) expect(text).toContain(`extends ${f.path}, sha256 \`${f.sha256}\``);
  });

  it('ends with the caution that screening is not a sign-off', () => {
    for (const summary of [text, markdownSummary(passingResult())]) {
      expect(summary.trimEnd().split('\n').at(-1)).toBe(NOT_A_SIGN_OFF);
    }
  });

  it('lists no findings for a passing run', () => {
    const summary = markdownSummary(passingResult());
    expect(tables(summary)).toHaveLength(1);
    expect(summary).not.toContain('###');
  });

  it('escapes | and line breaks in cells so every row keeps its cells, and shows the text as written', () => {
    const result = hostileResult();
    const summary = markdownSummary(result);
    const [recordings, findings] = expectWellFormed(summary);
    expect(shown(recordings[2][1])).toBe(result.recordings[0].path);
    const f = result.recordings[0].channels[0].findings[0];
    const row = findings[2];
    expect(shown(row[0])).toBe('acc,01:x|y');
    expect(shown(row[4])).toBe(f.limit);
    // a CR LF becomes one <br>: a table row is one line
    expect(shown(row[6])).toBe(f.message.replace('\r\n', '\n'));
    expect(row[6]).not.toMatch(/[\r\n]/);
    // markup in the data is shown, not rendered: no math, emphasis, HTML or code spans
    expect(row[6]).toContain('\\$x\\$');
    expect(row[6]).toContain('\\*this\\*');
    expect(row[6]).toContain('\\<b\\>');
    expect(row[6]).toContain('\\`code\\`');
  });

  it(`stays under GitHub's 1 MiB summary limit, cut at whole rows with a note`, () => {
    const long = (i: number) => `fault number ${i}: ` + 'frame kurtosis far above the range, a loose connector? '.repeat(8);
    const result = withRecordings(manyFindings('runs/a.wav', 'a', 2000, 500, long), manyFindings('runs/b.wav', 'b', 1000, 0, long));
    const summary = markdownSummary(result);
    const bytes = Buffer.byteLength(summary, 'utf8');
    expect(SUMMARY_MAX_BYTES).toBeLessThanOrEqual(1024 * 1024);
    expect(bytes).toBeLessThanOrEqual(SUMMARY_MAX_BYTES);
    expect(bytes).toBeGreaterThan(SUMMARY_MAX_BYTES - 2048); // filled, not cut far too early
    expectWellFormed(summary);
    const rows = tables(summary).reduce((n, t) => n + t.length - 2, 0);
    const written = 2 + 2500 + 1000; // recordings, then every finding, if nothing were cut
    const note = /(\d+) more table rows left out/.exec(summary);
    expect(note).not.toBeNull();
    expect(rows + Number(note![1])).toBe(written);
    expect(summary.trimEnd().split('\n').at(-1)).toBe(NOT_A_SIGN_OFF);
  });

  it('keeps to a smaller budget when asked, still with the verdict and the caution', () => {
    const summary = markdownSummary(mixedResult(), { maxBytes: 1500 });
    expect(Buffer.byteLength(summary, 'utf8')).toBeLessThanOrEqual(1500);
    expect(summary.split('\n')[0]).toMatch(/^## vibgate: ERROR/);
    expect(summary).toMatch(/\d+ more table rows? left out/);
    expect(summary.trimEnd().split('\n').at(-1)).toBe(NOT_A_SIGN_OFF);
    expectWellFormed(summary);
    expect(text).not.toContain('left out'); // the full summary is not cut
  });
});
