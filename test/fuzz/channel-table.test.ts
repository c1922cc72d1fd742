/**
 * Fuzzing the campaign channel table (CSV): random tables of token soup (column names,
 * numbers in odd forms, quotes, separators, byte order marks, zero bytes, very long lines,
 * many columns) must end in a table or a RecordingError naming the table that lists its
 * problems as `line:column ...`; valid random tables, written in any column order, any of
 * the three separators, quoted or not, with blank and comment rows, must give each
 * recording the sidecar the documented rule makes of the rows that match it.
 *
 * The property for valid tables (channel-table.ts, "Several patterns may match one
 * recording"): for every recording, sidecarForRecording() is undefined exactly when no
 * row's pattern matches it; otherwise its channels are what applying the matching rows in
 * file order gives, each row's cells replacing earlier ones cell by cell for the same
 * index, sorted by index; its sample rate is the last one the matching rows give; and its
 * path names the table and the lines of the matching rows.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { rm, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { RecordingError } from '../../src/errors.js';
import { loadChannelTable, sidecarForRecording, type ChannelTable } from '../../src/readers/channel-table.js';
import type { SidecarChannel } from '../../src/readers/sidecar.js';
import { fixtureDir } from '../helpers/wav-writer.js';
import { CaseCounter, expectNamesFile, fuzzParameters } from '../helpers/fuzz-harness.js';

const MiB = 1024 * 1024;
/** channel-table.ts MAX_TABLE_BYTES. */
const MAX_TABLE_BYTES = 16 * MiB;

let dir = '';
const counter = new CaseCounter();
beforeAll(async () => {
  dir = await fixtureDir('vibgate-fuzz-table-');
});
afterAll(async () => {
  counter.print();
  await rm(dir, { recursive: true, force: true });
});

type Outcome = { kind: 'table'; table: ChannelTable } | { kind: 'error'; error: RecordingError };

async function load(path: string, suite: string): Promise<Outcome> {
  try {
    const table = await loadChannelTable(path);
    counter.add(`channel table ${suite}`, 'stats');
    return { kind: 'table', table };
  } catch (error) {
    if (!(error instanceof RecordingError)) throw error;
    counter.add(`channel table ${suite}`, 'error');
    return { kind: 'error', error };
  }
}

/** Lines of text as the table counts them: LF, CRLF and a lone CR each end one. */
function lineCount(text: string): number {
  return text.split(/\r\n|\r|\n/).length;
}

/**
 * A refusal names the table and says where each problem is: one `line:column what` or
 * `N problems:` and N of them (at most 100 listed, then how many more), each at a line of
 * the file; or one of the messages about the file as a whole.
 */
function expectPositionedProblems(error: RecordingError, path: string, text: string | undefined): void {
  expectNamesFile(error, [path]);
  const detail = error.message.slice(`Cannot read "${path}": `.length);
  const whole = /^(the file is empty|the file holds no values, only separators|has a header row but no rows|is not UTF-8 text; save the table as CSV in UTF-8|starts with a UTF-16 byte order mark but is not valid UTF-16 text|has a zero byte at byte \d+; a channel table is text \(CSV\)|is \d+\.\d MiB; a channel table may be at most 16 MiB)$/;
  if (whole.test(detail)) return;
  const many = /^(\d+) problems:\n/.exec(detail);
  const lines = many ? detail.slice(many[0].length).split('\n') : [detail];
  let listed = 0;
  let more = 0;
  for (const line of lines) {
    // (`s`: a message quotes the character it is about, which may be U+2028)
    const m = /^(?: {2})?(\d+):(\d+) (.+)$/s.exec(line);
    if (m === null) {
      const rest = /^ {2}\(and (\d+) more\)$/.exec(line);
      expect(rest, `a problem line: ${JSON.stringify(line)}`).not.toBeNull();
      more = Number(rest![1]);
      continue;
    }
    listed += 1;
    expect(Number(m[1])).toBeGreaterThanOrEqual(1);
    expect(Number(m[2])).toBeGreaterThanOrEqual(1);
    if (text !== undefined) expect(Number(m[1])).toBeLessThanOrEqual(lineCount(text));
  }
  expect(listed).toBeLessThanOrEqual(100);
  if (many) expect(listed + more).toBe(Number(many[1]));
  else expect(listed).toBe(1);
}

