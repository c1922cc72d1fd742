/**
 * A channel table: one CSV file that describes the channels of a whole test campaign, where
 * every recording would otherwise need its own `<recording>.channels.yaml` sidecar. A lab
 * keeps it as a spreadsheet, so it is CSV (RFC 4180), one row per channel and recording
 * pattern:
 *
 * ```csv
 * recording,index,name,unit,sensor,sensitivity,sensitivity-unit,full-scale,scale,group,sample-rate,note
 * *.wav,0,acc-01,g,accelerometer,10.2,mV/g,50,,deck,,
 * *.wav,1,acc-02,g,accelerometer,10.4,mV/g,50,,deck,,
 * bridge/day2/*.wav,1,acc-02,g,accelerometer,9.87,mV/g,50,,deck,,"replaced after day 1"
 * ambient-*.csv,,,,,,,,,,2048,
 * ```
 *
 * Columns (header names in any case, in any order; only `recording` is required, and
 * `index` when any channel column is present):
 * - `recording`: a glob (`*` any run of characters, `?` one character, `**` as a whole path
 *   segment any number of segments). Without a `/` it matches the recording's file name
 *   (`run-*.wav` matches `data/run-01.wav` wherever it lies); with a `/` it matches the
 *   recording's path relative to the table's directory, segment by segment, so `*` does not
 *   cross a `/` (`bridge/day2/*.wav`). `\` is read as `/` (a table written on Windows),
 *   a leading `./` is dropped; absolute patterns are refused. Case-sensitive, as globs in
 *   rule files are.
 * - `index`: the channel's position in the file, **0-based** (a CSV time column is not
 *   counted), the same as `index:` in a sidecar. A column named `channel` is refused
 *   rather than guessed at, because whether it counts from 0 or 1 cannot be told.
 * - `name`, `unit`, `sensor`, `sensitivity`, `sensitivity-unit`, `full-scale`, `scale`,
 *   `group`: as the sidecar's channel keys (see sidecar.ts), with the same limits.
 * - `sample-rate`: for formats without one (CSV without time column, raw). It belongs to
 *   the pattern: all rows of one pattern that give it must agree. A row may give only a
 *   recording pattern and a sample rate.
 * - `note`: free text for people, ignored. A row that gives nothing but a note is a comment.
 *
 * Cells: an empty cell means "not given"; spaces around a value are dropped. Numbers use a
 * decimal point; in a table separated by `;` or tabs (what spreadsheets write where the
 * comma is the decimal separator) a decimal comma is read too. The separator is the one of
 * `,` `;` tab the header row uses most. Text: UTF-8 (a byte order mark is allowed), or
 * UTF-16 with its byte order mark.
 *
 * Several patterns may match one recording. Rows apply in file order and a later row's
 * cells replace earlier ones cell by cell, the same rule as `channels:` entries in rule
 * files: write the campaign-wide rows first and the exceptions (one day, one recording)
 * below them. An exception row need only give the cells that differ.
 *
 * Everything is validated when the table is loaded, and every problem is reported as
 * `line:column column-name: what is wrong`.
 */
import { readFile } from 'node:fs/promises';
import { basename, dirname, relative, resolve, sep } from 'node:path';
import { TextDecoder } from 'node:util';
import { RecordingError } from '../errors.js';
import { globMatch } from '../rules/select.js';
import { asFileError, checkSmallFile } from './sidecar.js';
import type { Sidecar, SidecarChannel } from './sidecar.js';

/** A loaded, validated channel table. */
export interface ChannelTable {
  /** The table file's path, as given. */
  readonly path: string;
  /** Absolute directory that patterns with a `/` are relative to. */
  readonly directory: string;
  /** The data rows in file order (blank and comment rows left out). */
  readonly rows: readonly ChannelTableRow[];
}

