import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { execFile } from 'node:child_process';
import { chmod, mkdir, readdir, readFile, readlink, realpath, rm, stat, truncate } from 'node:fs/promises';
import { join } from 'node:path';
import { promisify } from 'node:util';
import wavefile from 'wavefile';
import { RecordingError, UsageError } from '../../src/errors.js';
import { openWav } from '../../src/readers/wav.js';
import { ReadMeter, type Recording, type SampleBlock } from '../../src/readers/types.js';
import {
  FORMAT_FLOAT,
  FORMAT_PCM,
  buildWav,
  chunk,
  fixtureDir,
  interleave,
  riffFile,
  fmtChunk,
  writeFixture,
  type Encoding,
  type WavSpec,
} from '../helpers/wav-writer.js';

const run = promisify(execFile);

let dir: string;
let counter = 0;

beforeAll(async () => {
  dir = await fixtureDir();
});

afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

/** Writes a fixture to a fresh file name and returns its path. */
async function fixture(bytes: Uint8Array, name = 'f.wav'): Promise<string> {
  counter += 1;
  return writeFixture(dir, `${counter}-${name}`, bytes);
}

async function wavFile(spec: WavSpec, name?: string): Promise<string> {
  return fixture(buildWav(spec), name);
}

/** Reads every block and joins them, per channel. */
async function readAll(
  recording: Recording,
  blockFrames?: number,
): Promise<{ channels: number[][]; blocks: Omit<SampleBlock, 'channels'>[] }> {
  const channels: number[][] = recording.channels.map(() => []);
  const blocks: Omit<SampleBlock, 'channels'>[] = [];
  for await (const block of recording.blocks(blockFrames === undefined ? {} : { blockFrames })) {
    blocks.push({ start: block.start, length: block.length });
    block.channels.forEach((samples, c) => {
      expect(samples).toBeInstanceOf(Float64Array);
      expect(samples.length).toBe(block.length);
      channels[c].push(...samples);
    });
  }
  return { channels, blocks };
}

async function readError(promise: Promise<unknown>): Promise<RecordingError> {
  try {
    await promise;
  } catch (error) {
    expect(error).toBeInstanceOf(RecordingError);
    return error as RecordingError;
  }
  throw new Error('expected a RecordingError, but the promise resolved');
}

async function drain(recording: Recording, blockFrames?: number): Promise<void> {
  for await (const _ of recording.blocks(blockFrames === undefined ? {} : { blockFrames })) {
    // read through
  }
}

/** File descriptors of this process open on `path` (Linux /proc). */
async function descriptorsOn(path: string): Promise<number> {
  const target = await realpath(path);
  let n = 0;
  for (const fd of await readdir('/proc/self/fd')) {
    try {
      if ((await readlink(`/proc/self/fd/${fd}`)) === target) n += 1;
    } catch {
      // the fd used by readdir itself is gone by now
    }
  }
  return n;
}

/** Deterministic codes in [lo, hi] that include both ends, zero and ±1 LSB. */
function codes(lo: number, hi: number, n: number, seed: number): number[] {
  const mid = lo < 0 ? 0 : Math.floor((lo + hi + 1) / 2);
  const out = [lo, hi, mid, mid + 1, mid - 1];
  let state = seed >>> 0;
  while (out.length < n) {
    state = (Math.imul(state, 1664525) + 1013904223) >>> 0; // Numerical Recipes LCG
    out.push(lo + Math.floor((state / 2 ** 32) * (hi - lo + 1)));
  }
  return out;
}

const MIN_WAV_BYTES = 44;