/** What a loaded table guarantees of its rows (channel-table.ts, columns and cells). */
function expectValidRows(table: ChannelTable, text: string | undefined): void {
  expect(table.rows.length).toBeGreaterThan(0);
  for (const row of table.rows) {
    expect(row.line).toBeGreaterThanOrEqual(1);
    if (text !== undefined) expect(row.line).toBeLessThanOrEqual(lineCount(text));
    expect(row.pattern).toBe(row.pattern.trim());
    expect(row.pattern).not.toBe('');
    expect(row.pattern).not.toMatch(/^[\\/]|^[A-Za-z]:[\\/]/);
    expect(row.channel !== undefined || row.sampleRate !== undefined).toBe(true);
    // numbers are finite decimal numbers ("A finite decimal number", parseNumber)
    if (row.sampleRate !== undefined) {
      expect(Number.isFinite(row.sampleRate), `sample-rate ${row.sampleRate} on line ${row.line}`).toBe(true);
      expect(row.sampleRate).toBeGreaterThan(0);
    }
    const c = row.channel;
    if (c === undefined) continue;
    expect(Number.isInteger(c.index) && c.index >= 0 && c.index < 65535).toBe(true);
    for (const [key, value] of [['sensitivity', c.sensitivity], ['full-scale', c.fullScale], ['scale', c.scale]] as const) {
      if (value === undefined) continue;
      expect(Number.isFinite(value), `${key} ${value} on line ${row.line}`).toBe(true);
      if (key === 'scale') expect(value).not.toBe(0);
      else expect(value).toBeGreaterThan(0);
    }
    for (const text of [c.name, c.unit, c.sensor, c.sensitivityUnit, c.group]) {
      if (text !== undefined) {
        expect(text).toBe(text.trim());
        expect(text).not.toBe('');
      }
    }
  }
}

// ---------------------------------------------------------------------------------------
// Token soup.

const COLUMN_NAMES = ['recording', 'index', 'name', 'unit', 'sensor', 'sensitivity', 'sensitivity-unit', 'full-scale', 'scale', 'group', 'sample-rate', 'note', 'Recording', 'INDEX', ' Name ', 'channel', 'gain', ''];
const ODD_NUMBERS = ['0', '-0', '+1', '1.', '.5', '0.0', '1e3', '1E-3', '1e999', '-1e999', '1e-999', '10,2', '1.2.3', '1e', 'e1', '0x10', 'NaN', 'Inf', '-Infinity', '65534', '65535', '1.5', '  7  ', '007', '2048', '-2048', '1_000', '١٢'];
const PATTERNS = ['*.wav', 'run-??.wav', 'day2/*.wav', './run-*.wav', '.\\run-*.wav', 'bridge\\day2\\*.wav', '**/*.csv', '/abs/*.wav', 'C:\\data\\x.wav', 'dir/', '', ' ', '**', 'a/**/b/**/c.wav'];
const PUNCTUATION = [',', ';', '\t', '"', '""', '"a,b"', '"x""y"', '"\n"', '\n', '\r\n', '\r', ' ', '\uFEFF', '\u00a0', 'µ', '\u2028'];

const soupCell = fc.oneof(
  { weight: 3, arbitrary: fc.constantFrom(...COLUMN_NAMES) },
  { weight: 3, arbitrary: fc.constantFrom(...ODD_NUMBERS) },
  { weight: 2, arbitrary: fc.constantFrom(...PATTERNS) },
  { weight: 2, arbitrary: fc.constantFrom(...PUNCTUATION) },
  { weight: 1, arbitrary: fc.string({ maxLength: 8 }) },
  { weight: 1, arbitrary: fc.string({ unit: 'binary', maxLength: 4 }) },
);

interface Soup {
  header: string[];
  rows: string[][];
  sep: string;
  eol: string;
  /** Glue between tokens of a cell: most cells are one token. */
  encoding: 'utf8' | 'utf8-bom' | 'utf16le' | 'utf16be' | 'latin1';
  extra: 'none' | 'long-line' | 'many-columns' | 'zero-byte' | 'odd-utf16' | 'blank-lines-first';
}