/** One data row of a channel table. */
export interface ChannelTableRow {
  /** 1-based line of the file on which the row starts. */
  readonly line: number;
  /** The `recording` cell as written (spaces around it dropped). */
  readonly pattern: string;
  /** `sample-rate`, in sample frames per second, when the row gives it. */
  readonly sampleRate?: number;
  /** What the row says about one channel; absent for a row that gives only a sample rate. */
  readonly channel?: Readonly<SidecarChannel>;
}

/**
 * A campaign's table may list hundreds of recordings times a hundred channels (a few MiB);
 * far more than that is not a channel table, and the whole text is held while validating.
 */
const MAX_TABLE_BYTES = 16 * 1024 * 1024;
/** Problems listed in one error; a table with more is wrong throughout. */
const MAX_PROBLEMS_SHOWN = 100;
/** A WAV header counts channels in 16 bits and the CSV reader stops at the same number. */
const MAX_CHANNELS = 65535;

type Column =
  | 'recording'
  | 'index'
  | 'name'
  | 'unit'
  | 'sensor'
  | 'sensitivity'
  | 'sensitivity-unit'
  | 'full-scale'
  | 'scale'
  | 'group'
  | 'sample-rate'
  | 'note';

const COLUMNS: readonly Column[] = [
  'recording',
  'index',
  'name',
  'unit',
  'sensor',
  'sensitivity',
  'sensitivity-unit',
  'full-scale',
  'scale',
  'group',
  'sample-rate',
  'note',
];
/** Columns that describe a channel, and so need `index` to say which. */
const CHANNEL_COLUMNS: readonly Column[] = [
  'name',
  'unit',
  'sensor',
  'sensitivity',
  'sensitivity-unit',
  'full-scale',
  'scale',
  'group',
];

/**
 * Reads and validates a channel table. Throws a RecordingError naming the file that lists
 * every problem as `line:column column-name: what is wrong`.
 */
export async function loadChannelTable(path: string): Promise<ChannelTable> {
  await checkSmallFile(path, MAX_TABLE_BYTES, 'a channel table');
  let bytes: Buffer;
  try {
    bytes = await readFile(path);
  } catch (err) {
    throw asFileError(path, err);
  }
  return parseTable(path, decodeText(path, bytes));
}

/**
 * What the table says about one recording, as a sidecar for `applySidecar`, or undefined
 * when no row's pattern matches it. Rows apply in file order, a later row's cells replacing
 * earlier ones for the same channel. The sidecar's `path` names the table and the lines
 * that applied (`campaign/channels.csv lines 2–9, 14`), so applySidecar's messages point
 * at them. `recordingPath` is taken relative to the current directory, as given to
 * `openRecording`.
 */
export function sidecarForRecording(table: ChannelTable, recordingPath: string): Sidecar | undefined {
  const target = recordingTarget(table, recordingPath);
  const matches = patternMatcher(target);
  const channels = new Map<number, SidecarChannel>();
  const lines: number[] = [];
  let sampleRate: number | undefined;
  for (const row of table.rows) {
    if (!matches(row.pattern)) continue;
    lines.push(row.line);
    if (row.sampleRate !== undefined) sampleRate = row.sampleRate;
    if (row.channel === undefined) continue;
    // A row holds only the cells it gives, so assigning it replaces exactly those.
    channels.set(row.channel.index, { ...channels.get(row.channel.index), ...row.channel });
  }
  if (lines.length === 0) return undefined;
  const sidecar: Sidecar = {
    path: `${table.path} ${lines.length === 1 ? 'line' : 'lines'} ${lineRanges(lines)}`,
    channels: [...channels.values()].sort((a, b) => a.index - b.index),
  };
  if (sampleRate !== undefined) sidecar.sampleRate = sampleRate;
  return sidecar;
}

/**
 * The table's patterns that match none of `recordingPaths`, in file order with the line of
 * their first row, so that a caller can warn about a misspelt pattern or a missing file.
 */
