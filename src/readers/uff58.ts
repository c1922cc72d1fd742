/**
 * Universal File Format dataset 58 ("function at nodal DOF") time histories, ASCII and
 * binary (58b), after the public description of University of Cincinnati SDRL,
 * "Universal Dataset Number 58", and its note on the binary variant.
 *
 * A file is a sequence of datasets, each opened and closed by a line `    -1` (-1 in
 * columns 1–6). The line after the opening one carries the dataset number (`    58`; for
 * the binary variant `    58b` followed by byte order, floating-point format, the number of
 * ASCII lines that follow (11) and the number of bytes of binary data). Eleven records
 * follow: ID lines 1–4 and a date line, record 6 (function type, response node and
 * direction), record 7 (ordinate data type, number of values, abscissa spacing, minimum and
 * increment), records 8–11 (data characteristics and labels of the abscissa, ordinate,
 * ordinate denominator and z axis). Then the data: ASCII in fixed columns (real single
 * 6E13.5, real double 4E20.12, uneven spacing interleaving the abscissa values), or in 58b
 * exactly the declared number of bytes of IEEE 754 values, then the closing `    -1`.
 *
 * What this reader makes of it:
 * - Each dataset 58 with real ordinates (data type 2 or 4) and a time abscissa (record 8
 *   data type 17, or 0 with record 6 function type 1) is a channel. Every other dataset
 *   (another number, complex ordinates, spectra and FRFs) is skipped and named in a note;
 *   a file without a single time history is an error.
 * - The channels must share sample rate and length, as the channels of one recording do.
 *   The rate is 1/increment of the first channel. Record 7 usually prints the increment to
 *   6 significant digits (E13.5), so 1/2048 s reads back as 2048.001 Hz: as the CSV reader
 *   does for a time column, a rate within the printing's rounding of a whole number of
 *   hertz is taken as that whole number (and a note says so). Rates of two channels agree
 *   when they differ by less than their printings can tell apart, or 1e-9 relative.
 * - Uneven abscissa spacing is refused, unless the abscissa values turn out to be evenly
 *   spaced to the precision they are stored in (printed digits, or float32/float64), which
 *   some writers produce; then the dataset is read as evenly sampled, with a note.
 * - Names: ID line 1 when it holds text other than `NONE` (writers fill unused ID lines
 *   with it), else `<node><direction>` from record 6 (`12+Z`; direction codes 1..3 are
 *   +X, +Y, +Z, 4..6 the rotations +RX, +RY, +RZ, negative codes the negative directions,
 *   0 a scalar: the node alone), else `chN`. When a channel is named from ID line 1 and
 *   record 6 gives a node, a note lists node and direction, so the measurement point is
 *   kept without changing a name that rule selectors may match. Names that repeat are
 *   made unique by appending the node and direction (`accel 12+Z`) or the channel number
 *   (`accel #3`), with a note.
 * - Units: the ordinate units label of record 9 (`NONE` or blank: none).
 * - A non-zero abscissa minimum (start time) is kept in a note.
 * - ASCII numbers: blank-separated as written, or in the fixed columns of the format where
 *   they touch (`-1.234567E+00-2.345678E+00`); exponents with E, D (Fortran double) or no
 *   letter (Fortran's `1.23456+100`); NaN and Inf are read as the faults they are. Lines may
 *   end in CRLF and carry trailing blanks.
 * - Datasets are numbered in messages in file order, counting every dataset, with the line
 *   of their dataset number (or, after binary data, where line numbers mean nothing, the
 *   byte offset).
 *
 * Streaming: opening the file makes one pass that indexes every dataset (header, where its
 * data start and end, and for ASCII data a bounded table of line offsets to seek from),
 * checking counts and numbers on the way. `blocks()` then reads each channel from its own
 * data region through a small read buffer per channel, so memory follows channels × the
 * buffer, never the file's size.
 */
import { open, type FileHandle } from 'node:fs/promises';
import { TextDecoder } from 'node:util';
import { RecordingError, UsageError } from '../errors.js';
import { asFileError, formatHz, recordSampleRateOrigin } from './sidecar.js';
import type { BlockOptions, ChannelInfo, OpenOptions, ReadMeter, Recording, SampleBlock } from './types.js';

/** Read buffer of the indexing pass. */
const INDEX_BUFFER_BYTES = 256 * 1024;
/**
 * Read buffer of each channel while streaming. A data line must fit in it; records are 80
 * columns, so 64 KiB is tolerance for free-format writers, not a limit real files meet.
 */
const CHANNEL_BUFFER_BYTES = 64 * 1024;
/** More numbers on one data line than this is not a dataset 58 data line. */
const MAX_VALUES_PER_LINE = 256;
/** Seek table entries per ASCII dataset: the stride between entries doubles to stay below. */
const MAX_CHECKPOINTS = 1024;
const FIRST_CHECKPOINT_STRIDE = 16;
const DEFAULT_BLOCK_FRAMES = 65536;
const HEADER_RECORDS = 11;
/** Two channels' sample rates agree to this fraction beyond what their printing resolves. */
const RATE_MATCH_RELATIVE = 1e-9;
/** Entries listed in one note before "and N more". */
const MAX_LISTED = 8;

const LF = 10;
const CR = 13;
const SPACE = 32;
const TAB = 9;

/** Fixed-column formats of the data lines (Fortran field widths, repeated along a line). */
const WIDTHS_SINGLE = [13, 13, 13, 13, 13, 13]; // 6E13.5, also uneven single: 3 × (x, y)
const WIDTHS_DOUBLE = [20, 20, 20, 20]; // 4E20.12
const WIDTHS_DOUBLE_UNEVEN = [13, 20, 13, 20]; // 2(E13.5,E20.12)

const DIRECTIONS = new Map<number, string>([
  [0, ''],
  [1, '+X'],
  [2, '+Y'],
  [3, '+Z'],
  [4, '+RX'],
  [5, '+RY'],
  [6, '+RZ'],
  [-1, '-X'],
  [-2, '-Y'],
  [-3, '-Z'],
  [-4, '-RX'],
  [-5, '-RY'],
  [-6, '-RZ'],
]);

const FLOAT_FORMATS = new Map<number, string>([
  [1, 'DEC VMS'],
  [3, 'IBM 5/370'],
]);

// ---------------------------------------------------------------------------------------
// The public API.

/**
 * Tells a Universal File Format file by its first bytes: the first non-blank line is `-1`
 * within the first six columns, and the next line starts with a dataset number (`58`,
 * `58b`, `151`, `164` ...). `head` is the start of the file (about 160 bytes) as text.
 */
export function looksLikeUff(head: string): boolean {
  const lines = head.replace(/^\uFEFF/, '').split(/\r?\n/);
  let i = 0;
  while (i < lines.length && lines[i].trim() === '') i++;
  if (i + 1 >= lines.length) return false;
  if (!/^ {0,4}-1[ \t]*\r?$/.test(lines[i])) return false;
  return /^ *[1-9][0-9]{0,5}[bB]?(?:[ \t\r]|$)/.test(lines[i + 1]);
}

/**
 * Opens a Universal File Format file and indexes its datasets 58. Samples are read when
 * `blocks()` is iterated; `startFrame`/`endFrame` seek.
 *
 * @throws RecordingError naming the file when it is not UFF, a dataset is cut short or
 *   holds more or other data than its header declares, its channels disagree in sample
 *   rate or length, or it holds no dataset 58 time history.
 */