describe('openWav() decodes each sample format to ±1 full scale', () => {
  // Microsoft RIFF/WAVE PCM layout (references.md §5): 8-bit unsigned with offset 128,
  // 16/24/32-bit signed little-endian; scaled by 2^(bits−1) as sox does.
  const cases: { encoding: Encoding; bits: number; codes: number[]; scale: (code: number) => number }[] = [
    { encoding: 'uint8', bits: 8, codes: [0, 1, 127, 128, 129, 254, 255], scale: (u) => (u - 128) / 128 },
    { encoding: 'int16', bits: 16, codes: [-32768, -32767, -1, 0, 1, 32766, 32767], scale: (v) => v / 2 ** 15 },
    {
      encoding: 'int24',
      bits: 24,
      // −1 is 0xFFFFFF: bit 23 must be sign-extended; 0x123456 checks byte order.
      codes: [-(2 ** 23), -(2 ** 23) + 1, -1, 0, 1, 0x123456, -0x123456, 2 ** 23 - 1],
      scale: (v) => v / 2 ** 23,
    },
    {
      encoding: 'int32',
      bits: 32,
      codes: [-(2 ** 31), -(2 ** 31) + 1, -1, 0, 1, 0x12345678, 2 ** 31 - 1],
      scale: (v) => v / 2 ** 31,
    },
  ];

  for (const { encoding, bits, codes: values, scale } of cases) {
    it(`reads ${bits}-bit PCM codes as code / 2^${bits - 1}${bits === 8 ? ' after removing the offset 128' : ''}`, async () => {
      const path = await wavFile({ fmt: { channels: 1, bitsPerSample: bits }, data: interleave(encoding, [values]) });
      const recording = await openWav(path);
      const { channels } = await readAll(recording);
      expect(channels[0]).toEqual(values.map(scale));
      expect(recording.sampleFormat).toBe(encoding);
      expect(recording.validBits).toBe(bits);
      expect(recording.quantisationStep).toBe(2 ** -(bits - 1));
    });

    it(`puts the clip levels of ${bits}-bit PCM exactly at its two extreme codes`, async () => {
      const lowest = bits === 8 ? 0 : -(2 ** (bits - 1));
      const highest = bits === 8 ? 255 : 2 ** (bits - 1) - 1;
      const path = await wavFile({
        fmt: { channels: 2, bitsPerSample: bits },
        data: interleave(encoding, [
          [lowest, highest],
          [highest, lowest],
        ]),
      });
      const recording = await openWav(path);
      const { channels } = await readAll(recording);
      for (const info of recording.channels) {
        expect(info.clipLow).toBe(-1);
        expect(info.clipHigh).toBe((2 ** (bits - 1) - 1) / 2 ** (bits - 1));
      }
      expect(channels[0]).toEqual([recording.channels[0].clipLow, recording.channels[0].clipHigh]);
      expect(channels[1]).toEqual([recording.channels[1].clipHigh, recording.channels[1].clipLow]);
    });
  }

  it('reads IEEE float 32 values exactly, including subnormal, infinite and NaN samples', async () => {
    // IEEE 754 binary32: every value below is exactly representable, so widening is exact.
    const values = [-1, -0.5, 0, 0.25, 1.5, Math.fround(0.1), 2 ** -149, -(2 ** 127), Infinity, -Infinity, NaN];
    const path = await wavFile({
      fmt: { formatTag: FORMAT_FLOAT, channels: 1, bitsPerSample: 32 },
      data: interleave('float32', [values]),
    });
    const recording = await openWav(path);
    const { channels } = await readAll(recording);
    expect(channels[0]).toEqual(values);
    expect(recording.sampleFormat).toBe('float32');
    expect(recording.validBits).toBeUndefined();
    expect(recording.quantisationStep).toBeUndefined();
    expect(recording.channels[0].clipLow).toBeUndefined();
    expect(recording.channels[0].clipHigh).toBeUndefined();
  });

  it('reads IEEE float 64 values exactly', async () => {
    const values = [0.1, -1e300, 5e-324, -0, 1 / 3, Infinity, NaN];
    const path = await wavFile({
      fmt: { formatTag: FORMAT_FLOAT, channels: 1, bitsPerSample: 64 },
      data: interleave('float64', [values]),
    });
    const recording = await openWav(path);
    const { channels } = await readAll(recording);
    expect(channels[0]).toEqual(values);
    expect(Object.is(channels[0][3], -0)).toBe(true);
    expect(recording.sampleFormat).toBe('float64');
  });

  it('describes the recording: format, rate, sample count and channel names', async () => {
    const path = await wavFile({
      fmt: { channels: 3, bitsPerSample: 16, sampleRate: 51200 },
      data: interleave('int16', [
        [1, 2, 3, 4],
        [5, 6, 7, 8],
        [9, 10, 11, 12],
      ]),
    });
    const recording = await openWav(path);
    expect(recording.path).toBe(path);
    expect(recording.format).toBe('wav');
    expect(recording.sampleRate).toBe(51200);
    expect(recording.sampleCount).toBe(4);
    expect(recording.channels.map((c) => [c.index, c.name, c.unit])).toEqual([
      [0, 'ch1', undefined],
      [1, 'ch2', undefined],
      [2, 'ch3', undefined],
    ]);
    expect(recording.notes).toEqual([]);
  });

  it('reads a file with no samples as zero blocks', async () => {
    const path = await wavFile({ fmt: { channels: 2, bitsPerSample: 16 }, data: new Uint8Array(0) });
    const recording = await openWav(path);
    expect(recording.sampleCount).toBe(0);
    const meter = new ReadMeter();
    const withMeter = await openWav(path, { meter });
    expect((await readAll(withMeter)).blocks).toEqual([]);
    expect(meter.peakHeld).toBe(0);
  });
});

describe('openWav() reads files written by the wavefile package', () => {
  // wavefile 11 writes plain PCM (tag 1) and float (tag 3) headers for 1–2 channels, and
  // decodes them itself with getSamples(): integer codes for PCM, values for float.
  const depths: { code: string; lo: number; hi: number; scale: (x: number) => number; format: string }[] = [
    { code: '8', lo: 0, hi: 255, scale: (u) => (u - 128) / 128, format: 'uint8' },
    { code: '16', lo: -(2 ** 15), hi: 2 ** 15 - 1, scale: (v) => v / 2 ** 15, format: 'int16' },
    { code: '24', lo: -(2 ** 23), hi: 2 ** 23 - 1, scale: (v) => v / 2 ** 23, format: 'int24' },
    { code: '32', lo: -(2 ** 31), hi: 2 ** 31 - 1, scale: (v) => v / 2 ** 31, format: 'int32' },
    { code: '32f', lo: 0, hi: 0, scale: (x) => x, format: 'float32' },
    { code: '64', lo: 0, hi: 0, scale: (x) => x, format: 'float64' },
  ];
  for (const { code, lo, hi, scale, format } of depths) {
    for (const channelCount of [1, 2]) {
      it(`reads wavefile's bit depth "${code}" with ${channelCount} channel(s) as wavefile decodes it`, async () => {
        const isFloat = code === '32f' || code === '64';
        const perChannel = Array.from({ length: channelCount }, (_, c) =>
          isFloat
            ? codes(-(2 ** 20), 2 ** 20, 50, 7 + c).map((v) => (code === '32f' ? Math.fround(v / 2 ** 19) : v / 3e5))
            : codes(lo, hi, 50, 11 + c),
        );
        const writer = new wavefile.WaveFile();
        writer.fromScratch(channelCount, 11025, code, channelCount === 1 ? perChannel[0] : perChannel);
        const path = await fixture(writer.toBuffer(), `wavefile-${code}.wav`);

        const reference = new wavefile.WaveFile(await readFile(path)).getSamples(false) as unknown;
        const expected = (channelCount === 1 ? [reference] : reference) as Float64Array[];
        const recording = await openWav(path);
        const { channels } = await readAll(recording);
        expect(recording.sampleFormat).toBe(format);
        expect(recording.sampleRate).toBe(11025);
        expect(recording.sampleCount).toBe(50);
        expect(channels).toEqual(expected.map((samples) => Array.from(samples, scale)));
      });
    }
  }
});