export function unmatchedPatterns(
  table: ChannelTable,
  recordingPaths: readonly string[],
): Array<{ pattern: string; line: number }> {
  // Keyed by the normalised pattern, so `./run-*.wav` and `run-*.wav` are one pattern.
  const unmatched = new Map<string, { pattern: string; line: number }>();
  for (const row of table.rows) {
    const key = normalisePattern(row.pattern);
    if (!unmatched.has(key)) unmatched.set(key, { pattern: row.pattern, line: row.line });
  }
  for (const recordingPath of recordingPaths) {
    if (unmatched.size === 0) break;
    const matches = patternMatcher(recordingTarget(table, recordingPath));
    for (const key of [...unmatched.keys()]) if (matches(key)) unmatched.delete(key);
  }
  return [...unmatched.values()];
}

// ---------------------------------------------------------------------------------------
// Matching.

interface RecordingTarget {
  /** The file name. */
  base: string;
  /** The path relative to the table's directory, split at `/`. */
  segments: string[];
}

function recordingTarget(table: ChannelTable, recordingPath: string): RecordingTarget {
  const absolute = resolve(recordingPath);
  return {
    base: basename(absolute),
    segments: relative(table.directory, absolute).split(sep).join('/').split('/'),
  };
}

/** Whether a pattern (as written or normalised) matches the recording; memoised per pattern. */
function patternMatcher(target: RecordingTarget): (pattern: string) => boolean {
  const memo = new Map<string, boolean>();
  return (pattern) => {
    let result = memo.get(pattern);
    if (result === undefined) {
      const normal = normalisePattern(pattern);
      result = normal.includes('/')
        ? segmentsMatch(normal.split('/'), target.segments)
        : globMatch(normal, target.base);
      memo.set(pattern, result);
    }
    return result;
  };
}

/**
 * Segment-wise glob matching; a `**` segment stands for any number of segments (also
 * none). Dynamic programming over (pattern segment, path segment) pairs, so even a pattern
 * of many `**` takes at most their product of steps.
 */
function segmentsMatch(pattern: string[], path: string[]): boolean {
  // can[j]: pattern[0..i) matches path[0..j)
  let can = new Array<boolean>(path.length + 1).fill(false);
  can[0] = true;
  for (const glob of pattern) {
    const next = new Array<boolean>(path.length + 1).fill(false);
    if (glob === '**') {
      let any = false;
      for (let j = 0; j <= path.length; j++) {
        any ||= can[j];
        next[j] = any;
      }
    } else {
      for (let j = 1; j <= path.length; j++) next[j] = can[j - 1] && globMatch(glob, path[j - 1]);
    }
    can = next;
  }
  return can[path.length];
}

/** `.\bridge\day2\*.wav` → `bridge/day2/*.wav`: the form patterns are compared and matched in. */
function normalisePattern(pattern: string): string {
  let out = pattern.replace(/\\/g, '/').replace(/\/{2,}/g, '/');
  while (out.startsWith('./')) out = out.slice(2);
  return out;
}

/** `[2, 3, 4, 5, 9]` → `2–5, 9`. */
function lineRanges(lines: number[]): string {
  const parts: string[] = [];
  let start = lines[0];
  let end = start;
  for (const line of [...lines.slice(1), Number.NaN]) {
    if (line === end + 1) {
      end = line;
      continue;
    }
    parts.push(start === end ? String(start) : `${start}–${end}`);
    start = end = line;
  }
  return parts.join(', ');
}

// ---------------------------------------------------------------------------------------
// Text and CSV splitting.

function decodeText(path: string, bytes: Buffer): string {
  try {
    if (bytes[0] === 0xff && bytes[1] === 0xfe) return new TextDecoder('utf-16le', { fatal: true }).decode(bytes.subarray(2));
    if (bytes[0] === 0xfe && bytes[1] === 0xff) return new TextDecoder('utf-16be', { fatal: true }).decode(bytes.subarray(2));
  } catch {
    throw new RecordingError(path, 'starts with a UTF-16 byte order mark but is not valid UTF-16 text');
  }
  const nul = bytes.indexOf(0);
  if (nul >= 0) {
    throw new RecordingError(path, `has a zero byte at byte ${nul}; a channel table is text (CSV)`, nul);
  }
  try {
    // ignoreBOM: false (the default) drops a UTF-8 byte order mark, as spreadsheets write one.
    return new TextDecoder('utf-8', { fatal: true }).decode(bytes);
  } catch {
    throw new RecordingError(path, 'is not UTF-8 text; save the table as CSV in UTF-8');
  }
}