export async function openUff58(path: string, options: OpenOptions = {}): Promise<Recording> {
  const index = await indexFile(path, options.meter);
  const sources = index.sources;
  const notes = [...index.notes];
  const first = sources[0];
  for (const source of sources.slice(1)) {
    const rateAgrees =
      Math.abs(source.rate - first.rate) <=
      first.rateToleranceHz + source.rateToleranceHz + RATE_MATCH_RELATIVE * first.rate;
    if (!rateAgrees || source.count !== first.count) {
      throw new RecordingError(
        path,
        `${source.label} has ${source.count} values at ${formatHz(source.rate)} Hz, but ${first.label} has ` +
          `${first.count} at ${formatHz(first.rate)} Hz; the channels of one recording must share sample rate and length`,
      );
    }
  }

  const names = channelNames(sources, notes);
  const channels: ChannelInfo[] = sources.map((source, index) => {
    const channel: ChannelInfo = { index, name: names[index] };
    if (source.unit !== undefined) channel.unit = source.unit;
    return channel;
  });

  const placed = sources
    .map((s, i) => ({ s, name: names[i] }))
    .filter(({ s }) => s.idName !== '' && s.node > 0)
    .map(({ s, name }) => ({ name, point: `${s.node}${directionText(s.direction)}` }))
    .filter(({ name, point }) => !name.includes(point));
  if (placed.length > 0) {
    notes.push(
      `response node and direction (record 6) of each channel: ${placed.map((p) => `"${p.name}" ${p.point}`).join(', ')}`,
    );
  }
  if (first.snapped) {
    notes.push(
      `record 7 of ${first.label} gives the sampling interval as ${first.incrementText} s; ` +
        `the sample rate is taken as ${formatHz(first.rate)} Hz, the whole number of hertz within the rounding of that printing`,
    );
  }
  for (const source of sources) if (source.unevenNote !== undefined) notes.push(source.unevenNote);
  const starts = new Set(sources.map((s) => s.startS));
  if (starts.size === 1 && first.startS !== 0) {
    notes.push(`the time axis starts at ${formatSeconds(first.startS)} s (abscissa minimum, record 7), not at 0`);
  } else if (starts.size > 1) {
    notes.push(
      `the channels' time axes start at different times (abscissa minimum, record 7): ` +
        listed(sources.map((s, i) => `"${names[i]}" ${formatSeconds(s.startS)} s`)),
    );
  }

  const anyDouble = sources.some((s) => s.precision === 'double');
  const read: UffRead = { path, sources, meter: options.meter };
  const recording: Recording = {
    path,
    format: 'uff58',
    sampleRate: first.rate,
    sampleCount: first.count,
    sampleFormat: anyDouble ? 'float64' : 'float32',
    channels,
    notes,
    blocks: (blockOptions?: BlockOptions) => uffBlocks(read, blockOptions ?? {}),
  };
  recordSampleRateOrigin(recording, {
    says: `the abscissa increment in record 7 of "${path}" gives`,
    toleranceHz: first.rateToleranceHz,
  });
  return recording;
}

// ---------------------------------------------------------------------------------------
// What the index pass learns.

type Precision = 'single' | 'double';

/** Where to resume reading an ASCII data region: every `stride`-th data line. */
interface Checkpoints {
  stride: number;
  /** Raw value index (abscissa values of uneven data counted) at the start of the line. */
  value: number[];
  offset: number[];
  line: number[];
}

interface AsciiLayout {
  kind: 'ascii';
  widths: readonly number[];
  checkpoints: Checkpoints;
}

interface BinaryLayout {
  kind: 'binary';
  littleEndian: boolean;
  /** Bytes of one point: the ordinate, after its abscissa value for uneven data. */
  pointBytes: number;
  /** Bytes of the abscissa value before each ordinate (uneven data), else 0. */
  xBytes: 0 | 4 | 8;
}

/** One dataset 58 that becomes a channel. */
interface Source {
  /** `dataset 3 "rear-x" (line 120)`, for messages. */
  label: string;
  /** ID line 1, trimmed; '' when blank or NONE. */
  idName: string;
  node: number;
  direction: number;
  unit: string | undefined;
  precision: Precision;
  /** Points (sample frames). */
  count: number;
  /** Values per point in the data: 1, or 2 when abscissa values are interleaved. */
  perPoint: 1 | 2;
  rate: number;
  rateToleranceHz: number;
  /** The rate was rounded to a whole number of hertz within the increment's printing. */
  snapped: boolean;
  /** Record 7's increment as printed. */
  incrementText: string;
  startS: number;
  dataStart: number;
  /** Bytes of the data region (ASCII: up to the closing `-1` line). */
  dataBytes: number;
  layout: AsciiLayout | BinaryLayout;
  unevenNote?: string;
}

interface FileIndex {
  sources: Source[];
  notes: string[];
}

type SkipReason = 'other' | 'complex' | 'not-time';

interface Skipped {
  reason: SkipReason;
  /** How the dataset is listed in the note: `151 at line 2`, `4 "frf" (line 120)`. */
  text: string;
}

// ---------------------------------------------------------------------------------------
// Lines of bytes.

/**
 * Lines of a file through one read buffer, with their byte offsets: header text is decoded
 * per field, data numbers are scanned from the bytes, and binary data can be jumped over.
 * A line longer than the buffer is returned cut to the buffer (`cut`), its rest dropped.
 */
class ByteLines {
  readonly buf: Buffer;
  /** The bytes of `buf` that hold file data. */
  private valid: Buffer;
  /** File offset of buf[0]. */
  private fileAt = 0;
  private len = 0;
  private pos = 0;
  private atEnd = false;
  private dropping = false;
  /** The current line is buf[start, end), its line break (LF or CRLF) excluded. */
  start = 0;
  end = 0;
  cut = false;
  /** File offset and number of the current line. */
  lineOffset = 0;
  line = 0;
  /** False once binary data were jumped over: line numbers no longer match an editor's. */
  linesKnown = true;

  constructor(
    private readonly handle: FileHandle,
    private readonly path: string,
    bytes: number,
  ) {
    // its own memory, not a slice of Node's pool, so DataViews over it start at offset 0
    this.buf = Buffer.allocUnsafeSlow(bytes);
    this.valid = this.buf.subarray(0, 0);
  }

  /** File offset just after the current line's break. */
  get nextOffset(): number {
    return this.fileAt + this.pos;
  }

  /** Takes the next line from the buffer; false when it holds no whole line (call `next`). */
  take(): boolean {
    for (;;) {
      const nl = this.valid.indexOf(LF, this.pos);
      if (this.dropping) {
        if (nl < 0) {
          this.pos = this.len;
          return false;
        }
        this.pos = nl + 1;
        this.dropping = false;
        continue;
      }
      if (nl >= 0) {
        this.setLine(this.pos, nl, false);
        this.pos = nl + 1;
        return true;
      }
      if (this.atEnd) {
        if (this.pos >= this.len) return false;
        this.setLine(this.pos, this.len, false);
        this.pos = this.len;
        return true;
      }
      if (this.pos === 0 && this.len === this.buf.length) {
        this.setLine(0, this.len, true);
        this.pos = this.len;
        this.dropping = true;
        return true;
      }
      return false;
    }
  }

  /** The next line, reading as needed; false at the end of the file. */
  async next(): Promise<boolean> {
    while (!this.take()) {
      if (this.atEnd) return false;
      await this.fill();
    }
    return true;
  }

  /** Continues at a file offset (after binary data, or to seek). */
  skipTo(offset: number, lineBefore?: number): void {
    if (offset >= this.fileAt && offset <= this.fileAt + this.len && !this.dropping) {
      this.pos = offset - this.fileAt;
    } else {
      this.fileAt = offset;
      this.len = 0;
      this.pos = 0;
      this.valid = this.buf.subarray(0, 0);
      this.atEnd = false;
      this.dropping = false;
    }
    if (lineBefore === undefined) this.linesKnown = false;
    else this.line = lineBefore;
  }

  /** The buffer for other reads; the lines continue only after `skipTo`. */
  borrow(): Buffer {
    this.fileAt = 0;
    this.len = 0;
    this.pos = 0;
    this.valid = this.buf.subarray(0, 0);
    this.atEnd = false;
    this.dropping = false;
    return this.buf;
  }

  /** `line 57`, or `the line at byte 12345` once line numbers are unknown. */
  get where(): string {
    return this.linesKnown ? `line ${this.line}` : `the line at byte ${this.lineOffset}`;
  }

  private setLine(start: number, end: number, cut: boolean): void {
    if (end > start && this.buf[end - 1] === CR) end -= 1;
    this.start = start;
    this.end = end;
    this.cut = cut;
    this.lineOffset = this.fileAt + start;
    this.line += 1;
  }

