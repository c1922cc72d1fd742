/**
 * Fuzzing the UFF dataset 58 reader (ASCII and 58b): well-formed files from the test writer
 * with random channel counts, lengths, precision, binary or ASCII, byte order, line ends,
 * exponent letters, padding, uneven-but-even abscissas and other datasets around them, read
 * back to the values written; then the same files cut at every kind of boundary, with bytes
 * flipped, lines inserted and deleted, numbers replaced by random text, counts that lie, and
 * random bytes after a dataset header. Every case must end in statistics or a
 * RecordingError naming the file, within the per-case timeout, with the read buffers
 * inside the reader's bound: the index pass's one 256 KiB buffer while the file is opened,
 * then one 64 KiB buffer per channel while it streams (uff58.ts, "Streaming"). Bad input is
 * refused when the file is opened, by the index pass, never halfway through streaming.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { rm, stat, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { max, mean, min, rootMeanSquare, standardDeviation } from 'simple-statistics';
import { RecordingError, UsageError } from '../../src/errors.js';
import { openRecording } from '../../src/readers/index.js';
import { ReadMeter, type Recording } from '../../src/readers/types.js';
import { summariseBlocks } from '../../src/stats/summarise.js';
import { channelStats, type ChannelStats } from '../../src/stats/channel-stats.js';
import { dataset151, dataset164, dataset58, fixtureDir, formatE, uffFile, type Uff58Encoding, type Uff58Spec } from '../helpers/uff-writer.js';
import { normalSource, uniformSource } from '../helpers/random.js';
import { CaseCounter, expectNamesFile, fuzzParameters } from '../helpers/fuzz-harness.js';

const KiB = 1024;
/** uff58.ts INDEX_BUFFER_BYTES: the one read buffer of the index pass (opening the file). */
const INDEX_BUFFER_BYTES = 256 * KiB;
/** uff58.ts CHANNEL_BUFFER_BYTES: the read buffer of each channel while streaming. */
const CHANNEL_BUFFER_BYTES = 64 * KiB;

let dir = '';
const counter = new CaseCounter();
beforeAll(async () => {
  dir = await fixtureDir('vibgate-fuzz-uff-');
});
afterAll(async () => {
  counter.print();
  await rm(dir, { recursive: true, force: true });
});

// ---------------------------------------------------------------------------------------
// Well-formed files.

interface ChannelSpec {
  precision: 'single' | 'double';
  binary: boolean;
  byteOrder: 1 | 2;
  lineBreakAfterData: boolean;
  abscissaBytes: 4 | 8;
  lineEnd: '\n' | '\r\n';
  letter: 'E' | 'D';
  pad: boolean;
  name: string;
  node: number;
  direction: number;
  unit: string;
  /** Written as uneven spacing (record 7 spacing 0) with evenly spaced abscissa values. */
  uneven: boolean;
}

type ValueKind = 'gaussian' | 'integers' | 'wide' | 'constant' | 'faults';

interface FileSpec {
  channels: ChannelSpec[];
  length: number;
  rate: number;
  values: { kind: ValueKind; seed: number; exponent: number };
  /** Other datasets: a 151 header first, a 164 units dataset, a complex dataset 58 and an FRF among the channels. */
  with151: boolean;
  with164: boolean;
  complexAt: number | null;
  frfAt: number | null;
  abscissaMin: number;
}

const NAMES = ['NONE', 'none', '', 'acc-01', 'acc-02', 'acc-01', 'mic', 'µ-force', 'rear x', '  padded  ', 'deck/pier-2'];
const UNITS = ['g', 'm/s^2', 'Pa', 'm/s²', 'NONE', ''];

const channelSpec: fc.Arbitrary<ChannelSpec> = fc.record({
  precision: fc.constantFrom('single', 'double'),
  binary: fc.boolean(),
  byteOrder: fc.constantFrom<1 | 2>(1, 2),
  lineBreakAfterData: fc.boolean(),
  abscissaBytes: fc.constantFrom<4 | 8>(4, 8),
  lineEnd: fc.constantFrom<'\n' | '\r\n'>('\n', '\r\n'),
  letter: fc.constantFrom<'E' | 'D'>('E', 'D'),
  pad: fc.boolean(),
  name: fc.constantFrom(...NAMES),
  node: fc.oneof(fc.constant(0), fc.integer({ min: 1, max: 99999 })),
  direction: fc.integer({ min: -6, max: 6 }),
  unit: fc.constantFrom(...UNITS),
  uneven: fc.boolean().chain((b) => (b ? fc.boolean() : fc.constant(false))).chain((b) => (b ? fc.boolean() : fc.constant(false))),
});