/** A value that could stand in the column: what rows of real tables hold, wrong ones among them. */
const plausibleCell = (column: string): fc.Arbitrary<string> => {
  switch (column) {
    case 'recording':
      return fc.oneof({ weight: 6, arbitrary: fc.constantFrom('run-*.wav', '*.wav', 'day2/*.csv', './a.uff') }, { weight: 1, arbitrary: fc.constantFrom('', '/abs.wav', 'dir/') });
    case 'index':
      return fc.oneof({ weight: 6, arbitrary: fc.nat(999).map(String) }, { weight: 1, arbitrary: fc.constantFrom('', '-1', '1.5', '65535', 'x') });
    case 'name':
    case 'unit':
      return fc.oneof({ weight: 12, arbitrary: fc.string({ minLength: 1, maxLength: 6 }).map((t) => `"${t.replace(/"/g, '""')}"`) }, { weight: 1, arbitrary: fc.constantFrom('', 'a"b') });
    case 'note':
      return fc.constantFrom('', 'a note', '"a, note"');
    default:
      return fc.oneof({ weight: 6, arbitrary: fc.constantFrom('', '1', '2048', '10.2', '0.5', '5e-3', '+7') }, { weight: 1, arbitrary: fc.constantFrom('0', '-1', 'x', '1,5', 'NaN') });
  }
};

const soup: fc.Arbitrary<Soup> = fc.oneof(
  // mostly a plausible header: real column names, so that rows get validated
  {
    weight: 4,
    arbitrary: fc
      .tuple(fc.shuffledSubarray(['index', 'name', 'unit', 'sensitivity', 'full-scale', 'scale', 'sample-rate', 'note'], { minLength: 1 }), fc.nat(), fc.integer({ min: 0, max: 9 }))
      .map(([columns, at, dice]) => {
        // mostly with recording and, when a channel is described, index, which the header needs
        const all = dice > 0 && !columns.includes('index') && columns.some((c) => c !== 'sample-rate' && c !== 'note') ? [...columns, 'index'] : columns;
        return dice > 0 ? [...all.slice(0, at % (all.length + 1)), 'recording', ...all.slice(at % (all.length + 1))] : all;
      }),
  },
  { weight: 1, arbitrary: fc.array(soupCell, { minLength: 1, maxLength: 6 }) },
).chain((header) => fc.record({
  header: fc.constant(header),
  rows: fc.array(
    fc.oneof(
      { weight: 6, arbitrary: fc.tuple(...header.map((c) => plausibleCell(c.trim().toLowerCase()))) },
      { weight: 1, arbitrary: fc.array(fc.array(soupCell, { minLength: 1, maxLength: 2 }).map((t) => t.join('')), { maxLength: 10 }) },
    ),
    { maxLength: 8 },
  ),
  sep: fc.constantFrom(',', ',', ';', '\t'),
  eol: fc.constantFrom('\n', '\r\n', '\r'),
  encoding: fc.constantFrom('utf8', 'utf8', 'utf8', 'utf8', 'utf8-bom', 'utf16le', 'utf16be', 'latin1'),
  extra: fc.constantFrom('none', 'none', 'none', 'long-line', 'many-columns', 'zero-byte', 'odd-utf16', 'blank-lines-first'),
}));

function encode(text: string, encoding: Soup['encoding']): Buffer {
  switch (encoding) {
    case 'utf8':
      return Buffer.from(text, 'utf8');
    case 'utf8-bom':
      return Buffer.concat([Buffer.from([0xef, 0xbb, 0xbf]), Buffer.from(text, 'utf8')]);
    case 'utf16le':
      return Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(text, 'utf16le')]);
    case 'utf16be':
      return Buffer.concat([Buffer.from([0xfe, 0xff]), Buffer.from(text, 'utf16le').swap16()]);
    case 'latin1':
      return Buffer.from(text, 'latin1');
  }
}

