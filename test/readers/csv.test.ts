import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, rmSync, writeFileSync, createWriteStream } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import fc from 'fast-check';
import { openCsv } from '../../src/readers/csv.js';
import { ReadMeter } from '../../src/readers/types.js';
import type { Recording } from '../../src/readers/types.js';
import { RecordingError, UsageError } from '../../src/errors.js';

const dir = mkdtempSync(join(tmpdir(), 'vibgate-csv-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

let fileNumber = 0;
function csvFile(content: string | Buffer, ext = '.csv'): string {
  fileNumber += 1;
  const path = join(dir, `f${fileNumber}${ext}`);
  writeFileSync(path, content);
  return path;
}

async function readAll(recording: Recording, blockFrames?: number) {
  const columns: number[][] = recording.channels.map(() => []);
  const starts: number[] = [];
  for await (const block of recording.blocks({ blockFrames })) {
    starts.push(block.start);
    block.channels.forEach((values, c) => {
      expect(values.length).toBe(block.length);
      columns[c].push(...values);
    });
  }
  return { columns, starts };
}

/** Opens and reads the whole file: errors in the first rows show when opening, later ones when reading. */
async function readCsv(path: string, options: Parameters<typeof openCsv>[1] = {}) {
  return readAll(await openCsv(path, options));
}

async function errorOf(promise: Promise<unknown>): Promise<Error> {
  try {
    await promise;
  } catch (err) {
    return err as Error;
  }
  throw new Error('expected a rejection');
}

/** Values whose shortest decimal form is long, and a few special cases. */
const sampleValues = [0.1, -2.5e-7, 1 / 3, 123456.789, 0, 9.80665, 5e-324, 1.7976931348623157e308];

describe('openCsv() reads the layout of the header', () => {
  it('reads comma-separated columns with units in brackets and parentheses', async () => {
    // String(-0) is "0", so negative zero is written out by hand.
    const rows = sampleValues.map((v, k) => `${k / 2048},${v},${v === 0 ? '-0' : -v}`);
    const path = csvFile(['time,acc-01 [g],acc-02 (m/s^2)', ...rows].join('\n') + '\n');
    const recording = await openCsv(path);
    expect(recording.format).toBe('csv');
    expect(recording.sampleFormat).toBe('text');
    expect(recording.sampleCount).toBeUndefined();
    expect(recording.sampleRate).toBe(2048);
    expect(recording.channels).toEqual([
      { index: 0, name: 'acc-01', unit: 'g' },
      { index: 1, name: 'acc-02', unit: 'm/s^2' },
    ]);
    const { columns } = await readAll(recording);
    // ECMA-262 Number::toString gives the shortest decimal that reads back to the same
    // double, so the reader must return exactly the values written.
    expect(columns[0]).toEqual(sampleValues);
    expect(columns[1]).toEqual(sampleValues.map((v) => -v));
    expect(Object.is(columns[1][4], -0)).toBe(true); // "-0" is IEEE 754 negative zero
    expect(recording.notes).toEqual([]);
  });

  it.each([
    ['semicolons', ';', '.csv'],
    ['tabs', '\t', '.csv'],
    ['tabs in a .tsv file', '\t', '.tsv'],
  ])('detects fields separated by %s', async (_label, sep, ext) => {
    const path = csvFile(`t${sep}a${sep}b\n0${sep}1.5${sep}-2\n0.5${sep}2.5${sep}-3\n`, ext);
    const recording = await openCsv(path);
    expect(recording.sampleRate).toBe(2);
    expect(recording.channels.map((c) => c.name)).toEqual(['a', 'b']);
    expect((await readAll(recording)).columns).toEqual([[1.5, 2.5], [-2, -3]]);
  });

  it('reads a .tsv file as tab-separated even when its names hold commas', async () => {
    const path = csvFile('t\tx, left\ty, left\n0\t1\t2\n1\t3\t4\n', '.tsv');
    const recording = await openCsv(path);
    expect(recording.channels.map((c) => c.name)).toEqual(['x, left', 'y, left']);
  });

  it('unquotes header fields as RFC 4180 section 2 rules 5 to 7 describe', async () => {
    // Rule 6: fields holding separators, quotes or line breaks are enclosed in quotes;
    // rule 7: a quote inside a quoted field is written twice.
    const path = csvFile('time,"acc, left [g]","say ""hi""","two\nlines"\n0,1,2,3\n1,4,5,6\n');
    const recording = await openCsv(path);
    expect(recording.channels.map((c) => [c.name, c.unit])).toEqual([
      ['acc, left', 'g'],
      ['say "hi"', undefined],
      ['two\nlines', undefined],
    ]);
    expect((await readAll(recording)).columns).toEqual([[1, 4], [2, 5], [3, 6]]);
  });

  it('counts the line breaks inside a quoted header field in line numbers', async () => {
    const path = csvFile('time,"two\nlines"\n0,1\n1,x\n');
    const err = await errorOf(openCsv(path));
    expect(err.message).toBe(`Cannot read "${path}": line 4, column "two\nlines": "x" is not a number`);
  });

  it('accepts quoted numbers in data rows', async () => {
    const path = csvFile('a,b\n"1.5"," 2"\n');
    const recording = await openCsv(path, { sampleRate: 100 });
    expect((await readAll(recording)).columns).toEqual([[1.5], [2]]);
  });

  it('reads CRLF line breaks and a UTF-8 byte order mark like plain LF text', async () => {
    const text = 'time [s],µ-mic [Pa]\r\n0,0.25\r\n0.001,-0.5\r\n0.002,1e-3\r\n';
    const path = csvFile(Buffer.concat([Buffer.from([0xef, 0xbb, 0xbf]), Buffer.from(text, 'utf8')]));
    const recording = await openCsv(path);
    expect(recording.sampleRate).toBe(1000);
    expect(recording.channels).toEqual([{ index: 0, name: 'µ-mic', unit: 'Pa' }]);
    expect((await readAll(recording)).columns).toEqual([[0.25, -0.5, 0.001]]);
  });

  it('reads UTF-16LE text with its byte order mark (spreadsheet "Unicode text")', async () => {
    const text = '\ufefftime\tacc [g]\r\n0\t1,5\r\n0,5\t2\r\n';
    const path = csvFile(Buffer.from(text, 'utf16le'), '.txt');
    const recording = await openCsv(path, { decimalComma: true });
    expect(recording.sampleRate).toBe(2);
    expect((await readAll(recording)).columns).toEqual([[1.5, 2]]);
  });

  it('takes a first row made only of numbers as data and names the columns ch1..chN', async () => {
    const path = csvFile('1,2\n3,4\n');
    const recording = await openCsv(path, { sampleRate: 10 });
    expect(recording.channels.map((c) => c.name)).toEqual(['ch1', 'ch2']);
    expect(recording.notes).toEqual(['no header row: the 2 columns are named ch1 to ch2']);
    expect((await readAll(recording)).columns).toEqual([[1, 3], [2, 4]]);
  });

  it('names channels with an empty header field ch<n>', async () => {
    const path = csvFile('time,,b\n0,1,2\n1,3,4\n');
    const recording = await openCsv(path);
    expect(recording.channels.map((c) => c.name)).toEqual(['ch1', 'b']);
  });

  it('tolerates a separator at the end of every line when the header has one too', async () => {
    const path = csvFile('a;b;\n1;2;\n3;4\n');
    const recording = await openCsv(path, { sampleRate: 1 });
    expect((await readAll(recording)).columns).toEqual([[1, 3], [2, 4]]);
  });

  it('refuses two columns with the same name', async () => {
    const path = csvFile('time,a,b,a\n0,1,2,3\n');
    const err = await errorOf(openCsv(path));
    expect(err).toBeInstanceOf(RecordingError);
    expect(err.message).toBe(`Cannot read "${path}": columns 2 and 4 are both named "a"`);
  });

  it.each([
    ['an empty file', '', 'the file is empty'],
    ['a header without rows', 'time,a\n', 'has a header row but no data rows'],
    ['a blank first line', '\n1,2\n', 'line 1 is blank; the first line must be the header row'],
    ['only a time column', 'time\n0\n1\n', 'has no channel columns besides the time column'],
    ['a time column with one row', 'time,a\n0,1\n', 'the time column needs at least two data rows to give the sample rate'],
    ['an unclosed quote in the header', 'a,"b\n1,2\n', 'line 1: a quoted field of the header is not closed'],
    ['text after a closing quote', 'a,"b"c\n1,2\n', 'line 1: unexpected text after the closing quote of column 2'],
    ['bare carriage returns', 'a,b\r1,2\r3,4\r', 'uses carriage returns alone as line breaks (classic Mac OS); convert it to LF or CRLF line breaks'],
    ['NUL characters', 'a\u0000b\n1\n', 'is not a text file (it holds NUL characters)'],
    ['a time column in minutes', 'time [min],a\n0,1\n1,2\n', 'the time column "time [min]" has unit "min"; times must be in s, ms or µs'],
  ])('refuses %s', async (_label, content, detail) => {
    const path = csvFile(content);
    const err = await errorOf(openCsv(path, { sampleRate: 100 }));
    expect(err).toBeInstanceOf(RecordingError);
    expect(err.message).toBe(`Cannot read "${path}": ${detail}`);
  });

  it('says when the file does not exist', async () => {
    const path = join(dir, 'missing.csv');
    const err = await errorOf(openCsv(path, { sampleRate: 1 }));
    expect(err.message).toBe(`Cannot read "${path}": file not found`);
  });
});

describe('openCsv() takes the sample rate from a time column or the options', () => {
  it('uses the time column named by timeColumn wherever it is, and excludes it from the channels', async () => {
    const path = csvFile('a,stamp,b\n1,10.0,2\n3,10.5,4\n5,11.0,6\n');
    const recording = await openCsv(path, { timeColumn: 'stamp' });
    expect(recording.sampleRate).toBe(2);
    expect(recording.channels).toEqual([
      { index: 0, name: 'a' },
      { index: 1, name: 'b' },
    ]);
    expect((await readAll(recording)).columns).toEqual([[1, 3, 5], [2, 4, 6]]);
  });

  it('lists the columns when timeColumn names none of them', async () => {
    const path = csvFile('time,acc-01 [g]\n0,1\n1,2\n');
    const err = await errorOf(openCsv(path, { timeColumn: 'tme' }));
    expect(err.message).toBe(`Cannot read "${path}": no column named "tme" (columns: "time", "acc-01 [g]")`);
  });

  it.each(['t', 'TIME', 'time_s', 'Time [s]', 'time (s)', 'Seconds'])(
    'recognises a first column named %s as time in seconds',
    async (name) => {
      const path = csvFile(`${name},a\n0,1\n0.25,2\n`);
      expect((await openCsv(path)).sampleRate).toBe(4);
    },
  );

  it('reads a time column in milliseconds', async () => {
    const path = csvFile('time [ms],a\n0,1\n0.5,2\n1,3\n');
    expect((await openCsv(path)).sampleRate).toBe(2000);
  });

  it('treats a column called time that is not first as a channel', async () => {
    const path = csvFile('a,time\n1,2\n');
    const recording = await openCsv(path, { sampleRate: 8 });
    expect(recording.channels.map((c) => c.name)).toEqual(['a', 'time']);
  });

  it('refuses a file without time column or sample rate', async () => {
    const path = csvFile('acc-01,acc-02\n1,2\n');
    const err = await errorOf(openCsv(path));
    expect(err).toBeInstanceOf(RecordingError);
    expect(err.message).toBe(
      `Cannot read "${path}": no time column and no sample rate (give --sample-rate or a sidecar with sample-rate)`,
    );
  });

  it('uses options.sampleRate without a time column', async () => {
    const path = csvFile('acc-01,acc-02\n1,2\n');
    expect((await openCsv(path, { sampleRate: 51200 })).sampleRate).toBe(51200);
  });

  it('refuses a sample rate that is not a positive number as a usage error', async () => {
    const path = csvFile('a\n1\n');
    const err = await errorOf(openCsv(path, { sampleRate: -5 }));
    expect(err).toBeInstanceOf(UsageError);
    expect(err.message).toBe('The sample rate must be a positive number of hertz, not -5');
  });

  it('takes a whole-number rate when times rounded to 6 decimals cannot tell it from 1/dt', async () => {
    // 1/2048 s = 0.00048828125 s: printed with 6 decimals each time is off by up to
    // 0.5 µs, more than 0.1 % of dt, yet no interval may count as irregular.
    const rows = Array.from({ length: 5000 }, (_, k) => `${(k / 2048).toFixed(6)},${k}`);
    const path = csvFile(['time,a', ...rows].join('\n'));
    const recording = await openCsv(path);
    expect(recording.sampleRate).toBe(2048);
    const { columns } = await readAll(recording);
    expect(columns[0].length).toBe(5000);
    expect(recording.notes).toEqual([]);
  });

  it('prefers a given sample rate that the rounded time column agrees with', async () => {
    const rows = Array.from({ length: 10 }, (_, k) => `${(k / 3000).toFixed(4)},${k}`);
    const path = csvFile(['time,a', ...rows].join('\n'));
    expect((await openCsv(path, { sampleRate: 3000 })).sampleRate).toBe(3000);
  });

  it('refuses a given sample rate that the time column contradicts', async () => {
    const path = csvFile('time,a\n0,1\n0.5,2\n1,3\n');
    const err = await errorOf(openCsv(path, { sampleRate: 1000 }));
    expect(err.message).toBe(`Cannot read "${path}": the time column gives 2 Hz but the sample rate given is 1000 Hz`);
  });

  it('notes intervals of the time column that differ from 1/rate: a lost sample', async () => {
    // 2048 Hz, 300 rows, the sample at k = 117 missing: line 1 is the header and sample k
    // sits on line k + 2, so the gap is between lines 118 (k = 116) and 119 (k = 118).
    const rows: string[] = [];
    for (let k = 0; k < 300; k++) if (k !== 117) rows.push(`${k / 2048},${k}`);
    const path = csvFile(['time,a', ...rows].join('\n') + '\n');
    const recording = await openCsv(path);
    expect(recording.sampleRate).toBe(2048);
    expect(recording.notes).toEqual([]); // known only once the data has been read
    await readAll(recording);
    expect(recording.notes).toEqual([
      'time column: 1 interval differs from 1/2048 s by more than 0.1 % (beyond the rounding of the printed times); ' +
        'the worst is 0.000976563 s, between lines 118 and 119',
    ]);
    await readAll(recording); // a second reading does not repeat the note
    expect(recording.notes.length).toBe(1);
  });

  it('counts every irregular interval and reports the worst', async () => {
    const times = [0, 0.01, 0.02, 0.0302, 0.04, 0.05, 0.065, 0.07];
    const path = csvFile(['t,a', ...times.map((t) => `${t},0`)].join('\n'));
    const recording = await openCsv(path, { sampleRate: 100 });
    await readAll(recording);
    // Intervals 0.0102, 0.0098 (at 0.0302), 0.015, 0.005 (at 0.065) all exceed
    // 0.1 % of 0.01 s plus half of each printed time's last digit.
    expect(recording.notes).toEqual([
      'time column: 4 intervals differ from 1/100 s by more than 0.1 % (beyond the rounding of the printed times); ' +
        'the worst is 0.015 s, between lines 7 and 8',
    ]);
  });

  it('refuses a time column that goes back, naming the line', async () => {
    // Row 5000 is past the rows read when opening, so this shows while reading blocks.
    const rows = Array.from({ length: 6000 }, (_, k) => `${(k === 5000 ? 4998 : k) / 1000},1`);
    const path = csvFile(['time,a', ...rows].join('\n'));
    const recording = await openCsv(path);
    const err = await errorOf(readAll(recording));
    expect(err).toBeInstanceOf(RecordingError);
    expect(err.message).toBe(
      `Cannot read "${path}": line 5002: the time column does not increase (4.999 on line 5001, then 4.998)`,
    );
  });

  it('refuses a repeated time among the first rows when opening', async () => {
    const path = csvFile('time,a\n0,1\n0.5,2\n0.5,3\n');
    const err = await errorOf(openCsv(path));
    expect(err.message).toBe(`Cannot read "${path}": line 4: the time column does not increase (0.5 on line 3, then 0.5)`);
  });

  it('refuses a time that is not finite', async () => {
    const path = csvFile('time,a\n0,1\nNaN,2\n');
    const err = await errorOf(openCsv(path));
    expect(err.message).toBe(`Cannot read "${path}": line 3, column "time": the time is NaN, not a finite number`);
  });
});

describe('openCsv() reads values and refuses malformed rows', () => {
  it('reads NaN and infinity words as the non-finite values they stand for', async () => {
    const words = ['NaN', 'nan', '-nan', 'Inf', '+Inf', '-Inf', 'inf', 'Infinity', '-infinity'];
    const path = csvFile(['a', ...words].join('\n'));
    const { columns } = await readAll(await openCsv(path, { sampleRate: 1 }));
    expect(columns[0]).toEqual([NaN, NaN, NaN, Infinity, Infinity, -Infinity, Infinity, Infinity, -Infinity]);
  });

  it('reads numbers exactly as ECMAScript Number() does, in any notation', async () => {
    // ECMA-262 StringToNumber rounds the decimal to the nearest double; the reader's own
    // fast path must agree bit for bit, in shortest, fixed and exponent notation.
    const doubles = fc.double({ noNaN: true, noDefaultInfinity: true });
    const texts = fc.oneof(
      doubles.map((x) => String(x)),
      fc.tuple(doubles, fc.integer({ min: 0, max: 20 })).map(([x, d]) => x.toExponential(d)),
      fc.tuple(fc.double({ min: -1e6, max: 1e6, noNaN: true }), fc.integer({ min: 0, max: 20 })).map(([x, d]) => x.toFixed(d)),
      fc.stringMatching(/^[+-]?[0-9]{1,25}(\.[0-9]{0,25})?([eE][+-]?[0-9]{1,3})?$/),
    );
    const samples = fc.sample(texts, { numRuns: 4000, seed: 20240611 });
    const path = csvFile(['a', ...samples].join('\n'));
    const { columns } = await readAll(await openCsv(path, { sampleRate: 1 }));
    const expected = samples.map((s) => Number(s));
    for (let k = 0; k < samples.length; k++) {
      if (!Object.is(columns[0][k], expected[k])) {
        throw new Error(`"${samples[k]}" read as ${columns[0][k]}, Number() gives ${expected[k]}`);
      }
    }
  });

  it('refuses an empty field, naming line and column', async () => {
    const path = csvFile('time,acc-01,acc-02\n0,1,2\n1,,3\n');
    const err = await errorOf(readCsv(path));
    expect(err.message).toBe(`Cannot read "${path}": line 3, column "acc-01": the field is empty`);
  });

  it.each(['1.2.3', '0x10', '1e', '--1', '1_000', '12 3', '.'])(
    'refuses the text %j as a number',
    async (text) => {
      const rows = Array.from({ length: 16 }, (_, k) => (k === 15 ? `${k},1,${text}` : `${k},1,2`));
      const path = csvFile(['time,acc-01,acc-02', ...rows].join('\n'));
      const err = await errorOf(readCsv(path));
      expect(err).toBeInstanceOf(RecordingError);
      expect(err.message).toBe(`Cannot read "${path}": line 17, column "acc-02": "${text}" is not a number`);
    },
  );

  it('refuses a row with too many fields, with both counts', async () => {
    const path = csvFile('time,a,b\n0,1,2\n1,3,4,5,6\n');
    const err = await errorOf(readCsv(path));
    expect(err.message).toBe(`Cannot read "${path}": line 3 has 5 fields but the header has 3`);
  });

  it('refuses a row with too few fields, with both counts', async () => {
    const path = csvFile('time,a,b\n0,1,2\n1,3\n');
    const err = await errorOf(readCsv(path));
    expect(err.message).toBe(`Cannot read "${path}": line 3 has 2 fields but the header has 3`);
  });

  it('accepts blank lines at the end of the file', async () => {
    const path = csvFile('time,a\n0,1\n1,2\n\n\n   \n');
    expect((await readAll(await openCsv(path))).columns).toEqual([[1, 2]]);
  });

  it('refuses a blank line followed by more data', async () => {
    const path = csvFile('time,a\n0,1\n\n1,2\n');
    const err = await errorOf(readCsv(path));
    expect(err.message).toBe(`Cannot read "${path}": line 3 is blank but data follows on line 4`);
  });

  it('refuses decimal commas unless asked to read them', async () => {
    const path = csvFile('time;acc\n0;0,125\n0,5;-1,5E-3\n');
    const err = await errorOf(openCsv(path));
    expect(err.message).toBe(`Cannot read "${path}": line 2 uses a decimal comma ("0,125"); pass --decimal-comma to read it`);
  });

  it('reads decimal commas with decimalComma', async () => {
    const path = csvFile('time;acc\n0;0,125\n0,5;-1,5E-3\n');
    const recording = await openCsv(path, { decimalComma: true });
    expect(recording.sampleRate).toBe(2);
    expect((await readAll(recording)).columns).toEqual([[0.125, -0.0015]]);
  });

  it('refuses a decimal point where decimal commas were asked for', async () => {
    const path = csvFile('a;b\n1,5;2.5\n');
    const err = await errorOf(readCsv(path, { decimalComma: true, sampleRate: 1 }));
    expect(err.message).toBe(`Cannot read "${path}": line 2, column "b": "2.5" has a decimal point, but decimal commas were asked for`);
  });

  it('refuses decimalComma for a comma-separated file', async () => {
    const path = csvFile('a,b\n1,2\n');
    const err = await errorOf(openCsv(path, { decimalComma: true, sampleRate: 1 }));
    expect(err.message).toBe(
      `Cannot read "${path}": decimal commas need ";" or a tab as the field separator, but the header is separated by ","`,
    );
  });
});

describe('openCsv() streams in blocks', () => {
  it('gives the same samples in blocks of 3 frames as in blocks of 65536', async () => {
    const rows = Array.from({ length: 100 }, (_, k) => `${k / 512},${Math.sin(k)},${k}`);
    const path = csvFile(['time,a,b', ...rows].join('\n'));
    const recording = await openCsv(path);
    const small = await readAll(recording, 3);
    const large = await readAll(recording, 65536);
    expect(small.columns).toEqual(large.columns);
    expect(small.starts).toEqual(Array.from({ length: 34 }, (_, k) => 3 * k));
    expect(large.starts).toEqual([0]);
    expect(large.columns[1]).toEqual(Array.from({ length: 100 }, (_, k) => k));
  });

  it('refuses a blockFrames that is not a positive whole number', async () => {
    const path = csvFile('a\n1\n');
    const recording = await openCsv(path, { sampleRate: 1 });
    const err = await errorOf(readAll(recording, 0));
    expect(err).toBeInstanceOf(UsageError);
    expect(err.message).toBe('blockFrames must be a whole number of sample frames, at least 1, not 0');
  });

  it('streams a file many times its 1 MiB chunk with bounded read buffers', async () => {
    // About 12 MiB: 300 000 rows of a time and four values, CRLF line breaks so that
    // chunk boundaries fall between \r and \n as well as inside rows.
    const path = join(dir, 'large.csv');
    const rowsTotal = 300_000;
    await new Promise<void>((resolve, reject) => {
      const out = createWriteStream(path);
      out.on('error', reject);
      out.write('time,a,b,c,d\r\n');
      let k = 0;
      const writeSome = (): void => {
        let ok = true;
        while (k < rowsTotal && ok) {
          let lines = '';
          for (let j = 0; j < 1000 && k < rowsTotal; j++, k++) {
            lines += `${k / 4096},${k},${-k * 0.5},${(k % 97) / 7},${k * 1e-9}\r\n`;
          }
          ok = out.write(lines);
        }
        if (k < rowsTotal) out.once('drain', writeSome);
        else out.end(resolve);
      };
      writeSome();
    });
    const meter = new ReadMeter();
    const recording = await openCsv(path, { meter });
    expect(recording.sampleRate).toBe(4096);
    let frames = 0;
    let sumA = 0;
    let lastProgress = 0;
    for await (const block of recording.blocks({ blockFrames: 10_000, onProgress: (read) => (lastProgress = read) })) {
      for (let i = 0; i < block.length; i++) {
        if (block.channels[0][i] !== block.start + i) throw new Error(`frame ${block.start + i} read wrong`);
        sumA += block.channels[0][i];
      }
      frames += block.length;
    }
    expect(frames).toBe(rowsTotal);
    expect(sumA).toBe((rowsTotal * (rowsTotal - 1)) / 2);
    expect(recording.notes).toEqual([]);
    expect(meter.held).toBe(0);
    expect(meter.reads).toBeGreaterThan(12);
    // One 1 MiB read buffer plus the text of one chunk (2 bytes a character).
    expect(meter.peakHeld).toBeLessThan(4 * 1024 * 1024);
    const { size } = await import('node:fs/promises').then((m) => m.stat(path));
    expect(size).toBeGreaterThan(3 * meter.peakHeld);
    expect(lastProgress).toBe(size);
  });
});