/** Whole-number rates (1/rate printed E13.5 in record 7, so read back to the whole number). */
const rate = fc.oneof(fc.constantFrom(1, 3, 1000, 1024, 2048, 4096, 10_000, 12_800, 25_600, 44_100, 48_000, 51_200, 102_400), fc.integer({ min: 1, max: 200_000 }));

const fileSpec = (maxLength: number): fc.Arbitrary<FileSpec> =>
  fc.record({
    channels: fc.array(channelSpec, { minLength: 1, maxLength: 6 }),
    length: fc.oneof({ weight: 3, arbitrary: fc.integer({ min: 1, max: Math.min(maxLength, 40) }) }, { weight: 1, arbitrary: fc.integer({ min: 1, max: maxLength }) }),
    rate,
    values: fc.record({
      kind: fc.constantFrom<ValueKind>('gaussian', 'gaussian', 'integers', 'wide', 'constant', 'faults'),
      seed: fc.integer({ min: 0, max: 2 ** 31 - 1 }),
      exponent: fc.integer({ min: -12, max: 12 }),
    }),
    with151: fc.boolean(),
    with164: fc.boolean(),
    complexAt: fc.option(fc.nat(6)),
    frfAt: fc.option(fc.nat(6)),
    abscissaMin: fc.constantFrom(0, 0, 0.5, -2, 1e-3),
  });

/** Seeded sample values of one channel (simulated data; only the round trip is checked). */
function channelValues(spec: FileSpec, channel: number): Float64Array {
  const { kind, seed, exponent } = spec.values;
  const uniform = uniformSource(seed + 7919 * channel);
  const normal = normalSource(seed + 104_729 * channel);
  const scale = 10 ** exponent;
  return Float64Array.from({ length: spec.length }, () => {
    switch (kind) {
      case 'gaussian':
        return scale * normal();
      case 'integers':
        return Math.floor(uniform() * 2001) - 1000;
      case 'wide': {
        // magnitudes from 1e-300 to 1e300, three-digit exponents included; some exact zeros
        const u = uniform();
        if (u < 0.05) return 0;
        return (uniform() < 0.5 ? -1 : 1) * (1 + 9 * uniform()) * 10 ** Math.floor(600 * u - 300);
      }
      case 'constant':
        return scale;
      case 'faults': {
        const u = uniform();
        return u < 0.05 ? Number.NaN : u < 0.08 ? Infinity : u < 0.1 ? -Infinity : scale * normal();
      }
    }
  });
}

/** What the reader must deliver for values stored as `channel` says (the printed digits for ASCII). */
function storedValues(values: Float64Array, channel: ChannelSpec): Float64Array {
  if (channel.binary) return channel.precision === 'single' ? values.map((v) => Math.fround(v)) : values.slice();
  const [width, digits] = channel.precision === 'single' ? [13, 5] : [20, 12];
  return values.map((v) => (Number.isFinite(v) ? Number(formatE(v, width, digits)) : v));
}

interface Lie {
  channel: number;
  what:
    | { kind: 'count'; value: number }
    | { kind: 'bytes'; value: number }
    | { kind: 'writePoints'; value: number }
    | { kind: 'extraValues'; value: number[] }
    | { kind: 'asciiLines'; value: number }
    | { kind: 'byteOrder'; value: number }
    | { kind: 'floatFormat'; value: number }
    | { kind: 'opening' }
    | { kind: 'closing' }
    | { kind: 'ordinateType'; value: number }
    | { kind: 'spacing'; value: number };
}

/** A dataset's byte range in the file and where its parts start. */
interface DatasetPlace {
  /** Offset of the opening `-1` line and of the closing one. */
  start: number;
  closing: number;
  end: number;
  /** Where its header lines, its data and its closing line start, and where it ends, for cutting. */
  marks: number[];
  /** Where its ASCII data lines start. */
  dataLines: number[];
  timeChannel: boolean;
}

interface BuiltFile {
  bytes: Buffer;
  expected: Float64Array[];
  datasets: DatasetPlace[];
}

function encodingOf(channel: ChannelSpec): Uff58Encoding {
  return {
    lineEnd: channel.lineEnd,
    exponentLetter: channel.letter,
    padTo80: channel.pad,
    ...(channel.binary ? { binary: { byteOrder: channel.byteOrder, lineBreakAfterData: channel.lineBreakAfterData, abscissaBytes: channel.abscissaBytes } } : {}),
  };
}