interface Cell {
  /** The value with quotes undone; not yet trimmed. */
  text: string;
  line: number;
  col: number;
}

interface CsvRecord {
  line: number;
  cells: Cell[];
}

interface Problem {
  line: number;
  col: number;
  text: string;
}

const QUOTE = '"';

/** The separator the header row (up to its first line break outside quotes) uses most; comma on a tie. */
function detectSeparator(text: string): string {
  const counts = new Map<string, number>([
    [',', 0],
    [';', 0],
    ['\t', 0],
  ]);
  let quoted = false;
  let seen = false;
  for (const ch of text) {
    if (ch === QUOTE) quoted = !quoted;
    // the header row is the first line that is not blank: blank lines above it say nothing
    else if (!quoted && (ch === '\n' || ch === '\r')) {
      if (seen) break;
      continue;
    } else if (!quoted && counts.has(ch)) counts.set(ch, counts.get(ch)! + 1);
    if (ch !== ' ' && ch !== '\t' || counts.has(ch)) seen = true;
  }
  let best = ',';
  for (const [ch, n] of counts) if (n > counts.get(best)!) best = ch;
  return best;
}

/**
 * Splits CSV text into records as RFC 4180 section 2 describes: fields separated by
 * `separator`, records by CRLF (LF and a lone CR too, as editors write them), a field in
 * double quotes may hold separators and line breaks, and `""` inside it is one `"`.
 * A quote inside an unquoted field, or anything but a separator or line break after a
 * closing quote, is refused: the RFC does not allow it and guessing could shift columns.
 */
function splitCsv(text: string, separator: string): { records: CsvRecord[]; problem?: Problem } {
  const records: CsvRecord[] = [];
  let i = 0;
  let line = 1;
  let lineStart = 0;
  const n = text.length;
  while (i < n) {
    const record: CsvRecord = { line, cells: [] };
    for (;;) {
      const cell: Cell = { text: '', line, col: i - lineStart + 1 };
      if (text[i] === QUOTE) {
        i++;
        let value = '';
        for (;;) {
          if (i >= n) {
            return {
              records,
              problem: { line: cell.line, col: cell.col, text: 'the quoted value that starts here has no closing quote' },
            };
          }
          const ch = text[i];
          if (ch === QUOTE) {
            if (text[i + 1] === QUOTE) {
              value += QUOTE;
              i += 2;
              continue;
            }
            i++;
            break;
          }
          if (ch === '\n' || (ch === '\r' && text[i + 1] !== '\n')) {
            line++;
            lineStart = i + 1;
          }
          value += ch;
          i++;
        }
        if (i < n && text[i] !== separator && text[i] !== '\n' && text[i] !== '\r') {
          return {
            records,
            problem: {
              line,
              col: i - lineStart + 1,
              text: `${JSON.stringify(text[i])} after a closing quote; a quoted value must end at a separator or the end of the line`,
            },
          };
        }
        cell.text = value;
      } else {
        const start = i;
        while (i < n && text[i] !== separator && text[i] !== '\n' && text[i] !== '\r') {
          if (text[i] === QUOTE) {
            return {
              records,
              problem: {
                line,
                col: i - lineStart + 1,
                text: 'a quote inside an unquoted value; quote the whole value and double the quote ("")',
              },
            };
          }
          i++;
        }
        cell.text = text.slice(start, i);
      }
      record.cells.push(cell);
      if (i < n && text[i] === separator) {
        i++;
        continue;
      }
      if (text[i] === '\r' && text[i + 1] === '\n') i += 2;
      else if (i < n) i++;
      line++;
      lineStart = i;
      break;
    }
    records.push(record);
  }
  return { records };
}