  private async fill(): Promise<void> {
    if (this.pos > 0) {
      this.buf.copyWithin(0, this.pos, this.len);
      this.fileAt += this.pos;
      this.len -= this.pos;
      this.pos = 0;
    }
    let bytesRead: number;
    try {
      ({ bytesRead } = await this.handle.read(this.buf, this.len, this.buf.length - this.len, this.fileAt + this.len));
    } catch (err) {
      throw asFileError(this.path, err);
    }
    if (bytesRead === 0) this.atEnd = true;
    this.len += bytesRead;
    this.valid = this.buf.subarray(0, this.len);
  }
}

// ---------------------------------------------------------------------------------------
// The index pass.

async function indexFile(path: string, meter: ReadMeter | undefined): Promise<FileIndex> {
  let handle: FileHandle;
  try {
    handle = await open(path, 'r');
  } catch (err) {
    throw asFileError(path, err);
  }
  meter?.acquire(INDEX_BUFFER_BYTES);
  try {
    let size: number;
    try {
      size = (await handle.stat()).size;
    } catch (err) {
      throw asFileError(path, err);
    }
    if (size === 0) throw new RecordingError(path, 'the file is empty');
    const indexer = new Indexer(path, size, handle, new ByteLines(handle, path, INDEX_BUFFER_BYTES));
    await indexer.run();
    const notes = skippedNotes(indexer.skipped);
    if (indexer.sources.length === 0) {
      throw new RecordingError(
        path,
        `holds no dataset 58 time history with real values` + (notes.length > 0 ? ` (${notes.join('; ')})` : ''),
      );
    }
    return { sources: indexer.sources, notes };
  } finally {
    meter?.release(INDEX_BUFFER_BYTES);
    await handle.close();
  }
}

class Indexer {
  readonly sources: Source[] = [];
  readonly skipped: Skipped[] = [];
  private ordinal = 0;
  private readonly scanner = new NumberScanner();
  private readonly values = new Float64Array(MAX_VALUES_PER_LINE);
  private readonly exponents = new Float64Array(MAX_VALUES_PER_LINE);

  constructor(
    private readonly path: string,
    private readonly size: number,
    private readonly handle: FileHandle,
    private readonly lines: ByteLines,
  ) {}

  async run(): Promise<void> {
    const lines = this.lines;
    while (await lines.next()) {
      if (isBlank(lines.buf, lines.start, lines.end)) continue;
      if (!lines.cut && isDelimiter(lines.buf, lines.start, lines.end)) {
        await this.dataset();
        continue;
      }
      const text = shown(lines.buf, lines.start, lines.end);
      if (this.ordinal === 0) {
        throw new RecordingError(
          this.path,
          `is not a Universal File Format file: ${lines.where} holds ${text} where a "    -1" line should open the first dataset`,
          lines.lineOffset,
        );
      }
      // a dataset number here means the dataset before lacks its closing -1 (its opening one was taken for it)
      const hint = /^\s*[0-9]+[bB]?(\s|$)/.test(lines.buf.toString('latin1', lines.start, lines.end))
        ? `; is the "    -1" that closes dataset ${this.ordinal} missing?`
        : '';
      throw new RecordingError(
        this.path,
        `${lines.where} holds ${text} where a "    -1" line should open the next dataset${hint}`,
        lines.lineOffset,
      );
    }
  }

  /** One dataset, from the line after its opening `-1` to its closing `-1`. */
  private async dataset(): Promise<void> {
    const { lines, path } = this;
    const opening = lines.where;
    if (!(await lines.next())) {
      throw new RecordingError(path, `the file ends after the "    -1" at ${opening}, which opens a dataset`);
    }
    const text = lines.buf.toString('latin1', lines.start, lines.end);
    const match = /^\s*([0-9]+)([bB]?)(?:\s+(.*))?$/.exec(text);
    if (lines.cut || match === null) {
      const what = `${lines.where} holds ${JSON.stringify(text.slice(0, 40))} where a dataset number should follow the "    -1" at ${opening}`;
      throw new RecordingError(path, this.ordinal === 0 ? `is not a Universal File Format file: ${what}` : what, lines.lineOffset);
    }
    this.ordinal += 1;
    const number = Number(match[1]);
    const binary = match[2] !== '';
    const place = lines.linesKnown ? `line ${lines.line}` : `byte ${lines.lineOffset}`;
    if (number === 58) {
      await this.dataset58(place, binary ? (match[3] ?? '') : undefined);
    } else {
      this.skipped.push({ reason: 'other', text: `${this.ordinal} (${number}${binary ? 'b' : ''} at ${place})` });
      await this.skipToClosing(`dataset ${this.ordinal} (${number}${binary ? 'b' : ''} at ${place})`);
    }
  }

  private async dataset58(place: string, binaryFields: string | undefined): Promise<void> {
    const { lines, path } = this;
    const bare = `dataset ${this.ordinal} (${place})`;
    const binary = binaryFields === undefined ? undefined : parseBinaryHeader(path, bare, binaryFields);

    const records: Buffer[] = [];
    while (records.length < HEADER_RECORDS) {
      if (!(await lines.next())) {
        throw new RecordingError(
          path,
          `${bare} is cut short: the file ends after ${records.length} of its ${HEADER_RECORDS} header records`,
        );
      }
      if (!lines.cut && isDelimiter(lines.buf, lines.start, lines.end)) {
        throw new RecordingError(
          path,
          `${bare} is cut short: the "    -1" at ${lines.where} closes it after ${records.length} of its ${HEADER_RECORDS} header records`,
          lines.lineOffset,
        );
      }
      if (lines.cut) throw this.longLine(bare);
      records.push(Buffer.from(lines.buf.subarray(lines.start, lines.end)));
    }
    const record = (k: number): string =>
      lines.linesKnown ? `record ${k} (line ${lines.line - HEADER_RECORDS + k})` : `record ${k}`;

    const idName = decodeText(records[0]).trim().replace(/^none$/i, '');
    const r6 = parseRecord6(records[5]);
    if (r6 === undefined) {
      throw new RecordingError(
        path,
        `${bare}: ${record(6)} should hold function type, identification, load case, response entity, node and direction ` +
          `in columns (I5,I10,I5,I10,1X,A10,I10,I4,1X,A10,I10,I4); it reads ${JSON.stringify(decodeText(records[5]))}`,
      );
    }
    const r7 = parseRecord7(records[6], this.scanner);
    if (r7 === undefined) {
      throw new RecordingError(
        path,
        `${bare}: ${record(7)} should hold ordinate data type, number of values, abscissa spacing, ` +
          `minimum, increment and z-axis value (3I10,3E13.5); it reads ${JSON.stringify(decodeText(records[6]))}`,
      );
    }
    const axis = (k: number): AxisRecord => {
      const parsed = parseAxisRecord(records[k - 1]);
      if (parsed === undefined) {
        throw new RecordingError(
          path,
          `${bare}: ${record(k)} should start with the specific data type as a whole number (I10,3I5,2(1X,A20)); ` +
            `it reads ${JSON.stringify(decodeText(records[k - 1]))}`,
        );
      }
      return parsed;
    };
    const abscissa = axis(8);
    const ordinate = axis(9);
    const name = idName !== '' ? idName : r6.node > 0 ? `${r6.node}${directionText(r6.direction)}` : '';
    const label = name === '' ? bare : `dataset ${this.ordinal} "${name}" (${place})`;
    const listedAs = name === '' ? `${this.ordinal} (${place})` : `${this.ordinal} "${name}" (${place})`;

    const { ordinateType, count, spacing } = r7;
    if (![2, 4, 5, 6].includes(ordinateType)) {
      throw new RecordingError(
        path,
        `${label}: record 7 gives ordinate data type ${ordinateType}; dataset 58 defines 2 (real single), 4 (real double), 5 and 6 (complex)`,
      );
    }
    if (spacing !== 0 && spacing !== 1) {
      throw new RecordingError(path, `${label}: record 7 gives abscissa spacing ${spacing}; dataset 58 defines 0 (uneven) and 1 (even)`);
    }
    if (count < 1) {
      throw new RecordingError(path, `${label}: record 7 declares ${count} values; a time history needs at least one`);
    }
    const real = ordinateType === 2 || ordinateType === 4;
    const isTime = abscissa.type === 17 || (abscissa.type === 0 && r6.functionType === 1);
    const dataStart = lines.nextOffset;

    let skip: SkipReason | undefined;
    if (!real) skip = 'complex';
    else if (!isTime) skip = 'not-time';
    if (skip !== undefined) {
      this.skipped.push({
        reason: skip,
        text:
          skip === 'complex'
            ? `${listedAs}, data type ${ordinateType}`
            : `${listedAs}, function type ${r6.functionType}, abscissa data type ${abscissa.type}`,
      });
      if (binary !== undefined) {
        this.checkFits(label, dataStart, binary.bytes);
        lines.skipTo(dataStart + binary.bytes);
        await this.closeAfterBinary(label, dataStart, binary.bytes);
      } else {
        await this.skipToClosing(label);
      }
      return;
    }

    const precision: Precision = ordinateType === 2 ? 'single' : 'double';
    const perPoint = spacing === 1 ? 1 : 2;
    const source: Source = {
      label,
      idName,
      node: r6.node,
      direction: r6.direction,
      unit: ordinate.unit,
      precision,
      count,
      perPoint,
      rate: 0,
      rateToleranceHz: 0,
      snapped: false,
      incrementText: r7.incrementText,
      startS: r7.min,
      dataStart,
      dataBytes: 0,
      layout: {
        kind: 'ascii',
        widths: precision === 'single' ? WIDTHS_SINGLE : spacing === 1 ? WIDTHS_DOUBLE : WIDTHS_DOUBLE_UNEVEN,
        checkpoints: { stride: FIRST_CHECKPOINT_STRIDE, value: [], offset: [], line: [] },
      },
    };
    const even = spacing === 1 ? undefined : new EvenSpacing();
    if (even === undefined) {
      if (!(Number.isFinite(r7.increment) && r7.increment > 0)) {
        throw new RecordingError(
          path,
          `${label}: record 7 gives the abscissa increment as ${r7.incrementText} s; a time history needs a positive sampling interval`,
        );
      }
      Object.assign(source, rateFromInterval(r7.increment, r7.incrementHalfStep));
    }

    if (binary !== undefined) {
      const valueBytes = precision === 'single' ? 4 : 8;
      let xBytes: 0 | 4 | 8 = 0;
      if (even !== undefined) xBytes = precision === 'single' || binary.bytes === count * 16 ? valueBytes : 4;
      const pointBytes = xBytes + valueBytes;
      if (binary.bytes !== count * pointBytes) {
        const what =
          even === undefined
            ? `${count} real ${precision} values (${count * valueBytes} bytes)`
            : precision === 'single'
              ? `${count} pairs of real single abscissa and ordinate values (${count * 8} bytes)`
              : `${count} pairs of abscissa and real double ordinate values (${count * 12} or ${count * 16} bytes)`;
        throw new RecordingError(
          path,
          `${label}: the 58b header declares ${binary.bytes} bytes of binary data, but record 7 declares ${what}`,
        );
      }
      this.checkFits(label, dataStart, binary.bytes);
      source.layout = { kind: 'binary', littleEndian: binary.littleEndian, pointBytes, xBytes };
      source.dataBytes = binary.bytes;
      if (even !== undefined) await this.binaryAbscissa(source, even);
      lines.skipTo(dataStart + binary.bytes);
      await this.closeAfterBinary(label, dataStart, binary.bytes);
    } else if (source.layout.kind === 'ascii') {
      await this.asciiData(source, source.layout, even);
      source.dataBytes = lines.lineOffset - dataStart;
    }
    if (even !== undefined) this.acceptEven(source, even, r7);
    this.sources.push(source);
  }

