import { describe, expect, it, afterAll } from 'vitest';
import { closeSync, mkdtempSync, openSync, rmSync, statSync, writeSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { openRecording } from '../../src/readers/index.js';
import { ReadMeter } from '../../src/readers/types.js';
import { summariseBlocks } from '../../src/stats/summarise.js';
import { channelStats } from '../../src/stats/channel-stats.js';

// A recording large enough that loading it whole would show: 64 channels × 5 min at
// 2048 Hz, float32 (157 MB). Channel c holds a sine of c + 1 Hz, amplitude 0.5: an integer
// number of cycles, so RMS = A/√2 and kurtosis = 1.5 (references.md §3), to float32 rounding.
const channels = 64;
const fs = 2048;
const seconds = 300;
const frames = fs * seconds;
const dir = mkdtempSync(join(tmpdir(), 'vibgate-big-'));
const file = join(dir, 'long-64ch.wav');

function writeBigWav(): void {
  const dataBytes = frames * channels * 4;
  const header = Buffer.alloc(44);
  header.write('RIFF', 0, 'latin1');
  header.writeUInt32LE(36 + dataBytes, 4);
  header.write('WAVEfmt ', 8, 'latin1');
  header.writeUInt32LE(16, 16);
  header.writeUInt16LE(3, 20); // IEEE float
  header.writeUInt16LE(channels, 22);
  header.writeUInt32LE(fs, 24);
  header.writeUInt32LE(fs * channels * 4, 28);
  header.writeUInt16LE(channels * 4, 32);
  header.writeUInt16LE(32, 34);
  header.write('data', 36, 'latin1');
  header.writeUInt32LE(dataBytes, 40);
  const fd = openSync(file, 'w');
  writeSync(fd, header);
  const chunkFrames = 8192;
  const buf = new Float32Array(chunkFrames * channels);
  for (let start = 0; start < frames; start += chunkFrames) {
    const n = Math.min(chunkFrames, frames - start);
    for (let i = 0; i < n; i++) {
      const t = (start + i) / fs;
      for (let c = 0; c < channels; c++) buf[i * channels + c] = 0.5 * Math.sin(2 * Math.PI * (c + 1) * t);
    }
    writeSync(fd, new Uint8Array(buf.buffer, 0, n * channels * 4));
  }
  closeSync(fd);
}

afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('streaming a 157 MB recording', () => {
  it('holds two read buffers at most (double buffering) and gets the closed-form statistics', async () => {
    writeBigWav();
    const size = statSync(file).size;
    expect(size).toBeGreaterThan(150e6);
    const meter = new ReadMeter();
    const recording = await openRecording(file, { meter });
    const blockFrames = 4096;
    const blockBytes = blockFrames * channels * 4;
    let blocks = 0;
    let peakDuring = 0;
    const counted = (async function* () {
      for await (const b of recording.blocks({ blockFrames, reuse: true })) {
        blocks++;
        peakDuring = Math.max(peakDuring, meter.held);
        yield b;
      }
    })();
    const rssBefore = process.memoryUsage().rss;
    const summary = await summariseBlocks(counted, recording, { frameSeconds: 1 });
    const rssGrowth = process.memoryUsage().rss - rssBefore;

    expect(summary.samples).toBe(frames);
    expect(blocks).toBe(Math.ceil(frames / blockFrames));
    // by the counter: never more than two blocks' bytes of file data held (one decoded, the
    // next being read), released at the end
    expect(meter.peakHeld).toBeLessThanOrEqual(2 * blockBytes);
    expect(peakDuring).toBeLessThanOrEqual(2 * blockBytes);
    expect(meter.held).toBe(0);
    // and the process did not grow by anything like the file's size
    expect(rssGrowth).toBeLessThan(size / 2);

    for (const c of [0, 9, 63]) {
      const st = channelStats(summary.channels[c], { sampleRate: fs });
      expect(st.rms).toBeCloseTo(0.5 / Math.SQRT2, 6);
      expect(st.kurtosis).toBeCloseTo(1.5, 5);
      expect(st.frames!.used).toBe(seconds);
      expect(st.frames!.kurtosis.max).toBeCloseTo(1.5, 4);
    }
  });
});
