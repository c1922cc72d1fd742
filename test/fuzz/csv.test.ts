/**
 * Fuzzing the CSV/TSV reader: ragged rows, NaN/Inf words, byte order marks (UTF-8 and
 * UTF-16), CRLF and lone CR, empty fields, quotes anywhere, decimal commas, random bytes,
 * a line longer than the reader accepts, and well-formed files with one fault deep inside.
 * Every case must end in statistics or a RecordingError naming the file, within the
 * per-case timeout, with the read buffers inside the reader's bound: the 1 MiB read buffer
 * plus the decoded text of one chunk (two bytes a character, never more than the file).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { rm, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { fixtureDir } from '../helpers/wav-writer.js';
import { CaseCounter, expectNamesFile, fuzzParameters, readThrough, type ReadOutcome } from '../helpers/fuzz-harness.js';

const MiB = 1024 * 1024;
let dir = '';
const counter = new CaseCounter();
beforeAll(async () => {
  dir = await fixtureDir('vibgate-fuzz-csv-');
});
afterAll(async () => {
  counter.print();
  await rm(dir, { recursive: true, force: true });
});

const oddCell = fc.constantFrom(
  'NaN', 'nan', 'Inf', '-Inf', '+inf', 'Infinity', '-INFINITY', '', ' ', '"1.5"', '"1', '1"', '""', '"a""b"',
  '1e', '1e999', '-1e-999', '-0', '1,5', '0x10', '1.2.3', '--1', '.', '+', 'e5', '1e+', 'abc', '\u00a0', '\u0000',
  '1.7976931348623157e309', '123456789012345678901234567890', '0.000000000000000000000000001', ' 2 ', '\t3',
);
const numberCell = fc.oneof(
  fc.double({ noDefaultInfinity: false }).map((x) => String(x)),
  fc.integer({ min: -100000, max: 100000 }).map(String),
  fc.double({ min: -10, max: 10, noNaN: true }).map((x) => x.toFixed(4)),
);
const cell = fc.oneof({ weight: 5, arbitrary: numberCell }, { weight: 3, arbitrary: oddCell }, { weight: 1, arbitrary: fc.string({ maxLength: 6 }) });
const headerName = fc.oneof(
  fc.constantFrom('t', 'time [s]', 'time_ms', 'Time (ms)', 'seconds', 'time [us]', 'time [h]', 'acc-01 [g]', 'acc-02 (m/s^2)', 'x', 'x', '"q,uoted"', '""', 'a"b', '[g]', '1.5', 'NaN'),
  fc.string({ maxLength: 8 }),
);

interface TextCsv {
  header: string[] | null;
  rows: string[][];
  sep: string;
  eol: string;
  trailingEol: boolean;
  encoding: 'utf8' | 'utf8-bom' | 'utf16le' | 'utf16be';
}

// Mostly rows of the header's width, mostly numbers, so that many cases read through to
// statistics and the faults sit among good rows; some rows ragged or of anything at all.
const textCsv: fc.Arbitrary<TextCsv> = fc.integer({ min: 1, max: 5 }).chain((width) => fc.record({
  header: fc.option(
    fc.oneof({ weight: 4, arbitrary: fc.array(headerName, { minLength: width, maxLength: width }) }, { weight: 1, arbitrary: fc.array(headerName, { minLength: 1, maxLength: 6 }) }),
    { freq: 5 },
  ),
  rows: fc.array(
    fc.oneof(
      { weight: 12, arbitrary: fc.array(numberCell, { minLength: width, maxLength: width }) },
      { weight: 2, arbitrary: fc.array(cell, { minLength: width, maxLength: width }) },
      { weight: 1, arbitrary: fc.array(cell, { minLength: 0, maxLength: 6 }) },
    ),
    { maxLength: 30 },
  ),
  sep: fc.constantFrom(',', ',', ';', '\t', ' , '),
  eol: fc.constantFrom('\n', '\n', '\r\n', '\r', '\n\n'),
  trailingEol: fc.boolean(),
  encoding: fc.constantFrom('utf8', 'utf8', 'utf8-bom', 'utf16le', 'utf16be'),
}));

function encode(text: string, encoding: TextCsv['encoding']): Buffer {
  switch (encoding) {
    case 'utf8':
      return Buffer.from(text, 'utf8');
    case 'utf8-bom':
      return Buffer.concat([Buffer.from([0xef, 0xbb, 0xbf]), Buffer.from(text, 'utf8')]);
    case 'utf16le':
      return Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(text, 'utf16le')]);
    case 'utf16be':
      return Buffer.concat([Buffer.from([0xfe, 0xff]), Buffer.from(text, 'utf16le').swap16()]);
  }
}

function render(csv: TextCsv): Buffer {
  const lines = [...(csv.header ? [csv.header] : []), ...csv.rows].map((fields) => fields.join(csv.sep));
  return encode(lines.join(csv.eol) + (csv.trailingEol ? csv.eol : ''), csv.encoding);
}

/**
 * A well-formed recording (time column, channels of numbers) with faults placed at rows
 * anywhere in it: a word, an empty field, a missing or extra field, a time that goes back.
 */
