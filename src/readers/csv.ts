/**
 * CSV and TSV text recordings: one header row of channel names (optionally with units,
 * `acc-01 [g]` or `acc-01 (m/s^2)`), then one row of numbers per sample frame.
 *
 * - Separator: comma, semicolon or tab, whichever the header uses most (`.tsv`: tab).
 *   Header fields may be double-quoted as in RFC 4180 (`""` inside quotes is one `"`).
 * - Time column: the first column when it is named t, time, time_s, seconds (or time_ms),
 *   with an optional unit `[s]`, `[ms]`, `[µs]`; or the column named by `timeColumn`. It
 *   gives the sample rate and is checked for regular spacing; it is not a channel, so
 *   channel index 0 is the first column after it.
 * - Without a time column the sample rate comes from `options.sampleRate`.
 * - A first row made only of numbers is data: the file has no header, and its columns are
 *   named ch1..chN.
 * - Values: decimal numbers with optional exponent; NaN, Inf, -Inf, Infinity (any case)
 *   are read as the non-finite values they stand for, because they are faults to count.
 * - Text encoding: UTF-8 (with or without a byte order mark), or UTF-16 with its byte
 *   order mark (what spreadsheet programs call "Unicode text").
 *
 * The file is streamed in 1 MiB chunks; it is never held whole.
 */
import { extname } from 'node:path';
import { TextDecoder } from 'node:util';
import { open } from 'node:fs/promises';
import type { FileHandle } from 'node:fs/promises';
import { RecordingError, UsageError } from '../errors.js';
import { asFileError, formatHz, recordSampleRateOrigin } from './sidecar.js';
import type { BlockOptions, ChannelInfo, OpenOptions, ReadMeter, Recording, SampleBlock } from './types.js';

/** Bytes read from the file at a time. */
const CHUNK_BYTES = 1024 * 1024;
/** A longer line means this is not a CSV file of sample rows. */
const MAX_LINE_CHARS = 4 * 1024 * 1024;
/**
 * More columns than this are refused: each channel costs its accumulators some kilobytes,
 * so a 4 MiB line of commas (two million columns) would exhaust memory. WAV's limit too.
 */
const MAX_COLUMNS = 65535;
/** Rows read when the file is opened, to derive the sample rate from the time column. */
const RATE_ROWS = 4097;
/**
 * An interval of the time column counts as irregular when it differs from 1/rate by more
 * than this fraction of 1/rate, beyond the rounding of the two printed times (half the
 * column's finest last printed digit each). Acquisition clocks are stable to parts per
 * million, so 0.1 % beyond the printing's own rounding is a gap, a repeated or a lost
 * sample, not jitter; the rounding allowance keeps times printed with few decimals (6
 * decimals at 2048 Hz err by up to 0.2 % of dt) from all counting.
 */
const INTERVAL_TOLERANCE = 1e-3;
const DEFAULT_BLOCK_FRAMES = 65536;
/** Samples (all channels) a block's arrays hold before the first rows arrive. */
const INITIAL_BLOCK_VALUES = 65536;

const COMMA = 44;
const SEMICOLON = 59;
const TAB = 9;
const SPACE = 32;
const QUOTE = 34;
const DOT = 46;
/** The separator of a one-column file: nothing splits a line. */
const NO_SEPARATOR = -1;

/** First-column names taken as a time column, lower case, with the unit they imply. */
const TIME_COLUMN_NAMES = new Map<string, number>([
  ['t', 1],
  ['time', 1],
  ['time_s', 1],
  ['seconds', 1],
  ['time_ms', 1e-3],
]);
/** Units a time column may carry, as factors to seconds. */
const TIME_UNITS = new Map<string, number>([
  ['s', 1],
  ['sec', 1],
  ['ms', 1e-3],
  ['us', 1e-6],
  ['µs', 1e-6], // U+00B5 micro sign
  ['μs', 1e-6], // U+03BC Greek mu
]);

/**
 * Opens a CSV or TSV recording. Reads the header and the first rows (to learn the sample
 * rate) now; the rest is read by `blocks()`. Notes about the time column are added to
 * `notes` when an iteration of `blocks()` completes. A sidecar is not applied here.
 */