function soupText(s: Soup): string {
  let header = s.header;
  let rows = s.rows;
  if (s.extra === 'many-columns') {
    header = [...header, ...Array.from({ length: 3000 }, (_, k) => (k % 7 === 0 ? 'note' : ''))];
    rows = rows.map((r) => [...r, ...Array.from({ length: 3000 }, (_, k) => (k % 11 === 0 ? 'x' : ''))]);
  }
  if (s.extra === 'long-line') rows = [...rows, ['run.wav', '0', 'x'.repeat(300_000)]];
  let text = [header, ...rows].map((r) => r.join(s.sep)).join(s.eol);
  if (s.extra === 'blank-lines-first') text = `${s.eol}${s.eol}${text}`;
  if (s.extra === 'zero-byte') text = `${text.slice(0, text.length >> 1)}\u0000${text.slice(text.length >> 1)}`;
  return text;
}

describe('fuzzing the channel table loader with token soup', () => {
  it('ends every table in a table whose rows keep the documented rules, or a RecordingError listing its problems at line:column', async () => {
    const path = join(dir, 'soup.csv');
    await fc.assert(
      fc.asyncProperty(soup, async (s) => {
        const text = soupText(s);
        let bytes = encode(text, s.encoding);
        if (s.extra === 'odd-utf16') bytes = Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(text, 'utf16le'), Buffer.from([0x41])]);
        await writeFile(path, bytes);
        const outcome = await load(path, 'token soup');
        // the text the table was read as, when it is text, for the line numbers
        const asRead = s.encoding === 'utf8' || s.encoding === 'utf8-bom' ? text : undefined;
        if (outcome.kind === 'error') expectPositionedProblems(outcome.error, path, asRead);
        else expectValidRows(outcome.table, asRead);
      }),
      fuzzParameters(500),
    );
  });

  it('refuses a table over 16 MiB by its size before reading it, and reads one of exactly 16 MiB', async () => {
    const path = join(dir, 'big.csv');
    const head = 'recording,index,name,note\n';
    const row = 'run-*.wav,0,acc-01,';
    const fill = MAX_TABLE_BYTES - head.length - row.length - 1;
    await writeFile(path, `${head}${row}${'n'.repeat(fill)}\n`);
    const exact = await load(path, 'size');
    expect(exact.kind, exact.kind === 'error' ? exact.error.message : '').toBe('table');
    await writeFile(path, `${head}${row}${'n'.repeat(fill + 1)}\n`);
    const over = await load(path, 'size');
    expect(over.kind).toBe('error');
    if (over.kind === 'error') expect(over.error.message).toBe(`Cannot read "${path}": is 16.0 MiB; a channel table may be at most 16 MiB`);
  });
});

// ---------------------------------------------------------------------------------------
// Valid tables.

/**
 * Recordings relative to the table's directory, and the patterns that match each, worked
 * out by hand from the rules in channel-table.ts: without `/` a pattern matches the file
 * name wherever it lies; with `/` the path relative to the table, segment by segment, `*`
 * within a segment, `**` any number of segments; `\` is `/`; a leading `./` is dropped.
 */
const RECORDINGS = ['run-01.wav', 'run-02.wav', 'day2/run-01.wav', 'day2/ambient-1.csv', 'bridge/day2/deck/acc.wav'] as const;
const MATCHES: Record<string, ReadonlyArray<(typeof RECORDINGS)[number]>> = {
  '*.wav': ['run-01.wav', 'run-02.wav', 'day2/run-01.wav', 'bridge/day2/deck/acc.wav'],
  'run-0?.wav': ['run-01.wav', 'run-02.wav', 'day2/run-01.wav'],
  'run-01.wav': ['run-01.wav', 'day2/run-01.wav'],
  './run-01.wav': ['run-01.wav', 'day2/run-01.wav'],
  'day2/*.wav': ['day2/run-01.wav'],
  './day2/*': ['day2/run-01.wav', 'day2/ambient-1.csv'],
  'day2\\*.csv': ['day2/ambient-1.csv'],
  '**/*.wav': ['run-01.wav', 'run-02.wav', 'day2/run-01.wav', 'bridge/day2/deck/acc.wav'],
  'bridge/**/acc.wav': ['bridge/day2/deck/acc.wav'],
  '.\\bridge\\**\\*': ['bridge/day2/deck/acc.wav'],
  '*/run-01.wav': ['day2/run-01.wav'],
  'ambient-*.csv': ['day2/ambient-1.csv'],
  '**/deck/*': ['bridge/day2/deck/acc.wav'],
  '*': [...RECORDINGS],
  'nothing-*.uff': [],
};
/** The pattern as the table compares patterns (`.\x` and `x` are one pattern). */
const normal = (pattern: string) => pattern.replace(/\\/g, '/').replace(/\/{2,}/g, '/').replace(/^(\.\/)+/, '');

