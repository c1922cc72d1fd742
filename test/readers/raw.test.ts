import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { openRaw } from '../../src/readers/raw.js';
import type { RawEncoding, Sidecar } from '../../src/readers/sidecar.js';
import { ReadMeter } from '../../src/readers/types.js';
import type { Recording } from '../../src/readers/types.js';
import { RecordingError, UsageError } from '../../src/errors.js';

const dir = mkdtempSync(join(tmpdir(), 'vibgate-raw-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

let fileNumber = 0;
function rawFile(bytes: Buffer): string {
  fileNumber += 1;
  const path = join(dir, `f${fileNumber}.bin`);
  writeFileSync(path, bytes);
  return path;
}

function sidecar(encoding: RawEncoding, channels: number, extra: Partial<Sidecar> = {}, headerBytes = 0): Sidecar {
  return { path: 'x.bin.channels.yaml', sampleRate: 1000, raw: { encoding, channels, headerBytes }, channels: [], ...extra };
}

/** Interleaves frames (frame after frame, channel after channel) with Buffer's little-endian writers. */
function interleave(frames: number[][], bytes: number, write: (b: Buffer, v: number, at: number) => void): Buffer {
  const out = Buffer.alloc(frames.length * frames[0].length * bytes);
  let at = 0;
  for (const frame of frames) {
    for (const v of frame) {
      write(out, v, at);
      at += bytes;
    }
  }
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

describe('openRaw() decodes each encoding exactly', () => {
  it('reads int16le as PCM scaled to ±1: code / 2^15', async () => {
    // Two's complement 16-bit codes span −32768..32767; PCM convention divides by 2^15.
    const frames = [[-32768, 32767], [0, 1], [-1, 16384]];
    const path = rawFile(interleave(frames, 2, (b, v, at) => b.writeInt16LE(v, at)));
    const recording = await openRaw(path, sidecar('int16le', 2));
    expect(recording.format).toBe('raw');
    expect(recording.sampleFormat).toBe('int16');
    expect(recording.sampleCount).toBe(3);
    expect(recording.sampleRate).toBe(1000);
    expect(recording.validBits).toBe(16);
    expect(recording.quantisationStep).toBe(1 / 32768);
    expect(recording.channels).toEqual([
      { index: 0, name: 'ch1', clipLow: -1, clipHigh: 32767 / 32768 },
      { index: 1, name: 'ch2', clipLow: -1, clipHigh: 32767 / 32768 },
    ]);
    expect(await readAll(recording)).toEqual([
      [-1, 0, -1 / 32768],
      [32767 / 32768, 1 / 32768, 0.5],
    ]);
  });

  it('reads int32le as PCM scaled to ±1: code / 2^31', async () => {
    const frames = [[-2147483648], [2147483647], [-123456789]];
    const path = rawFile(interleave(frames, 4, (b, v, at) => b.writeInt32LE(v, at)));
    const recording = await openRaw(path, sidecar('int32le', 1));
    expect(recording.quantisationStep).toBe(2 ** -31);
    expect(recording.channels[0].clipHigh).toBe(1 - 2 ** -31);
    expect(await readAll(recording)).toEqual([[-1, 2147483647 / 2 ** 31, -123456789 / 2 ** 31]]);
  });

  it('reads float32le unscaled, as IEEE 754 single precision', async () => {
    const values = [0.1, -3.5, 1e-40, Infinity, NaN, 65504.25];
    const path = rawFile(interleave(values.map((v) => [v]), 4, (b, v, at) => b.writeFloatLE(v, at)));
    const recording = await openRaw(path, sidecar('float32le', 1));
    expect(recording.sampleFormat).toBe('float32');
    expect(recording.quantisationStep).toBeUndefined();
    expect(recording.validBits).toBeUndefined();
    expect(recording.channels).toEqual([{ index: 0, name: 'ch1' }]);
    // Math.fround gives the nearest single, as writeFloatLE stores it.
    expect(await readAll(recording)).toEqual([values.map((v) => Math.fround(v))]);
  });

  it('reads float64le unscaled, bit for bit', async () => {
    const frames = [[0.1, -0, 5e-324], [Number.MAX_VALUE, -Infinity, 1 / 3]];
    const path = rawFile(interleave(frames, 8, (b, v, at) => b.writeDoubleLE(v, at)));
    const columns = await readAll(await openRaw(path, sidecar('float64le', 3)));
    expect(columns).toEqual([[0.1, Number.MAX_VALUE], [-0, -Infinity], [5e-324, 1 / 3]]);
    expect(Object.is(columns[1][0], -0)).toBe(true);
  });

  it('skips header-bytes before the first sample', async () => {
    const samples = interleave([[1], [2]], 2, (b, v, at) => b.writeInt16LE(v, at));
    const path = rawFile(Buffer.concat([Buffer.from('HEADER!'), samples]));
    expect(await readAll(await openRaw(path, sidecar('int16le', 1, {}, 7)))).toEqual([[1 / 32768, 2 / 32768]]);
  });

  it('takes the sample rate from the options when the sidecar has none', async () => {
    const path = rawFile(Buffer.alloc(8));
    const recording = await openRaw(path, sidecar('float32le', 2, { sampleRate: undefined }), { sampleRate: 25600 });
    expect(recording.sampleRate).toBe(25600);
  });
});

describe('openRaw() streams', () => {
  it('gives the same samples in blocks of 3 frames as in blocks of 65536', async () => {
    const frames = Array.from({ length: 50 }, (_, k) => [k, -k, k * 2]);
    const path = rawFile(interleave(frames, 2, (b, v, at) => b.writeInt16LE(v, at)));
    const recording = await openRaw(path, sidecar('int16le', 3));
    expect(await readAll(recording, 3)).toEqual(await readAll(recording, 65536));
  });

  it('reads a file of several MiB through one reused read buffer of at most 1 MiB', async () => {
    const channels = 6;
    const frames = 300_000; // 6 × 4 bytes × 300 000 = 6.9 MiB
    const values = new Float32Array(frames * channels);
    for (let k = 0; k < values.length; k++) values[k] = k % 1000;
    const path = rawFile(Buffer.from(values.buffer));
    const meter = new ReadMeter();
    const recording = await openRaw(path, sidecar('float32le', channels), { meter });
    let count = 0;
    let progress = 0;
    for await (const block of recording.blocks({ blockFrames: 100_000, onProgress: (read) => (progress = read) })) {
      for (let i = 0; i < block.length; i++) {
        const k = (block.start + i) * channels + 5;
        if (block.channels[5][i] !== k % 1000) throw new Error(`frame ${block.start + i} read wrong`);
      }
      count += block.length;
    }
    expect(count).toBe(frames);
    expect(progress).toBe(frames * channels * 4);
    expect(meter.held).toBe(0);
    expect(meter.peakHeld).toBeLessThanOrEqual(1024 * 1024);
    expect(meter.peakHeld).toBeGreaterThan(0);
  });

  it('refuses a blockFrames that is not a positive whole number', async () => {
    const recording = await openRaw(rawFile(Buffer.alloc(4)), sidecar('int16le', 1));
    const err = await errorOf(readAll(recording, 2.5));
    expect(err).toBeInstanceOf(UsageError);
    expect(err.message).toBe('blockFrames must be a whole number of sample frames, at least 1, not 2.5');
  });
});

describe('openRaw() refuses what it cannot read', () => {
  it('refuses a size that is not a whole number of frames, stating the numbers', async () => {
    const path = rawFile(Buffer.alloc(16 + 8 * 4 * 3 + 30));
    const err = await errorOf(openRaw(path, sidecar('float32le', 8, {}, 16)));
    expect(err).toBeInstanceOf(RecordingError);
    expect(err.message).toBe(
      `Cannot read "${path}": 126 bytes after the 16-byte header are not a whole number of frames of ` +
        '8 channels × 4 bytes (32 bytes a frame): 30 bytes are left over',
    );
    expect((err as RecordingError).offset).toBe(16 + 96);
  });

  it('refuses a file no longer than its header', async () => {
    const path = rawFile(Buffer.alloc(10));
    const err = await errorOf(openRaw(path, sidecar('int16le', 1, {}, 64)));
    expect(err.message).toBe(
      `Cannot read "${path}": is 10 bytes long, which leaves no samples after the 64 header bytes the sidecar declares`,
    );
  });

  it('refuses a raw file without a sidecar', async () => {
    const path = rawFile(Buffer.alloc(4));
    const err = await errorOf(openRaw(path, undefined));
    expect(err.message).toBe(
      `Cannot read "${path}": a raw binary file needs a sidecar with a raw: section (encoding, channels, header-bytes); ` +
        `none was given or found at "${path}.channels.yaml"`,
    );
  });

  it('refuses a sidecar without a raw: section', async () => {
    const path = rawFile(Buffer.alloc(4));
    const err = await errorOf(openRaw(path, { path: 'meta.yaml', sampleRate: 100, channels: [] }));
    expect(err.message).toBe(
      `Cannot read "${path}": its sidecar "meta.yaml" has no raw: section (encoding, channels, header-bytes), which a raw binary file needs`,
    );
  });

  it('refuses a raw file without a sample rate', async () => {
    const path = rawFile(Buffer.alloc(4));
    const err = await errorOf(openRaw(path, sidecar('int16le', 1, { sampleRate: undefined })));
    expect(err.message).toBe(
      `Cannot read "${path}": no sample rate (give --sample-rate or sample-rate in the sidecar "x.bin.channels.yaml")`,
    );
  });

  it('refuses a sample rate given that contradicts the sidecar', async () => {
    const path = rawFile(Buffer.alloc(4));
    const err = await errorOf(openRaw(path, sidecar('int16le', 1), { sampleRate: 2048 }));
    expect(err.message).toBe(
      `Cannot read "${path}": its sidecar "x.bin.channels.yaml" says 1000 Hz but the sample rate given is 2048 Hz`,
    );
  });

  it('says when the file does not exist', async () => {
    const path = join(dir, 'missing.bin');
    const err = await errorOf(openRaw(path, sidecar('int16le', 1)));
    expect(err.message).toBe(`Cannot read "${path}": file not found`);
  });
});
