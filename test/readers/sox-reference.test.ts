import { describe, expect, it, beforeAll } from 'vitest';
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { inspectRecording } from '../../src/cli/inspect.js';
import type { ChannelStats } from '../../src/stats/channel-stats.js';
import { skipWithout } from '../helpers/tools.js';

// Reference tool: SoX 14.4 (Debian package `sox`). Files are written by `sox -n ... synth`
// and read back by vibgate; `sox FILE -n stats` (printed to stderr, samples scaled to ±1)
// gives the reference figures. What sox prints (references.md §5):
//   DC offset = mean; Min/Max level; Pk lev dB = 20·log10(peak); RMS lev dB = 20·log10(RMS);
//   Crest factor = peak/RMS; Flat factor = 20·log10(Σr²/Σr) over runs at min or max;
//   Pk count = samples at min or max (printed to 3 significant digits, e.g. "2.35k").

type SoxStats = Record<string, number[]>;

/** Parses `sox -n stats`: returns per-channel values (the "Overall" column is dropped). */
function soxStats(file: string): SoxStats {
  const out = spawnSync('sox', [file, '-n', 'stats'], { encoding: 'utf8' });
  if (out.status !== 0) throw new Error(`sox failed on ${file}: ${out.stderr}`);
  const lines = out.stderr.split('\n').filter((l) => l.trim() !== '');
  const multi = lines[0].trim().startsWith('Overall');
  const stats: SoxStats = {};
  for (const line of multi ? lines.slice(1) : lines) {
    const m = /^(\S+(?: \S+)*?)\s{2,}(.*)$/.exec(line) ?? /^(.+?)\s+(-?[\d.]+k?|-?inf|-)$/.exec(line);
    if (!m) continue;
    const values = m[2].trim().split(/\s+/).map(parseSox);
    // per-channel columns follow "Overall"; lines such as "Num samples" have only the overall value
    stats[m[1].trim()] = multi && values.length > 1 ? values.slice(1) : values;
  }
  return stats;
}

function parseSox(text: string): number {
  if (text === '-') return NaN;
  if (text.endsWith('k')) return Number(text.slice(0, -1)) * 1000;
  if (text === '-inf') return -Infinity;
  return Number(text);
}

/** Half a unit of the third significant digit sox prints for counts of 1000 and more. */
const printRounding = (v: number) => (v >= 1000 ? 5 * 10 ** (Math.floor(Math.log10(v)) - 3) : 0);

const db = (x: number) => 20 * Math.log10(x);

function compare(st: ChannelStats, sox: SoxStats, c: number): void {
  // sox prints 6 decimals for levels and 2 for dB and crest: compare to its rounding
  expect(Math.abs(st.mean - sox['DC offset'][c])).toBeLessThanOrEqual(0.5e-6 + 1e-12);
  expect(Math.abs(st.min - sox['Min level'][c])).toBeLessThanOrEqual(0.5e-6 + 1e-12);
  expect(Math.abs(st.max - sox['Max level'][c])).toBeLessThanOrEqual(0.5e-6 + 1e-12);
  expect(Math.abs(db(st.peak) - sox['Pk lev dB'][c])).toBeLessThanOrEqual(0.005 + 1e-9);
  expect(Math.abs(db(st.rms) - sox['RMS lev dB'][c])).toBeLessThanOrEqual(0.005 + 1e-9);
  expect(Math.abs(st.crestFactor - sox['Crest factor'][c])).toBeLessThanOrEqual(0.005 + 1e-9);
  expect(Math.abs(st.extremes.flatFactorDb - sox['Flat factor'][c])).toBeLessThanOrEqual(0.005 + 1e-9);
  // Pk count and Num samples are printed to 3 significant digits
  expect(Math.abs(st.extremes.atMin + st.extremes.atMax - sox['Pk count'][c])).toBeLessThanOrEqual(printRounding(sox['Pk count'][c]));
  const soxSamples = sox['Num samples'][Math.min(c, sox['Num samples'].length - 1)];
  expect(Math.abs(st.samples - soxSamples)).toBeLessThanOrEqual(printRounding(soxSamples));
}