const TEXT_KEYS = ['name', 'unit', 'sensor', 'sensitivity-unit', 'group'] as const;
const CHANNEL_COLUMNS = ['name', 'unit', 'sensor', 'sensitivity', 'sensitivity-unit', 'full-scale', 'scale', 'group'] as const;
const NUMBER_KEYS = ['sensitivity', 'full-scale', 'scale'] as const;
type TextKey = (typeof TEXT_KEYS)[number];
type NumberKey = (typeof NUMBER_KEYS)[number];
const FIELD: Record<TextKey | NumberKey, keyof SidecarChannel> = {
  name: 'name', unit: 'unit', sensor: 'sensor', 'sensitivity-unit': 'sensitivityUnit', group: 'group', sensitivity: 'sensitivity', 'full-scale': 'fullScale', scale: 'scale',
};

/** A number cell: the text written, in one of the forms the column accepts. */
interface NumberText {
  value: number;
  form: 'plain' | 'exponent' | 'fixed' | 'plus' | 'zeros' | 'point-end';
}
const numberText = (positive: boolean): fc.Arbitrary<NumberText> =>
  fc.record({
    value: fc.oneof(fc.constantFrom(1, 2048, 10.2, 0.5, 9.81, 50, 1e-6, 25_600), fc.double({ min: 1e-9, max: 1e9, noNaN: true })).chain((v) =>
      positive ? fc.constant(v) : fc.constantFrom(v, -v),
    ),
    form: fc.constantFrom('plain', 'exponent', 'fixed', 'plus', 'zeros', 'point-end'),
  });

/** The number as written (decimal comma where the separator allows it), and the value it reads as. */
function writeNumber(n: NumberText, comma: boolean): { text: string; value: number } {
  let text: string;
  switch (n.form) {
    case 'plain':
      text = String(n.value);
      break;
    case 'exponent':
      text = n.value.toExponential();
      break;
    case 'fixed':
      text = n.value.toFixed(4);
      break;
    case 'plus':
      text = n.value < 0 ? String(n.value) : `+${n.value}`;
      break;
    case 'zeros':
      text = n.value < 0 ? String(n.value) : `00${n.value}`;
      break;
    case 'point-end':
      text = Number.isInteger(n.value) && Math.abs(n.value) < 1e21 ? `${n.value}.` : String(n.value);
      break;
  }
  if (comma) text = text.replace('.', ',');
  return { text, value: Number(text.replace(',', '.')) };
}

interface RowSpec {
  pattern: string;
  index: { value: number; form: 'plain' | 'plus' | 'zeros' | 'point-zero' } | undefined;
  texts: Partial<Record<TextKey, string>>;
  numbers: Partial<Record<NumberKey, NumberText>>;
  rateSlot: boolean;
  note: string | undefined;
}

const TEXTS = ['acc-01', 'acc-02', 'mic', 'g', 'm/s^2', 'Pa', 'mV/g', 'deck', 'pier 2', '  spaced  ', 'a,b', 'say "hi"', 'two\nlines', 'µ-force', 'x;y', 'tab\there'];

const rowSpec: fc.Arbitrary<RowSpec> = fc.record({
  pattern: fc.constantFrom(...Object.keys(MATCHES)),
  index: fc.option(fc.record({ value: fc.oneof(fc.nat(5), fc.constantFrom(100, 65534)), form: fc.constantFrom<'plain' | 'plus' | 'zeros' | 'point-zero'>('plain', 'plus', 'zeros', 'point-zero') }), { freq: 6, nil: undefined }),
  texts: fc.record(Object.fromEntries(TEXT_KEYS.map((k) => [k, fc.constantFrom(...TEXTS)])) as Record<TextKey, fc.Arbitrary<string>>, { requiredKeys: [] }),
  numbers: fc.record({ sensitivity: numberText(true), 'full-scale': numberText(true), scale: numberText(false) }, { requiredKeys: [] }),
  rateSlot: fc.boolean(),
  note: fc.option(fc.constantFrom('replaced after day 1', 'see log, p. 3', '"quoted"'), { nil: undefined }),
});