// ---------------------------------------------------------------------------------------
// Validation.

function parseTable(path: string, text: string): ChannelTable {
  const fail = (problems: Problem[]): never => {
    problems.sort((a, b) => a.line - b.line || a.col - b.col);
    const shown = problems.slice(0, MAX_PROBLEMS_SHOWN).map((p) => `${p.line}:${p.col} ${p.text}`);
    if (problems.length > MAX_PROBLEMS_SHOWN) shown.push(`(and ${problems.length - MAX_PROBLEMS_SHOWN} more)`);
    throw new RecordingError(path, problems.length === 1 ? shown[0] : `${problems.length} problems:\n  ${shown.join('\n  ')}`);
  };

  if (text.trim() === '') throw new RecordingError(path, 'the file is empty');
  const separator = detectSeparator(text);
  const { records, problem } = splitCsv(text, separator);
  if (problem !== undefined) fail([problem]);

  // Blank lines above the header row are not a header.
  const first = records.findIndex((r) => r.cells.some((c) => c.text.trim() !== ''));
  if (first < 0) throw new RecordingError(path, 'the file holds no values, only separators');
  const [header, ...body] = records.slice(first);
  const problems: Problem[] = [];
  /** Column of each header cell; undefined for an unnamed one. */
  const columnAt: Array<Column | undefined> = [];
  const position = new Map<Column, number>();
  header.cells.forEach((cell, c) => {
    const name = cell.text.trim().toLowerCase();
    columnAt.push(undefined);
    if (name === '') return; // an unnamed column must stay empty (checked per row)
    if (!(COLUMNS as readonly string[]).includes(name)) {
      const hint =
        name === 'channel'
          ? ' (the channel position is the column "index", counted from 0)'
          : ` (known columns: ${COLUMNS.join(', ')})`;
      problems.push({ line: cell.line, col: cell.col, text: `unknown column ${JSON.stringify(cell.text.trim())}${hint}` });
      return;
    }
    const column = name as Column;
    const earlier = position.get(column);
    if (earlier !== undefined) {
      problems.push({ line: cell.line, col: cell.col, text: `column "${column}" is already column ${earlier + 1}` });
      return;
    }
    position.set(column, c);
    columnAt[c] = column;
  });
  // A misspelt column is also a missing one; saying so twice would only confuse.
  const unknownColumns = problems.length > 0;
  if (!unknownColumns && !position.has('recording')) {
    problems.push({ line: header.line, col: 1, text: 'missing column "recording" (the recordings a row is for)' });
  }
  const describesChannels = CHANNEL_COLUMNS.some((c) => position.has(c));
  if (!unknownColumns && describesChannels && !position.has('index')) {
    problems.push({
      line: header.line,
      col: 1,
      text: 'missing column "index" (the channel position, counted from 0, that a row describes)',
    });
  }
  const describesAnything = describesChannels || position.has('index') || position.has('sample-rate');
  if (!unknownColumns && position.has('recording') && !describesAnything) {
    problems.push({
      line: header.line,
      col: 1,
      text: `the header names no column that describes a recording (known columns: ${COLUMNS.join(', ')})`,
    });
  }
  if (problems.length > 0) fail(problems);

  const commaDecimals = separator !== ',';
  const rows: ChannelTableRow[] = [];
  const patterns = new Map<string, PatternFacts>();
  for (const record of body) {
    const row = parseRow(record, header.cells.length, columnAt, commaDecimals, problems);
    if (row === undefined) continue;
    checkAgainstPattern(row, patterns, record, columnAt, problems);
    rows.push(row);
  }
  if (problems.length > 0) fail(problems);
  if (rows.length === 0) throw new RecordingError(path, 'has a header row but no rows');
  return { path, directory: dirname(resolve(path)), rows };
}

/** What the rows so far have said for one pattern, for the duplicate checks. */
interface PatternFacts {
  indexLine: Map<number, number>;
  nameAt: Map<string, { index: number; line: number }>;
  sampleRate?: { value: number; line: number };
}