  /** Reads the ASCII data of `source`, checking every number; ends on its closing `-1`. */
  private async asciiData(source: Source, layout: AsciiLayout, even: EvenSpacing | undefined): Promise<void> {
    const { lines, values, exponents, scanner } = this;
    const want = source.count * source.perPoint;
    const checkpoints = layout.checkpoints;
    let have = 0;
    let dataLine = 0;
    while (have < want) {
      if (!lines.take() && !(await lines.next())) {
        throw new RecordingError(
          this.path,
          `${source.label} holds ${Math.floor(have / source.perPoint)} of the ${source.count} values record 7 declares: the file ends after ${lines.where}`,
        );
      }
      const { buf, start, cut } = lines;
      const end = trimEnd(buf, start, lines.end);
      if (cut || lines.nextOffset - lines.lineOffset > CHANNEL_BUFFER_BYTES) throw this.longLine(source.label);
      if (isDelimiter(buf, start, end)) {
        throw new RecordingError(
          this.path,
          `${source.label} holds ${Math.floor(have / source.perPoint)} of the ${source.count} values record 7 declares: ` +
            `the "    -1" at ${lines.where} closes it`,
          lines.lineOffset,
        );
      }
      if (dataLine % checkpoints.stride === 0) {
        if (checkpoints.value.length === MAX_CHECKPOINTS) thin(checkpoints);
        if (dataLine % checkpoints.stride === 0) {
          checkpoints.value.push(have);
          checkpoints.offset.push(lines.lineOffset);
          checkpoints.line.push(lines.line);
        }
      }
      dataLine += 1;
      const n = parseDataLine(buf, start, end, layout.widths, scanner, values, even === undefined ? undefined : exponents);
      if (n < 0) throw notNumbers(this.path, lines, end, scanner, source.label);
      if (have + n > want) {
        throw new RecordingError(
          this.path,
          `${source.label} holds more than the ${source.count} values record 7 declares (${lines.where} goes beyond them)`,
          lines.lineOffset,
        );
      }
      if (even !== undefined) {
        // abscissa values sit at even raw positions (x, y, x, y ...)
        for (let k = have % 2 === 0 ? 0 : 1; k < n; k += 2) {
          if (!even.add(values[k], 0.5 * 10 ** exponents[k])) throw this.uneven(source, even);
        }
      }
      have += n;
    }
    await this.expectClosing(source, layout.widths);
  }

  /** Uneven 58b data: checks the abscissa values, chunk by chunk through the index buffer. */
  private async binaryAbscissa(source: Source, even: EvenSpacing): Promise<void> {
    const layout = source.layout as BinaryLayout;
    const buf = this.lines.borrow();
    const perChunk = Math.floor(buf.length / layout.pointBytes);
    for (let p = 0; p < source.count; ) {
      const k = Math.min(perChunk, source.count - p);
      const bytes = k * layout.pointBytes;
      const got = await readFully(this.handle, this.path, buf, bytes, source.dataStart + p * layout.pointBytes);
      if (got < bytes) throw this.tooShort(source.label, source.dataStart, source.dataBytes);
      const view = new DataView(buf.buffer, buf.byteOffset, bytes);
      for (let j = 0; j < k; j++) {
        const at = j * layout.pointBytes;
        const x = layout.xBytes === 4 ? view.getFloat32(at, layout.littleEndian) : view.getFloat64(at, layout.littleEndian);
        // half a unit in the last place, or a little more: |x|·2^−24 (float32), |x|·2^−53 (float64)
        const tolerance = Math.abs(x) * (layout.xBytes === 4 ? 2 ** -24 : 2 ** -53);
        if (!even.add(x, tolerance)) throw this.uneven(source, even);
      }
      p += k;
    }
  }

  /** An uneven dataset whose abscissa values are evenly spaced after all: read as even. */
  private acceptEven(source: Source, even: EvenSpacing, r7: Record7): void {
    if (source.count < 2) {
      if (!(Number.isFinite(r7.increment) && r7.increment > 0)) {
        throw new RecordingError(
          this.path,
          `${source.label} has uneven abscissa spacing and a single value, which gives no sampling interval`,
        );
      }
      Object.assign(source, rateFromInterval(r7.increment, r7.incrementHalfStep));
    } else {
      // the increment of record 7 when the abscissa values allow it, else the middle of what they allow
      const stated = r7.increment >= even.low && r7.increment <= even.high && r7.increment > 0;
      const interval = stated ? r7.increment : (even.low + even.high) / 2;
      Object.assign(source, rateFromInterval(interval, (even.high - even.low) / 2));
    }
    // the note below says how it is sampled; record 7's increment is not what gave the rate
    source.snapped = false;
    source.startS = even.first;
    source.unevenNote =
      `${source.label} declares uneven abscissa spacing (record 7), but its ${source.count} abscissa values are evenly ` +
      `spaced to the precision they are stored in; it is read as sampled every ${formatSeconds(1 / source.rate)} s`;
  }