/** Builds the file: channels in order, the other datasets where the spec puts them; a lie, if any, told by the writer. */
function buildFile(spec: FileSpec, lie?: Lie): BuiltFile {
  const parts: Array<{ bytes: Buffer; time: boolean; binaryBytes?: number; breakBytes?: number }> = [];
  const expected: Float64Array[] = [];
  if (spec.with151) parts.push({ bytes: dataset151(spec.channels[0].lineEnd), time: false });
  if (spec.with164) parts.push({ bytes: dataset164(spec.channels[0].lineEnd), time: false });
  const increment = 1 / spec.rate;
  spec.channels.forEach((channel, c) => {
    if (spec.complexAt === c || spec.frfAt === c) {
      const complex = spec.complexAt === c;
      const values = channelValues(spec, 100 + c);
      parts.push({
        bytes: dataset58(
          { values, precision: channel.precision, ...(complex ? { ordinateType: channel.precision === 'single' ? 5 : 6 } : { functionType: 4, abscissaType: 18, abscissaUnit: 'Hz' }), name: complex ? 'complex' : 'frf' },
          encodingOf(channel),
        ),
        time: false,
        ...(channel.binary ? { binaryBytes: spec.length * (channel.precision === 'single' ? 4 : 8), breakBytes: channel.lineBreakAfterData ? channel.lineEnd.length : 0 } : {}),
      });
    }
    const values = channelValues(spec, c);
    const spacing = channel.uneven ? Float64Array.from({ length: spec.length }, (_, i) => spec.abscissaMin + i * increment) : undefined;
    const uffSpec: Uff58Spec = {
      values,
      precision: channel.precision,
      name: channel.name,
      node: channel.node,
      direction: channel.direction,
      unit: channel.unit,
      increment,
      abscissaMin: spec.abscissaMin,
      ...(spacing ? { abscissa: spacing } : {}),
    };
    const encoding = encodingOf(channel);
    if (lie !== undefined && lie.channel === c) {
      const w = lie.what;
      switch (w.kind) {
        case 'count':
          uffSpec.count = w.value;
          break;
        case 'ordinateType':
          uffSpec.ordinateType = w.value;
          break;
        case 'spacing':
          uffSpec.spacing = w.value;
          break;
        case 'writePoints':
          encoding.writePoints = w.value;
          break;
        case 'extraValues':
          encoding.extraValues = w.value;
          break;
        case 'opening':
          encoding.opening = false;
          break;
        case 'closing':
          encoding.closing = false;
          break;
        default:
          encoding.binary = { ...encoding.binary, [w.kind]: w.value };
      }
    }
    const bytes = dataset58(uffSpec, encoding);
    const valueBytes = channel.precision === 'single' ? 4 : 8;
    const xBytes = !channel.uneven ? 0 : channel.precision === 'single' ? 4 : channel.abscissaBytes;
    const binaryBytes = Math.min(encoding.writePoints ?? spec.length, spec.length) * (valueBytes + xBytes);
    const breakBytes = channel.lineBreakAfterData ? channel.lineEnd.length : 0;
    parts.push({ bytes, time: true, ...(channel.binary ? { binaryBytes, breakBytes } : {}) });
    expected.push(storedValues(values, channel));
  });

  const datasets: DatasetPlace[] = [];
  let at = 0;
  for (const part of parts) {
    const b = part.bytes;
    // the opening -1, the dataset number and 11 header records are lines; then the data
    const marks: number[] = [at];
    const dataLines: number[] = [];
    let pos = 0;
    for (let line = 0; line < 13 && pos < b.length; line++) {
      const nl = b.indexOf(0x0a, pos);
      if (nl < 0) break;
      pos = nl + 1;
      marks.push(at + pos);
    }
    let closing: number;
    if (part.binaryBytes !== undefined) {
      // the closing "    -1" right after the binary data, or after a line break
      marks.push(at + pos + part.binaryBytes);
      closing = pos + part.binaryBytes + (part.breakBytes ?? 0);
    } else {
      for (let nl = b.indexOf(0x0a, pos); nl >= 0; nl = b.indexOf(0x0a, nl + 1)) dataLines.push(at + nl + 1);
      // the closing "    -1" line is the last line of the dataset
      closing = b.subarray(0, b.length - 1).lastIndexOf(0x0a) + 1;
    }
    marks.push(at + closing, at + b.length);
    datasets.push({ start: at, closing: at + closing, end: at + b.length, marks, dataLines, timeChannel: part.time });
    at += b.length;
  }
  return { bytes: uffFile(...parts.map((p) => p.bytes)), expected, datasets };
}

// ---------------------------------------------------------------------------------------
// Reading.

type Outcome =
  | { kind: 'stats'; recording: Recording; values: Float64Array[]; stats: ChannelStats[]; peakHeld: number; peakAtOpen: number }
  | { kind: 'error'; error: RecordingError | UsageError; phase: 'open' | 'stream'; peakHeld: number };