interface Structured {
  channels: number;
  rows: number;
  rate: number;
  faults: Array<{ row: number; kind: 'word' | 'empty' | 'short' | 'long' | 'back' | 'nan' | 'blank' | 'quote' }>;
  crlf: boolean;
}
const structured: fc.Arbitrary<Structured> = fc.record({
  channels: fc.integer({ min: 1, max: 4 }),
  rows: fc.integer({ min: 0, max: 6000 }),
  rate: fc.constantFrom(100, 1024, 2048, 51200),
  faults: fc.array(
    fc.record({ row: fc.nat(), kind: fc.constantFrom('word', 'empty', 'short', 'long', 'back', 'nan', 'blank', 'quote') }),
    { maxLength: 2 },
  ),
  crlf: fc.boolean(),
});

function renderStructured(s: Structured): { bytes: Buffer; faultLine: number | undefined } {
  const lines = [['time [s]', ...Array.from({ length: s.channels }, (_, c) => `acc-${c + 1} [g]`)].join(',')];
  for (let i = 0; i < s.rows; i++) {
    lines.push([(i / s.rate).toFixed(7), ...Array.from({ length: s.channels }, (_, c) => Math.sin(i * (c + 1) * 0.01).toFixed(5))].join(','));
  }
  let faultLine: number | undefined;
  for (const f of s.faults) {
    if (s.rows === 0) break;
    const line = 1 + (f.row % s.rows);
    const fields = lines[line].split(',');
    switch (f.kind) {
      case 'word': fields[1] = 'overload'; break;
      case 'empty': fields[1] = ''; break;
      case 'short': fields.pop(); break;
      case 'long': fields.push('1'); break;
      case 'back': fields[0] = '-1'; break;
      case 'nan': fields[1] = 'NaN'; break; // a fault to count, not a read error
      case 'blank': fields.length = 0; break;
      case 'quote': fields[1] = `"${fields[1]}`; break;
    }
    lines[line] = fields.join(',');
    if (f.kind !== 'nan' && !(f.kind === 'blank' && line === s.rows) && !(f.kind === 'back' && line === 1)) {
      faultLine = Math.min(faultLine ?? Infinity, line + 1);
    }
  }
  return { bytes: Buffer.from(lines.join(s.crlf ? '\r\n' : '\n') + '\n', 'utf8'), faultLine };
}

function checkOutcome(outcome: ReadOutcome, path: string): void {
  // the documented bound: the 1 MiB read buffer and one chunk of decoded text
  expect(outcome.peakHeld).toBeLessThanOrEqual(MiB + 2 * outcome.fileBytes);
  expect(outcome.peakHeld).toBeLessThanOrEqual(MiB + 2 * (4 * MiB + MiB));
  if (outcome.kind === 'error') expectNamesFile(outcome.error, [path]);
  else expect(outcome.samples).toBeGreaterThan(0);
}

const openOptions = fc.record({
  sampleRate: fc.option(fc.constantFrom(1, 100, 2048), { nil: undefined, freq: 4 }),
  decimalComma: fc.constantFrom(false, false, false, true),
});

