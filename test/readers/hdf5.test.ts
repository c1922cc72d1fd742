import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import h5wasm from 'h5wasm/node';
import type { File as H5File } from 'h5wasm/node';
import { looksLikeHdf5, openHdf5 } from '../../src/readers/hdf5.js';
import { openWav } from '../../src/readers/wav.js';
import { applySidecar, loadSidecar } from '../../src/readers/sidecar.js';
import type { Hdf5Mapping, Sidecar } from '../../src/readers/sidecar.js';
import { ReadMeter } from '../../src/readers/types.js';
import type { Recording } from '../../src/readers/types.js';
import { summariseBlocks } from '../../src/stats/summarise.js';
import { channelStats } from '../../src/stats/channel-stats.js';
import { RecordingError, UsageError } from '../../src/errors.js';
import { buildWav, FORMAT_FLOAT, interleave } from '../helpers/wav-writer.js';
import { gaussian } from '../helpers/random.js';
import { statsOf } from '../helpers/summarise.js';

// HDF5 metadata read in this thread: hundreds of files, each a worker start saved (the watchdog worker is tested in test/fuzz/hdf5.test.ts and test/readers/detect.test.ts)
process.env.VIBGATE_HDF5_IN_PROCESS = '1';

const dir = mkdtempSync(join(tmpdir(), 'vibgate-hdf5-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
beforeAll(async () => {
  await h5wasm.ready;
});

let fileNumber = 0;
/** Writes an HDF5 fixture with h5wasm (mode 'w': create or truncate) and returns its path. */
function h5File(build: (file: H5File) => void, name?: string): string {
  fileNumber += 1;
  const path = join(dir, name ?? `f${fileNumber}.h5`);
  const file = new h5wasm.File(path, 'w');
  try {
    build(file);
  } finally {
    file.close();
  }
  return path;
}

function sidecar(hdf5: Hdf5Mapping, extra: Partial<Sidecar> = {}): Sidecar {
  return { path: 'x.h5.channels.yaml', channels: [], hdf5, ...extra };
}

/** Frame after frame, channel after channel: the [samples, channels] layout. */
function bySamples(columns: ArrayLike<number>[]): Float64Array {
  const n = columns[0].length;
  const out = new Float64Array(n * columns.length);
  columns.forEach((x, c) => {
    for (let i = 0; i < n; i++) out[i * columns.length + c] = x[i];
  });
  return out;
}

/** Channel after channel: the [channels, samples] layout. */
function byChannels(columns: ArrayLike<number>[]): Float64Array {
  const n = columns[0].length;
  const out = new Float64Array(n * columns.length);
  columns.forEach((x, c) => out.set(Array.from(x), c * n));
  return out;
}

async function readAll(recording: Recording, blockFrames?: number): Promise<number[][]> {
  const columns: number[][] = recording.channels.map(() => []);
  let expectedStart = 0;
  for await (const block of recording.blocks({ blockFrames })) {
    expect(block.start).toBe(expectedStart);
    expectedStart += block.length;
    block.channels.forEach((values, c) => columns[c].push(...values));
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

/**
 * True while this process holds `path` open in HDF5: the library refuses to open a file
 * read-write that it already has open read-only ("file is already open for read-only").
 */
function isOpenHere(path: string): boolean {
  try {
    new h5wasm.File(path, 'a').close();
    return false;
  } catch (err) {
    if (String(err).includes('already open')) return true;
    throw err;
  }
}

const sha256 = (path: string) => createHash('sha256').update(readFileSync(path)).digest('hex');

describe('looksLikeHdf5() finds the superblock signature', () => {
  // HDF5 File Format Specification, "Format Signature": \x89 H D F \r \n \x1a \n, at byte 0
  // or after a user block of 512, 1024, 2048 … bytes.
  const signature = [0x89, 0x48, 0x44, 0x46, 0x0d, 0x0a, 0x1a, 0x0a];
  const at = (offset: number, length = 1024) => {
    const head = new Uint8Array(length).fill(0x20);
    head.set(signature, offset);
    return head;
  };

  it('at byte 0 of a file h5wasm wrote', () => {
    const path = h5File((f) => f.create_dataset({ name: 'x', data: new Float64Array([1]) }));
    expect(looksLikeHdf5(readFileSync(path).subarray(0, 1024))).toBe(true);
  });

  it.each([
    ['at byte 512, after a user block', at(512), true],
    ['at byte 1024 when the head reaches that far', at(1024, 2048), true],
    ['not at byte 256, where HDF5 never puts it', at(256), false],
    ['not in a head shorter than the signature', Uint8Array.from(signature.slice(0, 7)), false],
    ['not in a WAV header', new TextEncoder().encode('RIFF\x24\x00\x00\x00WAVEfmt '), false],
    ['not with one byte wrong (\\n for \\r)', Uint8Array.from([0x89, 0x48, 0x44, 0x46, 0x0a, 0x0a, 0x1a, 0x0a]), false],
  ])('%s', (_label, head, expected) => {
    expect(looksLikeHdf5(head)).toBe(expected);
  });
});

describe('openHdf5() reads one set of channels the same in every layout', () => {
  // Four channels: three seeded Gaussian sequences (simulated, σ = 1, 0.5, 3) and a sampled
  // sine of amplitude A = 2 over exactly 80 cycles (8 Hz at 2048 Hz for 10 s).
  const sampleRate = 2048;
  const n = 20480;
  const amplitude = 2;
  const sine = Float64Array.from({ length: n }, (_, i) => amplitude * Math.sin((2 * Math.PI * 8 * i) / sampleRate));
  const columns = [gaussian(n, 11), gaussian(n, 12, 0.5), gaussian(n, 13, 3), sine];
  // Natural name order (acc-2 before acc-10) puts the group's members in column order.
  const memberNames = ['acc-1', 'acc-2', 'acc-10', 'sine'];

  let paths: { samplesByChannels: string; channelsBySamples: string; group: string; wav: string };
  beforeAll(() => {
    const samplesByChannels = h5File((f) => {
      const run = f.create_group('run-07');
      run.create_attribute('fs', sampleRate);
      run.create_dataset({ name: 'accel', data: bySamples(columns), shape: [n, 4], dtype: '<d' });
    });
    const channelsBySamples = h5File((f) => {
      f.create_dataset({ name: 'accel', data: byChannels(columns), shape: [4, n], dtype: '<d' }).create_attribute('fs', sampleRate);
    });
    const group = h5File((f) => {
      const g = f.create_group('channels');
      g.create_attribute('fs', sampleRate);
      // Created out of order: the reader sorts them.
      for (const c of [3, 2, 0, 1]) g.create_dataset({ name: memberNames[c], data: columns[c], dtype: '<d' });
    });
    const wav = join(dir, 'same.wav');
    writeFileSync(
      wav,
      buildWav({
        fmt: { formatTag: FORMAT_FLOAT, channels: 4, sampleRate, bitsPerSample: 64 },
        data: interleave('float64', columns.map((x) => Array.from(x))),
      }),
    );
    paths = { samplesByChannels, channelsBySamples, group, wav };
  });

  async function statsOfRecording(recording: Recording) {
    const summary = await summariseBlocks(recording.blocks({ blockFrames: 1000 }), recording, { frameSeconds: 0.5 });
    return summary.channels.map((c) => channelStats(c, { sampleRate: recording.sampleRate }));
  }

  it('reads the same samples from [samples, channels], [channels, samples] and a group', async () => {
    const a = await openHdf5(paths.samplesByChannels, sidecar({ dataset: '/run-07/accel', layout: 'samples-by-channels', sampleRateAttribute: 'fs' }));
    const b = await openHdf5(paths.channelsBySamples, sidecar({ dataset: 'accel', layout: 'channels-by-samples', sampleRateAttribute: 'fs' }));
    const g = await openHdf5(paths.group, sidecar({ group: '/channels', sampleRateAttribute: 'fs' }));
    for (const r of [a, b, g]) {
      expect(r.format).toBe('hdf5');
      expect(r.sampleRate).toBe(sampleRate);
      expect(r.sampleCount).toBe(n);
      expect(r.sampleFormat).toBe('float64');
      expect(r.quantisationStep).toBeUndefined();
    }
    expect(a.channels.map((c) => c.name)).toEqual(['ch1', 'ch2', 'ch3', 'ch4']);
    expect(g.channels.map((c) => c.name)).toEqual(memberNames);
    const expected = columns.map((x) => Array.from(x));
    expect(await readAll(a, 4096)).toEqual(expected);
    expect(await readAll(b, 4096)).toEqual(expected);
    expect(await readAll(g, 4096)).toEqual(expected);
  });

  it('gives exactly equal statistics in all three layouts and from the same data in a float64 WAV', async () => {
    const a = await statsOfRecording(await openHdf5(paths.samplesByChannels, sidecar({ dataset: '/run-07/accel', layout: 'samples-by-channels', sampleRateAttribute: 'fs' })));
    const b = await statsOfRecording(await openHdf5(paths.channelsBySamples, sidecar({ dataset: '/accel', layout: 'channels-by-samples', sampleRateAttribute: 'fs' })));
    const g = await statsOfRecording(await openHdf5(paths.group, sidecar({ group: 'channels', sampleRateAttribute: 'fs' })));
    const wav = await statsOfRecording(await openWav(paths.wav));
    expect(a).toEqual(wav);
    expect(b).toEqual(wav);
    expect(g).toEqual(wav);
    // And the whole-record figures agree with those of the arrays summed in one piece (to
    // rounding: blocks of 1000 merge their moments in another order).
    const whole = columns.map((x) => statsOf(x, { sampleRate }));
    a.forEach((s, c) => {
      expect(Math.abs(s.std - whole[c].std) / whole[c].std).toBeLessThan(1e-12);
      expect(Math.abs(s.kurtosis - whole[c].kurtosis) / whole[c].kurtosis).toBeLessThan(1e-12);
    });
  });

  it('reads the sine channel to its closed-form statistics: mean 0, RMS A/√2, skewness 0, kurtosis 1.5', async () => {
    // references.md §3 (handbook values for a sine over a whole number of cycles); they hold
    // exactly for the sampled sine too, as Σ sin^k over whole cycles is (0, N/2, 0, 3N/8).
    const g = await statsOfRecording(await openHdf5(paths.group, sidecar({ group: '/channels', order: ['sine'], sampleRateAttribute: 'fs' })));
    expect(g).toHaveLength(1);
    expect(Math.abs(g[0].mean)).toBeLessThan(1e-13);
    expect(g[0].rms).toBeCloseTo(amplitude / Math.SQRT2, 12);
    expect(Math.abs(g[0].skewness)).toBeLessThan(1e-12);
    expect(g[0].kurtosis).toBeCloseTo(1.5, 12);
    // 256 samples a cycle put a sample on each crest, so the peak is A and the crest factor √2.
    expect(g[0].crestFactor).toBeCloseTo(Math.SQRT2, 12);
  });
});

describe('openHdf5() decodes each number type', () => {
  it('reads integers as stored, without PCM scaling or clip levels', async () => {
    const path = h5File((f) => {
      f.create_dataset({ name: 'i16', data: Int16Array.from([-32768, 32767, 0, -1]) });
      f.create_dataset({ name: 'i32', data: Int32Array.from([-2147483648, 2147483647, 7, -7]) });
      f.create_dataset({ name: 'u8', data: Uint8Array.from([0, 255, 128, 1]) });
    });
    const cases = [
      ['i16', 'int16', [-32768, 32767, 0, -1]],
      ['i32', 'int32', [-2147483648, 2147483647, 7, -7]],
      ['u8', 'uint8', [0, 255, 128, 1]],
    ] as const;
    for (const [name, format, values] of cases) {
      const recording = await openHdf5(path, sidecar({ group: '/', order: [name] }, { sampleRate: 100 }));
      expect(recording.sampleFormat).toBe(format);
      expect(recording.quantisationStep).toBeUndefined();
      expect(recording.validBits).toBeUndefined();
      expect(recording.channels).toEqual([{ index: 0, name }]);
      expect(await readAll(recording)).toEqual([values]);
    }
  });

  it('reads float32 as IEEE 754 single precision and float64 bit for bit', async () => {
    const singles = [0.1, -3.5, 1e-40, Infinity, NaN, 65504.25];
    const doubles = [0.1, -0, 5e-324, Number.MAX_VALUE, -Infinity, 1 / 3];
    const path = h5File((f) => {
      f.create_dataset({ name: 'a', data: Float32Array.from(singles) });
      f.create_dataset({ name: 'b', data: Float64Array.from(doubles) });
    });
    const single = await openHdf5(path, sidecar({ group: '/', order: ['a'] }, { sampleRate: 1 }));
    expect(single.sampleFormat).toBe('float32');
    // Math.fround gives the nearest single, as h5wasm's Float32Array stores it.
    expect(await readAll(single)).toEqual([singles.map((v) => Math.fround(v))]);
    const double = await readAll(await openHdf5(path, sidecar({ group: '/', order: ['b'] }, { sampleRate: 1 })));
    expect(double).toEqual([doubles]);
    expect(Object.is(double[0][1], -0)).toBe(true);
  });

  it('reads NIST StRD NumAcc4 from a float64 dataset to its certified mean and s', async () => {
    // NIST StRD NumAcc4: 10000000.2, then 500 × (10000000.1, 10000000.3); certified mean
    // 10000000.2, s = 0.1 (references.md §2; relative tolerance 1e-8 for s, the decimal
    // inputs being rounded in float64).
    const x = [10000000.2];
    for (let i = 0; i < 500; i++) x.push(10000000.1, 10000000.3);
    const path = h5File((f) => f.create_dataset({ name: 'numacc4', data: Float64Array.from(x) }));
    const [values] = await readAll(await openHdf5(path, sidecar({ group: '/' }, { sampleRate: 1 })));
    const s = statsOf(values);
    expect(Math.abs(s.mean - 10000000.2) / 10000000.2).toBeLessThan(1e-15);
    expect(Math.abs(s.stdSample - 0.1) / 0.1).toBeLessThan(1e-8);
  });

  it('gives integer channels units through a sidecar scale, as applySidecar does for any format', async () => {
    const path = h5File((f) => f.create_dataset({ name: 'counts', data: Int16Array.from([-200, 100, 400]) }));
    const side = sidecar({ group: '/' }, { sampleRate: 10, channels: [{ index: 0, unit: 'g', scale: 0.005, fullScale: 2 }] });
    const recording = applySidecar(await openHdf5(path, side), side);
    expect(recording.channels[0]).toEqual({ index: 0, name: 'counts', unit: 'g', clipLow: -2, clipHigh: 2 });
    expect(await readAll(recording)).toEqual([[-1, 0.5, 2]]);
  });
});

describe('openHdf5() takes names, units and the sample rate from attributes', () => {
  it('names channels and gives units from attributes of a 2-D dataset', async () => {
    const path = h5File((f) => {
      const d = f.create_dataset({ name: 'm', data: new Float32Array(6), shape: [2, 3], dtype: '<f' });
      d.create_attribute('names', ['x1', 'y1', 'z1']);
      d.create_attribute('unit', ['g', 'g', 'm/s^2']);
      d.create_attribute('one-unit', 'Pa');
    });
    const named = await openHdf5(
      path,
      sidecar({ dataset: '/m', layout: 'samples-by-channels', channelNamesAttribute: 'names', unitAttribute: 'unit' }, { sampleRate: 50 }),
    );
    expect(named.channels).toEqual([
      { index: 0, name: 'x1', unit: 'g' },
      { index: 1, name: 'y1', unit: 'g' },
      { index: 2, name: 'z1', unit: 'm/s^2' },
    ]);
    const oneUnit = await openHdf5(path, sidecar({ dataset: '/m', layout: 'samples-by-channels', unitAttribute: 'one-unit' }, { sampleRate: 50 }));
    expect(oneUnit.channels.map((c) => c.unit)).toEqual(['Pa', 'Pa', 'Pa']);
  });

  it('gives each group member its own unit, noting a member without one', async () => {
    const path = h5File((f) => {
      const g = f.create_group('g');
      g.create_dataset({ name: 'force', data: new Float64Array(3) }).create_attribute('unit', 'N');
      g.create_dataset({ name: 'acc', data: new Float64Array(3) }).create_attribute('unit', 'g');
      g.create_dataset({ name: 'trigger', data: new Float64Array(3) });
    });
    const recording = await openHdf5(path, sidecar({ group: '/g', unitAttribute: 'unit' }, { sampleRate: 1 }));
    expect(recording.channels).toEqual([
      { index: 0, name: 'acc', unit: 'g' },
      { index: 1, name: 'force', unit: 'N' },
      { index: 2, name: 'trigger' },
    ]);
    expect(recording.notes).toEqual(['"trigger" in "/g" has no attribute "unit"; its unit is not known']);
  });

  it('reads only the members order: lists, in that order, noting the rest', async () => {
    const path = h5File((f) => {
      const g = f.create_group('g');
      for (const name of ['time', 'z1', 'y1', 'x1']) g.create_dataset({ name, data: Float64Array.from([name.length, 2, 3]) });
      g.create_group('meta');
    });
    const recording = await openHdf5(path, sidecar({ group: '/g', order: ['z1', 'x1'] }, { sampleRate: 1 }));
    expect(recording.channels.map((c) => c.name)).toEqual(['z1', 'x1']);
    expect(recording.notes).toEqual(['the group "/g" also holds "meta", "time", "y1", not listed in hdf5.order and not read']);
    const all = await openHdf5(path, sidecar({ group: '/g' }, { sampleRate: 1 }));
    expect(all.channels.map((c) => c.name)).toEqual(['time', 'x1', 'y1', 'z1']);
    expect(all.notes).toEqual(['the group "/g" also holds "meta", which is not a dataset and was not read']);
  });

  it('sorts members by name with numbers by value: ch2 before ch10, and ch02 after ch2', async () => {
    const names = ['ch10', 'ch2', 'ch1', 'ch02', 'b', 'a10b', 'a9b'];
    const path = h5File((f) => {
      for (const name of names) f.create_dataset({ name, data: new Float64Array(2) });
    });
    const recording = await openHdf5(path, sidecar({ group: '/' }, { sampleRate: 1 }));
    expect(recording.channels.map((c) => c.name)).toEqual(['a9b', 'a10b', 'b', 'ch1', 'ch02', 'ch2', 'ch10']);
  });

  it('finds the rate attribute on the dataset, else on the nearest group above it', async () => {
    const path = h5File((f) => {
      f.create_attribute('fs', 1000);
      const run = f.create_group('run');
      run.create_attribute('fs', 2048.5);
      run.create_dataset({ name: 'own', data: new Float64Array(4), shape: [2, 2], dtype: '<d' }).create_attribute('fs', 4096);
      run.create_dataset({ name: 'plain', data: new Float64Array(4), shape: [2, 2], dtype: '<d' });
      f.create_dataset({ name: 'top', data: new Float64Array(4), shape: [2, 2], dtype: '<d' });
    });
    const rate = async (dataset: string) =>
      (await openHdf5(path, sidecar({ dataset, layout: 'samples-by-channels', sampleRateAttribute: 'fs' }))).sampleRate;
    expect(await rate('/run/own')).toBe(4096);
    expect(await rate('/run/plain')).toBe(2048.5);
    expect(await rate('/top')).toBe(1000);
  });

  it('takes a rate all group members agree on before one above the group, as an integer or a one-element list', async () => {
    const path = h5File((f) => {
      f.create_attribute('fs', 1);
      const g = f.create_group('g');
      g.create_dataset({ name: 'a', data: new Float64Array(2) }).create_attribute('fs', 512);
      g.create_dataset({ name: 'b', data: new Float64Array(2) }).create_attribute('fs', Float64Array.from([512]));
    });
    expect((await openHdf5(path, sidecar({ group: '/g', sampleRateAttribute: 'fs' }))).sampleRate).toBe(512);
  });

  it('takes the rate from the sidecar, else from the open options', async () => {
    const path = h5File((f) => f.create_dataset({ name: 'x', data: new Float64Array(2) }));
    expect((await openHdf5(path, sidecar({ group: '/' }, { sampleRate: 25600 }))).sampleRate).toBe(25600);
    expect((await openHdf5(path, sidecar({ group: '/' }), { sampleRate: 51200 })).sampleRate).toBe(51200);
  });

  it('says which attribute a conflicting sidecar sample-rate contradicts', async () => {
    const path = h5File((f) => {
      f.create_dataset({ name: 'x', data: new Float64Array(4), shape: [2, 2], dtype: '<d' }).create_attribute('fs', 2048);
    });
    const side = sidecar({ dataset: '/x', layout: 'samples-by-channels', sampleRateAttribute: 'fs' }, { sampleRate: 1000 });
    const recording = await openHdf5(path, side);
    let err: unknown;
    try {
      applySidecar(recording, side);
    } catch (e) {
      err = e;
    }
    expect((err as Error).message).toBe(
      `Cannot read "x.h5.channels.yaml": sample-rate is 1000 Hz but the attribute "fs" of "/x" in "${path}" says 2048 Hz`,
    );
  });
});

describe('openHdf5() streams in slices', () => {
  it('gives the same samples in blocks of 3 frames as in blocks of 65536, in both layouts', async () => {
    const x = Array.from({ length: 50 }, (_, k) => k);
    const y = x.map((k) => -k);
    const path = h5File((f) => {
      f.create_dataset({ name: 'sc', data: bySamples([x, y]), shape: [50, 2], dtype: '<d' });
      f.create_dataset({ name: 'cs', data: byChannels([x, y]), shape: [2, 50], dtype: '<d' });
    });
    for (const [dataset, layout] of [['sc', 'samples-by-channels'], ['cs', 'channels-by-samples']] as const) {
      const recording = await openHdf5(path, sidecar({ dataset, layout }, { sampleRate: 1 }));
      expect(await readAll(recording, 3)).toEqual([x, y]);
      expect(await readAll(recording, 65536)).toEqual([x, y]);
    }
  });

  it('honours startFrame and endFrame, and reuse of the block arrays', async () => {
    const x = Array.from({ length: 100 }, (_, k) => k * 0.5);
    const path = h5File((f) => f.create_dataset({ name: 'm', data: byChannels([x]), shape: [1, 100], dtype: '<d' }));
    const recording = await openHdf5(path, sidecar({ dataset: '/m', layout: 'channels-by-samples' }, { sampleRate: 1 }));
    const starts: number[] = [];
    const values: number[] = [];
    const arrays = new Set<ArrayBuffer>();
    for await (const block of recording.blocks({ startFrame: 10, endFrame: 35, blockFrames: 10, reuse: true })) {
      starts.push(block.start);
      values.push(...block.channels[0]);
      arrays.add(block.channels[0].buffer as ArrayBuffer);
    }
    expect(starts).toEqual([10, 20, 30]);
    expect(values).toEqual(x.slice(10, 35));
    expect(arrays.size).toBe(1);
  });

  it('reads a dataset of 6.4 MB one slice of a block at a time, holding at most one slice', async () => {
    const channels = 4;
    const frames = 200_000; // 4 × 8 bytes × 200 000 = 6.4 MB
    const data = new Float64Array(frames * channels);
    for (let k = 0; k < data.length; k++) data[k] = k % 1000;
    const path = h5File((f) => {
      f.create_dataset({ name: 'sc', data, shape: [frames, channels], dtype: '<d' });
    });
    // blockFrames 10 000: 20 slices of 10 000 frames × 32 bytes.
    let meter = new ReadMeter();
    let count = 0;
    let progress: [number, number] = [0, 0];
    const small = await openHdf5(path, sidecar({ dataset: '/sc', layout: 'samples-by-channels' }, { sampleRate: 1 }), { meter });
    for await (const block of small.blocks({ blockFrames: 10_000, onProgress: (read, total) => (progress = [read, total]) })) {
      for (let i = 0; i < block.length; i++) {
        const k = (block.start + i) * channels + 3;
        if (block.channels[3][i] !== k % 1000) throw new Error(`frame ${block.start + i} read wrong`);
      }
      count += block.length;
    }
    expect(count).toBe(frames);
    expect(progress).toEqual([frames * channels * 8, frames * channels * 8]);
    expect(meter.reads).toBe(20);
    expect(meter.peakHeld).toBe(10_000 * channels * 8);
    expect(meter.held).toBe(0);

    // One block of the whole dataset: still read in slices of at most 4 MiB.
    meter = new ReadMeter();
    const whole = await openHdf5(path, sidecar({ dataset: '/sc', layout: 'samples-by-channels' }, { sampleRate: 1 }), { meter });
    count = 0;
    for await (const block of whole.blocks({ blockFrames: frames })) count += block.length;
    expect(count).toBe(frames);
    expect(meter.reads).toBe(2);
    expect(meter.peakHeld).toBeLessThanOrEqual(4 * 1024 * 1024);
    expect(meter.peakHeld).toBeGreaterThan(0);
    expect(meter.held).toBe(0);
  });

  it('holds one member slice at a time for a group', async () => {
    const path = h5File((f) => {
      for (const name of ['a', 'b', 'c']) f.create_dataset({ name, data: new Float32Array(30_000).fill(1), dtype: '<f' });
    });
    const meter = new ReadMeter();
    const recording = await openHdf5(path, sidecar({ group: '/' }, { sampleRate: 1 }), { meter });
    expect((await readAll(recording, 5000)).map((c) => c.length)).toEqual([30_000, 30_000, 30_000]);
    expect(meter.reads).toBe(3 * 6);
    expect(meter.peakHeld).toBe(5000 * 4);
    expect(meter.held).toBe(0);
  });

  it('opens the file read-only and leaves it unchanged', async () => {
    const path = h5File((f) => f.create_dataset({ name: 'x', data: new Float64Array(100).fill(2) }));
    const before = { hash: sha256(path), mtimeMs: statSync(path).mtimeMs, mode: statSync(path).mode };
    await readAll(await openHdf5(path, sidecar({ group: '/' }, { sampleRate: 1 })), 30);
    expect({ hash: sha256(path), mtimeMs: statSync(path).mtimeMs, mode: statSync(path).mode }).toEqual(before);
  });

  it('closes the file when a pass ends, is left early, or fails', async () => {
    const path = h5File((f) => f.create_dataset({ name: 'x', data: new Float64Array(100).fill(2) }));
    const recording = await openHdf5(path, sidecar({ group: '/' }, { sampleRate: 1 }));
    expect(isOpenHere(path)).toBe(false);

    const blocks = recording.blocks({ blockFrames: 10 })[Symbol.asyncIterator]();
    await blocks.next();
    expect(isOpenHere(path)).toBe(true); // the check can fail: the file is open mid-pass
    await blocks.return?.();
    expect(isOpenHere(path)).toBe(false);

    await readAll(recording, 7);
    expect(isOpenHere(path)).toBe(false);

    const err = await errorOf(
      (async () => {
        for await (const block of recording.blocks({ blockFrames: 10 })) {
          if (block.start === 20) throw new Error('consumer failed');
        }
      })(),
    );
    expect(err.message).toBe('consumer failed');
    expect(isOpenHere(path)).toBe(false);
  });

  it('refuses a blockFrames that is not a positive whole number', async () => {
    const path = h5File((f) => f.create_dataset({ name: 'x', data: new Float64Array(4) }));
    const recording = await openHdf5(path, sidecar({ group: '/' }, { sampleRate: 1 }));
    const err = await errorOf(readAll(recording, 0));
    expect(err).toBeInstanceOf(UsageError);
    expect(err.message).toBe('blockFrames must be a whole number of sample frames, at least 1, not 0');
    expect(isOpenHere(path)).toBe(false);
  });
});

describe('openHdf5() refuses what it cannot read, naming the file', () => {
  let path: string;
  beforeAll(() => {
    path = h5File((f) => {
      f.create_attribute('title', 'shaker run');
      const run = f.create_group('run-07');
      const m = run.create_dataset({ name: 'accel', data: new Float64Array(6), shape: [3, 2], dtype: '<d' });
      m.create_attribute('names', ['x1', 'y1', 'z1']);
      m.create_attribute('dup', ['x1', 'x1']);
      m.create_attribute('numbers', Float64Array.from([1, 2]));
      m.create_attribute('fs-text', '2048 Hz');
      m.create_attribute('fs-negative', -5);
      m.create_attribute('fs-two', Float64Array.from([1, 2]));
      m.create_attribute('units3', ['g', 'g', 'g']);
      run.create_dataset({ name: 'empty', data: new Float64Array(0), shape: [7, 0], dtype: '<d' });
      run.create_dataset({ name: 'line', data: new Float64Array(5) });
      run.create_dataset({ name: 'cube', data: new Float64Array(8), shape: [2, 2, 2], dtype: '<d' });
      run.create_dataset({ name: 'labels', data: ['a', 'b'] });
      run.create_dataset({ name: 'records', data: new Map<string, Float64Array>([['t', Float64Array.from([1, 2])], ['v', Float64Array.from([3, 4])]]) });
      run.create_dataset({ name: 'i8', data: Int8Array.from([1, 2]) });
      run.create_dataset({ name: 'u16', data: Uint16Array.from([1, 2]) });
      run.create_dataset({ name: 'i64', data: BigInt64Array.from([1n, 2n]) });
      const ragged = run.create_group('ragged');
      ragged.create_dataset({ name: 'a', data: new Float64Array(10) });
      ragged.create_dataset({ name: 'b', data: new Float64Array(9) });
      const mixed = run.create_group('mixed');
      mixed.create_dataset({ name: 'a', data: new Float64Array(3) });
      mixed.create_dataset({ name: 'b', data: new Float32Array(3), dtype: '<f' });
      const flat = run.create_group('flat');
      flat.create_dataset({ name: 'a', data: new Float64Array(3) });
      flat.create_dataset({ name: 'b', data: new Float64Array(6), shape: [3, 2], dtype: '<d' });
      const rates = run.create_group('rates');
      rates.create_dataset({ name: 'a', data: new Float64Array(3) }).create_attribute('fs', 100);
      rates.create_dataset({ name: 'b', data: new Float64Array(3) }).create_attribute('fs', 200);
      run.create_group('nothing');
      for (const name of ['c', 'd', 'e', 'f', 'g', 'h', 'i', 'j']) f.create_group(name);
    });
  });

  const m = (extra: Partial<Extract<Hdf5Mapping, { dataset: string }>> = {}): Hdf5Mapping => ({
    dataset: '/run-07/accel',
    layout: 'samples-by-channels',
    ...extra,
  });

  it.each<[string, () => Hdf5Mapping, string]>([
    [
      'a dataset path whose first name is wrong, listing a few top-level names',
      () => m({ dataset: '/run-08/accel' }),
      'has no "/run-08/accel" (hdf5.dataset in the sidecar "x.h5.channels.yaml"); the top level holds "c", "d", "e", "f", "g", "h", "i", "j" and 1 more',
    ],
    [
      'a dataset path whose last name is wrong, listing the group it would be in',
      () => m({ dataset: '/run-07/acel' }),
      'has no "/run-07/acel" (hdf5.dataset in the sidecar "x.h5.channels.yaml"); "/run-07" holds "accel", "cube", "empty", "flat", "i64", "i8", "labels", "line" and 6 more',
    ],
    [
      'a path through a dataset',
      () => m({ dataset: '/run-07/accel/x' }),
      'has no "/run-07/accel/x" (hdf5.dataset in the sidecar "x.h5.channels.yaml"); "/run-07" holds "accel", "cube", "empty", "flat", "i64", "i8", "labels", "line" and 6 more',
    ],
    [
      'a group given as dataset',
      () => m({ dataset: '/run-07/ragged' }),
      '"/run-07/ragged" (hdf5.dataset in the sidecar "x.h5.channels.yaml") is a group, not a dataset; for a group of 1-D datasets, one per channel, give hdf5.group instead',
    ],
    [
      'a dataset given as group',
      () => ({ group: '/run-07/accel' }),
      '"/run-07/accel" (hdf5.group in the sidecar "x.h5.channels.yaml") is a dataset, not a group; for one 2-D dataset holding every channel give hdf5.dataset and hdf5.layout instead',
    ],
    [
      'a 1-D dataset given as dataset',
      () => m({ dataset: '/run-07/line' }),
      '"/run-07/line" (hdf5.dataset in the sidecar "x.h5.channels.yaml") is 1-D (shape [5]); hdf5.dataset must be a 2-D dataset (samples × channels); for one 1-D dataset per channel give hdf5.group (the group that holds them, with order: to pick some)',
    ],
    [
      'a 3-D dataset',
      () => m({ dataset: '/run-07/cube' }),
      '"/run-07/cube" (hdf5.dataset in the sidecar "x.h5.channels.yaml") is 3-D (shape [2, 2, 2]); hdf5.dataset must be a 2-D dataset (samples × channels); for one 1-D dataset per channel give hdf5.group (the group that holds them, with order: to pick some)',
    ],
    [
      'a 2-D dataset whose channel axis is empty',
      () => m({ dataset: '/run-07/empty' }),
      '"/run-07/empty" has shape [7, 0]: with layout samples-by-channels its channel axis (axis 1) is 0 long, so it holds no channels',
    ],
    [
      'text samples',
      () => ({ group: '/run-07', order: ['labels'] }),
      '"/run-07/labels" holds text, not numbers; HDF5 samples must be integers or floats',
    ],
    [
      'compound samples',
      () => ({ group: '/run-07', order: ['records'] }),
      '"/run-07/records" holds compound values (records of several fields), not numbers; HDF5 samples must be integers or floats',
    ],
    [
      '8-bit signed integers',
      () => ({ group: '/run-07', order: ['i8'] }),
      '"/run-07/i8" holds 8-bit signed integers; HDF5 samples are read as unsigned 8-bit, signed 16- or 32-bit integers, or 32- or 64-bit floats',
    ],
    [
      '16-bit unsigned integers',
      () => ({ group: '/run-07', order: ['u16'] }),
      '"/run-07/u16" holds 16-bit unsigned integers; HDF5 samples are read as unsigned 8-bit, signed 16- or 32-bit integers, or 32- or 64-bit floats',
    ],
    [
      '64-bit integers',
      () => ({ group: '/run-07', order: ['i64'] }),
      '"/run-07/i64" holds 64-bit signed integers; HDF5 samples are read as unsigned 8-bit, signed 16- or 32-bit integers, or 32- or 64-bit floats',
    ],
    [
      'group members of different lengths, naming both',
      () => ({ group: '/run-07/ragged' }),
      'group member "/run-07/ragged/b" has 9 samples but "/run-07/ragged/a" has 10; every channel must have the same length',
    ],
    [
      'group members of different sample types',
      () => ({ group: '/run-07/mixed' }),
      'group member "/run-07/mixed/b" holds float32 but "/run-07/mixed/a" holds float64; every channel must have the same sample type',
    ],
    [
      'a group member that is not 1-D, naming it',
      () => ({ group: '/run-07/flat' }),
      'group member "/run-07/flat/b" is 2-D (shape [3, 2]); every channel of hdf5.group must be a 1-D dataset',
    ],
    [
      'a group with no datasets',
      () => ({ group: '/run-07/nothing' }),
      'the group "/run-07/nothing" (hdf5.group in the sidecar "x.h5.channels.yaml") holds no datasets',
    ],
    [
      'an order: entry that is not in the group',
      () => ({ group: '/run-07/ragged', order: ['a', 'q'] }),
      'hdf5.order lists "q" but the group "/run-07/ragged" has no such member; it holds "a", "b"',
    ],
    [
      'an order: entry that is a group',
      () => ({ group: '/run-07', order: ['ragged'] }),
      'hdf5.order lists "ragged", but "/run-07/ragged" is not a dataset',
    ],
    [
      'a missing sample-rate attribute, listing those there are',
      () => m({ sampleRateAttribute: 'rate' }),
      'has no attribute "rate" (hdf5.sample-rate-attribute) on "/run-07/accel" or on a group above it; "/run-07/accel" has "dup", "fs-negative", "fs-text", "fs-two", "names", "numbers", "units3"',
    ],
    [
      'a missing sample-rate attribute on a group and its members',
      () => ({ group: '/run-07/ragged', order: ['a'], sampleRateAttribute: 'fs' }),
      'has no attribute "fs" (hdf5.sample-rate-attribute) on "/run-07/ragged", on every one of its members, or on a group above it; "/run-07/ragged" has no attributes',
    ],
    [
      'group members that disagree on the rate',
      () => ({ group: '/run-07/rates', sampleRateAttribute: 'fs' }),
      'the attribute "fs" of "/run-07/rates/b" is 200 Hz but that of "/run-07/rates/a" is 100 Hz; all channels must have one sample rate',
    ],
    [
      'a rate attribute that is text',
      () => m({ sampleRateAttribute: 'fs-text' }),
      'the attribute "fs-text" of "/run-07/accel" is the text "2048 Hz", not a number of hertz',
    ],
    [
      'a rate attribute that is not positive',
      () => m({ sampleRateAttribute: 'fs-negative' }),
      'the attribute "fs-negative" of "/run-07/accel" is -5, not a positive number of hertz',
    ],
    [
      'a rate attribute of two values',
      () => m({ sampleRateAttribute: 'fs-two' }),
      'the attribute "fs-two" of "/run-07/accel" holds 2 values; a sample rate is one number of hertz',
    ],
    [
      'a channel-names attribute of the wrong length',
      () => m({ channelNamesAttribute: 'names' }),
      'the attribute "names" (hdf5.channel-names-attribute) of "/run-07/accel" has 3 names but the dataset has 2 channels',
    ],
    [
      'a channel-names attribute that repeats a name',
      () => m({ channelNamesAttribute: 'dup' }),
      'the attribute "dup" (hdf5.channel-names-attribute) of "/run-07/accel" gives the name "x1" to channels 1 and 2',
    ],
    [
      'a channel-names attribute of numbers',
      () => m({ channelNamesAttribute: 'numbers' }),
      'the attribute "numbers" (hdf5.channel-names-attribute) of "/run-07/accel" holds numbers, not text',
    ],
    [
      'a missing channel-names attribute',
      () => m({ channelNamesAttribute: 'labels' }),
      '"/run-07/accel" has no attribute "labels" (hdf5.channel-names-attribute); it has "dup", "fs-negative", "fs-text", "fs-two", "names", "numbers", "units3"',
    ],
    [
      'a unit attribute of the wrong length',
      () => m({ unitAttribute: 'units3' }),
      'the attribute "units3" (hdf5.unit-attribute) of "/run-07/accel" has 3 units but the dataset has 2 channels (give one for all, or one each)',
    ],
    [
      'a unit attribute no group member has',
      () => ({ group: '/run-07/mixed', order: ['a'], unitAttribute: 'unit' }),
      'no member of the group "/run-07/mixed" has an attribute "unit" (hdf5.unit-attribute)',
    ],
  ])('refuses %s', async (_label, mapping, detail) => {
    const err = await errorOf(openHdf5(path, sidecar(mapping(), { sampleRate: 100 })));
    expect(err).toBeInstanceOf(RecordingError);
    expect(err.message).toBe(`Cannot read "${path}": ${detail}`);
    expect(isOpenHere(path)).toBe(false);
  });

  it('refuses an HDF5 file without a sidecar', async () => {
    const err = await errorOf(openHdf5(path, undefined));
    expect(err.message).toBe(
      `Cannot read "${path}": an HDF5 file needs a sidecar with an hdf5: section (dataset or group, layout, sample rate); ` +
        `none was given or found at "${path}.channels.yaml"`,
    );
  });

  it('refuses a sidecar without an hdf5: section', async () => {
    const err = await errorOf(openHdf5(path, { path: 'meta.yaml', sampleRate: 100, channels: [] }));
    expect(err.message).toBe(
      `Cannot read "${path}": its sidecar "meta.yaml" has no hdf5: section (dataset or group, layout, sample rate), which an HDF5 file needs`,
    );
  });

  it('refuses a recording without a sample rate', async () => {
    const err = await errorOf(openHdf5(path, sidecar(m())));
    expect(err.message).toBe(
      `Cannot read "${path}": no sample rate (give hdf5.sample-rate-attribute or sample-rate in the sidecar "x.h5.channels.yaml", or --sample-rate)`,
    );
  });

  it('refuses a rate given that contradicts the rate attribute or the sidecar', async () => {
    const withRate = h5File((f) => {
      f.create_dataset({ name: 'x', data: new Float64Array(4), shape: [2, 2], dtype: '<d' }).create_attribute('fs', 2048);
    });
    const fromAttribute = await errorOf(
      openHdf5(withRate, sidecar({ dataset: '/x', layout: 'samples-by-channels', sampleRateAttribute: 'fs' }), { sampleRate: 1000 }),
    );
    expect(fromAttribute.message).toBe(
      `Cannot read "${withRate}": the attribute "fs" of "/x" says 2048 Hz but the sample rate given is 1000 Hz`,
    );
    const fromSidecar = await errorOf(
      openHdf5(withRate, sidecar({ dataset: '/x', layout: 'samples-by-channels' }, { sampleRate: 4096 }), { sampleRate: 1000 }),
    );
    expect(fromSidecar.message).toBe(
      `Cannot read "${withRate}": its sidecar "x.h5.channels.yaml" says 4096 Hz but the sample rate given is 1000 Hz`,
    );
  });

  it('refuses a file that is not HDF5, in plain words', async () => {
    const notHdf5 = join(dir, 'not.h5');
    writeFileSync(notHdf5, 'time,acc\n0,1\n'.repeat(100));
    const err = await errorOf(openHdf5(notHdf5, sidecar(m(), { sampleRate: 1 })));
    expect(err).toBeInstanceOf(RecordingError);
    expect(err.message).toBe(
      `Cannot read "${notHdf5}": is not an HDF5 file: the HDF5 signature (\\x89HDF\\r\\n\\x1a\\n) is neither at byte 0 nor at 512, 1024, 2048 … (after a user block)`,
    );
  });

  it('refuses an empty file, a missing file and a directory', async () => {
    const empty = join(dir, 'empty.h5');
    writeFileSync(empty, '');
    expect((await errorOf(openHdf5(empty, sidecar(m())))).message).toBe(`Cannot read "${empty}": the file is empty`);
    const missing = join(dir, 'missing.h5');
    expect((await errorOf(openHdf5(missing, sidecar(m())))).message).toBe(`Cannot read "${missing}": file not found`);
    expect((await errorOf(openHdf5(dir, sidecar(m())))).message).toBe(`Cannot read "${dir}": is a directory`);
  });

  it('refuses a truncated file, stating both lengths', async () => {
    const whole = readFileSync(path);
    const cut = join(dir, 'cut.h5');
    writeFileSync(cut, whole.subarray(0, whole.length - 100));
    const err = await errorOf(openHdf5(cut, sidecar(m(), { sampleRate: 1 })));
    expect(err).toBeInstanceOf(RecordingError);
    expect(err.message).toBe(
      `Cannot read "${cut}": is truncated: it is ${whole.length - 100} bytes long but its HDF5 superblock says ${whole.length}`,
    );
  });

  it('refuses a file with the signature but no readable superblock, in the library\'s innermost words', async () => {
    const garbage = join(dir, 'garbage.h5');
    writeFileSync(garbage, Buffer.concat([Buffer.from([0x89, 0x48, 0x44, 0x46, 0x0d, 0x0a, 0x1a, 0x0a]), Buffer.alloc(200, 0x33)]));
    const err = await errorOf(openHdf5(garbage, sidecar(m(), { sampleRate: 1 })));
    expect(err).toBeInstanceOf(RecordingError);
    expect(err.message).toBe(`Cannot read "${garbage}": the HDF5 library cannot open it: bad superblock version number`);
  });

  it('reads a file whose superblock follows a 512-byte user block', async () => {
    const plain = h5File((f) => f.create_dataset({ name: 'x', data: Float64Array.from([1, 2, 3]) }));
    const withUserBlock = join(dir, 'user-block.h5');
    writeFileSync(withUserBlock, Buffer.concat([Buffer.alloc(512, 0x41), readFileSync(plain)]));
    expect(looksLikeHdf5(readFileSync(withUserBlock).subarray(0, 1024))).toBe(true);
    expect(await readAll(await openHdf5(withUserBlock, sidecar({ group: '/' }, { sampleRate: 1 })))).toEqual([[1, 2, 3]]);
  });
});

describe('the sidecar hdf5: section', () => {
  function sidecarFile(text: string): string {
    fileNumber += 1;
    const path = join(dir, `s${fileNumber}.channels.yaml`);
    writeFileSync(path, text);
    return path;
  }

  it('reads a 2-D dataset mapping', async () => {
    const path = sidecarFile(
      'hdf5:\n  dataset: /run-07/accel\n  layout: channels-by-samples\n  sample-rate-attribute: fs\n' +
        '  channel-names-attribute: names\n  unit-attribute: unit\n',
    );
    expect((await loadSidecar(path)).hdf5).toEqual({
      dataset: '/run-07/accel',
      layout: 'channels-by-samples',
      sampleRateAttribute: 'fs',
      channelNamesAttribute: 'names',
      unitAttribute: 'unit',
    });
  });

  it('reads a group mapping with order', async () => {
    const path = sidecarFile('sample-rate: 2048\nhdf5:\n  group: /run-07/channels\n  order: [x1, y1, z1]\n');
    const read = await loadSidecar(path);
    expect(read.hdf5).toEqual({ group: '/run-07/channels', order: ['x1', 'y1', 'z1'] });
    expect(read.sampleRate).toBe(2048);
  });

  it.each([
    ['dataset and group both', 'hdf5:\n  dataset: /a\n  group: /b\n  layout: samples-by-channels\n', '3:10 hdf5.group: give either dataset (one 2-D dataset) or group (1-D datasets, one per channel), not both'],
    ['neither dataset nor group', 'hdf5:\n  sample-rate-attribute: fs\n', '2:3 hdf5: needs dataset (one 2-D dataset) or group (a group of 1-D datasets, one per channel)'],
    ['a dataset without layout', 'hdf5:\n  dataset: /a\n', '2:3 hdf5: needs layout (samples-by-channels or channels-by-samples) to tell which axis of the dataset is time'],
    ['a layout with group', 'hdf5:\n  group: /g\n  layout: samples-by-channels\n', '3:11 hdf5.layout: applies only to dataset; each member of a group is one channel'],
    ['order with dataset', 'hdf5:\n  dataset: /a\n  layout: samples-by-channels\n  order: [a]\n', '4:10 hdf5.order: applies only to group; the channels of a 2-D dataset are in its order'],
    ['channel names with group', 'hdf5:\n  group: /g\n  channel-names-attribute: names\n', '3:28 hdf5.channel-names-attribute: applies only to dataset; the channels of a group are named after its members'],
    ['a name twice in order', 'hdf5:\n  group: /g\n  order: [a, b, a]\n', '3:17 hdf5.order[2]: "a" is already listed as order[0]'],
    ['an unknown layout', 'hdf5:\n  dataset: /a\n  layout: rows\n', '3:11 hdf5.layout: must be one of samples-by-channels, channels-by-samples'],
    ['an empty order', 'hdf5:\n  group: /g\n  order: []\n', '3:10 hdf5.order: must NOT have fewer than 1 items'],
    ['an empty dataset path', 'hdf5:\n  dataset: ""\n  layout: samples-by-channels\n', '2:12 hdf5.dataset: must not be empty'],
    [
      'an unknown hdf5 key',
      'hdf5:\n  group: /g\n  rate: fs\n',
      '3:3 hdf5.rate: unknown key (known keys: dataset, group, order, layout, sample-rate-attribute, channel-names-attribute, unit-attribute)',
    ],
    ['an unknown top-level key', 'hdf: {}\n', '1:1 hdf: unknown key (known keys: sample-rate, raw, hdf5, channels)'],
  ])('refuses %s, pointing at the line and column', async (_label, text, detail) => {
    const path = sidecarFile(text);
    const err = await errorOf(loadSidecar(path));
    expect(err).toBeInstanceOf(RecordingError);
    expect(err.message).toBe(`Cannot read "${path}": ${detail}`);
  });

  it('lists several hdf5 problems in file order', async () => {
    const path = sidecarFile('hdf5:\n  group: /g\n  layout: samples-by-channels\n  channel-names-attribute: n\n');
    const err = await errorOf(loadSidecar(path));
    expect(err.message).toBe(
      `Cannot read "${path}": 2 problems:\n` +
        '  3:11 hdf5.layout: applies only to dataset; each member of a group is one channel\n' +
        '  4:28 hdf5.channel-names-attribute: applies only to dataset; the channels of a group are named after its members',
    );
  });

  it('drives openHdf5() from the YAML as written', async () => {
    const data = h5File((f) => {
      const g = f.create_group('run');
      g.create_attribute('fs', 1024);
      g.create_dataset({ name: 'accel', data: byChannels([[1, 2], [3, 4], [5, 6]]), shape: [3, 2], dtype: '<d' });
    });
    const path = sidecarFile('hdf5:\n  dataset: run/accel\n  layout: channels-by-samples\n  sample-rate-attribute: fs\n');
    const recording = await openHdf5(data, await loadSidecar(path));
    expect(recording.sampleRate).toBe(1024);
    expect(await readAll(recording)).toEqual([[1, 2], [3, 4], [5, 6]]);
  });
});