  private uneven(source: Source, even: EvenSpacing): RecordingError {
    return new RecordingError(
      this.path,
      `${source.label} has unevenly spaced abscissa values (record 7 abscissa spacing 0): point ${even.points} ` +
        `(t = ${formatSeconds(even.last)} s) is off the even spacing of the points before it; ` +
        'only evenly sampled time histories are read (resample it first)',
    );
  }

  /** After a dataset's values: blank lines, then its closing `-1`. */
  private async expectClosing(source: Source, widths: readonly number[]): Promise<void> {
    const { lines } = this;
    const label = source.label;
    for (;;) {
      if (!(await lines.next())) {
        throw new RecordingError(this.path, `${label} is not closed: the file ends at ${lines.where} without the "    -1" line`);
      }
      const end = trimEnd(lines.buf, lines.start, lines.end);
      if (lines.start === end && !lines.cut) continue;
      if (!lines.cut && isDelimiter(lines.buf, lines.start, end)) return;
      if (!lines.cut && parseDataLine(lines.buf, lines.start, end, widths, this.scanner, this.values) > 0) {
        throw new RecordingError(
          this.path,
          `${label} holds more than the ${source.count} values record 7 declares (${lines.where} goes beyond them)`,
          lines.lineOffset,
        );
      }
      throw new RecordingError(
        this.path,
        `${label} is not closed: ${lines.where} holds ${shown(lines.buf, lines.start, end)} where its closing "    -1" line should be`,
        lines.lineOffset,
      );
    }
  }

  /** A skipped ASCII dataset: every line up to its closing `-1`. */
  private async skipToClosing(label: string): Promise<void> {
    const { lines } = this;
    while (await lines.next()) {
      if (!lines.cut && isDelimiter(lines.buf, lines.start, lines.end)) return;
    }
    throw new RecordingError(this.path, `${label} is not closed: the file ends at ${lines.where} without the "    -1" line`);
  }

  /** The closing `-1` right after binary data (a line break before it is tolerated). */
  private async closeAfterBinary(label: string, dataStart: number, bytes: number): Promise<void> {
    const { lines } = this;
    let found = await lines.next();
    if (found && lines.start === lines.end && !lines.cut) found = await lines.next();
    if (!found) {
      throw new RecordingError(
        this.path,
        `${label} is not closed: the file ends after its ${bytes} bytes of binary data without the "    -1" line`,
      );
    }
    // strictly `    -1` (I6) here: a 58b dataset a few bytes short of its declared count would
    // otherwise take the blanks of this line as data and the rest, `-1`, as the delimiter
    if (lines.cut || !isDelimiter(lines.buf, lines.start, lines.end) || !isRightJustifiedDelimiter(lines.buf, lines.start, lines.end)) {
      throw new RecordingError(
        this.path,
        `${label}: after the ${bytes} bytes of binary data the 58b header declares (from byte ${dataStart}), the file holds ` +
          `${shown(lines.buf, lines.start, Math.min(lines.end, lines.start + 40))} where the "    -1" line closing the dataset should be`,
        dataStart + bytes,
      );
    }
  }

  private checkFits(label: string, dataStart: number, bytes: number): void {
    if (dataStart + bytes > this.size) throw this.tooShort(label, dataStart, bytes);
  }

  private tooShort(label: string, dataStart: number, bytes: number): RecordingError {
    return new RecordingError(
      this.path,
      `${label}: the 58b header declares ${bytes} bytes of binary data from byte ${dataStart}, but the file ends at byte ${this.size}`,
      this.size,
    );
  }

  private longLine(label: string): RecordingError {
    return new RecordingError(
      this.path,
      `${label}: ${this.lines.where} is longer than ${CHANNEL_BUFFER_BYTES / 1024} KiB, which no dataset 58 record is`,
      this.lines.lineOffset,
    );
  }
}

/** Keeps every other checkpoint and doubles the stride: the table stays bounded. */
function thin(checkpoints: Checkpoints): void {
  const keep = (a: number[]): number[] => a.filter((_, i) => i % 2 === 0);
  checkpoints.value = keep(checkpoints.value);
  checkpoints.offset = keep(checkpoints.offset);
  checkpoints.line = keep(checkpoints.line);
  checkpoints.stride *= 2;
}

// ---------------------------------------------------------------------------------------
// Header records.

interface BinaryHeader {
  littleEndian: boolean;
  bytes: number;
}

/** The fields after `58b`: byte order, floating-point format, ASCII lines, bytes, unused. */
function parseBinaryHeader(path: string, label: string, fields: string): BinaryHeader {
  const tokens = fields.trim() === '' ? [] : fields.trim().split(/\s+/);
  const numbers = tokens.slice(0, 4).map((t) => (/^[+-]?[0-9]+$/.test(t) ? Number(t) : Number.NaN));
  if (numbers.length < 4 || numbers.some((n) => !Number.isSafeInteger(n))) {
    throw new RecordingError(
      path,
      `${label}: the 58b header should give byte order, floating-point format, number of ASCII lines and number of bytes ` +
        `as whole numbers after "58b"; it reads ${JSON.stringify(`58b ${fields.trim()}`)}`,
    );
  }
  const [order, format, asciiLines, bytes] = numbers;
  if (order !== 1 && order !== 2) {
    throw new RecordingError(path, `${label}: the 58b header gives byte order ${order}, where 1 (little-endian) or 2 (big-endian) is expected`);
  }
  if (format !== 2) {
    const known = FLOAT_FORMATS.get(format);
    throw new RecordingError(
      path,
      `${label}: the 58b header gives floating-point format ${format}${known ? ` (${known})` : ''}; only 2 (IEEE 754) is read`,
    );
  }
  if (asciiLines !== HEADER_RECORDS) {
    throw new RecordingError(
      path,
      `${label}: the 58b header says ${asciiLines} ASCII lines follow, but dataset 58 has ${HEADER_RECORDS} header records`,
    );
  }
  if (bytes < 0) throw new RecordingError(path, `${label}: the 58b header declares ${bytes} bytes of binary data`);
  return { littleEndian: order === 1, bytes };
}

interface Record6 {
  functionType: number;
  node: number;
  direction: number;
}

/** Record 6, (I5,I10,I5,I10,1X,A10,I10,I4,1X,A10,I10,I4): only what names a channel. */
function parseRecord6(b: Buffer): Record6 | undefined {
  const functionType = intField(b, 0, 5);
  const node = intField(b, 41, 10);
  const direction = intField(b, 51, 4);
  if (functionType !== undefined && node !== undefined && direction !== undefined) {
    return { functionType: functionType ?? 0, node: node ?? 0, direction: direction ?? 0 };
  }
  // not in its columns: ten blank-separated fields, both entity names present
  const tokens = b.toString('latin1').trim().split(/\s+/);
  const whole = (t: string | undefined): number | undefined => (t !== undefined && /^[+-]?[0-9]+$/.test(t) ? Number(t) : undefined);
  if (tokens.length !== 10) return undefined;
  const [f, n, d] = [whole(tokens[0]), whole(tokens[5]), whole(tokens[6])];
  if (f === undefined || n === undefined || d === undefined) return undefined;
  return { functionType: f, node: n, direction: d };
}

interface Record7 {
  ordinateType: number;
  count: number;
  spacing: number;
  min: number;
  increment: number;
  /** Half a unit in the last printed digit of the increment. */
  incrementHalfStep: number;
  incrementText: string;
}