describe('fuzzing the CSV reader', () => {
  it('ends every text-ish file in statistics or a RecordingError naming it', async () => {
    await fc.assert(
      fc.asyncProperty(textCsv, openOptions, fc.constantFrom('.csv', '.tsv', '.txt'), fc.integer({ min: 1, max: 70_000 }), async (csv, options, ext, blockFrames) => {
        const path = join(dir, `text${ext}`);
        await writeFile(path, render(csv));
        const outcome = await readThrough(path, options, blockFrames);
        counter.add('csv', outcome.kind);
        checkOutcome(outcome, path);
      }),
      fuzzParameters(1000),
    );
  });

  it('ends random bytes in statistics or a RecordingError naming the file', async () => {
    const path = join(dir, 'bytes.csv');
    await fc.assert(
      fc.asyncProperty(fc.uint8Array({ maxLength: 400 }), openOptions, async (bytes, options) => {
        await writeFile(path, bytes);
        const outcome = await readThrough(path, options);
        counter.add('csv', outcome.kind);
        checkOutcome(outcome, path);
      }),
      fuzzParameters(400),
    );
  });

  it('reads a well-formed file to its last row, and refuses one with a fault at any row, naming that line', async () => {
    const path = join(dir, 'structured.csv');
    await fc.assert(
      fc.asyncProperty(structured, fc.integer({ min: 1, max: 5000 }), async (s, blockFrames) => {
        const { bytes, faultLine } = renderStructured(s);
        await writeFile(path, bytes);
        const outcome = await readThrough(path, {}, blockFrames);
        counter.add('csv', outcome.kind);
        checkOutcome(outcome, path);
        if (s.rows < 2 || faultLine !== undefined) {
          expect(outcome.kind).toBe('error');
          if (outcome.kind === 'error' && faultLine !== undefined && faultLine > 2 && s.rows >= 2) {
            // the message says where the reading stopped
            expect(outcome.error.message).toMatch(new RegExp(`line ${faultLine}\\b`));
          }
        } else {
          expect(outcome.kind).toBe('stats');
          if (outcome.kind === 'stats') expect(outcome.samples).toBe(s.rows);
        }
      }),
      fuzzParameters(150),
    );
  });

  it('refuses a line longer than 4 MiB, and a header of more than 65535 columns, naming the file', async () => {
    const cases: Array<[string, Buffer, RegExp]> = [
      ['long-line.csv', Buffer.from('x\n' + '1'.repeat(5 * MiB)), /has a line longer than 4 MiB; is it really a CSV file\?$/],
      ['long-line-nl.csv', Buffer.from('x\n' + '1'.repeat(5 * MiB) + '\n1\n'), /has a line longer than 4 MiB/],
      ['wide.csv', Buffer.from(Array.from({ length: 70_000 }, (_, i) => `c${i}`).join(',') + '\n' + '1,'.repeat(69_999) + '1\n'), /line 1 has 70000 columns; vibgate reads at most 65535/],
    ];
    for (const [name, bytes, message] of cases) {
      const path = join(dir, name);
      await writeFile(path, bytes);
      const outcome = await readThrough(path, { sampleRate: 100 });
      counter.add('csv', outcome.kind);
      checkOutcome(outcome, path);
      expect(outcome.kind).toBe('error');
      if (outcome.kind === 'error') expect(outcome.error.message).toMatch(message);
    }
  });

  it('reads a header of 20000 columns over one row without allocating a block per column up front', async () => {
    // 20000 × 65536 samples would be 10 GB; the block arrays grow with the rows read
    const path = join(dir, 'wide-ok.csv');
    const columns = 20_000;
    await writeFile(path, Array.from({ length: columns }, (_, i) => `c${i}`).join(',') + '\n' + '0.5,'.repeat(columns - 1) + '0.5\n');
    const before = process.memoryUsage().arrayBuffers;
    const outcome = await readThrough(path, { sampleRate: 100 });
    counter.add('csv', outcome.kind);
    expect(outcome.kind).toBe('stats');
    if (outcome.kind === 'stats') expect(outcome.recording.channels).toHaveLength(columns);
    expect(process.memoryUsage().arrayBuffers - before).toBeLessThan(1024 * MiB);
  });
});