function checkAgainstPattern(
  row: ChannelTableRow,
  patterns: Map<string, PatternFacts>,
  record: CsvRecord,
  columnAt: Array<Column | undefined>,
  problems: Problem[],
): void {
  const key = normalisePattern(row.pattern);
  let facts = patterns.get(key);
  if (facts === undefined) {
    facts = { indexLine: new Map(), nameAt: new Map() };
    patterns.set(key, facts);
  }
  const cellOf = (column: Column): Cell => record.cells[columnAt.indexOf(column)];
  const at = (column: Column, text: string): void => {
    const cell = cellOf(column);
    problems.push({ line: cell.line, col: cell.col, text: `${column}: ${text}` });
  };
  const shown = JSON.stringify(row.pattern);
  if (row.sampleRate !== undefined) {
    if (facts.sampleRate === undefined) facts.sampleRate = { value: row.sampleRate, line: row.line };
    else if (facts.sampleRate.value !== row.sampleRate) {
      at(
        'sample-rate',
        `${row.sampleRate} differs from the ${facts.sampleRate.value} given for ${shown} on line ${facts.sampleRate.line}`,
      );
    }
  }
  const channel = row.channel;
  if (channel === undefined) return;
  const earlier = facts.indexLine.get(channel.index);
  if (earlier !== undefined) {
    at('index', `channel ${channel.index} of ${shown} is already described on line ${earlier}`);
  } else {
    facts.indexLine.set(channel.index, row.line);
  }
  if (channel.name !== undefined) {
    const same = facts.nameAt.get(channel.name);
    if (same !== undefined && same.index !== channel.index) {
      at('name', `${JSON.stringify(channel.name)} is already the name of channel ${same.index} of ${shown} (line ${same.line})`);
    } else if (same === undefined) {
      facts.nameAt.set(channel.name, { index: channel.index, line: row.line });
    }
  }
}