/** Record 7, (3I10,3E13.5): blank-separated as most writers leave it, else by columns. */
function parseRecord7(b: Buffer, scanner: NumberScanner): Record7 | undefined {
  for (const fields of [blankFields(b), fixedFields(b, [10, 10, 10, 13, 13, 13])]) {
    if (fields === undefined || fields.length < 5 || fields.length > 6) continue;
    const numbers: number[] = [];
    const halfSteps: number[] = [];
    for (const [s, e] of fields) {
      if (!scanner.scan(b, s, e)) break;
      numbers.push(scanner.value);
      halfSteps.push(0.5 * 10 ** scanner.lastDigitExponent);
    }
    if (numbers.length !== fields.length || !numbers.slice(0, 3).every(Number.isSafeInteger)) continue;
    const [s, e] = fields[4];
    return {
      ordinateType: numbers[0],
      count: numbers[1],
      spacing: numbers[2],
      min: numbers[3],
      increment: numbers[4],
      incrementHalfStep: halfSteps[4],
      incrementText: b.toString('latin1', s, e),
    };
  }
  return undefined;
}

interface AxisRecord {
  type: number;
  unit: string | undefined;
}

/** Records 8–11, (I10,3I5,2(1X,A20)): specific data type, exponents, axis and units labels. */
function parseAxisRecord(b: Buffer): AxisRecord | undefined {
  let type = intField(b, 0, 10);
  if (type === undefined) {
    const token = b.toString('latin1').trim().split(/\s+/)[0];
    if (!/^[+-]?[0-9]+$/.test(token)) return undefined;
    type = Number(token);
  }
  const unit = b.length > 47 ? decodeText(b.subarray(47, Math.min(b.length, 67))).trim() : '';
  return { type: type ?? 0, unit: unit === '' || /^none$/i.test(unit) ? undefined : unit };
}

/** A whole number in columns [from, from + width): null when blank, undefined when not a number. */
function intField(b: Buffer, from: number, width: number): number | null | undefined {
  const text = from >= b.length ? '' : b.toString('latin1', from, Math.min(b.length, from + width)).trim();
  if (text === '') return null;
  return /^[+-]?[0-9]+$/.test(text) ? Number(text) : undefined;
}

/** Blank-separated fields as [start, end) pairs. */
function blankFields(b: Buffer): Array<[number, number]> {
  const fields: Array<[number, number]> = [];
  let i = 0;
  const end = trimEnd(b, 0, b.length);
  while (i < end) {
    while (i < end && isBlankByte(b[i])) i++;
    if (i >= end) break;
    let j = i;
    while (j < end && !isBlankByte(b[j])) j++;
    fields.push([i, j]);
    i = j;
  }
  return fields;
}

/** Fields of fixed widths, each trimmed; undefined when a blank field precedes a filled one. */
function fixedFields(b: Buffer, widths: number[]): Array<[number, number]> | undefined {
  const fields: Array<[number, number]> = [];
  const end = trimEnd(b, 0, b.length);
  let blank = false;
  for (let k = 0, at = 0; k < widths.length && at < end; at += widths[k], k++) {
    let s = at;
    let e = Math.min(end, at + widths[k]);
    while (s < e && isBlankByte(b[s])) s++;
    while (e > s && isBlankByte(b[e - 1])) e--;
    if (s === e) {
      blank = true;
      continue;
    }
    if (blank) return undefined;
    fields.push([s, e]);
  }
  return fields;
}

const utf8 = new TextDecoder('utf-8', { fatal: true });

/** Header text: UTF-8 when it is valid UTF-8, else Latin-1 (older files from Windows). */
function decodeText(b: Uint8Array): string {
  try {
    return utf8.decode(b);
  } catch {
    return Buffer.from(b.buffer, b.byteOffset, b.byteLength).toString('latin1');
  }
}

function directionText(code: number): string {
  return DIRECTIONS.get(code) ?? `:${code}`;
}

// ---------------------------------------------------------------------------------------
// Numbers.

/** Powers of ten that doubles hold exactly (10^0 .. 10^22). */
const POW10 = Array.from({ length: 23 }, (_, k) => Number(`1e${k}`));

/**
 * Scans one number from bytes: `[+-]digits[.digits][(E|D)[+-]digits]`, Fortran's exponent
 * without a letter (`1.23456+100`), NaN and Inf/Infinity. Up to 15 significant digits and
 * a decimal exponent within ±22 the value is computed as mantissa × 10^e or mantissa ÷
 * 10^−e, one correctly rounded operation on two exact doubles (Clinger's fast path), so it
 * is the double nearest the decimal, as Number() gives; anything else goes to Number().
 */
class NumberScanner {
  value = 0;
  /** Decimal exponent of the last printed digit (1.23456E-04 → −9). */
  lastDigitExponent = 0;

  scan(b: Buffer, from: number, to: number): boolean {
    let i = from;
    let negative = false;
    let c = b[i];
    if (c === 43 || c === 45) {
      negative = c === 45;
      i++;
    }
    if (i >= to) return false;
    c = b[i];
    if (c === 78 || c === 110 || c === 73 || c === 105) return this.special(b, i, to, negative);
    let mantissa = 0;
    let significant = 0;
    let digits = 0;
    let fraction = 0;
    let long = false;
    while (i < to && (c = b[i]) >= 48 && c <= 57) {
      digits++;
      if (mantissa !== 0 || c !== 48) {
        if (significant < 15) {
          mantissa = mantissa * 10 + (c - 48);
          significant++;
        } else long = true;
      }
      i++;
    }
    if (i < to && b[i] === 46) {
      i++;
      while (i < to && (c = b[i]) >= 48 && c <= 57) {
        digits++;
        fraction++;
        if (mantissa !== 0 || c !== 48) {
          if (significant < 15) {
            mantissa = mantissa * 10 + (c - 48);
            significant++;
          } else long = true;
        }
        i++;
      }
    }
    if (digits === 0) return false;
    let exponent = 0;
    let exponentAt = -1;
    let letter = false;
    if (i < to) {
      c = b[i];
      if (c === 69 || c === 101 || c === 68 || c === 100) {
        letter = true;
        i++;
      } else if (c !== 43 && c !== 45) return false;
      exponentAt = i;
      let exponentNegative = false;
      if (i < to && (b[i] === 43 || b[i] === 45)) {
        exponentNegative = b[i] === 45;
        i++;
      }
      if (i >= to) return false;
      while (i < to && (c = b[i]) >= 48 && c <= 57) {
        if (exponent < 100000) exponent = exponent * 10 + (c - 48);
        i++;
      }
      if (i !== to) return false;
      if (exponentNegative) exponent = -exponent;
    }
    const scale = exponent - fraction;
    this.lastDigitExponent = scale;
    let value: number;
    if (mantissa === 0) value = 0;
    else if (!long && scale >= -22 && scale <= 22) value = scale >= 0 ? mantissa * POW10[scale] : mantissa / POW10[-scale];
    else {
      value = Math.abs(Number(normalised(b, from, to, exponentAt, letter)));
    }
    this.value = negative ? -value : value;
    return true;
  }

  private special(b: Buffer, from: number, to: number, negative: boolean): boolean {
    const word = b.toString('latin1', from, to).toLowerCase();
    this.lastDigitExponent = 0;
    if (word === 'nan') {
      this.value = Number.NaN;
      return true;
    }
    if (word === 'inf' || word === 'infinity') {
      this.value = negative ? -Infinity : Infinity;
      return true;
    }
    return false;
  }
}

/** The number's text as Number() reads it: D exponents as e, a letterless exponent given its e. */
function normalised(b: Buffer, from: number, to: number, exponentAt: number, letter: boolean): string {
  const text = b.toString('latin1', from, to);
  if (exponentAt < 0) return text;
  const at = exponentAt - from;
  return letter ? `${text.slice(0, at - 1)}e${text.slice(at)}` : `${text.slice(0, at)}e${text.slice(at)}`;
}

/**
 * Reads the numbers of one data line into `out` (and, when given, each one's last-digit
 * exponent into `exponents`). Blank-separated numbers are read as they stand; a line whose
 * blank-separated pieces are not all numbers is read again in the fixed columns `widths`
 * (repeated along the line), where numbers may touch. Returns the count, or −1 when the
 * line is not numbers either way.
 */