/**
 * Opens `path` as `vibgate screen` would and streams every block into the statistics
 * engine, keeping a copy of the samples; says whether an error came at opening or while
 * streaming. Throws whatever is not a vibgate error.
 */
async function readUff(path: string, blockFrames: number, reuse: boolean): Promise<Outcome> {
  const meter = new ReadMeter();
  let phase: 'open' | 'stream' = 'open';
  try {
    const recording = await openRecording(path, { meter });
    const peakAtOpen = meter.peakHeld;
    expect(meter.held, 'the index buffer is released once the file is opened').toBe(0);
    phase = 'stream';
    const columns: number[][] = recording.channels.map(() => []);
    async function* copied() {
      for await (const block of recording.blocks({ blockFrames, reuse })) {
        block.channels.forEach((values, c) => {
          for (let i = 0; i < block.length; i++) columns[c].push(values[i]);
        });
        yield block;
      }
    }
    const summary = await summariseBlocks(copied(), recording, { frameSeconds: 1 });
    expect(meter.held, 'every read buffer is released at the end').toBe(0);
    const stats = summary.channels.map((c) => channelStats(c, { sampleRate: recording.sampleRate }));
    return { kind: 'stats', recording, values: columns.map((c) => Float64Array.from(c)), stats, peakHeld: meter.peakHeld, peakAtOpen };
  } catch (error) {
    if (error instanceof RecordingError || error instanceof UsageError) {
      expect(meter.held, 'every read buffer is released after an error').toBe(0);
      return { kind: 'error', error, phase, peakHeld: meter.peakHeld };
    }
    throw error;
  }
}

/** The contract of every case: statistics within the bound, or an error naming the file at opening. */
function checkContract(outcome: Outcome, path: string, suite: string): void {
  counter.add(`uff58 ${suite}`, outcome.kind);
  if (outcome.kind === 'error') {
    expectNamesFile(outcome.error, [path]);
    // the index pass checks every count and number, so an unchanged file is never refused while streaming
    expect(outcome.phase, outcome.error.message).toBe('open');
    expect(outcome.peakHeld).toBeLessThanOrEqual(INDEX_BUFFER_BYTES);
    return;
  }
  const channels = outcome.recording.channels.length;
  expect(outcome.peakAtOpen).toBeLessThanOrEqual(INDEX_BUFFER_BYTES);
  expect(outcome.peakHeld).toBeLessThanOrEqual(Math.max(INDEX_BUFFER_BYTES, channels * CHANNEL_BUFFER_BYTES));
  for (const values of outcome.values) expect(values.length).toBe(outcome.recording.sampleCount);
}

/** Names as uff58.ts documents them: ID line 1 unless blank or NONE, else `<node><direction>`, else `chN`. */
function baseNames(channels: ChannelSpec[]): string[] {
  const directions = ['-RZ', '-RY', '-RX', '-Z', '-Y', '-X', '', '+X', '+Y', '+Z', '+RX', '+RY', '+RZ'];
  return channels.map((c, i) => {
    const id = c.name.trim().replace(/^none$/i, '');
    if (id !== '') return id;
    return c.node > 0 ? `${c.node}${directions[c.direction + 6]}` : `ch${i + 1}`;
  });
}

/** Record 7's increment for a rate as the writer prints it (E13.5), and half a unit of its last digit. */
function printedIncrement(rate: number): [number, number] {
  const text = formatE(1 / rate, 13, 5);
  return [Number(text), 0.5 * 10 ** (Number(text.slice(text.indexOf('E') + 1)) - 5)];
}

let caseNumber = 0;
async function writeCase(bytes: Uint8Array): Promise<string> {
  caseNumber += 1;
  const path = join(dir, `case-${caseNumber % 4}.uff`);
  await writeFile(path, bytes);
  return path;
}