/** One record as a row, or undefined for a blank or comment row; problems are appended. */
function parseRow(
  record: CsvRecord,
  headerWidth: number,
  columnAt: Array<Column | undefined>,
  commaDecimals: boolean,
  problems: Problem[],
): ChannelTableRow | undefined {
  const value = (c: number): string => (c < record.cells.length ? record.cells[c].text.trim() : '');
  const given = (c: number): boolean => value(c) !== '' && columnAt[c] !== 'note';
  // Spreadsheets write empty rows as a line of separators; a row of only a note is a comment.
  if (!record.cells.some((_, c) => given(c))) return undefined;

  const before = problems.length;
  const cells = new Map<Column, Cell & { value: string }>();
  record.cells.forEach((cell, c) => {
    const text = cell.text.trim();
    if (c >= headerWidth) {
      if (text !== '') {
        problems.push({ line: cell.line, col: cell.col, text: `a value beyond the ${headerWidth} columns of the header row` });
      }
      return;
    }
    const column = columnAt[c];
    if (column === undefined) {
      if (text !== '') {
        problems.push({ line: cell.line, col: cell.col, text: `a value in column ${c + 1}, which has no name in the header row` });
      }
      return;
    }
    if (text !== '') cells.set(column, { ...cell, value: text });
  });
  if (record.cells.length < headerWidth) {
    problems.push({
      line: record.line,
      col: 1,
      text: `the row has ${record.cells.length} values but the header row has ${headerWidth} columns (a separator lost?)`,
    });
  }
  const at = (column: Column, text: string): void => {
    const cell = cells.get(column) ?? record.cells[columnAt.indexOf(column)] ?? record.cells[0];
    problems.push({ line: cell.line, col: cell.col, text: `${column}: ${text}` });
  };

  const pattern = cells.get('recording')?.value;
  if (pattern === undefined) at('recording', 'missing (a file name or path pattern such as run-*.wav)');
  else checkPattern(pattern, (text) => at('recording', text));

  const number = (column: Column, rule: 'positive' | 'non-zero'): number | undefined => {
    const cell = cells.get(column);
    if (cell === undefined) return undefined;
    const parsed = parseNumber(cell.value, commaDecimals);
    if (typeof parsed === 'string') {
      at(column, parsed);
      return undefined;
    }
    if (rule === 'positive' && !(parsed > 0)) at(column, `must be greater than 0, not ${cell.value}`);
    if (rule === 'non-zero' && parsed === 0) at(column, 'must not be 0');
    return parsed;
  };

  let index: number | undefined;
  const indexCell = cells.get('index');
  if (indexCell !== undefined) {
    const parsed = parseNumber(indexCell.value, commaDecimals);
    if (typeof parsed === 'string') at('index', parsed);
    else if (parsed < 0) at('index', `must not be negative, not ${indexCell.value} (channels are counted from 0)`);
    else if (!Number.isInteger(parsed)) at('index', `must be a whole number, not ${indexCell.value}`);
    else if (parsed >= MAX_CHANNELS) at('index', `${indexCell.value} is beyond the ${MAX_CHANNELS} channels a recording can have`);
    else index = parsed;
  }
  const sampleRate = number('sample-rate', 'positive');
  const channelGiven = CHANNEL_COLUMNS.filter((c) => cells.has(c));
  if (indexCell === undefined) {
    if (channelGiven.length > 0) {
      at('index', `missing; the row gives ${channelGiven.join(', ')} but not which channel (counted from 0)`);
    } else if (!cells.has('sample-rate')) {
      at(columnAt.includes('index') ? 'index' : 'sample-rate', 'missing; the row gives neither a channel index nor a sample rate');
    }
  }

  const channel: SidecarChannel = { index: index ?? 0 };
  for (const column of ['name', 'unit', 'sensor', 'sensitivity-unit', 'group'] as const) {
    const text = cells.get(column)?.value;
    if (text === undefined) continue;
    if (column === 'sensitivity-unit') channel.sensitivityUnit = text;
    else channel[column] = text;
  }
  const sensitivity = number('sensitivity', 'positive');
  if (sensitivity !== undefined) channel.sensitivity = sensitivity;
  const fullScale = number('full-scale', 'positive');
  if (fullScale !== undefined) channel.fullScale = fullScale;
  const scale = number('scale', 'non-zero');
  if (scale !== undefined) channel.scale = scale;

  if (problems.length > before || pattern === undefined) return undefined;
  const row: { -readonly [K in keyof ChannelTableRow]: ChannelTableRow[K] } = { line: record.line, pattern };
  if (sampleRate !== undefined) row.sampleRate = sampleRate;
  if (index !== undefined) row.channel = channel;
  return row;
}

function checkPattern(pattern: string, problem: (text: string) => void): void {
  const normal = normalisePattern(pattern);
  if (normal.startsWith('/') || /^[A-Za-z]:\//.test(normal)) {
    problem(`"${pattern}" is an absolute path; write a file name pattern or a path relative to the table's directory`);
  } else if (normal.endsWith('/')) {
    problem(`"${pattern}" names a directory; add a file name pattern such as ${normal}*.wav`);
  } else if (normal === '') {
    problem(`"${pattern}" matches no file`);
  }
}

const DECIMAL = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$/;
const DECIMAL_COMMA = /^[+-]?(?:\d+(?:,\d*)?|,\d+)(?:[eE][+-]?\d+)?$/;

/** A finite decimal number, or what is wrong with the text. */
function parseNumber(text: string, commaDecimals: boolean): number | string {
  let value: number;
  if (DECIMAL.test(text)) value = Number(text);
  else if (DECIMAL_COMMA.test(text)) {
    if (!commaDecimals) return `"${text}" is not a number (write the decimal separator as a point, or separate the columns with ";")`;
    value = Number(text.replace(',', '.'));
  } else return `"${text}" is not a number`;
  // 1e999 has decimal digits but no double: it would read as Infinity
  return Number.isFinite(value) ? value : `"${text}" is not a finite number`;
}