describe.skipIf(skipWithout('sox'))('against sox stats on files written by sox synth', () => {
  let dir = '';
  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'vibgate-sox-'));
  });

  const cases: Array<{ name: string; args: string[] }> = [
    { name: '16-bit, 2 channels: sines 100 Hz and 37 Hz', args: ['-r', '2048', '-n', '-b', '16', '-c', '2', 'F', 'synth', '10', 'sine', '100', 'sine', '37'] },
    { name: '24-bit, 3 channels: white noise, pink noise, sine', args: ['-r', '4096', '-n', '-b', '24', '-c', '3', 'F', 'synth', '8', 'whitenoise', 'pinknoise', 'sine', '50'] },
    { name: '32-bit float, 2 channels: triangle and square with offset', args: ['-r', '8000', '-n', '-e', 'floating-point', '-b', '32', '-c', '2', 'F', 'synth', '3', 'triangle', '60', 'square', '40', 'vol', '0.5', 'dcshift', '0.1'] },
    { name: '8-bit unsigned PCM, 1 channel: sine', args: ['-r', '8000', '-n', '-b', '8', '-c', '1', 'F', 'synth', '2', 'sine', '440'] },
    { name: '16-bit clipped sine (flat tops at full scale)', args: ['-r', '8000', '-n', '-b', '16', '-c', '1', 'F', 'synth', '2', 'sine', '50', 'vol', '1.5'] },
    { name: '32-bit PCM, 4 channels: brown noise, sines', args: ['-r', '2048', '-n', '-b', '32', '-c', '4', 'F', 'synth', '5', 'brownnoise', 'sine', '10', 'sine', '200', 'sawtooth', '30'] },
  ];

  for (const c of cases) {
    it(`${c.name}: mean, min, max, RMS, crest, flat factor and peak count agree`, async () => {
      const file = join(dir, `${c.name.replace(/[^a-z0-9]+/gi, '-')}.wav`);
      // the rate goes before -n so that synth runs at it (otherwise sox resamples from 48 kHz)
      execFileSync('sox', c.args.map((a) => (a === 'F' ? file : a)), { stdio: 'ignore' });
      const sox = soxStats(file);
      const { result } = await inspectRecording(file, {});
      expect(result.channels.length).toBe(sox['DC offset'].length);
      result.channels.forEach((ch, i) => compare(ch.stats, sox, i));
    });
  }

  it('a clipped sine shows flat tops at full scale and a flat factor above 0 dB', async () => {
    const file = join(dir, 'clip-check.wav');
    // -D: no dither, so the clipped stretches are exactly flat at the converter's codes
    execFileSync('sox', ['-D', '-r', '8000', '-n', '-b', '16', file, 'synth', '2', 'sine', '50', 'vol', '1.5'], { stdio: 'ignore' });
    const { result } = await inspectRecording(file, {});
    const st = result.channels[0].stats;
    const atExtremes = (st.extremes.atMin + st.extremes.atMax) / st.samples;
    expect(st.min).toBe(-1); // code −32768
    expect(st.max).toBe(32767 / 32768);
    // 1.5·sin exceeds full scale for a fraction 1 − (2/π)·asin(1/1.5) = 0.535 of the time
    // (±1 sample per half period from sampling 160 samples per period)
    expect(Math.abs(st.fullScale!.fraction - (1 - (2 / Math.PI) * Math.asin(1 / 1.5)))).toBeLessThan(0.01);
    expect(st.fullScale!.fraction).toBeCloseTo(atExtremes, 12);
    // every sample at the extremes sits in a flat top of 2 or more samples
    expect(st.extremes.flatFraction).toBeCloseTo(atExtremes, 12);
    expect(soxStats(file)['Flat factor'][0]).toBeGreaterThan(1);
  });
});