describe('fuzzing the UFF dataset 58 reader with well-formed files', () => {
  it('reads every file the writer makes to the values written (the printed digits for ASCII) and their statistics', async () => {
    await fc.assert(
      fc.asyncProperty(fileSpec(5000), fc.integer({ min: 1, max: 70_000 }), fc.boolean(), async (spec, blockFrames, reuse) => {
        const built = buildFile(spec);
        const path = await writeCase(built.bytes);
        const outcome = await readUff(path, blockFrames, reuse);
        checkContract(outcome, path, 'well-formed');
        if (outcome.kind === 'error') throw new Error(`a well-formed file was refused: ${outcome.error.message}`);
        const { recording } = outcome;
        expect(recording.format).toBe('uff58');
        expect(recording.sampleCount).toBe(spec.length);
        expect(recording.channels).toHaveLength(spec.channels.length);
        expect(recording.sampleFormat).toBe(spec.channels.some((c) => c.precision === 'double') ? 'float64' : 'float32');
        if (spec.channels.every((c) => !c.uneven || spec.length === 1)) {
          // record 7 prints 1/rate to six digits, which leaves the rate known to within
          // [1/(x + h), 1/(x − h)] for the printed x and half a unit h of its last digit
          // (exact 1/51200 is the case the test below pins)
          const [x, h] = printedIncrement(spec.rate);
          expect(recording.sampleRate).toBeGreaterThanOrEqual(1 / (x + h));
          expect(recording.sampleRate).toBeLessThanOrEqual(1 / (x - h));
        } else {
          // the rate comes from the abscissa values, printed to six digits (E13.5) or stored as floats
          expect(Math.abs(recording.sampleRate - spec.rate) / spec.rate).toBeLessThan(1e-5);
        }
        // the samples, exactly: the doubles nearest the printed decimals, or the stored IEEE 754 values
        outcome.values.forEach((values, c) => expect(values, `channel ${c + 1}`).toEqual(built.expected[c]));
        // the statistics, against simple-statistics over the expected values (a reference library);
        // 1e-9 relative allows for the engine merging blocks in another order
        outcome.stats.forEach((s, c) => {
          const x = Array.from(built.expected[c]);
          expect(s.samples).toBe(spec.length);
          if (!x.every(Number.isFinite)) {
            expect(s.nonFinite).toBe(x.filter((v) => !Number.isFinite(v)).length);
            return;
          }
          expect(s.min).toBe(min(x));
          expect(s.max).toBe(max(x));
          const scale = Math.max(Math.abs(min(x)), Math.abs(max(x)));
          if (scale > 1e-140 && scale < 1e140) {
            // (squares of larger or smaller values overflow or underflow, in both)
            expect(Math.abs(s.mean - mean(x))).toBeLessThanOrEqual(1e-9 * scale);
            expect(Math.abs(s.rms - rootMeanSquare(x))).toBeLessThanOrEqual(1e-9 * scale);
            expect(Math.abs(s.std - standardDeviation(x))).toBeLessThanOrEqual(1e-9 * scale);
          }
        });
        // names and units as documented; names always unique
        const names = recording.channels.map((c) => c.name);
        expect(new Set(names).size).toBe(names.length);
        const bases = baseNames(spec.channels);
        if (new Set(bases).size === bases.length) expect(names).toEqual(bases);
        recording.channels.forEach((channel, c) => {
          const unit = spec.channels[c].unit.trim();
          expect(channel.unit).toBe(unit === '' || unit === 'NONE' ? undefined : unit);
        });
      }),
      fuzzParameters(300),
    );
  });
});

// ---------------------------------------------------------------------------------------
// Broken files.

const lie = (channels: ChannelSpec[], length: number): fc.Arbitrary<Lie> =>
  fc.nat(channels.length - 1).chain((channel) => {
    const binary = channels[channel].binary;
    const common: Array<fc.Arbitrary<Lie['what']>> = [
      fc.oneof(fc.constantFrom(0, -1, length + 1, length - 1, 2 ** 31, 2 ** 53, 1e10), fc.integer({ min: -5, max: length + 5 })).filter((v) => v !== length).map((value) => ({ kind: 'count' as const, value })),
      fc.integer({ min: 0, max: length - 1 }).map((value) => ({ kind: 'writePoints' as const, value })),
      fc.constant({ kind: 'opening' as const }),
      fc.constant({ kind: 'closing' as const }),
      fc.constantFrom(0, 1, 3, 7, 99).map((value) => ({ kind: 'ordinateType' as const, value })),
      fc.constantFrom(-1, 2, 9).map((value) => ({ kind: 'spacing' as const, value })),
    ];
    const own: Array<fc.Arbitrary<Lie['what']>> = binary
      ? [
          fc.oneof(fc.constantFrom(0, 1, 7, 2 ** 40), fc.integer({ min: 0, max: 16 * length + 16 })).map((value) => ({ kind: 'bytes' as const, value })),
          fc.constantFrom(0, 10, 12, 13, -11).map((value) => ({ kind: 'asciiLines' as const, value })),
          fc.constantFrom(0, 3, -1, 12).map((value) => ({ kind: 'byteOrder' as const, value })),
          fc.constantFrom(0, 1, 3, 4).map((value) => ({ kind: 'floatFormat' as const, value })),
        ]
      : [fc.array(fc.double({ min: -10, max: 10, noNaN: true }), { minLength: 1, maxLength: 8 }).map((value) => ({ kind: 'extraValues' as const, value }))];
    return fc.oneof(...common, ...own).map((what) => ({ channel, what }));
  });