export async function openCsv(path: string, options: OpenOptions = {}): Promise<Recording> {
  const givenRate = options.sampleRate;
  if (givenRate !== undefined && !(Number.isFinite(givenRate) && givenRate > 0)) {
    throw new UsageError(`The sample rate must be a positive number of hertz, not ${givenRate}`);
  }
  const decimalChar = options.decimalComma === true ? COMMA : DOT;

  // Read the header and the first rows: enough to learn the sample rate from a time
  // column and to report a malformed file now rather than halfway through a screening.
  let layout: CsvLayout | undefined;
  let parser: RowParser | undefined;
  let checker: TimeChecker | undefined;
  let rows = 0;
  let line = 0;
  const times: number[] = [];
  scan: for await (const chunk of textChunks(path, options.meter)) {
    let from = 0;
    if (layout === undefined) {
      layout = readLayout(path, chunk.text, options);
      parser = new RowParser(path, layout, decimalChar);
      if (layout.timeColumn >= 0) {
        checker = new TimeChecker(path, layout.columnNames[layout.timeColumn], Number.NaN);
      }
      from = layout.dataStart;
      line = layout.headerLines;
    }
    const cursor = new LineCursor(chunk.text, from, line);
    while (cursor.next()) {
      if (!parser!.parse(cursor.text, cursor.start, cursor.end, cursor.line)) continue;
      rows += 1;
      if (checker !== undefined) {
        const time = parser!.values[layout.timeColumn] * layout.timeScale;
        checker.check(time, parser!.timeUnitExponent, layout.timeScale, cursor.line);
        times.push(time);
      }
      if (rows >= RATE_ROWS) break scan;
    }
    line = cursor.line;
    if (rows >= (checker === undefined ? 1 : 2)) break;
  }
  if (layout === undefined) throw new RecordingError(path, 'the file is empty');
  if (rows === 0) throw new RecordingError(path, 'has a header row but no data rows');

  let sampleRate: number;
  let origin: { says: string; toleranceHz: number };
  if (layout.timeColumn >= 0) {
    if (rows < 2) {
      throw new RecordingError(path, 'the time column needs at least two data rows to give the sample rate');
    }
    const estimate = rateFromTimes(times, checker!.resolution);
    if (givenRate !== undefined) {
      if (Math.abs(givenRate - estimate.rate) > estimate.toleranceHz) {
        throw new RecordingError(
          path,
          `the time column gives ${formatHz(estimate.rate)} Hz but the sample rate given is ${formatHz(givenRate)} Hz`,
        );
      }
      sampleRate = givenRate; // exact, where the printed times are rounded
    } else {
      sampleRate = estimate.rate;
    }
    origin = { says: `the time column of "${path}" gives`, toleranceHz: estimate.toleranceHz };
  } else {
    if (givenRate === undefined) {
      throw new RecordingError(
        path,
        'no time column and no sample rate (give --sample-rate or a sidecar with sample-rate)',
      );
    }
    sampleRate = givenRate;
    origin = { says: `"${path}" was opened with a sample rate of`, toleranceHz: 0 };
  }

  const notes: string[] = [];
  if (layout.headerless) {
    notes.push(`no header row: the ${layout.columnNames.length} columns are named ch1 to ch${layout.columnNames.length}`);
  }
  const fixed = layout;
  const timeResolution = checker?.resolution ?? Infinity;
  const recording: Recording = {
    path,
    format: 'csv',
    sampleRate,
    sampleCount: undefined,
    sampleFormat: 'text',
    channels: layout.channels.map((c) => ({ ...c })),
    notes,
    blocks: (blockOptions?: BlockOptions) =>
      csvBlocks(path, fixed, sampleRate, timeResolution, decimalChar, notes, options.meter, blockOptions),
  };
  recordSampleRateOrigin(recording, origin);
  return recording;
}

// ---------------------------------------------------------------------------------------
// Streaming the samples.