describe('openWav() reads WAVE_FORMAT_EXTENSIBLE headers', () => {
  it('reads 24 valid bits in a 32-bit container as left-justified codes', async () => {
    const codes24 = [-(2 ** 23), -1, 0, 1, 2 ** 23 - 1];
    const path = await wavFile({
      fmt: { channels: 1, bitsPerSample: 32, extensible: { validBits: 24, subFormat: FORMAT_PCM } },
      // WAVE_FORMAT_EXTENSIBLE (Microsoft, from memory): valid bits sit in the top of the
      // container, the low bits are zero.
      data: interleave('int32', [codes24.map((v) => v * 256)]),
    });
    const recording = await openWav(path);
    const { channels } = await readAll(recording);
    expect(channels[0]).toEqual(codes24.map((v) => v / 2 ** 23));
    expect(recording.sampleFormat).toBe('int32');
    expect(recording.validBits).toBe(24);
    expect(recording.quantisationStep).toBe(2 ** -23);
    expect(recording.channels[0].clipLow).toBe(-1);
    expect(recording.channels[0].clipHigh).toBe((2 ** 23 - 1) / 2 ** 23);
    expect(channels[0].at(-1)).toBe(recording.channels[0].clipHigh);
  });

  it('reads 20 valid bits in a 24-bit container with a quantisation step of 2^-19', async () => {
    const codes20 = [-(2 ** 19), 5, 2 ** 19 - 1];
    const path = await wavFile({
      fmt: { channels: 1, bitsPerSample: 24, extensible: { validBits: 20, subFormat: FORMAT_PCM } },
      data: interleave('int24', [codes20.map((v) => v * 16)]),
    });
    const recording = await openWav(path);
    expect((await readAll(recording)).channels[0]).toEqual(codes20.map((v) => v / 2 ** 19));
    expect(recording.sampleFormat).toBe('int24');
    expect(recording.validBits).toBe(20);
    expect(recording.quantisationStep).toBe(2 ** -19);
    expect(recording.channels[0].clipHigh).toBe(1 - 2 ** -19);
  });

  it('takes valid bits 0 to mean the whole container', async () => {
    const path = await wavFile({
      fmt: { channels: 1, bitsPerSample: 16, extensible: { validBits: 0, subFormat: FORMAT_PCM } },
      data: interleave('int16', [[-32768, 32767]]),
    });
    const recording = await openWav(path);
    expect(recording.validBits).toBe(16);
    expect(recording.quantisationStep).toBe(2 ** -15);
  });

  it('reads extensible IEEE float 32 with four channels', async () => {
    const data = [
      [0.5, -0.5, 0.125],
      [1, -1, 0],
      [Math.fround(0.3), 2, -2],
      [0.75, -0.75, 0.0625],
    ];
    const path = await wavFile({
      fmt: { channels: 4, bitsPerSample: 32, extensible: { subFormat: FORMAT_FLOAT, channelMask: 0x33 } },
      data: interleave('float32', data),
    });
    const recording = await openWav(path);
    expect((await readAll(recording)).channels).toEqual(data);
    expect(recording.sampleFormat).toBe('float32');
    expect(recording.validBits).toBeUndefined();
    expect(recording.channels.every((c) => c.clipHigh === undefined)).toBe(true);
  });
});

describe('openWav() deinterleaves many channels', () => {
  for (const [encoding, bits, channelCount] of [
    ['float32', 32, 5],
    ['float64', 64, 3],
  ] as const) {
    it(`puts sample i of channel c of a ${channelCount}-channel ${encoding} file in channels[c][i]`, async () => {
      const data = Array.from({ length: channelCount }, (_, c) => Array.from({ length: 20 }, (_, i) => c * 100 + i));
      const path = await wavFile({
        fmt: { formatTag: FORMAT_FLOAT, channels: channelCount, bitsPerSample: bits },
        data: interleave(encoding, data),
      });
      const recording = await openWav(path);
      expect(recording.channels).toHaveLength(channelCount);
      expect((await readAll(recording, 6)).channels).toEqual(data);
    });
  }
});

