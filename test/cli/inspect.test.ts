import { describe, expect, it, beforeAll } from 'vitest';
import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { execa } from 'execa';
import { buildWav, fixtureDir, interleave, writeFixture } from '../helpers/wav-writer.js';
import { runCli } from '../helpers/cli.js';

const bin = fileURLToPath(new URL('../../dist/cli/bin.js', import.meta.url));

// A two-channel 16-bit recording: a sine of amplitude 0.5 with an integer number of
// cycles (RMS 0.5/√2 = 0.3536, kurtosis 1.5: references.md §3) and a channel that drops
// to exact zeros for 0.25 s starting at 2 s.
let dir = '';
let wav = '';
beforeAll(async () => {
  dir = await fixtureDir('vibgate-cli-');
  const fs = 1024;
  const n = fs * 4;
  const a: number[] = [];
  const b: number[] = [];
  for (let i = 0; i < n; i++) {
    a.push(Math.round(0.5 * Math.sin((2 * Math.PI * 16 * i) / fs) * 32768));
    b.push(i >= 2 * fs && i < 2.25 * fs ? 0 : Math.round(0.2 * Math.sin((2 * Math.PI * 50 * i) / fs + 0.3) * 32768));
  }
  wav = await writeFixture(dir, 'two.wav', buildWav({ fmt: { channels: 2, sampleRate: fs, bitsPerSample: 16 }, data: interleave('int16', [a, b]) }));
  await writeFile(`${wav}.channels.yaml`, 'channels:\n  - name: acc-01\n    unit: g\n  - name: acc-02\n    unit: g\n');
});

describe('vibgate inspect', () => {
  it('prints a table with the channel names, units and the dropout located in time', async () => {
    const r = await runCli(['inspect', wav]);
    expect(r.code).toBe(0);
    expect(r.stderr).toBe('');
    expect(r.stdout).toContain('WAV int16, 2 channels, 1024 Hz, 4 s (4096 samples per channel)');
    const row = r.stdout.split('\n').find((l) => l.trim().startsWith('acc-01'))!;
    expect(row).toMatch(/acc-01\s+g\s+0\.3536/);
    expect(r.stdout).toMatch(/acc-02 .* 0\.25 s at 2 s/);
  });

  it('gives every statistic as JSON, NaN and Infinity as null', async () => {
    const r = await runCli(['inspect', wav, '--format', 'json']);
    expect(r.code).toBe(0);
    const doc = JSON.parse(r.stdout);
    expect(doc.tool.name).toBe('vibgate');
    const [rec] = doc.recordings;
    expect(rec.sampleRate).toBe(1024);
    expect(rec.channels.map((c: { name: string }) => c.name)).toEqual(['acc-01', 'acc-02']);
    const st = rec.channels[0].stats;
    expect(st.kurtosis).toBeCloseTo(1.5, 4); // 16-bit quantisation moves it by ~1e-5
    expect(st.rms).toBeCloseTo(0.5 / Math.SQRT2, 4);
    expect(rec.channels[1].stats.longestZeroRun).toEqual({ samples: 256, seconds: 0.25, startTimeS: 2 });
    expect(rec.channels[0].stats.frames.used).toBe(4);
  });

  it('gives one CSV row per channel', async () => {
    const r = await runCli(['inspect', wav, '--format', 'csv']);
    const lines = r.stdout.trim().split('\n');
    expect(lines).toHaveLength(3);
    const header = lines[0].split(',');
    const row = lines[2].split(',');
    expect(row[header.indexOf('channel')]).toBe('acc-02');
    expect(Number(row[header.indexOf('longest_zero_run_s')])).toBe(0.25);
  });

  it('honours --frame-seconds and --overlap', async () => {
    const r = await runCli(['inspect', wav, '--format', 'json', '--frame-seconds', '0.5', '--overlap', '0.5']);
    const rec = JSON.parse(r.stdout).recordings[0];
    expect(rec.frames).toEqual({ seconds: 0.5, overlap: 0.5, samples: 512, hopSamples: 256 });
    // frames start every 0.25 s: 16 of them; the last holds exactly half a frame, which
    // is enough to be used
    expect(rec.channels[0].stats.frames.used).toBe(16);
    expect(rec.channels[0].stats.frames.leftOut).toBe(0);
    const r2 = await runCli(['inspect', wav, '--format', 'json', '--frame-seconds', '0.6']);
    // 614-sample frames: 6 full, the 7th holds 412 samples (over half), none left out;
    // with 0.9 s frames (922 samples) the 5th holds 408 samples (under half): left out
    expect(JSON.parse(r2.stdout).recordings[0].channels[0].stats.frames.used).toBe(7);
    const r3 = await runCli(['inspect', wav, '--format', 'json', '--frame-seconds', '0.9']);
    const f3 = JSON.parse(r3.stdout).recordings[0].channels[0].stats.frames;
    expect([f3.used, f3.leftOut]).toEqual([4, 1]);
  });

  it('reports an unreadable recording, still inspects the others, and exits 1', async () => {
    const missing = join(dir, 'nope.wav');
    const r = await runCli(['inspect', missing, wav]);
    expect(r.code).toBe(1);
    expect(r.stderr).toBe(`vibgate: Cannot read "${missing}": no such file\n`);
    expect(r.stdout).toContain('acc-01');
  });

  it('refuses unknown content with a clear message', async () => {
    const f = join(dir, 'clip.ogg');
    await writeFile(f, 'OggS\u0000\u0002rest of an audio file');
    const r = await runCli(['inspect', f]);
    expect(r.code).toBe(1);
    expect(r.stderr).toBe(
      `vibgate: Cannot read "${f}": unknown format (content starts with "OggS", extension ".ogg"); ` +
        'vibgate reads WAV/RF64/BW64, UFF dataset 58, HDF5, CSV/TSV, and raw samples described by a sidecar with a "raw" section (`vibgate formats` lists them)\n',
    );
  });

  it('exits 2 on wrong usage', async () => {
    expect((await runCli(['inspect'])).code).toBe(2);
    const r = await runCli(['inspect', wav, '--frame-seconds', '-1']);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('frame length must be a positive number, not "-1"');
    expect((await runCli(['inspect', wav, '--format', 'xml'])).code).toBe(2);
    expect((await runCli(['frobnicate'])).code).toBe(2);
  });

  it('runs through the built bin with the same exit codes', async () => {
    const ok = await execa('node', [bin, 'inspect', wav, '--format', 'json'], { reject: false });
    expect(ok.exitCode).toBe(0);
    expect(JSON.parse(ok.stdout).recordings[0].channels).toHaveLength(2);
    const bad = await execa('node', [bin, 'inspect', join(dir, 'nope.wav')], { reject: false });
    expect(bad.exitCode).toBe(1);
    expect(bad.stderr).toContain('no such file');
    expect(bad.stderr).not.toContain('    at '); // never a stack trace
    const usage = await execa('node', [bin, 'inspect', wav, '--overlap', '1'], { reject: false });
    expect(usage.exitCode).toBe(2);
  });
});