async function* csvBlocks(
  path: string,
  layout: CsvLayout,
  sampleRate: number,
  timeResolution: number,
  decimalChar: number,
  notes: string[],
  meter: ReadMeter | undefined,
  options: BlockOptions = {},
): AsyncGenerator<SampleBlock> {
  const frames = options.blockFrames ?? DEFAULT_BLOCK_FRAMES;
  if (!Number.isInteger(frames) || frames < 1) {
    throw new UsageError(`blockFrames must be a whole number of sample frames, at least 1, not ${frames}`);
  }
  const parser = new RowParser(path, layout, decimalChar);
  const values = parser.values;
  const columns = Int32Array.from(layout.channelColumns);
  const channelCount = columns.length;
  const timing =
    layout.timeColumn >= 0
      ? new TimeChecker(path, layout.columnNames[layout.timeColumn], 1 / sampleRate, timeResolution)
      : undefined;
  // The block arrays start small and double as rows arrive, so memory follows the rows
  // actually read: a header of 100 000 columns over one data row must not allocate
  // 100 000 × blockFrames samples up front.
  const initialCapacity = Math.max(1, Math.min(frames, Math.floor(INITIAL_BLOCK_VALUES / channelCount)));
  let capacity = initialCapacity;
  const allocate = (): Float64Array[] =>
    Array.from({ length: channelCount }, () => new Float64Array(capacity));

  let arrays = allocate();
  let fill = 0;
  let start = 0;
  let line = 0;
  let first = true;
  let bytesRead = 0;
  let bytesTotal = 0;
  for await (const chunk of textChunks(path, meter)) {
    const cursor = first
      ? new LineCursor(chunk.text, layout.dataStart, layout.headerLines)
      : new LineCursor(chunk.text, 0, line);
    first = false;
    ({ bytesRead, bytesTotal } = chunk);
    while (cursor.next()) {
      if (!parser.parse(cursor.text, cursor.start, cursor.end, cursor.line)) continue;
      if (timing !== undefined) {
        const time = values[layout.timeColumn] * layout.timeScale;
        timing.check(time, parser.timeUnitExponent, layout.timeScale, cursor.line);
      }
      if (fill === capacity) {
        capacity = Math.min(frames, capacity * 2);
        arrays = arrays.map((a) => {
          const grown = new Float64Array(capacity);
          grown.set(a);
          return grown;
        });
      }
      for (let k = 0; k < channelCount; k++) arrays[k][fill] = values[columns[k]];
      fill += 1;
      if (fill === frames) {
        yield { start, length: frames, channels: arrays };
        options.onProgress?.(bytesRead, bytesTotal);
        start += frames;
        arrays = allocate();
        fill = 0;
      }
    }
    line = cursor.line;
  }
  if (fill > 0) {
    yield { start, length: fill, channels: arrays.map((a) => a.slice(0, fill)) };
    options.onProgress?.(bytesRead, bytesTotal);
  }
  const note = timing?.note(sampleRate);
  if (note !== undefined && !notes.includes(note)) notes.push(note);
}

/** Walks the lines of one chunk of text; `\n` and `\r\n` end a line. */
class LineCursor {
  start = 0;
  end = 0;
  private pos: number;
  constructor(
    readonly text: string,
    from: number,
    /** Number of the line before `from`; after next(), of the current line (1-based). */
    public line: number,
  ) {
    this.pos = from;
  }
  next(): boolean {
    const text = this.text;
    if (this.pos >= text.length) return false;
    const nl = text.indexOf('\n', this.pos);
    let end = nl < 0 ? text.length : nl;
    if (end > this.pos && text.charCodeAt(end - 1) === 13) end -= 1;
    this.start = this.pos;
    this.end = end;
    this.pos = nl < 0 ? text.length : nl + 1;
    this.line += 1;
    return true;
  }
}

interface TextChunk {
  /** Whole lines of text (the last chunk may end without a line break). */
  text: string;
  bytesRead: number;
  bytesTotal: number;
}

/**
 * The file as text, in chunks that end at a line break, decoded from UTF-8 or (with a
 * byte order mark) UTF-16. One reused read buffer; its bytes and each chunk's text are
 * counted on the meter while held.
 */
async function* textChunks(path: string, meter: ReadMeter | undefined): AsyncGenerator<TextChunk> {
  let handle: FileHandle;
  try {
    handle = await open(path, 'r');
  } catch (err) {
    throw asFileError(path, err);
  }
  const buffer = Buffer.allocUnsafe(CHUNK_BYTES);
  meter?.acquire(CHUNK_BYTES);
  try {
    const bytesTotal = (await handle.stat()).size;
    let position = 0;
    let decoder: TextDecoder | undefined;
    let carry = '';
    for (;;) {
      const { bytesRead } = await handle.read(buffer, 0, CHUNK_BYTES, position);
      position += bytesRead;
      let text: string;
      if (bytesRead === 0) {
        text = carry + (decoder?.decode() ?? '');
        carry = '';
      } else {
        const bytes = buffer.subarray(0, bytesRead);
        decoder ??= decoderFor(path, bytes);
        const joined = carry + decoder.decode(bytes, { stream: true });
        const cut = joined.lastIndexOf('\n');
        if (cut < 0) {
          carry = joined;
          if (carry.length > MAX_LINE_CHARS) {
            throw new RecordingError(path, 'has a line longer than 4 MiB; is it really a CSV file?', position);
          }
          continue;
        }
        text = joined.slice(0, cut + 1);
        carry = joined.slice(cut + 1);
      }
      if (text.length > 0) {
        const held = text.length * 2; // UTF-16 code units
        meter?.acquire(held);
        try {
          yield { text, bytesRead: position, bytesTotal };
        } finally {
          meter?.release(held);
        }
      }
      if (bytesRead === 0) return;
    }
  } finally {
    meter?.release(CHUNK_BYTES);
    await handle.close();
  }
}