interface TableSpec {
  columns: string[];
  /** Header names as written: any case, spaces around. */
  headerCase: Array<'lower' | 'upper' | 'title' | 'spaced'>;
  rows: RowSpec[];
  /** Sample rate of each pattern (by its normal form), when its rows give one. */
  rates: number[];
  sep: ',' | ';' | '\t';
  eol: '\n' | '\r\n' | '\r';
  quoteAll: boolean;
  finalEol: boolean;
  blankRows: number[];
  commentRows: number[];
  separatorRows: number[];
  blankLinesFirst: boolean;
  trailingEmptyCells: boolean;
  encoding: 'utf8' | 'utf8-bom' | 'utf16le' | 'utf16be';
}

const tableSpec: fc.Arbitrary<TableSpec> = fc.record({
  // `recording` anywhere; `index` whenever a channel column is there, or nothing would describe a recording
  columns: fc.shuffledSubarray(['index', 'name', 'unit', 'sensor', 'sensitivity', 'sensitivity-unit', 'full-scale', 'scale', 'group', 'sample-rate', 'note'], { minLength: 1 }).chain((cols) => {
    const needsIndex = !cols.includes('index') && (cols.some((c) => (CHANNEL_COLUMNS as readonly string[]).includes(c)) || !cols.includes('sample-rate'));
    const all = needsIndex ? [...cols, 'index'] : cols;
    return fc.nat(all.length).map((at) => [...all.slice(0, at), 'recording', ...all.slice(at)]);
  }),
  headerCase: fc.array(fc.constantFrom<'lower' | 'upper' | 'title' | 'spaced'>('lower', 'lower', 'upper', 'title', 'spaced'), { minLength: 12, maxLength: 12 }),
  rows: fc.array(rowSpec, { minLength: 1, maxLength: 25 }),
  rates: fc.array(fc.oneof(fc.constantFrom(2048, 25_600, 51_200, 1000), fc.double({ min: 0.001, max: 1e6, noNaN: true })), { minLength: Object.keys(MATCHES).length, maxLength: Object.keys(MATCHES).length }),
  sep: fc.constantFrom<',' | ';' | '\t'>(',', ';', '\t'),
  eol: fc.constantFrom<'\n' | '\r\n' | '\r'>('\n', '\r\n', '\r'),
  quoteAll: fc.boolean(),
  finalEol: fc.boolean(),
  blankRows: fc.array(fc.nat(25), { maxLength: 3 }),
  commentRows: fc.array(fc.nat(25), { maxLength: 3 }),
  separatorRows: fc.array(fc.nat(25), { maxLength: 2 }),
  blankLinesFirst: fc.boolean().chain((b) => (b ? fc.boolean() : fc.constant(false))),
  trailingEmptyCells: fc.boolean(),
  encoding: fc.constantFrom<'utf8' | 'utf8-bom' | 'utf16le' | 'utf16be'>('utf8', 'utf8', 'utf8-bom', 'utf16le', 'utf16be'),
});

interface ModelRow {
  line: number;
  pattern: string;
  channel?: SidecarChannel;
  sampleRate?: number;
}

/**
 * Writes the table, leaving out every cell and row the rules would refuse (so the table is
 * valid), and returns its text and the rows as the model reads them.
 */