describe('openWav() walks the chunks', () => {
  it('skips unknown chunks of odd size before and after the data, honouring the pad byte', async () => {
    const odd = (n: number) => new Uint8Array(n).fill(0xee);
    const data = [10, 20, 30, 40, 250];
    const path = await wavFile({
      fmt: { channels: 1, bitsPerSample: 8 },
      // 5 data bytes: odd, so the data chunk itself is padded too.
      data: interleave('uint8', [data]),
      before: [chunk('LIST', odd(5)), chunk('JUNK', odd(3)), chunk('bext', odd(1)), chunk('fact', odd(4))],
      after: [chunk('id3 ', odd(7)), chunk('LIST', odd(2))],
    });
    const recording = await openWav(path);
    expect((await readAll(recording)).channels[0]).toEqual(data.map((u) => (u - 128) / 128));
    expect(recording.notes).toEqual([]);
  });

  it('reads the fmt chunk of sox float files (18 bytes, cbSize 0) and skips their fact chunk', async () => {
    const fmt = fmtChunk({ formatTag: FORMAT_FLOAT, channels: 1, bitsPerSample: 32 });
    const fmt18 = chunk('fmt ', new Uint8Array([...fmt.body, 0, 0]));
    const bytes = riffFile('RIFF', [fmt18, chunk('fact', new Uint8Array(4)), chunk('data', interleave('float32', [[0.5, -0.25]]))]);
    const recording = await openWav(await fixture(bytes));
    expect((await readAll(recording)).channels[0]).toEqual([0.5, -0.25]);
  });

  it('accepts a file whose last odd-sized chunk lacks its pad byte', async () => {
    const path = await wavFile({ fmt: { channels: 1, bitsPerSample: 8 }, data: new Uint8Array([128, 129, 130]) });
    const bytes = await readFile(path);
    const unpadded = await fixture(bytes.subarray(0, bytes.length - 1));
    const recording = await openWav(unpadded);
    expect(recording.sampleCount).toBe(3);
    expect(recording.notes).toEqual([]);
  });

  it('notes bytes after the data chunk that do not form a complete chunk', async () => {
    const path = await wavFile({ fmt: { channels: 1, bitsPerSample: 16 }, data: interleave('int16', [[1, 2]]) });
    const bytes = await readFile(path);
    const withGarbage = await fixture(Buffer.concat([bytes, Buffer.from([1, 2, 3, 4, 5])]));
    const recording = await openWav(withGarbage);
    expect(recording.notes).toEqual([
      `5 bytes after the "data" chunk, from byte ${bytes.length} to the end of the file, do not form a complete chunk; ignored.`,
    ]);
    expect((await readAll(recording)).channels[0]).toEqual([1 / 32768, 2 / 32768]);
  });

  it('notes and ignores a partial sample frame at the end of the data chunk', async () => {
    const data = Buffer.concat([Buffer.from(interleave('int16', [[1, 2], [3, 4]])), Buffer.from([9, 9, 9])]);
    const path = await wavFile({ fmt: { channels: 2, bitsPerSample: 16 }, data });
    const recording = await openWav(path);
    expect(recording.sampleCount).toBe(2);
    expect(recording.notes).toEqual([
      'The "data" chunk holds 11 bytes, not a whole number of 4-byte sample frames; the last 3 bytes were ignored.',
    ]);
    expect((await readAll(recording)).channels).toEqual([
      [1 / 32768, 2 / 32768],
      [3 / 32768, 4 / 32768],
    ]);
  });

  it('reads a data size of 0xFFFFFFFF in a RIFF file up to the end of the file, with a note', async () => {
    const path = await wavFile({
      fmt: { channels: 1, bitsPerSample: 16 },
      data: interleave('int16', [[7, -7, 70]]),
      dataDeclaredSize: 0xffffffff,
    });
    const recording = await openWav(path);
    expect(recording.sampleCount).toBe(3);
    expect(recording.notes).toEqual([
      'The "data" chunk size is 0xFFFFFFFF (length unknown, as left by a streaming writer); the samples were read up to the end of the file.',
    ]);
    expect((await readAll(recording)).channels[0]).toEqual([7, -7, 70].map((v) => v / 32768));
  });
});

describe('openWav() reads RF64 and BW64 files through their ds64 chunk', () => {
  // EBU Tech 3306 (RF64) and ITU-R BS.2088 (BW64): RIFF and data sizes are 0xFFFFFFFF and
  // the ds64 chunk, first after "WAVE", holds them as 64-bit values.
  for (const container of ['RF64', 'BW64'] as const) {
    it(`reads a ${container} file whose data size is only in ds64`, async () => {
      const data = [
        [-32768, 0, 32767, 5],
        [1, -1, 2, -2],
      ];
      const bytes = buildWav({ container, fmt: { channels: 2, bitsPerSample: 16 }, data: interleave('int16', data) });
      const view = new DataView(bytes.buffer, bytes.byteOffset);
      expect(view.getUint32(4, true)).toBe(0xffffffff); // the fixture really defers to ds64
      const recording = await openWav(await fixture(bytes));
      expect(recording.format).toBe(container.toLowerCase());
      expect(recording.sampleCount).toBe(4);
      expect((await readAll(recording)).channels).toEqual(data.map((ch) => ch.map((v) => v / 32768)));
    });
  }

  it('reads extensible float 64 in RF64', async () => {
    const data = [[0.1, 0.2], [0.3, 0.4], [0.5, 0.6]];
    const recording = await openWav(
      await wavFile({
        container: 'RF64',
        fmt: { channels: 3, bitsPerSample: 64, extensible: { subFormat: FORMAT_FLOAT } },
        data: interleave('float64', data),
      }),
    );
    expect(recording.sampleFormat).toBe('float64');
    expect((await readAll(recording)).channels).toEqual(data);
  });

  it('uses the 32-bit data size, not ds64, when an RF64 writer filled it in', async () => {
    const data = interleave('int16', [[3, 4, 5]]);
    const recording = await openWav(
      await wavFile({
        container: 'RF64',
        fmt: { channels: 1, bitsPerSample: 16 },
        data,
        dataDeclaredSize: data.length,
        ds64: { dataSize: 0n },
      }),
    );
    expect(recording.sampleCount).toBe(3);
  });

  it('takes the size of another chunk from the ds64 table when its header says 0xFFFFFFFF', async () => {
    const recording = await openWav(
      await wavFile({
        container: 'RF64',
        fmt: { channels: 1, bitsPerSample: 8 },
        data: new Uint8Array([128, 255]),
        before: [chunk('JUNK', new Uint8Array(9), { declaredSize: 0xffffffff })],
        ds64: { table: [{ id: 'JUNK', size: 9n }] },
      }),
    );
    expect((await readAll(recording)).channels[0]).toEqual([0, 127 / 128]);
  });
});