function decoderFor(path: string, bytes: Uint8Array): TextDecoder {
  let label = 'utf-8';
  if (bytes[0] === 0xff && bytes[1] === 0xfe) label = 'utf-16le';
  else if (bytes[0] === 0xfe && bytes[1] === 0xff) label = 'utf-16be';
  try {
    // The decoder drops the byte order mark itself.
    return new TextDecoder(label);
  } catch {
    throw new RecordingError(path, `is ${label.toUpperCase()} text, which this Node.js cannot decode; save it as UTF-8`);
  }
}

// ---------------------------------------------------------------------------------------
// The header.

interface CsvLayout {
  separator: number;
  headerless: boolean;
  /** Character index in the first chunk where the data rows begin. */
  dataStart: number;
  /** Physical lines the header takes (quoted fields may hold line breaks); 0 if headerless. */
  headerLines: number;
  /** Column names as used in messages, time column included. */
  columnNames: string[];
  timeColumn: number;
  /** Factor from the time column's unit to seconds. */
  timeScale: number;
  /** The header ends with a separator; data rows may too. */
  trailingSeparator: boolean;
  /** For each channel, its column. */
  channelColumns: number[];
  channels: ChannelInfo[];
}

function readLayout(path: string, text: string, options: OpenOptions): CsvLayout {
  const header = splitHeader(path, text, extname(path).toLowerCase() === '.tsv');
  let fields = header.fields;
  const trailingSeparator = fields.length > 1 && fields[fields.length - 1] === '' && !header.lastQuoted;
  if (trailingSeparator) fields = fields.slice(0, -1);

  if (fields.length === 1 && fields[0] === '' && !header.lastQuoted) {
    throw new RecordingError(path, 'line 1 is blank; the first line must be the header row');
  }
  if (fields.length > MAX_COLUMNS) {
    throw new RecordingError(
      path,
      `line 1 has ${fields.length} columns; vibgate reads at most ${MAX_COLUMNS} (is it really a CSV file of sample rows?)`,
    );
  }
  const headerless = fields.every((f) => isNumberText(f, DOT) || isNumberText(f, COMMA));
  const columns = fields.map((f, i) =>
    headerless ? { text: `ch${i + 1}`, name: `ch${i + 1}`, unit: undefined } : nameAndUnit(f),
  );
  const columnNames = columns.map((c, i) => c.name || `column ${i + 1}`);

  let timeColumn = -1;
  let timeScale = 1;
  if (options.timeColumn !== undefined) {
    timeColumn = columns.findIndex((c) => c.name === options.timeColumn || c.text === options.timeColumn);
    if (timeColumn < 0) {
      const listed = columns.slice(0, 20).map((c) => `"${c.text}"`).join(', ');
      const more = columns.length > 20 ? ` and ${columns.length - 20} more` : '';
      throw new RecordingError(path, `no column named "${options.timeColumn}" (columns: ${listed}${more})`);
    }
  } else if (!headerless && TIME_COLUMN_NAMES.has(columns[0].name.toLowerCase())) {
    timeColumn = 0;
  }
  if (timeColumn >= 0) {
    const column = columns[timeColumn];
    if (column.unit !== undefined) {
      const factor = TIME_UNITS.get(column.unit);
      if (factor === undefined) {
        throw new RecordingError(
          path,
          `the time column "${column.text}" has unit "${column.unit}"; times must be in s, ms or µs`,
        );
      }
      timeScale = factor;
    } else {
      timeScale = TIME_COLUMN_NAMES.get(column.name.toLowerCase()) ?? 1;
    }
  }

  const channelColumns: number[] = [];
  const channels: ChannelInfo[] = [];
  columns.forEach((column, i) => {
    if (i === timeColumn) return;
    const index = channels.length;
    const channel: ChannelInfo = { index, name: column.name || `ch${index + 1}` };
    if (column.unit !== undefined) channel.unit = column.unit;
    channels.push(channel);
    channelColumns.push(i);
  });
  if (channels.length === 0) throw new RecordingError(path, 'has no channel columns besides the time column');
  const firstColumn = new Map<string, number>();
  channels.forEach((channel, k) => {
    const earlier = firstColumn.get(channel.name);
    if (earlier !== undefined) {
      throw new RecordingError(
        path,
        `columns ${earlier + 1} and ${channelColumns[k] + 1} are both named "${channel.name}"`,
      );
    }
    firstColumn.set(channel.name, channelColumns[k]);
  });

  if (options.decimalComma === true && header.separator === COMMA) {
    throw new RecordingError(
      path,
      'decimal commas need ";" or a tab as the field separator, but the header is separated by ","',
    );
  }
  return {
    separator: header.separator,
    headerless,
    dataStart: headerless ? 0 : header.end,
    headerLines: headerless ? 0 : header.lines,
    columnNames,
    timeColumn,
    timeScale,
    trailingSeparator,
    channelColumns,
    channels,
  };
}