/** True when a lie leaves the file readable after all (a 58b byte count the uneven double layout also takes). */
function lieIsHarmless(spec: FileSpec, l: Lie): boolean {
  const channel = spec.channels[l.channel];
  if (l.what.kind === 'bytes' && channel.uneven && channel.precision === 'double') return l.what.value === 12 * spec.length || l.what.value === 16 * spec.length;
  if (l.what.kind === 'bytes') {
    const pointBytes = (channel.precision === 'single' ? 4 : 8) * (channel.uneven ? 2 : 1);
    return l.what.value === pointBytes * spec.length;
  }
  // 12 bytes a point for 4/3 of the points fills the bytes of 16 a point: the same data, read another way
  if (l.what.kind === 'count' && channel.binary && channel.uneven && channel.precision === 'double') return 12 * l.what.value === 16 * spec.length;
  if (l.what.kind === 'ordinateType') return l.what.value === (channel.precision === 'single' ? 2 : 4);
  // a dataset 58 declared complex (5, 6) is skipped, not refused: the file stays readable when others remain
  return false;
}

type Mutation =
  | { kind: 'flips'; flips: Array<{ at: number; byte: number }> }
  | { kind: 'insert'; line: number; text: string }
  | { kind: 'delete'; line: number; count: number }
  | { kind: 'field'; line: number; column: number; text: string }
  | { kind: 'truncate'; at: number };

const INTERESTING_BYTES = [0x20, 0x0a, 0x0d, 0x09, 0x2d, 0x31, 0x2e, 0x2b, 0x45, 0x44, 0x62, 0x35, 0x38, 0x30, 0x39, 0x00, 0xff, 0x4e];
const LINES = [
  '    -1', '    58', '    58b     1     2          11          40', '   151', '', '   ', '\t', '  1.00000E+00  2.00000E+00', ' -1', '-1', '    -1    ',
  'NONE', '         2        10         1  0.00000E+00  1.00000E-03  0.00000E+00', 'NaN', 'garbage', ' '.repeat(70_000), '1'.repeat(300),
  // a data line just within the 64 KiB a channel buffer holds (with its LF), and one just beyond
  `${' '.repeat(65_522)}  1.00000E+00`, `${' '.repeat(65_523)}  1.00000E+00`,
];
const FIELD_TEXT = fc.oneof(
  fc.constantFrom('NaN', 'Inf', '-Infinity', 'nan(0)', '1.2.3', '--1', '1E', 'E5', '1e+', '1.0D+00', '1+100', '0x1F', '  ', '1,5', '+', '.', '1e400', '-0'),
  fc.stringMatching(/^[-+0-9.EeDd ]{1,13}$/),
  fc.string({ maxLength: 13 }),
);

const mutation: fc.Arbitrary<Mutation> = fc.oneof(
  fc.record({
    kind: fc.constant('flips' as const),
    flips: fc.array(fc.record({ at: fc.nat(), byte: fc.oneof(fc.constantFrom(...INTERESTING_BYTES), fc.integer({ min: 0, max: 255 })) }), { minLength: 1, maxLength: 6 }),
  }),
  fc.record({ kind: fc.constant('insert' as const), line: fc.nat(), text: fc.oneof(fc.constantFrom(...LINES), fc.string({ maxLength: 90 })) }),
  fc.record({ kind: fc.constant('delete' as const), line: fc.nat(), count: fc.integer({ min: 1, max: 3 }) }),
  fc.record({ kind: fc.constant('field' as const), line: fc.nat(), column: fc.nat(79), text: FIELD_TEXT }),
  fc.record({ kind: fc.constant('truncate' as const), at: fc.nat() }),
);

/** Applies the mutations to the file, line-wise where they are about lines (LF-separated, binary data included). */
function mutate(bytes: Buffer, mutations: Mutation[]): Buffer {
  let out = Buffer.from(bytes);
  for (const m of mutations) {
    if (m.kind === 'flips') {
      for (const f of m.flips) if (out.length > 0) out[f.at % out.length] = f.byte;
      continue;
    }
    if (m.kind === 'truncate') {
      out = out.subarray(0, m.at % (out.length + 1));
      continue;
    }
    const lines: Buffer[] = [];
    for (let pos = 0; pos < out.length; ) {
      const nl = out.indexOf(0x0a, pos);
      const end = nl < 0 ? out.length : nl + 1;
      lines.push(out.subarray(pos, end));
      pos = end;
    }
    const k = m.line % (lines.length + 1);
    if (m.kind === 'insert') lines.splice(k, 0, Buffer.from(`${m.text}\n`, 'latin1'));
    else if (m.kind === 'delete') lines.splice(k, m.count);
    else if (k < lines.length) {
      const line = Buffer.from(lines[k]);
      const text = Buffer.from(m.text, 'latin1');
      const at = Math.min(m.column, Math.max(0, line.length - 1));
      lines[k] = Buffer.concat([line.subarray(0, at), text, line.subarray(Math.min(line.length, at + text.length))]);
    }
    out = Buffer.concat(lines);
  }
  return out;
}