function writeTable(spec: TableSpec): { text: string; rows: ModelRow[] } {
  const has = (column: string) => spec.columns.includes(column);
  const comma = spec.sep !== ',';
  const patternKeys = Object.keys(MATCHES).map(normal);
  const rateOf = (pattern: string) => spec.rates[patternKeys.indexOf(normal(pattern))];
  const facts = new Map<string, { indices: Set<number>; names: Map<string, number> }>();

  const records: Array<{ cells: string[]; row?: Omit<ModelRow, 'line'> }> = [];
  for (const r of spec.rows) {
    const cells = new Map<string, string>();
    const channel: Partial<SidecarChannel> = {};
    cells.set('recording', r.pattern);
    const key = normal(r.pattern);
    const known = facts.get(key) ?? { indices: new Set<number>(), names: new Map<string, number>() };
    // one row per channel and pattern; a name belongs to one channel of a pattern
    let index = has('index') ? r.index : undefined;
    if (index !== undefined && known.indices.has(index.value)) index = undefined;
    if (index !== undefined) {
      const forms = { plain: String(index.value), plus: `+${index.value}`, zeros: `0${index.value}`, 'point-zero': `${index.value}.0` };
      cells.set('index', comma ? forms[index.form].replace('.', ',') : forms[index.form]);
      channel.index = index.value;
      for (const k of TEXT_KEYS) {
        const text = r.texts[k];
        if (text === undefined || !has(k) || text.trim() === '') continue;
        if (k === 'name' && known.names.has(text.trim()) && known.names.get(text.trim()) !== index.value) continue;
        cells.set(k, text);
        channel[FIELD[k] as 'name'] = text.trim();
      }
      for (const k of NUMBER_KEYS) {
        const n = r.numbers[k];
        if (n === undefined || !has(k)) continue;
        const { text, value } = writeNumber(n, comma);
        if (k === 'scale' ? value === 0 : !(value > 0)) continue;
        cells.set(k, text);
        channel[FIELD[k] as 'scale'] = value;
      }
    }
    const rate = r.rateSlot && has('sample-rate') ? writeNumber({ value: rateOf(r.pattern), form: 'plain' }, comma) : undefined;
    if (rate !== undefined) cells.set('sample-rate', rate.text);
    // a row must say which channel or give a sample rate
    if (index === undefined && rate === undefined) continue;
    if (index !== undefined) {
      known.indices.add(index.value);
      if (channel.name !== undefined) known.names.set(channel.name, index.value);
    }
    facts.set(key, known);
    if (r.note !== undefined && has('note')) cells.set('note', r.note);
    const row: Omit<ModelRow, 'line'> = { pattern: r.pattern };
    if (index !== undefined) row.channel = channel as SidecarChannel;
    if (rate !== undefined) row.sampleRate = rate.value;
    records.push({ cells: spec.columns.map((c) => cells.get(c) ?? ''), row });
  }
  // blank rows, comment rows (only a note) and rows of separators, which the table skips
  const width = spec.columns.length;
  const skipped = (kind: 'blank' | 'comment' | 'separators') =>
    kind === 'blank' ? [''] : kind === 'separators' ? Array.from({ length: width }, () => '') : spec.columns.map((c) => (c === 'note' ? 'a comment row' : ''));
  for (const [at, kind] of [...spec.blankRows.map((a) => [a, 'blank'] as const), ...(has('note') ? spec.commentRows.map((a) => [a, 'comment'] as const) : []), ...spec.separatorRows.map((a) => [a, 'separators'] as const)]) {
    records.splice(Math.min(at, records.length), 0, { cells: skipped(kind) });
  }

  const quote = (value: string) => `"${value.replace(/"/g, '""')}"`;
  const needsQuotes = (value: string) => value.includes(spec.sep) || /["\r\n]/.test(value) || value !== value.trim();
  const cell = (value: string) => (value === '' ? '' : spec.quoteAll || needsQuotes(value) ? quote(value) : value);
  const header = spec.columns.map((c, k) => {
    const form = spec.headerCase[k % spec.headerCase.length];
    return form === 'upper' ? c.toUpperCase() : form === 'title' ? c.replace(/(^|-)(\w)/g, (_, a, b) => a + b.toUpperCase()) : form === 'spaced' ? ` ${c} ` : c;
  });
  // blank lines above the header: with a comma only, as the separator is taken from the
  // first line (the test below pins that for `;` and tab)
  let text = spec.blankLinesFirst && spec.sep === ',' ? spec.eol.repeat(2) : '';
  const rows: ModelRow[] = [];
  const lines = (t: string) => (t.match(/\r\n|\r|\n/g) ?? []).length;
  text += header.join(spec.sep) + spec.eol;
  for (const record of records) {
    const line = lines(text) + 1;
    const extra = spec.trailingEmptyCells && record.row !== undefined ? spec.sep.repeat(2) : '';
    text += record.cells.map(cell).join(spec.sep) + extra + spec.eol;
    if (record.row !== undefined) rows.push({ line, ...record.row });
  }
  if (!spec.finalEol) text = text.slice(0, -spec.eol.length);
  return { text, rows };
}

/** `[2, 3, 4, 9]` → `2–4, 9`, as the sidecar path writes the lines. */
function ranges(lines: number[]): string {
  const parts: string[] = [];
  for (let k = 0; k < lines.length; ) {
    let end = k;
    while (end + 1 < lines.length && lines[end + 1] === lines[end] + 1) end++;
    parts.push(end === k ? `${lines[k]}` : `${lines[k]}–${lines[end]}`);
    k = end + 1;
  }
  return parts.join(', ');
}

describe('fuzzing the channel table with valid tables', () => {
  it('gives every recording the channels, sample rate and lines of the rows that match it, applied in file order', async () => {
    const path = join(dir, 'channels.csv');
    await fc.assert(
      fc.asyncProperty(tableSpec, async (spec) => {
        const { text, rows } = writeTable(spec);
        await writeFile(path, encode(text, spec.encoding));
        const outcome = await load(path, 'valid');
        if (rows.length === 0) {
          // every row was left out (or none written): a header alone is refused
          expect(outcome.kind === 'error' ? outcome.error.message : outcome.kind).toBe(`Cannot read "${path}": has a header row but no rows`);
          return;
        }
        if (outcome.kind === 'error') throw new Error(`a valid table was refused: ${outcome.error.message}\n${JSON.stringify(text)}`);
        const { table } = outcome;
        expectValidRows(table, text);
        expect(table.rows.map((r) => ({ line: r.line, pattern: r.pattern }))).toEqual(rows.map((r) => ({ line: r.line, pattern: r.pattern })));
        for (const recording of RECORDINGS) {
          const matching = rows.filter((r) => MATCHES[r.pattern].includes(recording));
          const sidecar = sidecarForRecording(table, join(dir, recording));
          if (matching.length === 0) {
            expect(sidecar, recording).toBeUndefined();
            continue;
          }
          // the documented rule: rows in file order, a later row's cells replacing earlier ones
          const channels = new Map<number, SidecarChannel>();
          let sampleRate: number | undefined;
          for (const r of matching) {
            if (r.sampleRate !== undefined) sampleRate = r.sampleRate;
            if (r.channel !== undefined) channels.set(r.channel.index, { ...channels.get(r.channel.index), ...r.channel });
          }
          const lines = matching.map((r) => r.line);
          expect(sidecar, recording).toEqual({
            path: `${path} ${lines.length === 1 ? 'line' : 'lines'} ${ranges(lines)}`,
            channels: [...channels.values()].sort((a, b) => a.index - b.index),
            ...(sampleRate === undefined ? {} : { sampleRate }),
          });
        }
      }),
      fuzzParameters(500),
    );
  });

  it.each([';', '\t'])('takes the separator %j from the header row when blank lines stand above it', async (sep) => {
    // "The separator is the one of , ; tab the header row uses most" and "Blank lines above
    // the header row are not a header": detectSeparator() counts the first line of the text,
    // which is blank here, and falls back to the comma.
    const path = join(dir, 'blank-first.csv');
    await writeFile(path, `\n\nrecording${sep}index${sep}name\nrun.wav${sep}0${sep}acc-01\n`);
    const outcome = await load(path, 'separator');
    expect(outcome.kind === 'table' ? outcome.table.rows : outcome.error.message).toEqual([{ line: 4, pattern: 'run.wav', channel: { index: 0, name: 'acc-01' } }]);
  });

  it('refuses numbers beyond the range of a double (1e999 reads as Infinity), naming the cell', async () => {
    // parseNumber() documents "a finite decimal number"; the sidecar refuses .inf the same way
    const path = join(dir, 'infinite.csv');
    for (const [column, value] of [['sample-rate', '1e999'], ['scale', '1e999'], ['scale', '-1e999'], ['sensitivity', '1e400'], ['full-scale', '2e308']] as const) {
      await writeFile(path, `recording,index,${column}\nrun.wav,0,${value}\n`);
      const outcome = await load(path, 'finite numbers');
      expect(outcome.kind, `${column} ${value}`).toBe('error');
      // the cell starts after "run.wav,0,": column 11
      if (outcome.kind === 'error') expect(outcome.error.message).toMatch(new RegExp(`^Cannot read ".*": 2:11 ${column}: "${value}" is not a finite number$`));
    }
  });
});