function parseDataLine(
  b: Buffer,
  start: number,
  end: number,
  widths: readonly number[],
  scanner: NumberScanner,
  out: Float64Array,
  exponents?: Float64Array,
): number {
  end = trimEnd(b, start, end);
  let n = 0;
  let i = start;
  let ok = true;
  while (i < end) {
    while (i < end && isBlankByte(b[i])) i++;
    if (i >= end) break;
    let j = i + 1;
    while (j < end && !isBlankByte(b[j])) j++;
    if (n === out.length || !scanner.scan(b, i, j)) {
      ok = false;
      break;
    }
    out[n] = scanner.value;
    if (exponents !== undefined) exponents[n] = scanner.lastDigitExponent;
    n++;
    i = j;
  }
  if (ok) return n;

  n = 0;
  for (let k = 0, at = start; at < end; k++) {
    const fieldEnd = Math.min(end, at + widths[k % widths.length]);
    let s = at;
    let e = fieldEnd;
    while (s < e && isBlankByte(b[s])) s++;
    while (e > s && isBlankByte(b[e - 1])) e--;
    if (s === e || n === out.length || !scanner.scan(b, s, e)) return -1;
    out[n] = scanner.value;
    if (exponents !== undefined) exponents[n] = scanner.lastDigitExponent;
    n++;
    at = fieldEnd;
  }
  return n;
}

/** The error for a data line that is not numbers, quoting the first piece that is not one. */
function notNumbers(path: string, lines: ByteLines, end: number, scanner: NumberScanner, label: string): RecordingError {
  const b = lines.buf;
  let i = lines.start;
  let count = 0;
  while (i < end) {
    while (i < end && isBlankByte(b[i])) i++;
    if (i >= end) break;
    let j = i + 1;
    while (j < end && !isBlankByte(b[j])) j++;
    if (!scanner.scan(b, i, j)) {
      return new RecordingError(
        path,
        `${lines.where} holds ${shown(b, i, j)}, which is not a number, in the data of ${label}`,
        lines.lineOffset + (i - lines.start),
      );
    }
    count++;
    i = j;
  }
  return new RecordingError(
    path,
    `${lines.where} holds ${count} numbers, more than the ${MAX_VALUES_PER_LINE} a data line of ${label} can`,
    lines.lineOffset,
  );
}

/**
 * Whether abscissa values x0, x1, ... are evenly spaced to their storage precision: the
 * intervals dt with |x_k − (x0 + k·dt)| ≤ tol_k + tol_0 for every k so far form the range
 * [low, high]; the spacing is even while that range is not empty.
 */
class EvenSpacing {
  points = 0;
  first = 0;
  last = 0;
  low = -Infinity;
  high = Infinity;
  private firstTolerance = 0;

  add(x: number, tolerance: number): boolean {
    this.points += 1;
    this.last = x;
    if (!Number.isFinite(x)) return false;
    if (this.points === 1) {
      this.first = x;
      this.firstTolerance = tolerance;
      return true;
    }
    const k = this.points - 1;
    const span = x - this.first;
    // the subtraction's own rounding, a few units in the last place of the operands
    const slack = tolerance + this.firstTolerance + 4 * 2 ** -53 * (Math.abs(x) + Math.abs(this.first));
    this.low = Math.max(this.low, (span - slack) / k);
    this.high = Math.min(this.high, (span + slack) / k);
    return this.low <= this.high && this.high > 0;
  }
}

/** Sample rate from a sampling interval known to ± halfStep, rounded to whole hertz within it. */
function rateFromInterval(interval: number, halfStep: number): Pick<Source, 'rate' | 'rateToleranceHz' | 'snapped'> {
  const exact = 1 / interval;
  // the printed interval lies within ±halfStep of the true one, so the true rate lies within
  // 1/(dt − h) − 1/dt = h / (dt (dt − h)) of 1/dt (exact, not the first-order h/dt²: a tie
  // such as 1/51200 s = 1.953125E-05, printed 1.95313E-05, needs it); the floor allows for
  // the doubles' own rounding
  const toleranceHz = (halfStep < interval ? halfStep / (interval * (interval - halfStep)) : Infinity) + exact * 1e-12;
  const whole = Math.round(exact);
  const snapped = whole > 0 && whole !== exact && Math.abs(exact - whole) <= toleranceHz;
  return {
    rate: snapped ? whole : exact,
    rateToleranceHz: toleranceHz,
    snapped: snapped && Math.abs(exact - whole) > exact * 1e-12,
  };
}

// ---------------------------------------------------------------------------------------
// Small byte helpers.

function isBlankByte(c: number): boolean {
  return c === SPACE || c === TAB;
}

function trimEnd(b: Buffer, start: number, end: number): number {
  while (end > start && (b[end - 1] === SPACE || b[end - 1] === TAB || b[end - 1] === CR)) end--;
  return end;
}

function isBlank(b: Buffer, start: number, end: number): boolean {
  return trimEnd(b, start, end) === start;
}

/** `    -1`: -1 within the first six columns, then nothing but blanks. */
function isDelimiter(b: Buffer, start: number, end: number): boolean {
  end = trimEnd(b, start, end);
  if (end - start < 2 || end - start > 6 || b[end - 2] !== 45 || b[end - 1] !== 49) return false;
  for (let i = start; i < end - 2; i++) if (b[i] !== SPACE) return false;
  return true;
}

/** Exactly `    -1` in columns 1–6 (Fortran I6), then nothing but blanks. */
function isRightJustifiedDelimiter(b: Buffer, start: number, end: number): boolean {
  return trimEnd(b, start, end) - start === 6 && isDelimiter(b, start, end);
}

/** A piece of a line for a message, quoted, at most 40 characters. */
function shown(b: Buffer, start: number, end: number): string {
  const text = b.toString('latin1', start, Math.min(end, start + 40));
  return JSON.stringify(end - start > 40 ? `${text}…` : text);
}

function formatSeconds(s: number): string {
  return String(Number(s.toPrecision(6)));
}

function listed(items: string[]): string {
  if (items.length <= MAX_LISTED) return items.join(', ');
  return `${items.slice(0, MAX_LISTED).join(', ')} and ${items.length - MAX_LISTED} more`;
}

function skippedNotes(skipped: Skipped[]): string[] {
  const notes: string[] = [];
  const of = (reason: SkipReason) => skipped.filter((s) => s.reason === reason).map((s) => s.text);
  const other = of('other');
  if (other.length > 0) {
    notes.push(`skipped ${plural(other.length, 'dataset')} other than 58: ${listed(other)}`);
  }
  const complex = of('complex');
  if (complex.length > 0) {
    notes.push(`skipped ${plural(complex.length, 'dataset')} 58 with complex ordinates (record 7): ${listed(complex)}`);
  }
  const notTime = of('not-time');
  if (notTime.length > 0) {
    notes.push(
      `skipped ${plural(notTime.length, 'dataset')} 58 that ${notTime.length === 1 ? 'is' : 'are'} not a time history ` +
        `(record 6 function type 1 or record 8 abscissa data type 17 expected): ${listed(notTime)}`,
    );
  }
  return notes;
}

function plural(n: number, word: string): string {
  return `${n} ${word}${n === 1 ? '' : 's'}`;
}

/** Channel names: ID line 1, `<node><direction>`, or `chN`; repeats made unique. */
function channelNames(sources: Source[], notes: string[]): string[] {
  const base = sources.map((s, i) =>
    s.idName !== '' ? s.idName : s.node > 0 ? `${s.node}${directionText(s.direction)}` : `ch${i + 1}`,
  );
  const countOf = (names: string[]): Map<string, number> => {
    const counts = new Map<string, number>();
    for (const n of names) counts.set(n, (counts.get(n) ?? 0) + 1);
    return counts;
  };
  const counts = countOf(base);
  if ([...counts.values()].every((n) => n === 1)) return base;
  const suffixed = base.map((name, i) => {
    if (counts.get(name)! === 1) return name;
    const s = sources[i];
    const point = `${s.node}${directionText(s.direction)}`;
    return s.node > 0 && !name.includes(point) ? `${name} ${point}` : `${name} #${i + 1}`;
  });
  // two datasets at the same node and direction still collide: the channel number tells them apart
  const again = countOf(suffixed);
  const names = suffixed.map((name, i) => (again.get(name)! > 1 ? `${base[i]} #${i + 1}` : name));
  const repeated = [...counts.entries()].filter(([, n]) => n > 1).map(([name, n]) => `"${name}" (${n} datasets)`);
  notes.push(
    `channel names repeat (${listed(repeated)}); they are made unique with the response node and direction (record 6) or the channel number`,
  );
  return names;
}