describe('fuzzing the UFF dataset 58 reader with broken files', () => {
  it('refuses a file cut anywhere inside a dataset, and reads one cut between datasets to the channels before the cut', async () => {
    await fc.assert(
      fc.asyncProperty(fileSpec(60), fc.array(fc.nat(), { maxLength: 4 }), async (spec, randomCuts) => {
        const built = buildFile(spec);
        const at = new Set<number>();
        // each line start of the headers and the closing lines, a byte either side, the
        // line break before (CRLF: two bytes) and the "-" and "1" of a delimiter after it;
        // the same at a few data lines and at random bytes
        const deltas = [-2, -1, 0, 1, 5, 6];
        for (const d of built.datasets) {
          for (const mark of d.marks) for (const delta of deltas) at.add(mark + delta);
          for (const r of randomCuts.slice(0, 2)) if (d.dataLines.length > 0) for (const delta of deltas) at.add(d.dataLines[r % d.dataLines.length] + delta);
        }
        for (const r of randomCuts) at.add(r % (built.bytes.length + 1));
        for (const cut of [...at].filter((c) => c >= 0 && c <= built.bytes.length).sort((a, b) => a - b)) {
          const path = await writeCase(built.bytes.subarray(0, cut));
          const outcome = await readUff(path, 4096, false);
          checkContract(outcome, path, 'cut');
          // A dataset is whole once its closing "-1" is (its line break may be cut); it is
          // absent while only blanks of its opening line are there: 4 leading blanks.
          const cutInside = built.datasets.some((d) => cut >= d.start + 5 && cut < d.closing + 6);
          const whole = built.datasets.filter((d) => d.timeChannel && cut >= d.closing + 6).length;
          if (cutInside || whole === 0) {
            expect(outcome.kind, `cut at byte ${cut} of ${built.bytes.length}`).toBe('error');
          } else {
            expect(outcome.kind, `cut at byte ${cut} of ${built.bytes.length}: ${outcome.kind === 'error' ? outcome.error.message : ''}`).toBe('stats');
            if (outcome.kind === 'stats') {
              expect(outcome.recording.channels).toHaveLength(whole);
              outcome.values.forEach((values, c) => expect(values).toEqual(built.expected[c]));
            }
          }
        }
      }),
      fuzzParameters(4),
    );
  });

  it('refuses a file whose header counts lie (record 7 count, 58b bytes, lines, byte order, format, delimiters), naming it', async () => {
    await fc.assert(
      fc.asyncProperty(
        fileSpec(300).chain((spec) => fc.tuple(fc.constant(spec), lie(spec.channels, spec.length))),
        async ([spec, l]) => {
          const built = buildFile(spec, l);
          const path = await writeCase(built.bytes);
          const outcome = await readUff(path, 1000, false);
          checkContract(outcome, path, 'lying counts');
          const complex = l.what.kind === 'ordinateType' && (l.what.value === 5 || l.what.value === 6);
          if (!lieIsHarmless(spec, l) && !complex) expect(outcome.kind, `lie ${JSON.stringify(l.what)}`).toBe('error');
        },
      ),
      fuzzParameters(300),
    );
  });

  it('ends every mutated file (flipped bytes, lines inserted or deleted, random text in fields, cuts) in statistics or a RecordingError naming it', async () => {
    await fc.assert(
      fc.asyncProperty(fileSpec(300), fc.array(mutation, { minLength: 1, maxLength: 4 }), fc.integer({ min: 1, max: 70_000 }), async (spec, mutations, blockFrames) => {
        const built = buildFile(spec);
        const path = await writeCase(mutate(built.bytes, mutations));
        checkContract(await readUff(path, blockFrames, false), path, 'mutated');
      }),
      fuzzParameters(700),
    );
  });

  it('ends random bytes after a dataset 58 or 58b header line in statistics or a RecordingError naming the file', async () => {
    const header = fc.constantFrom(
      '    -1\n    58\n',
      '    -1\r\n    58\r\n',
      '    -1\n    58b     1     2          11          40     0     0           0           0\n',
      '    -1\n    58b     2     2          11  4294967296\n',
      '    -1\n    58b\n',
    );
    const body = fc.oneof(
      fc.uint8Array({ maxLength: 3000 }),
      // random text of the characters dataset 58 is made of
      fc.array(fc.constantFrom(' ', ' ', ' ', '\n', '\r\n', '-1', '58', '0', '1', '2', '17', 'E', 'D', '+', '-', '.', 'NONE', '    -1\n', '1.00000E-03', 'b'), { maxLength: 600 }).map((t) => Buffer.from(t.join(''), 'latin1')),
    );
    await fc.assert(
      fc.asyncProperty(header, body, fc.boolean(), async (head, rest, closed) => {
        const path = await writeCase(Buffer.concat([Buffer.from(head, 'latin1'), rest, Buffer.from(closed ? '\n    -1\n' : '', 'latin1')]));
        checkContract(await readUff(path, 65536, false), path, 'random bytes');
      }),
      fuzzParameters(300),
    );
  });
});

