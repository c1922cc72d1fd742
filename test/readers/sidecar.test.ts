import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { applySidecar, findSidecar, loadSidecar, sidecarPathFor } from '../../src/readers/sidecar.js';
import type { Sidecar } from '../../src/readers/sidecar.js';
import { openRaw } from '../../src/readers/raw.js';
import { openCsv } from '../../src/readers/csv.js';
import type { Recording } from '../../src/readers/types.js';
import { RecordingError } from '../../src/errors.js';

const dir = mkdtempSync(join(tmpdir(), 'vibgate-sidecar-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

let fileNumber = 0;
function file(content: string | Buffer, name?: string): string {
  fileNumber += 1;
  const path = join(dir, name ?? `s${fileNumber}.channels.yaml`);
  writeFileSync(path, content);
  return path;
}

async function readAll(recording: Recording): Promise<number[][]> {
  const columns: number[][] = recording.channels.map(() => []);
  for await (const block of recording.blocks({ blockFrames: 2 })) {
    block.channels.forEach((values, c) => columns[c].push(...values));
  }
  return columns;
}

async function errorOf(promise: Promise<unknown> | (() => unknown)): Promise<Error> {
  try {
    await (typeof promise === 'function' ? promise() : promise);
  } catch (err) {
    return err as Error;
  }
  throw new Error('expected an error');
}

const fullSidecar = `# yaml-language-server: $schema=../schemas/sidecar.schema.json
sample-rate: 2048
raw:
  encoding: int16le
  channels: 3
  header-bytes: 4
channels:
  - name: acc-01
    unit: g
    sensor: accelerometer
    sensitivity: 10.2
    sensitivity-unit: mV/g
    full-scale: 50
    group: deck
  - index: 2
    name: force
    unit: N
    scale: 2
    full-scale: 1.5
`;

describe('loadSidecar() reads and validates a sidecar file', () => {
  it('reads every key, giving entries without index the next channel', async () => {
    const path = file(fullSidecar);
    expect(await loadSidecar(path)).toEqual({
      path,
      sampleRate: 2048,
      raw: { encoding: 'int16le', channels: 3, headerBytes: 4 },
      channels: [
        {
          index: 0,
          name: 'acc-01',
          unit: 'g',
          sensor: 'accelerometer',
          sensitivity: 10.2,
          sensitivityUnit: 'mV/g',
          fullScale: 50,
          group: 'deck',
        },
        { index: 2, name: 'force', unit: 'N', scale: 2, fullScale: 1.5 },
      ],
    } satisfies Sidecar);
  });

  it('numbers entries after the previous index', async () => {
    const path = file('channels:\n  - name: a\n  - index: 4\n    name: e\n  - name: f\n');
    expect((await loadSidecar(path)).channels.map((c) => [c.index, c.name])).toEqual([
      [0, 'a'],
      [4, 'e'],
      [5, 'f'],
    ]);
  });

  it('reads a file with a UTF-8 byte order mark', async () => {
    const path = file(Buffer.concat([Buffer.from([0xef, 0xbb, 0xbf]), Buffer.from('sample-rate: 100\n')]));
    expect((await loadSidecar(path)).sampleRate).toBe(100);
  });

  it('points at the line and column of a wrong type', async () => {
    // Line 4 is "    full-scale: high"; the value starts in column 17.
    const path = file('sample-rate: 2048\nchannels:\n  - name: acc-01\n    full-scale: high\n');
    const err = await errorOf(loadSidecar(path));
    expect(err).toBeInstanceOf(RecordingError);
    expect(err.message).toBe(`Cannot read "${path}": 4:17 channels[0].full-scale: must be number`);
  });

  it('lists every problem in file order', async () => {
    const path = file(
      [
        'sample-rate: -1', //                 1:14
        'raw:',
        '  encoding: float16le', //           3:13
        '  channels: 2',
        'channels:',
        '  - name: a',
        '    gain: 3', //                     7:5
        '  - name: ""', //                    8:11
      ].join('\n'),
    );
    const err = await errorOf(loadSidecar(path));
    expect(err.message).toBe(
      `Cannot read "${path}": 4 problems:\n` +
        '  1:14 sample-rate: must be > 0\n' +
        '  3:13 raw.encoding: must be one of float32le, float64le, int16le, int32le\n' +
        '  7:5 channels[0].gain: unknown key (known keys: index, name, unit, sensor, sensitivity, sensitivity-unit, full-scale, scale, group)\n' +
        '  8:11 channels[1].name: must not be empty',
    );
  });

  it.each([
    ['an unknown top-level key', 'sample-rate: 1\nrate: 2\n', '2:1 rate: unknown key (known keys: sample-rate, raw, hdf5, channels)'],
    ['a __proto__ key', '__proto__: { polluted: true }\n', '1:1 __proto__: unknown key (known keys: sample-rate, raw, hdf5, channels)'],
    ['a raw section without encoding', 'raw:\n  channels: 2\n', '2:3 raw: missing key "encoding"'],
    ['an unknown raw key', 'raw:\n  encoding: int16le\n  channels: 2\n  endian: big\n', '4:3 raw.endian: unknown key (known keys: encoding, channels, header-bytes)'],
    ['a fractional channel count', 'raw:\n  encoding: int16le\n  channels: 2.5\n', '3:13 raw.channels: must be integer'],
    ['an infinite sample rate', 'sample-rate: .inf\n', '1:14 sample-rate: must be number'],
    ['channels that are not a list', 'channels: acc-01\n', '1:11 channels: must be array'],
    ['a document that is a list', '- a\n- b\n', '1:1 (top level): must be object'],
    ['a negative index', 'channels:\n  - index: -1\n', '2:12 channels[0].index: must be >= 0'],
    ['a scale of zero', 'channels:\n  - scale: 0\n', '2:12 channels[0].scale: must not be 0'],
    ['two entries for one channel', 'channels:\n  - name: a\n  - index: 0\n    name: b\n', '3:5 channels[1]: channel index 0 is already described by channels[0]'],
    ['two channels of one name', 'channels:\n  - name: a\n  - name: a\n', '3:11 channels[1].name: "a" is already the name of channels[0]'],
    [
      'an entry beyond raw.channels',
      'raw:\n  encoding: int16le\n  channels: 2\nchannels:\n  - name: a\n  - name: b\n  - name: c\n',
      '7:5 channels[2]: channel index 2 is beyond the 2 channels of raw.channels',
    ],
    ['a duplicate key', 'sample-rate: 1\nsample-rate: 2\n', '2:1 Map keys must be unique'],
  ])('refuses %s', async (_label, text, detail) => {
    const path = file(text);
    const err = await errorOf(loadSidecar(path));
    expect(err).toBeInstanceOf(RecordingError);
    expect(err.message).toBe(`Cannot read "${path}": ${detail}`);
  });

  it('refuses an alias bomb before expanding it', async () => {
    const lines = ['a0: &a0 [x, x, x, x, x, x, x, x, x, x]'];
    for (let k = 1; k < 8; k++) lines.push(`a${k}: &a${k} [${Array(10).fill(`*a${k - 1}`).join(', ')}]`);
    const path = file(lines.join('\n'));
    const err = await errorOf(loadSidecar(path));
    expect(err.message).toBe(
      `Cannot read "${path}": 1:1 Excessive alias count indicates a resource exhaustion attack`,
    );
  });

  it('refuses an empty file', async () => {
    const path = file('# nothing but a comment\n');
    const err = await errorOf(loadSidecar(path));
    expect(err.message).toBe(`Cannot read "${path}": the file is empty`);
  });

  it('refuses a file over 1 MiB without parsing it', async () => {
    const path = file(`# ${'x'.repeat(1.2 * 1024 * 1024)}\n`);
    const err = await errorOf(loadSidecar(path));
    expect(err.message).toBe(`Cannot read "${path}": is 1.2 MiB; a sidecar file may be at most 1 MiB`);
  });
});

describe('findSidecar() finds the sidecar of a recording', () => {
  it('names the default sidecar after the whole recording file name', () => {
    expect(sidecarPathFor('data/run3.wav')).toBe('data/run3.wav.channels.yaml');
  });

  it('loads <recording>.channels.yaml when it exists', async () => {
    const recording = join(dir, 'with-sidecar.wav');
    const path = file('sample-rate: 4096\n', 'with-sidecar.wav.channels.yaml');
    expect(await findSidecar(recording)).toEqual({ path, sampleRate: 4096, channels: [] });
  });

  it('gives undefined when there is no default sidecar', async () => {
    expect(await findSidecar(join(dir, 'alone.wav'))).toBeUndefined();
  });

  it('refuses an explicit sidecar that does not exist', async () => {
    const missing = join(dir, 'missing.yaml');
    const err = await errorOf(findSidecar('run3.wav', missing));
    expect(err.message).toBe(`Cannot read "${missing}": file not found (given as the sidecar for "run3.wav")`);
  });

  it('prefers an explicit sidecar to the default one', async () => {
    const recording = join(dir, 'both.wav');
    file('sample-rate: 1\n', 'both.wav.channels.yaml');
    const explicit = file('sample-rate: 2\n');
    expect((await findSidecar(recording, explicit))?.sampleRate).toBe(2);
  });
});

describe('applySidecar() merges a sidecar into a recording', () => {
  it('names, scales and sets clip levels of integer PCM channels', async () => {
    const codes = [
      [16384, -16384, 100],
      [-32768, 32767, -100],
    ];
    const bytes = Buffer.alloc(4 + 12);
    codes.flat().forEach((v, k) => bytes.writeInt16LE(v, 4 + 2 * k));
    const data = file(bytes, 'pcm.bin');
    const sidecar = await loadSidecar(file(fullSidecar));
    const recording = await openRaw(data, sidecar);
    const merged = applySidecar(recording, sidecar);

    const step = 2 ** -15;
    expect(merged.channels).toEqual([
      // No scale, full-scale 50: the scale is 50, so code 2^15 would be 50 g.
      {
        index: 0,
        name: 'acc-01',
        unit: 'g',
        sensor: 'accelerometer',
        sensitivity: 10.2,
        sensitivityUnit: 'mV/g',
        group: 'deck',
        clipLow: -50,
        clipHigh: 50 * (1 - step),
      },
      // Not in the sidecar: as the reader gave it.
      { index: 1, name: 'ch2', clipLow: -1, clipHigh: 1 - step },
      // scale 2 puts the converter's limits at ±2 N; full-scale 1.5 N is reached first.
      { index: 2, name: 'force', unit: 'N', clipLow: -1.5, clipHigh: 1.5 },
    ]);
    expect(merged.quantisationStep).toBe(step);
    expect(merged.sampleRate).toBe(2048);
    expect(await readAll(merged)).toEqual([
      [(16384 / 32768) * 50, (-32768 / 32768) * 50],
      [-16384 / 32768, 32767 / 32768],
      [(100 / 32768) * 2, (-100 / 32768) * 2],
    ]);
    // The input recording is left as it was.
    expect(recording.channels[0].name).toBe('ch1');
    expect((await readAll(recording))[0]).toEqual([0.5, -1]);
    expect(merged.notes).toEqual([`sidecar "${sidecar.path}" describes 2 of the 3 channels`]);
  });

  it('sets ±full-scale clip levels and applies scale for text data', async () => {
    const csv = file('time,a,b\n0,1.5,-2\n0.5,0.25,3\n', 'float.csv');
    const sidecar = await loadSidecar(
      file('channels:\n  - name: mic\n    unit: Pa\n    full-scale: 5\n  - scale: 9.81\n    unit: m/s^2\n'),
    );
    const merged = applySidecar(await openCsv(csv), sidecar);
    expect(merged.channels).toEqual([
      { index: 0, name: 'mic', unit: 'Pa', clipLow: -5, clipHigh: 5 },
      { index: 1, name: 'b', unit: 'm/s^2' },
    ]);
    expect(await readAll(merged)).toEqual([
      [1.5, 0.25],
      [-2 * 9.81, 3 * 9.81],
    ]);
  });

  it('notes a sidecar that describes only some channels, and a raw: section it ignores', async () => {
    const csv = file('time,a,b\n0,1,2\n1,3,4\n', 'some.csv');
    const sidecarPath = file('raw:\n  encoding: int16le\n  channels: 2\nchannels:\n  - name: x\n');
    const merged = applySidecar(await openCsv(csv), await loadSidecar(sidecarPath));
    expect(merged.notes).toEqual([
      `sidecar "${sidecarPath}": its raw: section applies only to raw binary files and was ignored`,
      `sidecar "${sidecarPath}" describes 1 of the 2 channels`,
    ]);
  });

  it('refuses more channel entries than the recording has channels, naming both counts', async () => {
    const csv = file('time,a,b,c\n0,1,2,3\n1,3,4,5\n', 'three.csv');
    const sidecarPath = file('channels:\n  - name: w\n  - name: x\n  - name: y\n  - name: z\n');
    const recording = await openCsv(csv);
    const sidecar = await loadSidecar(sidecarPath);
    const err = await errorOf(() => applySidecar(recording, sidecar));
    expect(err).toBeInstanceOf(RecordingError);
    expect(err.message).toBe(`Cannot read "${sidecarPath}": describes 4 channels but "${csv}" has 3`);
  });

  it('refuses an entry whose index is beyond the last channel', async () => {
    const csv = file('time,a,b\n0,1,2\n1,3,4\n', 'two.csv');
    const sidecarPath = file('channels:\n  - index: 5\n    name: z\n');
    const err = await errorOf(async () => applySidecar(await openCsv(csv), await loadSidecar(sidecarPath)));
    expect(err.message).toBe(
      `Cannot read "${sidecarPath}": channels[0] is for channel index 5 but "${csv}" has 2 channels (index 0 to 1)`,
    );
  });

  it('refuses a name that another channel already has', async () => {
    const csv = file('time,a,b\n0,1,2\n1,3,4\n', 'dup.csv');
    const sidecarPath = file('channels:\n  - index: 1\n    name: a\n');
    const err = await errorOf(async () => applySidecar(await openCsv(csv), await loadSidecar(sidecarPath)));
    expect(err.message).toBe(
      `Cannot read "${sidecarPath}": channel name "a" is used twice in "${csv}" (channel index 0 and 1)`,
    );
  });

  it('refuses a sample-rate that the WAV header contradicts', async () => {
    const wav: Recording = {
      path: 'run3.wav',
      format: 'wav',
      sampleRate: 4096,
      sampleCount: 0,
      sampleFormat: 'int16',
      channels: [{ index: 0, name: 'ch1' }],
      notes: [],
      blocks: async function* () {},
    };
    const sidecar: Sidecar = { path: 'run3.wav.channels.yaml', sampleRate: 2048, channels: [] };
    const err = await errorOf(() => applySidecar(wav, sidecar));
    expect(err.message).toBe(
      'Cannot read "run3.wav.channels.yaml": sample-rate is 2048 Hz but the WAV header of "run3.wav" says 4096 Hz',
    );
  });

  it('refuses a sample-rate that the time column contradicts', async () => {
    const csv = file('time,a\n0,1\n0.5,2\n', 'rate.csv');
    const sidecar: Sidecar = { path: 'rate.csv.channels.yaml', sampleRate: 1000, channels: [] };
    const err = await errorOf(async () => applySidecar(await openCsv(csv), sidecar));
    expect(err.message).toBe(
      `Cannot read "rate.csv.channels.yaml": sample-rate is 1000 Hz but the time column of "${csv}" gives 2 Hz`,
    );
  });

  it('takes the sidecar sample-rate where a rounded time column cannot tell the difference', async () => {
    // Times rounded to 0.1 ms cannot separate 2999.5 Hz from the 2999.4.. Hz they suggest.
    const rows = Array.from({ length: 10 }, (_, k) => `${(k / 2999.5).toFixed(4)},${k}`);
    const csv = file(['time,a', ...rows].join('\n'), 'rounded.csv');
    const recording = await openCsv(csv);
    expect(recording.sampleRate).not.toBe(2999.5);
    const merged = applySidecar(recording, { path: 's.yaml', sampleRate: 2999.5, channels: [] });
    expect(merged.sampleRate).toBe(2999.5);
  });
});