interface Header {
  fields: string[];
  separator: number;
  /** Index just past the header's line break. */
  end: number;
  lines: number;
  lastQuoted: boolean;
}

/** Splits the header line, double-quoted fields as in RFC 4180 section 2. */
function splitHeader(path: string, text: string, isTsv: boolean): Header {
  // First pass: where the header ends, and which separator it uses outside quotes.
  const counts = { [COMMA]: 0, [SEMICOLON]: 0, [TAB]: 0 } as Record<number, number>;
  let quoted = false;
  let i = 0;
  for (; i < text.length; i++) {
    const c = text.charCodeAt(i);
    if (c === QUOTE) quoted = !quoted;
    else if (quoted) continue;
    else if (c === 10) break;
    else if (c === 13 && i + 1 < text.length && text.charCodeAt(i + 1) !== 10) {
      throw new RecordingError(
        path,
        'uses carriage returns alone as line breaks (classic Mac OS); convert it to LF or CRLF line breaks',
      );
    } else if (c === 0) {
      throw new RecordingError(path, 'is not a text file (it holds NUL characters)');
    } else if (c === COMMA || c === SEMICOLON || c === TAB) counts[c] += 1;
  }
  if (quoted) throw new RecordingError(path, 'line 1: a quoted field of the header is not closed');
  let separator: number;
  if (isTsv) separator = TAB;
  else if (counts[TAB] === 0 && counts[SEMICOLON] === 0 && counts[COMMA] === 0) separator = NO_SEPARATOR;
  // Ties go to tab, then semicolon: a comma may be a decimal comma, the others cannot.
  else if (counts[TAB] >= counts[SEMICOLON] && counts[TAB] >= counts[COMMA]) separator = TAB;
  else if (counts[SEMICOLON] >= counts[COMMA]) separator = SEMICOLON;
  else separator = COMMA;
  const lineEnd = i;

  // Second pass: the fields.
  const fields: string[] = [];
  let lines = 1;
  let lastQuoted = false;
  let pos = 0;
  for (;;) {
    while (pos < lineEnd && isBlank(text.charCodeAt(pos), separator)) pos++;
    let field: string;
    if (text.charCodeAt(pos) === QUOTE && pos < lineEnd) {
      field = '';
      let from = pos + 1;
      for (;;) {
        const close = text.indexOf('"', from);
        if (close < 0 || close >= lineEnd) {
          throw new RecordingError(path, 'line 1: a quoted field of the header is not closed');
        }
        field += text.slice(from, close);
        if (text.charCodeAt(close + 1) === QUOTE) {
          field += '"';
          from = close + 2;
        } else {
          pos = close + 1;
          break;
        }
      }
      for (const ch of field) if (ch === '\n') lines += 1;
      while (pos < lineEnd && isBlank(text.charCodeAt(pos), separator)) pos++;
      if (pos < lineEnd && text.charCodeAt(pos) !== separator && text.charCodeAt(pos) !== 13) {
        throw new RecordingError(
          path,
          `line 1: unexpected text after the closing quote of column ${fields.length + 1}`,
        );
      }
      lastQuoted = true;
    } else {
      let stop = separator === NO_SEPARATOR ? -1 : text.indexOf(String.fromCharCode(separator), pos);
      if (stop < 0 || stop > lineEnd) stop = lineEnd;
      field = text.slice(pos, stop).replace(/\r$/, '').trim();
      pos = stop;
      lastQuoted = false;
    }
    fields.push(field);
    if (pos >= lineEnd || text.charCodeAt(pos) !== separator) break;
    pos += 1;
  }
  return { fields, separator, end: Math.min(lineEnd + 1, text.length), lines, lastQuoted };
}

/** `acc-01 [g]` and `acc-01 (m/s^2)` → name and unit. */
function nameAndUnit(text: string): { text: string; name: string; unit: string | undefined } {
  const match = /^(.*?)\s*(?:\[([^\]]*)\]|\(([^)]*)\))$/s.exec(text);
  if (match === null) return { text, name: text, unit: undefined };
  const unit = (match[2] ?? match[3]).trim();
  return { text, name: match[1].trim(), unit: unit === '' ? undefined : unit };
}