describe('58b data shorter than the header declares', () => {
  // What the fuzz cases above found (lying counts, other seeds): the 58b header declares 8
  // bytes (two float32), one value of 4 bytes is written, and the closing line "    -1"
  // follows. The reader takes the next 8 bytes as the data, the value and the closing
  // line's four leading blanks (0x20202020, 1.36e-19 as a float32), then finds "-1" on what
  // is left of that line, which it accepts as the closing delimiter ("-1 within the first
  // six columns"): a dataset cut short reads as whole, with a sample that is not in the file.
  it.each([
    ['a float32', 'single', 1],
    ['two float32', 'single', 2],
  ] as const)('refuses a real single 58b dataset %s short of the bytes it declares', async (_, precision, missing) => {
    const values = [1, 2, 3];
    const path = await writeCase(dataset58({ values, precision }, { binary: {}, writePoints: values.length - missing }));
    const outcome = await readUff(path, 65536, false);
    checkContract(outcome, path, 'short 58b data');
    expect(outcome.kind === 'error' ? 'error' : `read as ${Array.from(outcome.values[0]).join(', ')}`).toBe('error');
  });
});

describe('whole-number sample rates from an increment printed E13.5', () => {
  // What the fuzz cases above found: 1/51200 s = 1.953125E-05 exactly, a tie that E13.5
  // rounds up to 1.95313E-05, the far end of the printing's rounding, and 1/1.95313E-05 s is
  // 51199.869 Hz. The whole rate is inside [1/(x + h), 1/(x − h)] with h = 5E-11 (the
  // half unit of the last printed digit), so uff58.ts's rule ("a rate within the printing's
  // rounding of a whole number of hertz is taken as that whole number") makes it 51200.
  // 512, 5120 and 51200 Hz are the only rates from 1 Hz to 204.8 kHz that fall there.
  it.each([512, 5120, 51_200, 1024, 102_400, 2048, 25_600])('reads %i Hz as that whole number', async (rate) => {
    const [x, h] = printedIncrement(rate);
    expect(rate).toBeGreaterThanOrEqual(1 / (x + h));
    expect(rate).toBeLessThanOrEqual(1 / (x - h));
    const path = await writeCase(dataset58({ values: [1, 2, 3], increment: 1 / rate }));
    const outcome = await readUff(path, 65536, false);
    checkContract(outcome, path, 'sample rates');
    expect(outcome.kind === 'stats' ? outcome.recording.sampleRate : outcome.error.message).toBe(rate);
  });
});

describe('the UFF read-buffer bound on wide and long files', () => {
  it('holds six channels of 20 000 ASCII values to six 64 KiB buffers, whatever the file size', async () => {
    const spec: FileSpec = {
      channels: Array.from({ length: 6 }, (_, i): ChannelSpec => ({
        precision: i % 2 === 0 ? 'double' : 'single', binary: i >= 4, byteOrder: 1, lineBreakAfterData: false, abscissaBytes: 8,
        lineEnd: '\n', letter: 'E', pad: true, name: `acc-${i}`, node: 0, direction: 0, unit: 'g', uneven: false,
      })),
      length: 20_000,
      rate: 2048,
      values: { kind: 'gaussian', seed: 5, exponent: 0 },
      with151: true, with164: false, complexAt: null, frfAt: null, abscissaMin: 0,
    };
    const built = buildFile(spec);
    const path = await writeCase(built.bytes);
    expect((await stat(path)).size).toBeGreaterThan(4 * INDEX_BUFFER_BYTES);
    const outcome = await readUff(path, 65536, false);
    checkContract(outcome, path, 'bound');
    expect(outcome.kind).toBe('stats');
    if (outcome.kind === 'stats') {
      expect(outcome.peakHeld).toBe(Math.max(INDEX_BUFFER_BYTES, 6 * CHANNEL_BUFFER_BYTES));
      outcome.values.forEach((values, c) => expect(values).toEqual(built.expected[c]));
    }
  });
});