// ---------------------------------------------------------------------------------------
// Streaming the samples.

interface UffRead {
  path: string;
  sources: Source[];
  meter: ReadMeter | undefined;
}

async function* uffBlocks(read: UffRead, options: BlockOptions): AsyncGenerator<SampleBlock> {
  const frames = options.blockFrames ?? DEFAULT_BLOCK_FRAMES;
  if (!Number.isInteger(frames) || frames < 1) {
    throw new UsageError(`blockFrames must be a whole number of sample frames, at least 1, not ${frames}`);
  }
  const count = read.sources[0].count;
  const first = Math.max(0, Math.min(count, Math.floor(options.startFrame ?? 0)));
  const end = Math.max(first, Math.min(count, Math.ceil(options.endFrame ?? count)));
  if (end === first) return;

  let handle: FileHandle;
  try {
    handle = await open(read.path, 'r');
  } catch (err) {
    throw asFileError(read.path, err);
  }
  const cursors: Cursor[] = [];
  try {
    for (const source of read.sources) {
      const cursor =
        source.layout.kind === 'ascii'
          ? new AsciiCursor(handle, read.path, source, source.layout)
          : new BinaryCursor(handle, read.path, source, source.layout);
      cursors.push(cursor);
      read.meter?.acquire(cursor.bufferBytes);
    }
    for (const cursor of cursors) cursor.seek(first);
    const bytesTotal = read.sources.reduce((n, s) => n + s.dataBytes, 0);
    const reusable = options.reuse
      ? cursors.map(() => new Float64Array(Math.min(frames, end - first)))
      : undefined;
    for (let start = first; start < end; ) {
      const length = Math.min(frames, end - start);
      const channels = reusable
        ? reusable.map((a) => (a.length === length ? a : a.subarray(0, length)))
        : cursors.map(() => new Float64Array(length));
      for (let c = 0; c < cursors.length; c++) await cursors[c].read(channels[c], length);
      yield { start, length, channels };
      start += length;
      if (options.onProgress) {
        options.onProgress(cursors.reduce((n, cursor) => n + cursor.consumed, 0), bytesTotal);
      }
    }
  } finally {
    for (const cursor of cursors) read.meter?.release(cursor.bufferBytes);
    await handle.close();
  }
}

interface Cursor {
  readonly bufferBytes: number;
  /** Bytes of the data region consumed so far. */
  readonly consumed: number;
  seek(point: number): void;
  read(out: Float64Array, n: number): Promise<void>;
}

/** One channel's ASCII data: lines from the nearest checkpoint, ordinates only. */
class AsciiCursor implements Cursor {
  readonly bufferBytes = CHANNEL_BUFFER_BYTES;
  private readonly lines: ByteLines;
  private readonly scanner = new NumberScanner();
  private readonly values = new Float64Array(MAX_VALUES_PER_LINE);
  private have = 0;
  private at = 0;
  /** Raw index (abscissa values counted) of values[at]. */
  private raw = 0;
  /** Raw values still to pass over before the first one wanted. */
  private skip = 0;

  constructor(
    handle: FileHandle,
    private readonly path: string,
    private readonly source: Source,
    private readonly layout: AsciiLayout,
  ) {
    this.lines = new ByteLines(handle, path, CHANNEL_BUFFER_BYTES);
  }

  get consumed(): number {
    return this.lines.nextOffset - this.source.dataStart;
  }

  seek(point: number): void {
    const target = point * this.source.perPoint;
    const { value, offset, line } = this.layout.checkpoints;
    // the last checkpoint at or before the target (binary search)
    let lo = 0;
    let hi = value.length - 1;
    while (lo < hi) {
      const mid = (lo + hi + 1) >> 1;
      if (value[mid] <= target) lo = mid;
      else hi = mid - 1;
    }
    this.lines.skipTo(offset[lo], line[lo] - 1);
    this.raw = value[lo];
    this.skip = target - value[lo];
    this.have = 0;
    this.at = 0;
  }

  async read(out: Float64Array, n: number): Promise<void> {
    const perPoint = this.source.perPoint;
    const values = this.values;
    let filled = 0;
    while (filled < n) {
      if (this.at === this.have) await this.nextLine();
      if (perPoint === 1 && this.skip === 0) {
        const take = Math.min(n - filled, this.have - this.at);
        for (let k = 0; k < take; k++) out[filled + k] = values[this.at + k];
        filled += take;
        this.at += take;
        this.raw += take;
        continue;
      }
      while (this.at < this.have && filled < n) {
        const v = values[this.at++];
        const raw = this.raw++;
        if (this.skip > 0) {
          this.skip--;
          continue;
        }
        if (perPoint === 1 || raw % 2 === 1) out[filled++] = v;
      }
    }
  }

  private async nextLine(): Promise<void> {
    const lines = this.lines;
    for (;;) {
      if (!lines.take() && !(await lines.next())) throw this.changed(`the file ends at line ${lines.line}`);
      const end = trimEnd(lines.buf, lines.start, lines.end);
      if (lines.start === end) continue;
      if (lines.cut || isDelimiter(lines.buf, lines.start, end)) throw this.changed(`line ${lines.line} ends them`);
      const n = parseDataLine(lines.buf, lines.start, end, this.layout.widths, this.scanner, this.values);
      if (n < 0) throw notNumbers(this.path, lines, end, this.scanner, this.source.label);
      this.have = n;
      this.at = 0;
      return;
    }
  }

  private changed(how: string): RecordingError {
    return new RecordingError(
      this.path,
      `the data of ${this.source.label} are shorter than when the file was opened (${how}); did it change while it was read?`,
      this.lines.lineOffset,
    );
  }
}

/** One channel's 58b data: points of `pointBytes`, the ordinate last in each. */
class BinaryCursor implements Cursor {
  readonly bufferBytes: number;
  private readonly buf: Buffer;
  private readonly view: DataView;
  private position = 0;

  constructor(
    private readonly handle: FileHandle,
    private readonly path: string,
    private readonly source: Source,
    private readonly layout: BinaryLayout,
  ) {
    const points = Math.max(1, Math.floor(CHANNEL_BUFFER_BYTES / layout.pointBytes));
    this.bufferBytes = points * layout.pointBytes;
    this.buf = Buffer.allocUnsafeSlow(this.bufferBytes);
    this.view = new DataView(this.buf.buffer, this.buf.byteOffset, this.bufferBytes);
  }

  get consumed(): number {
    return this.position - this.source.dataStart;
  }

  seek(point: number): void {
    this.position = this.source.dataStart + point * this.layout.pointBytes;
  }

  async read(out: Float64Array, n: number): Promise<void> {
    const { pointBytes, xBytes, littleEndian } = this.layout;
    const perBuffer = this.bufferBytes / pointBytes;
    const view = this.view;
    const double = this.source.precision === 'double';
    for (let filled = 0; filled < n; ) {
      const k = Math.min(perBuffer, n - filled);
      const bytes = k * pointBytes;
      const got = await readFully(this.handle, this.path, this.buf, bytes, this.position);
      if (got < bytes) {
        throw new RecordingError(
          this.path,
          `ends at byte ${this.position + got}, inside the binary data of ${this.source.label}; it was longer when opened`,
          this.position + got,
        );
      }
      if (double) {
        for (let j = 0, o = xBytes; j < k; j++, o += pointBytes) out[filled + j] = view.getFloat64(o, littleEndian);
      } else {
        for (let j = 0, o = xBytes; j < k; j++, o += pointBytes) out[filled + j] = view.getFloat32(o, littleEndian);
      }
      filled += k;
      this.position += bytes;
    }
  }
}

async function readFully(handle: FileHandle, path: string, buffer: Buffer, bytes: number, position: number): Promise<number> {
  let got = 0;
  try {
    while (got < bytes) {
      const { bytesRead } = await handle.read(buffer, got, bytes - got, position + got);
      if (bytesRead === 0) break;
      got += bytesRead;
    }
  } catch (err) {
    throw asFileError(path, err);
  }
  return got;
}