describe('Recording.blocks()', () => {
  const frames = 100;
  const data = [
    codes(-(2 ** 23), 2 ** 23 - 1, frames, 1),
    codes(-(2 ** 23), 2 ** 23 - 1, frames, 2),
    codes(-(2 ** 23), 2 ** 23 - 1, frames, 3),
  ];
  const blockAlign = 9; // 3 channels × 3 bytes
  let path: string;
  beforeAll(async () => {
    path = await wavFile({ fmt: { channels: 3, bitsPerSample: 24 }, data: interleave('int24', data) });
  });

  it('gives the same samples with 7-frame blocks as with 65536-frame blocks', async () => {
    const recording = await openWav(path);
    const small = await readAll(recording, 7);
    const large = await readAll(recording, 65536);
    expect(small.channels).toEqual(large.channels);
    expect(large.channels).toEqual(data.map((ch) => ch.map((v) => v / 2 ** 23)));
    expect(large.blocks).toEqual([{ start: 0, length: frames }]);
  });

  it('numbers blocks consecutively, with a shorter last block', async () => {
    const { blocks } = await readAll(await openWav(path), 7);
    expect(blocks).toHaveLength(Math.ceil(frames / 7));
    blocks.forEach((block, i) => {
      expect(block.start).toBe(i * 7);
      expect(block.length).toBe(i < blocks.length - 1 ? 7 : frames % 7);
    });
  });

  it('gives each block fresh channel arrays that later blocks do not overwrite', async () => {
    const kept: Float64Array[] = [];
    for await (const block of (await openWav(path)).blocks({ blockFrames: 10 })) kept.push(block.channels[0]);
    expect(kept.flatMap((a) => Array.from(a))).toEqual(data[0].map((v) => v / 2 ** 23));
  });

  it('holds two read buffers of one block while iterating (one being read, one decoded), and none afterwards', async () => {
    const meter = new ReadMeter();
    const recording = await openWav(path, { meter });
    await drain(recording, 7);
    expect(meter.peakHeld).toBe(2 * 7 * blockAlign);
    expect(meter.reads).toBe(2);
    expect(meter.held).toBe(0);
  });

  it('sizes the read buffer to the file when the file is shorter than a block', async () => {
    const meter = new ReadMeter();
    await drain(await openWav(path, { meter }));
    expect(meter.peakHeld).toBe(frames * blockAlign);
    expect(meter.held).toBe(0);
  });

  it.skipIf(process.platform !== 'linux')(
    'releases the buffer and closes its file handle when the loop breaks early',
    async () => {
      const meter = new ReadMeter();
      const recording = await openWav(path, { meter });
      expect(await descriptorsOn(path)).toBe(0); // openWav closed its header handle
      for await (const block of recording.blocks({ blockFrames: 7 })) {
        expect(block.start).toBe(0);
        expect(meter.held).toBe(2 * 7 * blockAlign); // this block's buffer, and the next one's being read
        expect(await descriptorsOn(path)).toBe(1);
        break;
      }
      expect(meter.held).toBe(0);
      expect(await descriptorsOn(path)).toBe(0);
    },
  );

  it.skipIf(process.platform !== 'linux')(
    'releases the buffer and closes its file handle when the consumer throws',
    async () => {
      const meter = new ReadMeter();
      const recording = await openWav(path, { meter });
      const consume = async () => {
        for await (const _ of recording.blocks({ blockFrames: 7 })) throw new Error('consumer failed');
      };
      await expect(consume()).rejects.toThrow('consumer failed');
      expect(meter.held).toBe(0);
      expect(await descriptorsOn(path)).toBe(0);
    },
  );

  it('re-reads the file on a second iteration', async () => {
    const recording = await openWav(path);
    const first = await readAll(recording, 13);
    const second = await readAll(recording, 13);
    expect(second).toEqual(first);
  });

  it('reports progress after each block in data bytes', async () => {
    const calls: [number, number][] = [];
    const recording = await openWav(path);
    for await (const _ of recording.blocks({ blockFrames: 40, onProgress: (done, total) => calls.push([done, total]) })) {
      // consume
    }
    const total = frames * blockAlign;
    expect(calls).toEqual([
      [40 * blockAlign, total],
      [80 * blockAlign, total],
      [total, total],
    ]);
  });

  it('refuses a block size that is not a positive whole number', async () => {
    const recording = await openWav(path);
    for (const blockFrames of [0, -3, 2.5, Number.NaN]) {
      const error = await drain(recording, blockFrames).then(
        () => undefined,
        (e: unknown) => e,
      );
      expect(error).toBeInstanceOf(UsageError);
      expect((error as UsageError).message).toBe(`blockFrames must be a positive whole number (got ${String(blockFrames)})`);
    }
  });

  it('says how many sample frames were read when the file shrinks during reading', async () => {
    const copy = await fixture(await readFile(path), 'shrinking.wav');
    const recording = await openWav(copy);
    // Cut the file inside frame 52: blocks of 7 deliver frames 0..48, then the read of
    // the block at 49 comes up short.
    await truncate(copy, MIN_WAV_BYTES + 52 * blockAlign + 4);
    const error = await readError(drain(recording, 7));
    expect(error.message).toBe(
      `Cannot read "${copy}": file became shorter while it was being read: only 49 of 100 sample frames were read`,
    );
    expect(error.offset).toBe(MIN_WAV_BYTES + 52 * blockAlign + 4);
  });
});

