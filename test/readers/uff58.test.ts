import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import { readFileSync, rmSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { looksLikeUff, openUff58 } from '../../src/readers/uff58.js';
import { openWav } from '../../src/readers/wav.js';
import { applySidecar } from '../../src/readers/sidecar.js';
import { ReadMeter } from '../../src/readers/types.js';
import type { BlockOptions, Recording } from '../../src/readers/types.js';
import { RecordingError, UsageError } from '../../src/errors.js';
import { buildWav, FORMAT_FLOAT, interleave } from '../helpers/wav-writer.js';
import { statsOf } from '../helpers/summarise.js';
import { gaussian } from '../helpers/random.js';
import {
  dataset151,
  dataset164,
  dataset58,
  fixtureDir,
  formatE,
  printedValues,
  textDataset,
  uffFile,
  writeFixture,
  type Precision,
  type Uff58Encoding,
  type Uff58Spec,
} from '../helpers/uff-writer.js';

let dir = '';
beforeAll(async () => {
  dir = await fixtureDir();
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

let fileNumber = 0;
async function uff(bytes: Uint8Array | string, name?: string): Promise<string> {
  fileNumber += 1;
  return writeFixture(dir, name ?? `f${fileNumber}.uff`, bytes);
}

async function readColumns(recording: Recording, options: BlockOptions = {}): Promise<number[][]> {
  const columns: number[][] = recording.channels.map(() => []);
  let expectedStart = options.startFrame ?? 0;
  for await (const block of recording.blocks(options)) {
    expect(block.start).toBe(expectedStart);
    expectedStart += block.length;
    block.channels.forEach((values, c) => {
      expect(values.length).toBe(block.length);
      for (const v of values) columns[c].push(v);
    });
  }
  return columns;
}

async function errorOf(promise: Promise<unknown>): Promise<Error> {
  try {
    await promise;
  } catch (err) {
    return err as Error;
  }
  throw new Error('expected a rejection');
}

async function messageOf(promise: Promise<unknown>): Promise<string> {
  const err = await errorOf(promise);
  expect(err).toBeInstanceOf(RecordingError);
  return err.message;
}

/** The values of a time channel as the reader should deliver them for each storage. */
function stored(values: ArrayLike<number>, precision: Precision, binary: boolean): number[] {
  if (!binary) return Array.from(printedValues(values, precision));
  return precision === 'single' ? Array.from(values, (v) => Math.fround(v)) : Array.from(values);
}

/** A sine of `cycles` whole cycles over n samples. */
function sine(n: number, cycles: number, amplitude: number): number[] {
  return Array.from({ length: n }, (_, k) => amplitude * Math.sin((2 * Math.PI * cycles * k) / n));
}

// ---------------------------------------------------------------------------------------
// Hand-written fixtures, from the public description of dataset 58 (UC SDRL "Universal
// Dataset Number 58"): records 1–5 ID lines, record 6 (I5,I10,I5,I10,1X,A10,I10,I4,1X,A10,
// I10,I4), record 7 (3I10,3E13.5), records 8–11 (I10,3I5,2(1X,A20)), data 6E13.5 / 4E20.12.

const RECORD_8_TIME = '        17    0    0    0 Time                 s                   ';
const RECORD_UNUSED = '         0    0    0    0 NONE                 NONE                ';

/** Two ASCII datasets as real files vary: CRLF, trailing blanks, D exponents, touching numbers. */
const ASCII_FIXTURE = [
  '    -1',
  '    58   ',
  'front-x',
  'NONE',
  'NONE',
  'NONE',
  '15-MAR-24 09:30:00',
  '    1         1    1         0 NONE              12   3 NONE               0   0',
  '         2         8         1  0.00000E+00  9.76563E-04  0.00000E+00',
  RECORD_8_TIME,
  '        12    1    0    0 Acceleration         m/s^2               ',
  RECORD_UNUSED,
  RECORD_UNUSED,
  // E13.6 fields fill all 13 columns, so negative numbers touch their neighbour
  ' 1.000000E+00-2.500000E-01 3.125000E-02 0.000000E+00-1.000000E+00 5.000000E-01',
  // Fortran's E13.5 without a scale factor: 0.ddddd mantissas
  '  0.75000E+00 -0.12500E+01      ',
  '    -1',
  '    -1',
  '    58',
  'rear-y',
  'NONE',
  'NONE',
  'NONE',
  '15-MAR-24 09:30:00',
  '    1         2    1         0 NONE              14  -2 NONE               0   0',
  // the increment printed with 13 digits and D exponents (wider than E13.5 allows)
  '         4         8         1  0.000000000000D+00  9.765625000000D-04  0.000000000000D+00',
  RECORD_8_TIME,
  // "m/s²": the superscript two is two bytes of UTF-8 within the 20 columns
  '        12    1    0    0 Acceleration         m/s²               ',
  RECORD_UNUSED,
  RECORD_UNUSED,
  '  1.000000000000D+00 -2.500000000000D-01  3.125000000000D-02  1.000000000000D-03',
  ' -1.000000000000D+00  5.000000000000D-01  7.500000000000D-01 -1.250000000000D+00   ',
  '    -1',
].join('\r\n') + '\r\n';

describe('openUff58() reads hand-written files', () => {
  it('reads two ASCII datasets with CRLF, trailing blanks, D exponents and touching numbers', async () => {
    const path = await uff(ASCII_FIXTURE);
    const recording = await openUff58(path);
    expect(recording.format).toBe('uff58');
    // 9.76563E-04 s is 1/1024 s to 6 significant digits; 9.765625000000D-04 is exact
    expect(recording.sampleRate).toBe(1024);
    expect(recording.sampleCount).toBe(8);
    expect(recording.sampleFormat).toBe('float64'); // one real single, one real double
    expect(recording.channels).toEqual([
      { index: 0, name: 'front-x', unit: 'm/s^2' },
      { index: 1, name: 'rear-y', unit: 'm/s²' },
    ]);
    expect(await readColumns(recording)).toEqual([
      [1, -0.25, 0.03125, 0, -1, 0.5, 0.75, -1.25],
      [1, -0.25, 0.03125, 0.001, -1, 0.5, 0.75, -1.25],
    ]);
    expect(recording.notes).toEqual([
      'response node and direction (record 6) of each channel: "front-x" 12+Z, "rear-y" 14-Y',
      `record 7 of dataset 1 "front-x" (line 2) gives the sampling interval as 9.76563E-04 s; the sample rate is ` +
        'taken as 1024 Hz, the whole number of hertz within the rounding of that printing',
    ]);
  });

  it('reads a 58b dataset whose bytes are written by hand as IEEE 754 big-endian singles', async () => {
    // IEEE 754 binary32: 1.5 = 3FC00000, −2 = C0000000, 0.25 = 3E800000, 3 = 40400000 (from memory, derivable)
    const header = [
      '    -1',
      '    58b     2     2          11          16     0     0           0           0',
      'shaker force',
      'NONE',
      'NONE',
      'NONE',
      'NONE',
      '    1         1    1         0 FORC               3   0 NONE               0   0',
      '         2         4         1  5.00000E-01  1.00000E-03  0.00000E+00',
      RECORD_8_TIME,
      '        13    0    1    0 Force                N                   ',
      RECORD_UNUSED,
      RECORD_UNUSED,
    ].join('\n') + '\n';
    const bytes = Buffer.concat([
      Buffer.from(header, 'latin1'),
      Buffer.from('3fc00000c00000003e80000040400000', 'hex'),
      Buffer.from('    -1\n', 'latin1'), // the closing -1 right after the binary data
    ]);
    const path = await uff(bytes);
    const recording = await openUff58(path);
    expect(recording.sampleRate).toBe(1000);
    expect(recording.sampleCount).toBe(4);
    expect(recording.sampleFormat).toBe('float32');
    expect(recording.channels).toEqual([{ index: 0, name: 'shaker force', unit: 'N' }]);
    expect(await readColumns(recording)).toEqual([[1.5, -2, 0.25, 3]]);
    expect(recording.notes).toEqual([
      'response node and direction (record 6) of each channel: "shaker force" 3',
      'the time axis starts at 0.5 s (abscissa minimum, record 7), not at 0',
    ]);
  });

  it("reads Fortran's letterless exponents, NaN and Inf in the data", async () => {
    const text = dataset58({ values: [0, 0, 0, 0, 0, 0], name: 'x' }).toString('utf8').replace(
      /^( +0\.00000E\+00){6}$/m,
      '  1.00000-100  2.50000+100          NaN          Inf         -Inf -3.00000E+00',
    );
    const recording = await openUff58(await uff(text));
    expect(await readColumns(recording)).toEqual([[1e-100, 2.5e100, NaN, Infinity, -Infinity, -3]]);
  });

  it('leaves the file as it was (opened for reading only)', async () => {
    const path = await uff(ASCII_FIXTURE);
    const before = createHash('sha256').update(readFileSync(path)).digest('hex');
    const mtime = statSync(path).mtimeMs;
    await readColumns(await openUff58(path));
    expect(createHash('sha256').update(readFileSync(path)).digest('hex')).toBe(before);
    expect(statSync(path).mtimeMs).toBe(mtime);
  });
});

// ---------------------------------------------------------------------------------------
// Round trips through the writer, against the same values in a float64 WAV.

interface Case {
  title: string;
  precision: Precision;
  binary?: Uff58Encoding['binary'];
  /** Relative error of the stored values against the originals (printing or float32). */
  rmsTolerance: number;
}

const CASES: Case[] = [
  // 6 significant digits: each value within 5e-6 relative
  { title: 'ASCII real single (6E13.5)', precision: 'single', rmsTolerance: 1e-5 },
  // 13 significant digits
  { title: 'ASCII real double (4E20.12)', precision: 'double', rmsTolerance: 1e-12 },
  // float32 keeps 24 bits: within 2^-24 relative
  { title: '58b real single, little-endian', precision: 'single', binary: { byteOrder: 1 }, rmsTolerance: 1e-7 },
  { title: '58b real single, big-endian', precision: 'single', binary: { byteOrder: 2 }, rmsTolerance: 1e-7 },
  { title: '58b real double, little-endian', precision: 'double', binary: { byteOrder: 1 }, rmsTolerance: 1e-14 },
  { title: '58b real double, big-endian', precision: 'double', binary: { byteOrder: 2, lineBreakAfterData: true }, rmsTolerance: 1e-14 },
];

describe.each(CASES)('openUff58() round trip: $title', ({ precision, binary, rmsTolerance }) => {
  const n = 3072; // 1.5 s at 2048 Hz
  const rate = 2048;
  // 48 whole cycles of period 64 samples: RMS = A/√2, peak = A, kurtosis = 1.5 (references.md §3)
  const channelValues = [sine(n, 48, 0.75), Array.from(gaussian(n, 11, 2.5)), sine(n, 48, -3).map((v, k) => v + (k % 2) * 1e-3)];

  it('reads one channel to the values written, its name, unit and sample rate', async () => {
    const spec: Uff58Spec = { values: channelValues[0], precision, name: 'acc-01', unit: 'g', increment: 1 / rate };
    const recording = await openUff58(await uff(uffFile(dataset58(spec, { binary }))));
    expect(recording.sampleRate).toBe(rate);
    expect(recording.sampleCount).toBe(n);
    expect(recording.sampleFormat).toBe(precision === 'single' ? 'float32' : 'float64');
    expect(recording.channels).toEqual([{ index: 0, name: 'acc-01', unit: 'g' }]);
    const [column] = await readColumns(recording, { blockFrames: 1000 });
    expect(column).toEqual(stored(channelValues[0], precision, binary !== undefined));
    const stats = statsOf(column, { sampleRate: rate });
    // closed forms for a sampled sine of whole cycles (references.md §3)
    expect(Math.abs(stats.rms / (0.75 / Math.SQRT2) - 1)).toBeLessThan(rmsTolerance);
    expect(Math.abs(stats.kurtosis - 1.5)).toBeLessThan(rmsTolerance * 10);
  });

  it('reads three channels to the same statistics as a float64 WAV of the stored values', async () => {
    const specs: Uff58Spec[] = channelValues.map((values, c) => ({
      values,
      precision,
      name: `ch-${c}`,
      unit: ['m/s^2', 'N', 'Pa'][c],
      increment: 1 / rate,
      node: c + 1,
      direction: 3,
    }));
    const path = await uff(uffFile(dataset151(), ...specs.map((s) => dataset58(s, { binary }))));
    const recording = await openUff58(path);
    expect(recording.channels.map((c) => [c.name, c.unit])).toEqual([
      ['ch-0', 'm/s^2'],
      ['ch-1', 'N'],
      ['ch-2', 'Pa'],
    ]);
    const columns = await readColumns(recording, { blockFrames: 777 });
    const expected = channelValues.map((v) => stored(v, precision, binary !== undefined));
    expect(columns).toEqual(expected);

    // the same values through the WAV reader, an independent path (IEEE float WAV, 64-bit)
    const wav = buildWav({
      fmt: { formatTag: FORMAT_FLOAT, channels: 3, sampleRate: rate, bitsPerSample: 64 },
      data: interleave('float64', expected),
    });
    const fromWav = await readColumns(await openWav(await uff(wav, `f${fileNumber}.wav`)), { blockFrames: 4096 });
    for (let c = 0; c < 3; c++) {
      expect(statsOf(columns[c], { sampleRate: rate, frameSamples: 512 })).toEqual(
        statsOf(fromWav[c], { sampleRate: rate, frameSamples: 512 }),
      );
    }
  });
});

// ---------------------------------------------------------------------------------------
// What is a channel, and what is skipped.

describe('openUff58() picks the time histories', () => {
  it('skips other datasets, complex ones and spectra, with a note for each kind', async () => {
    const values = [1, 2, 3, 4, 5, 6, 7, 8];
    const path = await uff(
      uffFile(
        dataset151(), // lines 1–10, number at line 2
        dataset164(), // lines 11–16, number at line 12
        dataset58({ values, name: 'H-complex', ordinateType: 5 }), // lines 17–32
        dataset58({ values, name: 'H1', functionType: 4, abscissaType: 18 }), // lines 33–48
        dataset58({ values, name: 'acc', unit: 'g' }),
      ),
    );
    const recording = await openUff58(path);
    expect(recording.channels).toEqual([{ index: 0, name: 'acc', unit: 'g' }]);
    expect(await readColumns(recording)).toEqual([values]);
    expect(recording.notes).toEqual([
      'skipped 2 datasets other than 58: 1 (151 at line 2), 2 (164 at line 12)',
      'skipped 1 dataset 58 with complex ordinates (record 7): 3 "H-complex" (line 18), data type 5',
      'skipped 1 dataset 58 that is not a time history (record 6 function type 1 or record 8 abscissa data type 17 expected): ' +
        '4 "H1" (line 34), function type 4, abscissa data type 18',
    ]);
  });

  it('takes abscissa data type 0 as time when record 6 says time response', async () => {
    const path = await uff(dataset58({ values: [1, 2], name: 'a', abscissaType: 0, functionType: 1 }));
    expect((await openUff58(path)).channels.map((c) => c.name)).toEqual(['a']);
  });

  it('refuses a file without a time history, saying what it skipped', async () => {
    const path = await uff(uffFile(dataset151(), dataset58({ values: [1, 2], name: 'H1', functionType: 4, abscissaType: 18 })));
    expect(await messageOf(openUff58(path))).toBe(
      `Cannot read "${path}": holds no dataset 58 time history with real values ` +
        '(skipped 1 dataset other than 58: 1 (151 at line 2); skipped 1 dataset 58 that is not a time history ' +
        '(record 6 function type 1 or record 8 abscissa data type 17 expected): 2 "H1" (line 12), function type 4, abscissa data type 18)',
    );
  });

  it('refuses channels of different length or sample rate, naming both datasets', async () => {
    const path = await uff(
      uffFile(
        dataset58({ values: sine(64, 1, 1), name: 'front-x', increment: 1 / 2048 }), // lines 1–25
        dataset151(), // lines 26–35
        dataset58({ values: sine(32, 1, 1), name: 'rear-x', increment: 1 / 1024 }), // opening at 36, number at 37
      ),
    );
    expect(await messageOf(openUff58(path))).toBe(
      `Cannot read "${path}": dataset 3 "rear-x" (line 37) has 32 values at 1024 Hz, but dataset 1 "front-x" (line 2) ` +
        'has 64 at 2048 Hz; the channels of one recording must share sample rate and length',
    );
  });

  it('takes sample rates 1e-9 apart as one rate, and 1e-8 apart as two', async () => {
    const values = [1, 2, 3];
    const same = await uff(
      uffFile(
        dataset58({ values, name: 'a', incrementText: ' 1.000000000000E-03' }),
        dataset58({ values, name: 'b', incrementText: ' 1.000000000500E-03' }),
      ),
    );
    expect((await openUff58(same)).sampleRate).toBe(1000);
    const apart = await uff(
      uffFile(
        dataset58({ values, name: 'a', incrementText: ' 1.000000000000E-03' }),
        dataset58({ values, name: 'b', incrementText: ' 1.000000010000E-03' }),
      ),
    );
    expect(await messageOf(openUff58(apart))).toBe(
      `Cannot read "${apart}": dataset 2 "b" (line 17) has 3 values at 999.99999 Hz, but dataset 1 "a" (line 2) ` +
        'has 3 at 1000 Hz; the channels of one recording must share sample rate and length',
    );
  });

  it('reports a rate that is no whole number of hertz as 1/increment', async () => {
    const path = await uff(dataset58({ values: [1, 2], name: 'a', incrementText: ' 3.00000E-04' }));
    const recording = await openUff58(path);
    expect(recording.sampleRate).toBe(1 / 3e-4);
    expect(recording.notes).toEqual([]);
  });

  it('names a float32 and a float64 channel together float64', async () => {
    const path = await uff(
      uffFile(dataset58({ values: [1], name: 'a' }), dataset58({ values: [2], name: 'b', precision: 'double' }, { binary: {} })),
    );
    const recording = await openUff58(path);
    expect(recording.sampleFormat).toBe('float64');
    expect(await readColumns(recording)).toEqual([[1], [2]]);
  });

  it('keeps a start time shared by the channels, and lists differing ones', async () => {
    const same = await uff(
      uffFile(dataset58({ values: [1], name: 'a', abscissaMin: 2.5 }), dataset58({ values: [1], name: 'b', abscissaMin: 2.5 })),
    );
    expect((await openUff58(same)).notes).toEqual(['the time axis starts at 2.5 s (abscissa minimum, record 7), not at 0']);
    const differing = await uff(uffFile(dataset58({ values: [1], name: 'a' }), dataset58({ values: [1], name: 'b', abscissaMin: 0.125 })));
    expect((await openUff58(differing)).notes).toEqual([
      `the channels' time axes start at different times (abscissa minimum, record 7): "a" 0 s, "b" 0.125 s`,
    ]);
  });
});

describe('openUff58() names channels', () => {
  it('uses <node><direction> from record 6 when ID line 1 is NONE, and chN without a node', async () => {
    // direction codes: 1..3 +X +Y +Z, 4..6 rotations, negative codes the negative directions, 0 scalar
    const directions = [1, 2, 3, 4, 5, 6, -1, -2, -3, -4, -5, -6, 0, 7];
    const path = await uff(
      uffFile(dataset58({ values: [0] }), ...directions.map((direction) => dataset58({ values: [0], node: 5, direction }))),
    );
    expect((await openUff58(path)).channels.map((c) => c.name)).toEqual([
      'ch1', '5+X', '5+Y', '5+Z', '5+RX', '5+RY', '5+RZ', '5-X', '5-Y', '5-Z', '5-RX', '5-RY', '5-RZ', '5', '5:7',
    ]);
  });

  it('makes repeated ID lines unique with node and direction, else the channel number', async () => {
    const path = await uff(
      uffFile(
        dataset58({ values: [0], name: 'Time Response', node: 1, direction: 1 }),
        dataset58({ values: [0], name: 'Time Response', node: 2, direction: 2 }),
        dataset58({ values: [0], name: 'Time Response' }),
        dataset58({ values: [0], name: 'other' }),
      ),
    );
    const recording = await openUff58(path);
    expect(recording.channels.map((c) => c.name)).toEqual(['Time Response 1+X', 'Time Response 2+Y', 'Time Response #3', 'other']);
    expect(recording.notes).toEqual([
      'channel names repeat ("Time Response" (3 datasets)); they are made unique with the response node and direction (record 6) or the channel number',
    ]);
  });

  it('leaves the unit out when record 9 says NONE', async () => {
    const recording = await openUff58(await uff(dataset58({ values: [0], name: 'a', unit: 'NONE' })));
    expect(recording.channels).toEqual([{ index: 0, name: 'a' }]);
  });
});

describe('openUff58() and uneven abscissa spacing', () => {
  const n = 64;
  const times = Array.from({ length: n }, (_, k) => k / 1024);
  const values = sine(n, 2, 1);

  it.each([
    ['ASCII real single (x printed 6 digits)', 'single', undefined],
    ['ASCII real double (2(E13.5,E20.12))', 'double', undefined],
    ['58b real single (float32 x)', 'single', {}],
    ['58b real double with float64 x', 'double', { abscissaBytes: 8 }],
    ['58b real double with float32 x', 'double', { abscissaBytes: 4 }],
  ] as const)('reads %s as evenly sampled when the x values are even, with a note', async (_, precision, binary) => {
    const path = await uff(
      dataset58({ values, precision, name: 'acc', abscissa: times, increment: 1 / 1024 }, { binary: binary && { ...binary } }),
    );
    const recording = await openUff58(path);
    expect(recording.sampleRate).toBe(1024);
    expect(recording.sampleCount).toBe(n);
    expect(await readColumns(recording, { blockFrames: 5 })).toEqual([stored(values, precision, binary !== undefined)]);
    expect(recording.notes).toEqual([
      'dataset 1 "acc" (line 2) declares uneven abscissa spacing (record 7), but its 64 abscissa values are evenly ' +
        'spaced to the precision they are stored in; it is read as sampled every 0.000976563 s',
    ]);
    // seeking lands on ordinates, never on the interleaved x values
    expect(await readColumns(recording, { startFrame: 13, endFrame: 20 })).toEqual([
      stored(values, precision, binary !== undefined).slice(13, 20),
    ]);
  });

  it.each([
    ['ASCII', undefined],
    ['58b', {}],
  ] as const)('refuses %s x values that are not evenly spaced, naming the first point off the spacing', async (_, binary) => {
    const jittered = times.map((t, k) => (k === 10 ? 0.01 : t)); // point 11 at 0.01 s instead of 10/1024 s
    const path = await uff(dataset58({ values, name: 'acc', abscissa: jittered }, { binary: binary && { ...binary } }));
    expect(await messageOf(openUff58(path))).toBe(
      `Cannot read "${path}": dataset 1 "acc" (line 2) has unevenly spaced abscissa values (record 7 abscissa spacing 0): ` +
        'point 11 (t = 0.01 s) is off the even spacing of the points before it; only evenly sampled time histories are read (resample it first)',
    );
  });
});

// ---------------------------------------------------------------------------------------
// Streaming.

describe('openUff58() streams', () => {
  const n = 5000;
  const columns = [sine(n, 25, 1), Array.from(gaussian(n, 5)), sine(n, 7, 2)];

  it.each([
    ['ASCII', undefined],
    ['58b', { byteOrder: 2 }],
  ] as const)('%s: gives the same samples in any block size, and any window by startFrame/endFrame', async (_, binary) => {
    const path = await uff(uffFile(...columns.map((values, c) => dataset58({ values, name: `c${c}` }, { binary }))));
    const recording = await openUff58(path);
    const whole = await readColumns(recording, { blockFrames: 65536 });
    expect(whole).toEqual(columns.map((v) => stored(v, 'single', binary !== undefined)));
    expect(await readColumns(recording, { blockFrames: 1 })).toEqual(whole);
    expect(await readColumns(recording, { blockFrames: 7 })).toEqual(whole);
    // windows inside a line, across lines, across seek-table entries (every 16 lines = 96 values) and at the end
    for (const [from, to] of [[0, 1], [5, 7], [95, 97], [96, 193], [1234, 3456], [4990, 5000], [4999, 6000], [5000, 5001]]) {
      const window = await readColumns(recording, { startFrame: from, endFrame: to, blockFrames: 50 });
      expect(window).toEqual(whole.map((c) => c.slice(from, to)));
    }
  });

  it('reuses its arrays with reuse, delivering the same values, and reports progress to the end', async () => {
    const path = await uff(uffFile(...columns.map((values, c) => dataset58({ values, name: `c${c}` }))));
    const recording = await openUff58(path);
    const fresh = await readColumns(recording, { blockFrames: 300 });
    const copies: number[][] = columns.map(() => []);
    const buffers = new Set<ArrayBufferLike>();
    const progress: Array<[number, number]> = [];
    for await (const block of recording.blocks({ blockFrames: 300, reuse: true, onProgress: (a, b) => progress.push([a, b]) })) {
      buffers.add(block.channels[0].buffer);
      block.channels.forEach((values, c) => copies[c].push(...values));
    }
    expect(copies).toEqual(fresh);
    expect(buffers.size).toBe(1);
    expect(progress).toHaveLength(Math.ceil(n / 300));
    const [lastRead, total] = progress[progress.length - 1];
    expect(lastRead).toBe(total);
    expect(progress.every(([a], k) => k === 0 || a > progress[k - 1][0])).toBe(true);
  });

  it('holds a bounded amount of file data, whatever the number of lines', async () => {
    // 2 channels × 400 000 values: 66 667 lines each, 10.5 MB of text
    const big = 400_000;
    const values = [sine(big, 1000, 0.5), sine(big, 250, 2)];
    const path = await uff(uffFile(...values.map((v, c) => dataset58({ values: v, name: `long-${c}`, increment: 1 / 25600 }))));
    const size = statSync(path).size;
    expect(size).toBeGreaterThan(10e6);
    const meter = new ReadMeter();
    const recording = await openUff58(path, { meter });
    expect(meter.held).toBe(0);
    let count = 0;
    let heldWhileStreaming = 0;
    const rms = [0, 0];
    for await (const block of recording.blocks({ blockFrames: 8192, reuse: true })) {
      heldWhileStreaming = Math.max(heldWhileStreaming, meter.held);
      block.channels.forEach((c, k) => {
        for (const v of c) rms[k] += v * v;
      });
      count += block.length;
    }
    expect(count).toBe(big);
    // by the counter: the 256 KiB index buffer, then 64 KiB per channel, released at the end
    expect(meter.peakHeld).toBeLessThanOrEqual(256 * 1024);
    expect(heldWhileStreaming).toBe(2 * 64 * 1024);
    expect(meter.held).toBe(0);
    expect(meter.peakHeld).toBeLessThan(size / 40);
    // whole cycles: RMS = A/√2 (references.md §3), to the 6 printed digits
    expect(Math.abs(Math.sqrt(rms[0] / big) / (0.5 / Math.SQRT2) - 1)).toBeLessThan(1e-5);
    expect(Math.abs(Math.sqrt(rms[1] / big) / (2 / Math.SQRT2) - 1)).toBeLessThan(1e-5);
    // a window near the end, after the seek table was thinned to stay bounded
    const window = await readColumns(recording, { startFrame: 399_990, endFrame: 400_000 });
    expect(window).toEqual(values.map((v) => Array.from(printedValues(v.slice(399_990)))));
  });

  it('refuses a blockFrames that is not a positive whole number', async () => {
    const recording = await openUff58(await uff(dataset58({ values: [1, 2, 3], name: 'a' })));
    const err = await errorOf(readColumns(recording, { blockFrames: 0 }));
    expect(err).toBeInstanceOf(UsageError);
    expect(err.message).toBe('blockFrames must be a whole number of sample frames, at least 1, not 0');
  });
});

describe('openUff58() tells a sidecar how exact its rate is', () => {
  it('accepts a sidecar rate within the rounding of the printed increment, and refuses one beyond', async () => {
    // 4.88281E-04 s is 1/2048 s to 6 digits: 2048 ± 0.002 Hz
    const path = await uff(dataset58({ values: [1, 2], name: 'a', increment: 1 / 2048 }));
    const recording = await openUff58(path);
    expect(applySidecar(recording, { path: 'a.yaml', sampleRate: 2048.001, channels: [] }).sampleRate).toBe(2048.001);
    expect(() => applySidecar(recording, { path: 'a.yaml', sampleRate: 2049, channels: [] })).toThrow(
      `Cannot read "a.yaml": sample-rate is 2049 Hz but the abscissa increment in record 7 of "${path}" gives 2048 Hz`,
    );
  });
});

// ---------------------------------------------------------------------------------------
// Bad input: every message names the file and says what is wrong where.

describe('openUff58() refuses what it cannot read', () => {
  const values = sine(64, 1, 1); // 11 data lines: 14–24, closing -1 at line 25
  const acc = (extra: Partial<Uff58Spec> = {}): Uff58Spec => ({ values, name: 'acc', ...extra });

  it('refuses ASCII data cut short before the closing -1, saying how many values it found', async () => {
    const path = await uff(dataset58(acc(), { writePoints: 50 })); // 9 data lines: 14–22, closing -1 at 23
    expect(await messageOf(openUff58(path))).toBe(
      `Cannot read "${path}": dataset 1 "acc" (line 2) holds 50 of the 64 values record 7 declares: the "    -1" at line 23 closes it`,
    );
  });

  it('refuses ASCII data cut short by the end of the file', async () => {
    const path = await uff(dataset58(acc(), { writePoints: 50, closing: false }));
    expect(await messageOf(openUff58(path))).toBe(
      `Cannot read "${path}": dataset 1 "acc" (line 2) holds 50 of the 64 values record 7 declares: the file ends after line 22`,
    );
  });

  it('refuses more values than record 7 declares, after the last line or within it', async () => {
    const after = await uff(dataset58(acc(), { extraValues: [9] }));
    expect(await messageOf(openUff58(after))).toBe(
      `Cannot read "${after}": dataset 1 "acc" (line 2) holds more than the 64 values record 7 declares (line 25 goes beyond them)`,
    );
    const within = await uff(dataset58(acc({ count: 62 })));
    expect(await messageOf(openUff58(within))).toBe(
      `Cannot read "${within}": dataset 1 "acc" (line 2) holds more than the 62 values record 7 declares (line 24 goes beyond them)`,
    );
  });

  it('refuses non-numeric text in the data, naming the line', async () => {
    const text = dataset58(acc()).toString('utf8').split('\n');
    text[15] = text[15].slice(0, 13) + '   1.2x45E+00' + text[15].slice(26); // line 16, second field
    const path = await uff(text.join('\n'));
    expect(await messageOf(openUff58(path))).toBe(
      `Cannot read "${path}": line 16 holds "1.2x45E+00", which is not a number, in the data of dataset 1 "acc" (line 2)`,
    );
  });

  it('refuses a 58b byte count that disagrees with the values record 7 declares', async () => {
    const path = await uff(dataset58(acc(), { binary: { bytes: 100 } }));
    expect(await messageOf(openUff58(path))).toBe(
      `Cannot read "${path}": dataset 1 "acc" (line 2): the 58b header declares 100 bytes of binary data, ` +
        'but record 7 declares 64 real single values (256 bytes)',
    );
    const double = await uff(dataset58(acc({ precision: 'double' }), { binary: { bytes: 256 } }));
    expect(await messageOf(openUff58(double))).toBe(
      `Cannot read "${double}": dataset 1 "acc" (line 2): the 58b header declares 256 bytes of binary data, ` +
        'but record 7 declares 64 real double values (512 bytes)',
    );
  });

  it('refuses 58b data cut short by the end of the file', async () => {
    const whole = dataset58(acc(), { binary: {} });
    const dataStart = whole.length - 256 - '    -1\n'.length;
    const path = await uff(whole.subarray(0, dataStart + 100));
    expect(await messageOf(openUff58(path))).toBe(
      `Cannot read "${path}": dataset 1 "acc" (line 2): the 58b header declares 256 bytes of binary data from byte ${dataStart}, ` +
        `but the file ends at byte ${dataStart + 100}`,
    );
  });

  it('refuses 58b data not followed by the closing -1', async () => {
    // header and record 7 agree on 63 values (252 bytes), but 64 were written: after the
    // declared bytes come the 4 bytes of the last float32, chosen to read "ABCD" in ASCII
    const abcd = new DataView(new Uint8Array([0x41, 0x42, 0x43, 0x44]).buffer).getFloat32(0, true);
    const bytes = dataset58({ values: [...values.slice(0, 63), abcd], name: 'acc', count: 63 }, { binary: { bytes: 252 } });
    const dataStart = bytes.length - 256 - '    -1\n'.length;
    const path = await uff(bytes);
    expect(await messageOf(openUff58(path))).toBe(
      `Cannot read "${path}": dataset 1 "acc" (line 2): after the 252 bytes of binary data the 58b header declares ` +
        `(from byte ${dataStart}), the file holds "ABCD    -1" where the "    -1" line closing the dataset should be`,
    );
  });

  it.each([
    [{ byteOrder: 3 }, 'the 58b header gives byte order 3, where 1 (little-endian) or 2 (big-endian) is expected'],
    [{ floatFormat: 1 }, 'the 58b header gives floating-point format 1 (DEC VMS); only 2 (IEEE 754) is read'],
    [{ floatFormat: 3 }, 'the 58b header gives floating-point format 3 (IBM 5/370); only 2 (IEEE 754) is read'],
    [{ floatFormat: 7 }, 'the 58b header gives floating-point format 7; only 2 (IEEE 754) is read'],
    [{ asciiLines: 12 }, 'the 58b header says 12 ASCII lines follow, but dataset 58 has 11 header records'],
  ])('refuses a 58b header with %o', async (binary, detail) => {
    const path = await uff(dataset58(acc(), { binary }));
    expect(await messageOf(openUff58(path))).toBe(`Cannot read "${path}": dataset 1 (line 2): ${detail}`);
  });

  it('refuses a file whose first dataset lacks its opening -1', async () => {
    const path = await uff(dataset58(acc(), { opening: false }));
    expect(await messageOf(openUff58(path))).toBe(
      `Cannot read "${path}": is not a Universal File Format file: line 1 holds "    58" where a "    -1" line should open the first dataset`,
    );
  });

  it('refuses a dataset without its closing -1 before the next one', async () => {
    // dataset 1's data end at line 24; the next dataset's opening -1 (line 25) is taken as its closing one
    const path = await uff(uffFile(dataset58(acc(), { closing: false }), dataset58(acc({ name: 'b' }))));
    expect(await messageOf(openUff58(path))).toBe(
      `Cannot read "${path}": line 26 holds "    58" where a "    -1" line should open the next dataset; ` +
        'is the "    -1" that closes dataset 1 missing?',
    );
  });

  it('refuses a last dataset without its closing -1', async () => {
    const path = await uff(dataset58(acc(), { closing: false }));
    expect(await messageOf(openUff58(path))).toBe(
      `Cannot read "${path}": dataset 1 "acc" (line 2) is not closed: the file ends at line 24 without the "    -1" line`,
    );
  });

  it('refuses a dataset cut short within its header records', async () => {
    const path = await uff(textDataset('58', ['acc', 'NONE', 'NONE', 'NONE', 'NONE']));
    expect(await messageOf(openUff58(path))).toBe(
      `Cannot read "${path}": dataset 1 (line 2) is cut short: the "    -1" at line 8 closes it after 5 of its 11 header records`,
    );
  });

  it('refuses record 7 that is not numbers, and data types dataset 58 does not define', async () => {
    const text = dataset58(acc()).toString('utf8').split('\n');
    text[8] = '         2        64    even  0.00000E+00  9.76563E-04  0.00000E+00';
    const bad7 = await uff(text.join('\n'));
    expect(await messageOf(openUff58(bad7))).toBe(
      `Cannot read "${bad7}": dataset 1 (line 2): record 7 (line 9) should hold ordinate data type, number of values, ` +
        'abscissa spacing, minimum, increment and z-axis value (3I10,3E13.5); it reads ' +
        '"         2        64    even  0.00000E+00  9.76563E-04  0.00000E+00"',
    );
    const type3 = await uff(dataset58(acc({ ordinateType: 3 })));
    expect(await messageOf(openUff58(type3))).toBe(
      `Cannot read "${type3}": dataset 1 "acc" (line 2): record 7 gives ordinate data type 3; ` +
        'dataset 58 defines 2 (real single), 4 (real double), 5 and 6 (complex)',
    );
    const zero = await uff(dataset58(acc({ incrementText: '  0.00000E+00' })));
    expect(await messageOf(openUff58(zero))).toBe(
      `Cannot read "${zero}": dataset 1 "acc" (line 2): record 7 gives the abscissa increment as 0.00000E+00 s; ` +
        'a time history needs a positive sampling interval',
    );
  });

  it('refuses a file that is not UFF at all', async () => {
    const csv = await uff('time,acc\n0,1\n', 'not-uff.csv');
    expect(await messageOf(openUff58(csv))).toBe(
      `Cannot read "${csv}": is not a Universal File Format file: line 1 holds "time,acc" where a "    -1" line should open the first dataset`,
    );
    const wav = await uff(
      buildWav({ fmt: { formatTag: FORMAT_FLOAT, channels: 1, sampleRate: 8000, bitsPerSample: 32 }, data: interleave('float32', [[0.5]]) }),
      'not-uff.wav',
    );
    // the rest of the quoted line is the binary header, escaped
    expect(await messageOf(openUff58(wav))).toContain(
      `Cannot read "${wav}": is not a Universal File Format file: line 1 holds "RIFF`,
    );
  });

  it('says when the file is empty or missing', async () => {
    const empty = await uff('');
    expect(await messageOf(openUff58(empty))).toBe(`Cannot read "${empty}": the file is empty`);
    const missing = join(dir, 'missing.uff');
    expect(await messageOf(openUff58(missing))).toBe(`Cannot read "${missing}": file not found`);
  });
});

describe('looksLikeUff()', () => {
  it.each([
    ['    -1\n    58\n', true],
    ['    -1\r\n    58b     1     2          11        4096     0     0\r\n', true],
    ['\n  \n    -1\n   151\nmodel.unv\n', true],
    ['    -1\n   164\n', true],
    ['-1\n58\n', true], // -1 within the first six columns
    ['      -1\n    58\n', false], // -1 beyond column 6
    ['    -1\n', false], // no dataset number line
    ['    -1\n    -1\n', false],
    ['    -1\n  58.5\n', false],
    ['    -1\n   abc\n', false],
    ['time,acc\n0,1\n', false],
    ['RIFF\u0024\u0000\u0000\u0000WAVEfmt ', false],
    ['', false],
  ])('%j → %s', (head, expected) => {
    expect(looksLikeUff(head)).toBe(expected);
  });

  it('recognises every file the writer writes from its first 160 bytes', () => {
    for (const bytes of [dataset58({ values: [1] }), dataset58({ values: [1] }, { binary: {} }), dataset151(), dataset164()]) {
      expect(looksLikeUff(bytes.subarray(0, 160).toString('latin1'))).toBe(true);
    }
  });
});

// formatE is the writer's printing; check it against C's %13.5E as the description gives it
describe('the fixture writer', () => {
  it('prints as C printf %13.5E and %20.12E do (from memory of the C standard library)', () => {
    expect(formatE(1, 13, 5)).toBe('  1.00000E+00');
    expect(formatE(-0.000123456789, 13, 5)).toBe(' -1.23457E-04');
    expect(formatE(1e100, 13, 5)).toBe(' 1.00000E+100');
    expect(formatE(Math.PI, 20, 12, 'D')).toBe('  3.141592653590D+00');
  });
});