function isNumberText(text: string, decimalChar: number): boolean {
  return text !== '' && scanNumber(text, 0, text.length, decimalChar, TAB) === text.length;
}

/** Spaces around a field are ignored, and tabs too unless they separate fields. */
function isBlank(c: number, separator: number): boolean {
  return c === SPACE || (c === TAB && separator !== TAB);
}

// ---------------------------------------------------------------------------------------
// Data rows.

/** Parses one data row into `values` (one slot per column). */
class RowParser {
  readonly values: Float64Array;
  /** Power of ten of the last printed digit of the time column's value just parsed. */
  timeUnitExponent = 0;
  private blankLine = 0;
  private readonly columns: number;
  private readonly separator: number;
  private readonly otherBlank: number;

  constructor(
    private readonly path: string,
    private readonly layout: CsvLayout,
    private readonly decimalChar: number,
  ) {
    this.columns = layout.columnNames.length;
    this.values = new Float64Array(this.columns);
    this.separator = layout.separator;
    this.otherBlank = layout.separator === TAB ? SPACE : TAB;
  }

  /** Returns false for a blank line (allowed only at the end of the file). */
  parse(text: string, start: number, end: number, line: number): boolean {
    let i = start;
    while (i < end && text.charCodeAt(i) === SPACE) i++;
    if (i === end) {
      if (this.blankLine === 0) this.blankLine = line;
      return false;
    }
    if (this.blankLine !== 0) {
      throw new RecordingError(this.path, `line ${this.blankLine} is blank but data follows on line ${line}`);
    }
    const separator = this.separator;
    const last = this.columns - 1;
    i = start;
    for (let col = 0; ; col++) {
      let next: number;
      const first = skipBlanks(text, i, end, this.otherBlank);
      if (first < end && text.charCodeAt(first) === QUOTE) {
        next = this.parseQuoted(text, i, end, line, col);
      } else {
        next = scanNumber(text, i, end, this.decimalChar, this.otherBlank);
        if (next < 0 || (next < end && text.charCodeAt(next) !== separator)) {
          throw this.badField(text, i, end, line, col);
        }
        this.values[col] = numberValue;
      }
      if (col === this.layout.timeColumn) this.timeUnitExponent = numberUnitExponent;
      if (col === last) {
        if (next === end) return true;
        if (this.layout.trailingSeparator && skipBlanks(text, next + 1, end, this.otherBlank) === end) return true;
        throw this.ragged(text, next, end, line, this.columns);
      }
      if (next === end) throw this.ragged(text, end, end, line, col + 1);
      i = next + 1;
    }
  }

  /** A quoted data field: `"1.25"` (RFC 4180 allows quoting any field). */
  private parseQuoted(text: string, i: number, end: number, line: number, col: number): number {
    const open = skipBlanks(text, i, end, this.otherBlank);
    const close = text.indexOf('"', open + 1);
    if (close < 0 || close >= end) {
      throw new RecordingError(this.path, `line ${line}, column "${this.layout.columnNames[col]}": the quoted field is not closed on its line`);
    }
    const inner = text.slice(open + 1, close);
    if (scanNumber(inner, 0, inner.length, this.decimalChar, this.otherBlank) !== inner.length) {
      throw this.badField(inner, 0, inner.length, line, col);
    }
    this.values[col] = numberValue;
    const next = skipBlanks(text, close + 1, end, this.otherBlank);
    if (next < end && text.charCodeAt(next) !== this.separator) {
      throw new RecordingError(this.path, `line ${line}, column "${this.layout.columnNames[col]}": unexpected text after the closing quote`);
    }
    return next;
  }

  private badField(text: string, i: number, end: number, line: number, col: number): RecordingError {
    let stop = this.separator === NO_SEPARATOR ? -1 : text.indexOf(String.fromCharCode(this.separator), i);
    if (stop < 0 || stop > end) stop = end;
    const field = text.slice(i, stop).trim();
    const where = `line ${line}, column "${this.layout.columnNames[col]}"`;
    if (field === '') return new RecordingError(this.path, `${where}: the field is empty`);
    if (this.decimalChar === DOT && field.includes(',') && isNumberText(field, COMMA)) {
      return new RecordingError(
        this.path,
        `line ${line} uses a decimal comma ("${field}"); pass --decimal-comma to read it`,
      );
    }
    if (this.decimalChar === COMMA && field.includes('.') && isNumberText(field, DOT)) {
      return new RecordingError(this.path, `${where}: "${field}" has a decimal point, but decimal commas were asked for`);
    }
    const shown = field.length > 40 ? `${field.slice(0, 40)}...` : field;
    return new RecordingError(this.path, `${where}: "${shown}" is not a number`);
  }