describe('openWav() reads files written by sox', () => {
  // sox 14 (Debian package sox) writes the headers; soxi reports what it wrote, and
  // `sox FILE -t f64 -` decodes the samples to doubles scaled to ±1 (references.md §5).
  const sox = 'sox';
  const cases = [
    { args: ['-b', '24', '-c', '3'], format: 'int24' },
    { args: ['-b', '16', '-c', '3'], format: 'int16' },
    { args: ['-b', '8', '-c', '3'], format: 'uint8' },
    { args: ['-e', 'floating-point', '-b', '32', '-c', '3'], format: 'float32' },
  ];
  for (const { args, format } of cases) {
    it(`reads sox's ${args.join(' ')} file with sox's header facts and samples`, async () => {
      const sub = join(dir, `sox-${format}`);
      await mkdir(sub, { recursive: true });
      const path = join(sub, 'out.wav');
      await run(sox, ['-n', '-r', '8000', ...args, path, 'synth', '0.5', 'sine', '100', 'sine', '37', 'sine', '500']);
      const soxi = async (flag: string) => (await run('soxi', [flag, path])).stdout.trim();

      const recording = await openWav(path);
      expect(recording.channels).toHaveLength(Number(await soxi('-c')));
      expect(recording.sampleRate).toBe(Number(await soxi('-r')));
      expect(recording.sampleCount).toBe(Number(await soxi('-s')));
      expect(recording.sampleFormat).toBe(format);
      expect(String(recording.validBits ?? 32)).toBe(await soxi('-b'));

      const raw = (await run(sox, [path, '-t', 'f64', '-'], { encoding: 'buffer', maxBuffer: 1 << 24 })).stdout;
      const view = new DataView(raw.buffer, raw.byteOffset, raw.byteLength);
      const { channels } = await readAll(recording, 1000);
      const n = recording.channels.length;
      expect(raw.byteLength).toBe(8 * n * (recording.sampleCount ?? 0));
      // For integer PCM sox's decode is exact. sox holds samples as 32-bit integers
      // internally (from memory), so a float32 file comes back within 2^-31.
      const tolerance = format === 'float32' ? 2 ** -31 : 0;
      let worst = 0;
      for (let i = 0; i < (recording.sampleCount ?? 0); i++) {
        for (let c = 0; c < n; c++) {
          worst = Math.max(worst, Math.abs(channels[c][i] - view.getFloat64(8 * (i * n + c), true)));
        }
      }
      expect(worst).toBeLessThanOrEqual(tolerance);
    });
  }
});