  private ragged(text: string, from: number, end: number, line: number, seen: number): RecordingError {
    let fields = seen;
    if (from < end && this.separator !== NO_SEPARATOR) {
      for (let i = from; i < end; i++) if (text.charCodeAt(i) === this.separator) fields += 1;
    }
    const expected = this.layout.headerless ? 'line 1 has' : 'the header has';
    return new RecordingError(this.path, `line ${line} has ${fields} fields but ${expected} ${this.columns}`);
  }
}

function skipBlanks(text: string, i: number, end: number, otherBlank: number): number {
  while (i < end) {
    const c = text.charCodeAt(i);
    if (c !== SPACE && c !== otherBlank) break;
    i++;
  }
  return i;
}

/** Exact powers of ten as doubles: 10^0 .. 10^22 (10^22 is the largest exactly representable). */
const POWERS_OF_TEN = Array.from({ length: 23 }, (_, k) => Number(`1e${k}`));

/** Set by scanNumber: the value read. */
let numberValue = 0;
/** Set by scanNumber: the power of ten of the last digit written (NaN for NaN/Inf words). */
let numberUnitExponent = 0;

/**
 * Reads a number `[+-]digits[.digits][(e|E)[+-]digits]` or a NaN/Inf word from
 * `text[i..end)`, skipping blanks around it. Returns the index after it (and the blanks
 * that follow), or −1 when there is no number there; the value is left in `numberValue`.
 *
 * Up to 15 significant digits and a decimal exponent within ±22 are converted with one
 * division or multiplication of two exactly representable doubles, which IEEE 754 rounds
 * correctly (Clinger's fast path, "How to read floating point numbers accurately",
 * PLDI 1990); anything longer goes to `Number()`, after this grammar has vetted it.
 */
function scanNumber(text: string, i: number, end: number, decimalChar: number, otherBlank: number): number {
  i = skipBlanks(text, i, end, otherBlank);
  const start = i;
  let negative = false;
  let c = text.charCodeAt(i);
  if (i < end && (c === 43 || c === 45)) {
    negative = c === 45;
    i++;
  }
  let mantissa = 0;
  let significant = 0;
  let digits = 0;
  let fractionDigits = 0;
  let exact = true;
  while (i < end) {
    const d = text.charCodeAt(i) - 48;
    if (d < 0 || d > 9) break;
    digits++;
    if (significant > 0 || d !== 0) {
      if (significant < 15) {
        mantissa = mantissa * 10 + d;
        significant++;
      } else exact = false;
    }
    i++;
  }
  if (i < end && text.charCodeAt(i) === decimalChar) {
    i++;
    while (i < end) {
      const d = text.charCodeAt(i) - 48;
      if (d < 0 || d > 9) break;
      digits++;
      fractionDigits++;
      if (significant > 0 || d !== 0) {
        if (significant < 15) {
          mantissa = mantissa * 10 + d;
          significant++;
        } else exact = false;
      }
      i++;
    }
  }
  if (digits === 0) return scanWord(text, i, end, negative, otherBlank);
  let exponent = 0;
  c = text.charCodeAt(i);
  if (i < end && (c === 101 || c === 69)) {
    let j = i + 1;
    let negativeExponent = false;
    c = text.charCodeAt(j);
    if (j < end && (c === 43 || c === 45)) {
      negativeExponent = c === 45;
      j++;
    }
    const first = j;
    while (j < end) {
      const d = text.charCodeAt(j) - 48;
      if (d < 0 || d > 9) break;
      if (exponent < 100000) exponent = exponent * 10 + d;
      j++;
    }
    if (j === first) return -1;
    if (negativeExponent) exponent = -exponent;
    i = j;
  }
  const scale = exponent - fractionDigits;
  let value: number;
  if (exact && scale >= -22 && scale <= 22) {
    value = scale < 0 ? mantissa / POWERS_OF_TEN[-scale] : mantissa * POWERS_OF_TEN[scale];
    if (negative) value = -value;
  } else {
    let written = text.slice(start, i);
    if (decimalChar !== DOT) written = written.replace(',', '.');
    value = Number(written);
  }
  numberValue = value;
  numberUnitExponent = scale;
  return skipBlanks(text, i, end, otherBlank);
}

/** NaN, Inf, Infinity in any case, after an optional sign (already consumed). */
function scanWord(text: string, i: number, end: number, negative: boolean, otherBlank: number): number {
  let stop = i;
  while (stop < end) {
    const c = text.charCodeAt(stop) | 0x20; // ASCII lower case
    if (c < 97 || c > 122) break;
    stop++;
  }
  const word = text.slice(i, stop).toLowerCase();
  if (word === 'nan') numberValue = Number.NaN;
  else if (word === 'inf' || word === 'infinity') numberValue = negative ? -Infinity : Infinity;
  else return -1;
  numberUnitExponent = Number.NaN;
  return skipBlanks(text, stop, end, otherBlank);
}