describe('openWav() refuses files it cannot read, saying what is wrong and where', () => {
  const pcm16 = { channels: 1, bitsPerSample: 16 };
  const someData = interleave('int16', [[1, 2, 3, 4]]);

  async function messageFor(bytes: Uint8Array): Promise<{ path: string; error: RecordingError }> {
    const path = await fixture(bytes);
    return { path, error: await readError(openWav(path)) };
  }

  it('names a file that does not exist', async () => {
    const path = join(dir, 'missing.wav');
    const error = await readError(openWav(path));
    expect(error.message).toBe(`Cannot read "${path}": no such file`);
    expect(error.file).toBe(path);
  });

  it('refuses a directory', async () => {
    const error = await readError(openWav(dir));
    expect(error.message).toBe(`Cannot read "${dir}": not a regular file`);
  });

  it('refuses a file that does not start with RIFF, RF64 or BW64', async () => {
    const { path, error } = await messageFor(new Uint8Array([...Buffer.from('OggS'), ...new Uint8Array(60)]));
    expect(error.message).toBe(
      `Cannot read "${path}": not a WAV file (expected "RIFF", "RF64" or "BW64" at byte 0, found "OggS")`,
    );
    expect(error.offset).toBe(0);
  });

  it('shows unprintable bytes of a wrong magic number as \\x escapes', async () => {
    const { path, error } = await messageFor(new Uint8Array([0x00, 0x01, 0x22, 0xff, ...new Uint8Array(60)]));
    expect(error.message).toBe(
      `Cannot read "${path}": not a WAV file (expected "RIFF", "RF64" or "BW64" at byte 0, found "\\x00\\x01\\x22\\xff")`,
    );
  });

  it('refuses a RIFF file of another form', async () => {
    const bytes = riffFile('RIFF', [chunk('avih', new Uint8Array(56))], { form: 'AVI ' });
    const { path, error } = await messageFor(bytes);
    expect(error.message).toBe(`Cannot read "${path}": not a WAV file (expected "WAVE" at byte 8, found "AVI ")`);
  });

  it('refuses files too short to hold a WAV header', async () => {
    for (const bytes of [new Uint8Array(0), Buffer.from('RI'), buildWav({ fmt: pcm16, data: someData }).subarray(0, 20)]) {
      const { path, error } = await messageFor(bytes);
      expect(error.message).toBe(
        `Cannot read "${path}": file is ${bytes.length} bytes long, too short for a WAV header (44 bytes at least)`,
      );
    }
  });

  it('refuses a data chunk that comes before any fmt chunk', async () => {
    const { path, error } = await messageFor(buildWav({ fmt: pcm16, data: someData, fmtAfterData: true }));
    expect(error.message).toBe(`Cannot read "${path}": no "fmt " chunk before the "data" chunk`);
    expect(error.offset).toBe(12);
  });

  it('refuses a file without a data chunk, listing the chunks it has', async () => {
    const { path, error } = await messageFor(
      buildWav({ fmt: pcm16, data: someData, omitData: true, after: [chunk('LIST', new Uint8Array(4))] }),
    );
    expect(error.message).toBe(`Cannot read "${path}": no "data" chunk in the file (found "fmt ", "LIST")`);
  });

  it('lists unprintable chunk ids as \\x escapes when there is no data chunk', async () => {
    const bytes = new Uint8Array(44);
    bytes.set(Buffer.from('RIFF'), 0);
    bytes.set(Buffer.from('WAVE'), 8);
    new DataView(bytes.buffer).setUint32(16, 24, true); // one 24-byte chunk with id 0x00000000
    const { path, error } = await messageFor(bytes);
    expect(error.message).toBe(`Cannot read "${path}": no "data" chunk in the file (found "\\x00\\x00\\x00\\x00")`);
    expect(error.offset).toBe(44);
  });

  it('refuses a data chunk cut short by the end of the file', async () => {
    const data = interleave('int16', [Array.from({ length: 100 }, (_, i) => i)]);
    const full = buildWav({ fmt: pcm16, data });
    const { path, error } = await messageFor(full.subarray(0, 44 + 120));
    // data header at 36 (12 RIFF + 24 fmt), samples from 44, 200 bytes declared.
    expect(error.message).toBe(
      `Cannot read "${path}": "data" chunk at byte 36 is cut short: the file ends at byte 164 but the chunk header declares it ends at byte 244`,
    );
    expect(error.offset).toBe(36);
  });

  it('refuses a data chunk whose header declares more bytes than the file holds', async () => {
    const { path, error } = await messageFor(buildWav({ fmt: pcm16, data: someData, dataDeclaredSize: 1000 }));
    expect(error.message).toBe(
      `Cannot read "${path}": "data" chunk at byte 36 is cut short: the file ends at byte 52 but the chunk header declares it ends at byte 1044`,
    );
  });

  it('refuses a chunk before the data whose size runs past the end of the file', async () => {
    const { path, error } = await messageFor(
      buildWav({ fmt: pcm16, data: someData, before: [chunk('LIST', new Uint8Array(4), { declaredSize: 5000 })] }),
    );
    expect(error.message).toBe(
      `Cannot read "${path}": "LIST" chunk at byte 36 is cut short: the file ends at byte 64 but the chunk header declares it ends at byte 5044`,
    );
  });

  it('refuses format tags other than PCM, IEEE float and extensible, naming them in hex', async () => {
    for (const [tag, hex] of [
      [0x0002, '0x0002'],
      [0x0006, '0x0006'],
      [0x0055, '0x0055'],
      [0xabcd, '0xABCD'],
    ] as const) {
      const { path, error } = await messageFor(buildWav({ fmt: { ...pcm16, formatTag: tag }, data: someData }));
      expect(error.message).toBe(`Cannot read "${path}": format tag ${hex} (not PCM or IEEE float) is not supported`);
      expect(error.offset).toBe(20);
    }
  });

  it('refuses bit depths it does not decode', async () => {
    const cases = [
      { fmt: { channels: 1, bitsPerSample: 12, blockAlign: 2 }, detail: '12 bits per sample is not supported for PCM (8, 16, 24 or 32)' },
      { fmt: { channels: 1, bitsPerSample: 0, blockAlign: 2 }, detail: '0 bits per sample is not supported for PCM (8, 16, 24 or 32)' },
      { fmt: { channels: 1, bitsPerSample: 16, formatTag: FORMAT_FLOAT }, detail: '16 bits per sample is not supported for IEEE float (32 or 64)' },
      { fmt: { channels: 1, bitsPerSample: 24, formatTag: FORMAT_FLOAT }, detail: '24 bits per sample is not supported for IEEE float (32 or 64)' },
      {
        fmt: { channels: 1, bitsPerSample: 20, extensible: { subFormat: FORMAT_PCM } },
        detail: '20 bits per sample is not supported for PCM (8, 16, 24 or 32)',
      },
    ];
    for (const { fmt, detail } of cases) {
      const { path, error } = await messageFor(buildWav({ fmt, data: someData }));
      expect(error.message).toBe(`Cannot read "${path}": ${detail}`);
    }
  });

  it('refuses a block align that does not match channels × bits', async () => {
    const { path, error } = await messageFor(buildWav({ fmt: { channels: 2, bitsPerSample: 16, blockAlign: 5 }, data: someData }));
    expect(error.message).toBe(`Cannot read "${path}": block align 5 does not match 2 channels of 16 bits (expected 4)`);
    const mono = await messageFor(buildWav({ fmt: { channels: 1, bitsPerSample: 24, blockAlign: 4 }, data: someData }));
    expect(mono.error.message).toBe(`Cannot read "${mono.path}": block align 4 does not match 1 channel of 24 bits (expected 3)`);
  });

  it('refuses zero channels', async () => {
    const { path, error } = await messageFor(buildWav({ fmt: { channels: 0, bitsPerSample: 16, blockAlign: 2 }, data: someData }));
    expect(error.message).toBe(`Cannot read "${path}": "fmt " chunk declares 0 channels`);
  });

  it('refuses a sample rate of zero', async () => {
    const { path, error } = await messageFor(buildWav({ fmt: { ...pcm16, sampleRate: 0 }, data: someData }));
    expect(error.message).toBe(`Cannot read "${path}": "fmt " chunk declares a sample rate of 0`);
  });

  it('refuses a fmt chunk shorter than 16 bytes', async () => {
    const { path, error } = await messageFor(buildWav({ fmt: { ...pcm16, bodyLength: 14 }, data: someData }));
    expect(error.message).toBe(`Cannot read "${path}": "fmt " chunk at byte 12 is 14 bytes long, too short (16 bytes at least)`);
  });

  it('refuses an extensible fmt chunk shorter than 40 bytes', async () => {
    const { path, error } = await messageFor(
      buildWav({ fmt: { ...pcm16, extensible: { subFormat: FORMAT_PCM }, bodyLength: 18 }, data: someData }),
    );
    expect(error.message).toBe(
      `Cannot read "${path}": "fmt " chunk at byte 12 is 18 bytes long, too short for WAVE_FORMAT_EXTENSIBLE (40 bytes)`,
    );
  });

  it('refuses extensible sub-formats other than PCM and IEEE float, showing the GUID', async () => {
    const ambisonicPcm = new Uint8Array([
      // Ambisonic B-format PCM sub-format 00000001-0721-11d3-8644-c8c1ca000000 (from memory):
      // first bytes say 1, but it is not the standard GUID.
      0x01, 0x00, 0x00, 0x00, 0x21, 0x07, 0xd3, 0x11, 0x86, 0x44, 0xc8, 0xc1, 0xca, 0x00, 0x00, 0x00,
    ]);
    for (const [subFormat, guid] of [
      [0x0002, '00000002-0000-0010-8000-00aa00389b71'],
      [ambisonicPcm, '00000001-0721-11d3-8644-c8c1ca000000'],
    ] as const) {
      const { path, error } = await messageFor(buildWav({ fmt: { ...pcm16, extensible: { subFormat } }, data: someData }));
      expect(error.message).toBe(`Cannot read "${path}": extensible sub-format ${guid} is not PCM or IEEE float`);
    }
  });

  it('refuses more valid bits than the container holds', async () => {
    const { path, error } = await messageFor(
      buildWav({ fmt: { ...pcm16, extensible: { validBits: 20, subFormat: FORMAT_PCM } }, data: someData }),
    );
    expect(error.message).toBe(`Cannot read "${path}": valid bits 20 exceed the 16-bit container`);
  });

  it('refuses an RF64 or BW64 file whose first chunk is not ds64', async () => {
    for (const container of ['RF64', 'BW64'] as const) {
      const { path, error } = await messageFor(buildWav({ container, fmt: pcm16, data: someData, omitDs64: true }));
      expect(error.message).toBe(
        `Cannot read "${path}": no "ds64" chunk at byte 12, which an ${container} file must have first (found "fmt ")`,
      );
    }
  });

  it('refuses a ds64 chunk too short for its three sizes and table length', async () => {
    const bytes = riffFile('RF64', [chunk('ds64', new Uint8Array(20)), fmtChunk(pcm16), chunk('data', someData)], {
      riffSize: 0xffffffff,
    });
    const { path, error } = await messageFor(bytes);
    expect(error.message).toBe(`Cannot read "${path}": "ds64" chunk at byte 12 is 20 bytes long, too short (28 bytes at least)`);
  });

  it('refuses a ds64 table longer than its chunk', async () => {
    const { path, error } = await messageFor(
      buildWav({ container: 'RF64', fmt: pcm16, data: someData, ds64: { tableLength: 3 } }),
    );
    expect(error.message).toBe(`Cannot read "${path}": "ds64" chunk at byte 12 declares 3 table entries but has room for 0`);
  });

  it('refuses a ds64 data size larger than the file', async () => {
    const bytes = buildWav({ container: 'BW64', fmt: pcm16, data: someData, ds64: { dataSize: 1n << 40n } });
    const { path, error } = await messageFor(bytes);
    // ds64 at 12 (8 + 28 bytes), fmt at 48 (24 bytes), data header at 72, samples from 80.
    expect(error.message).toBe(
      `Cannot read "${path}": "data" chunk at byte 72 is cut short: the file ends at byte ${bytes.length} ` +
        `but the "ds64" chunk declares it ends at byte ${80 + 2 ** 40}`,
    );
  });

  it('refuses a ds64 data size of 2^53 bytes or more, which a Number cannot hold exactly', async () => {
    const { path, error } = await messageFor(
      buildWav({ container: 'RF64', fmt: pcm16, data: someData, ds64: { dataSize: (1n << 53n) + 1n } }),
    );
    expect(error.message).toBe(
      `Cannot read "${path}": "ds64" chunk at byte 12 gives a data size of 9007199254740993 bytes; ` +
        'sizes of 2^53 bytes or more are not supported',
    );
  });

  it('refuses a ds64 table size of 2^53 bytes or more', async () => {
    const { path, error } = await messageFor(
      buildWav({ container: 'RF64', fmt: pcm16, data: someData, ds64: { table: [{ id: 'JUNK', size: 1n << 60n }] } }),
    );
    expect(error.message).toBe(
      `Cannot read "${path}": "ds64" chunk at byte 12 gives a size for the "JUNK" chunk of ${1n << 60n} bytes; ` +
        'sizes of 2^53 bytes or more are not supported',
    );
  });
});