// ---------------------------------------------------------------------------------------
// The time column.

/** Checks that times increase, and counts intervals that stray from 1/rate. */
class TimeChecker {
  irregular = 0;
  /**
   * Finest last printed digit seen in the column, in seconds: the times' resolution. The
   * finest, not each value's own: printing in shortest form drops trailing zeros, so `0.01`
   * next to `0.0102` is as precise as its neighbours.
   */
  resolution: number;
  private previous = Number.NaN;
  private previousLine = 0;
  private worstDeviation = -1;
  private worstInterval = 0;
  private worstLine = 0;
  private worstPreviousLine = 0;

  constructor(
    private readonly path: string,
    private readonly column: string,
    /** Expected interval in seconds (NaN: only check that times increase). */
    private readonly dt: number,
    resolution = Infinity,
  ) {
    this.resolution = resolution;
  }

  /** `time` in seconds; `unitExponent` (power of ten of its last digit) in the column's unit. */
  check(time: number, unitExponent: number, timeScale: number, line: number): void {
    if (!Number.isFinite(time)) {
      throw new RecordingError(this.path, `line ${line}, column "${this.column}": the time is ${time}, not a finite number`);
    }
    const unit = 10 ** unitExponent * timeScale;
    if (unit < this.resolution) this.resolution = unit;
    if (this.previousLine !== 0) {
      const interval = time - this.previous;
      if (!(interval > 0)) {
        throw new RecordingError(
          this.path,
          `line ${line}: the time column does not increase (${formatSeconds(this.previous / timeScale)} on line ${this.previousLine}, then ${formatSeconds(time / timeScale)})`,
        );
      }
      // Each printed time is within half a resolution step of the true time.
      const deviation = Math.abs(interval - this.dt);
      if (deviation > INTERVAL_TOLERANCE * this.dt + this.resolution) {
        this.irregular += 1;
        if (deviation > this.worstDeviation) {
          this.worstDeviation = deviation;
          this.worstInterval = interval;
          this.worstLine = line;
          this.worstPreviousLine = this.previousLine;
        }
      }
    }
    this.previous = time;
    this.previousLine = line;
  }

  note(sampleRate: number): string | undefined {
    if (this.irregular === 0) return undefined;
    const expected = Number.isInteger(sampleRate) ? `1/${sampleRate} s` : `${formatSeconds(1 / sampleRate)} s`;
    const count = this.irregular === 1 ? '1 interval differs' : `${this.irregular} intervals differ`;
    return (
      `time column: ${count} from ${expected} by more than 0.1 % (beyond the rounding of the printed times); ` +
      `the worst is ${formatSeconds(this.worstInterval)} s, between lines ${this.worstPreviousLine} and ${this.worstLine}`
    );
  }
}

function formatSeconds(s: number): string {
  return String(Number(s.toPrecision(6)));
}

/**
 * The sample rate from the first rows of a time column, and how far off it may be.
 *
 * When all intervals lie within tolerance of their median, dt = (t_last − t_first)/m over
 * the m intervals: the rounding of the printed times then errs by at most one unit of the
 * last digit over the whole span, not per interval. Otherwise (a gap early on) the median
 * interval is used. A rate within its uncertainty of a whole number is that whole number,
 * because the printed times cannot tell them apart.
 */
function rateFromTimes(times: number[], resolution: number): { rate: number; toleranceHz: number } {
  const m = times.length - 1;
  const intervals = times.slice(1).map((t, k) => t - times[k]);
  const median = [...intervals].sort((a, b) => a - b)[Math.floor(m / 2)];
  const regular = intervals.every((d) => Math.abs(d - median) <= INTERVAL_TOLERANCE * median + resolution);
  let dt: number;
  let dtUncertainty: number;
  if (regular) {
    dt = (times[m] - times[0]) / m;
    dtUncertainty = resolution / m;
  } else {
    dt = median;
    dtUncertainty = resolution;
  }
  let rate = 1 / dt;
  // d(1/dt) = dt_error / dt²; the floor allows for the doubles' own rounding.
  const toleranceHz = dtUncertainty / (dt * dt) + rate * 1e-12;
  const whole = Math.round(rate);
  if (whole > 0 && Math.abs(rate - whole) <= toleranceHz) rate = whole;
  return { rate, toleranceHz };
}