describe('openWav() opens files read-only', () => {
  it("leaves the file's bytes and modification time as they were", async () => {
    const path = await wavFile({ fmt: { channels: 2, bitsPerSample: 24 }, data: interleave('int24', [[1, 2], [3, 4]]) });
    const before = { bytes: await readFile(path), mtime: (await stat(path)).mtimeMs };
    await drain(await openWav(path), 1);
    expect(await readFile(path)).toEqual(before.bytes);
    expect((await stat(path)).mtimeMs).toBe(before.mtime);
  });


  // Root may write anyway, so only an unprivileged user can tell 'r' from 'r+'.
  it.skipIf(process.platform === 'win32' || process.getuid?.() === 0)(
    'reads a file whose permissions forbid writing',
    async () => {
      const path = await wavFile({ fmt: { channels: 1, bitsPerSample: 16 }, data: interleave('int16', [[1]]) });
      await chmod(path, 0o444);
      const recording = await openWav(path);
      expect((await readAll(recording)).channels[0]).toEqual([1 / 32768]);
    },
  );
});

describe('openWav blocks with reuse', () => {
  it('decodes into the same arrays and delivers the same samples as fresh arrays', async () => {
    const dir = await fixtureDir();
    const n = 1000;
    const a = Array.from({ length: n }, (_, i) => ((i * 37) % 2001) - 1000);
    const b = Array.from({ length: n }, (_, i) => ((i * 91) % 3001) - 1500);
    const file = await writeFixture(dir, 'reuse.wav', buildWav({ fmt: { channels: 2, sampleRate: 1000, bitsPerSample: 16 }, data: interleave('int16', [a, b]) }));
    const rec = await openWav(file);
    const fresh: number[] = [];
    for await (const block of rec.blocks({ blockFrames: 64 })) fresh.push(...block.channels[1]);
    const reused: number[] = [];
    const arrays = new Set<ArrayBufferLike>();
    for await (const block of rec.blocks({ blockFrames: 64, reuse: true })) {
      reused.push(...block.channels[1].subarray(0, block.length));
      arrays.add(block.channels[1].buffer);
    }
    expect(reused).toEqual(fresh);
    expect(arrays.size).toBe(1); // one set of arrays for all 16 blocks
  });
});
