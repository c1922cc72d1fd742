import { openRecording } from '../readers/index.js';
import type { Recording } from '../readers/types.js';
import type { FrameOptions, RecordingSummary } from '../stats/summarise.js';
import { summariseRecording } from './parallel.js';
import { channelStats, stationarity, type ChannelStats, type StationarityResult } from '../stats/channel-stats.js';
import { RecordingError } from '../errors.js';
import { tool } from '../version.js';
import { duration, num, table } from './format.js';
import { ExitCode, type CliIo } from './io.js';

export interface InspectOptions extends FrameOptions {
  format: 'table' | 'json' | 'csv';
  sidecar?: string;
  channelTable?: string;
  sampleRate?: number;
  timeColumn?: string;
  decimalComma?: boolean;
  /** Threads to use (default: the number of cores). */
  jobs?: number;
}

/** One recording's statistics as `inspect --format json` prints them. */
export interface InspectedRecording {
  path: string;
  format: string;
  sampleFormat: string;
  sampleRate: number;
  samples: number;
  durationS: number;
  notes: string[];
  frames: { seconds: number; overlap: number; samples: number; hopSamples: number };
  channels: Array<{
    index: number;
    name: string;
    unit: string | null;
    sensor: string | null;
    group: string | null;
    stats: ChannelStats;
    stationarity: { rms: StationarityResult | null; mean: StationarityResult | null };
  }>;
}

/** Reads a recording once and derives every channel's statistics. */
export async function inspectRecording(
  path: string,
  options: Omit<InspectOptions, 'format'>,
  onProgress?: (bytesRead: number, bytesTotal: number) => void,
): Promise<{ recording: Recording; summary: RecordingSummary; result: InspectedRecording }> {
  const open = {
    sidecar: options.sidecar,
    channelTable: options.channelTable,
    sampleRate: options.sampleRate,
    timeColumn: options.timeColumn,
    decimalComma: options.decimalComma,
  };
  const recording = await openRecording(path, open);
  const summary = await summariseRecording(recording, open, { frameSeconds: options.frameSeconds, overlap: options.overlap }, { jobs: options.jobs, onProgress });
  const fs = recording.sampleRate;
  const result: InspectedRecording = {
    path,
    format: recording.format,
    sampleFormat: recording.sampleFormat,
    sampleRate: fs,
    samples: summary.samples,
    durationS: summary.samples / fs,
    notes: recording.notes,
    frames: {
      seconds: summary.geometry.frameSamples / fs,
      overlap: 1 - summary.geometry.hopSamples / summary.geometry.frameSamples,
      samples: summary.geometry.frameSamples,
      hopSamples: summary.geometry.hopSamples,
    },
    channels: recording.channels.map((ch, i) => ({
      index: ch.index,
      name: ch.name,
      unit: ch.unit ?? null,
      sensor: ch.sensor ?? null,
      group: ch.group ?? null,
      stats: channelStats(summary.channels[i], { sampleRate: fs }),
      stationarity: {
        rms: stationarity(summary.channels[i].frames, 'rms'),
        mean: stationarity(summary.channels[i].frames, 'mean'),
      },
    })),
  };
  return { recording, summary, result };
}

/** `vibgate inspect`: statistics per channel, for a person (table) or a tool (json, csv). */
export async function runInspect(paths: string[], options: InspectOptions, io: CliIo): Promise<number> {
  const results: Array<InspectedRecording | { path: string; error: string }> = [];
  let failed = false;
  for (const path of paths) {
    const progress = io.stderr.isTTY ? progressLine(io, path) : undefined;
    try {
      const { result } = await inspectRecording(path, options, progress?.update);
      progress?.done();
      results.push(result);
      if (options.format === 'table') io.stdout.write(renderTable(result));
    } catch (err) {
      progress?.done();
      if (!(err instanceof RecordingError)) throw err;
      failed = true;
      results.push({ path, error: err.message });
      io.stderr.write(`vibgate: ${err.message}\n`);
    }
  }
  if (options.format === 'json') {
    io.stdout.write(JSON.stringify({ tool, recordings: results }, jsonNumbers, 2) + '\n');
  } else if (options.format === 'csv') {
    io.stdout.write(renderCsv(results.filter((r): r is InspectedRecording => !('error' in r))));
  }
  return failed ? ExitCode.failed : ExitCode.ok;
}

/** JSON has no NaN or Infinity: write them as null ("not defined for this channel"). */
function jsonNumbers(_key: string, value: unknown): unknown {
  return typeof value === 'number' && !Number.isFinite(value) ? null : value;
}

function progressLine(io: CliIo, path: string) {
  let last = -1;
  return {
    update: (read: number, total: number) => {
      const pct = total > 0 ? Math.floor((100 * read) / total) : 0;
      if (pct !== last) {
        last = pct;
        io.stderr.write(`\r reading ${path}  ${pct} %`);
      }
    },
    done: () => {
      if (last >= 0) io.stderr.write('\r\x1b[K');
    },
  };
}

function renderTable(r: InspectedRecording): string {
  const head =
    `${r.path}: ${r.format.toUpperCase()} ${r.sampleFormat}, ${r.channels.length} channel${r.channels.length === 1 ? '' : 's'}, ` +
    `${num(r.sampleRate, 6)} Hz, ${duration(r.durationS)} (${r.samples} samples per channel)\n`;
  const notes = r.notes.map((n) => `  note: ${n}\n`).join('');
  const unit = (u: string | null) => u ?? '–';
  const whole = table(
    ['channel', 'unit', 'RMS', 'mean', 'min', 'max', 'crest', 'skewness', 'kurtosis', 'symmetry', 'longest run', 'non-finite', 'at full scale'],
    r.channels.map((c) => {
      const s = c.stats;
      return [
        c.name, unit(c.unit), num(s.rms), num(s.mean), num(s.min), num(s.max), num(s.crestFactor), num(s.skewness),
        num(s.kurtosis), num(s.symmetryRatio, 3),
        longestRun(s.longestRun),
        String(s.nonFinite),
        s.fullScale ? `${num(100 * s.fullScale.fraction, 3)} %` : `(${num(100 * s.extremes.flatFraction, 3)} % flat)`,
      ];
    }),
    [false, false, true, true, true, true, true, true, true, true, false, true, true],
  );
  const f = r.frames;
  const range = (e: { min: number; max: number } | undefined) => (e ? `${num(e.min)} … ${num(e.max)}` : '–');
  const at = (t: number | undefined) => (t === undefined || Number.isNaN(t) ? '–' : `${num(t)} s`);
  const frames = table(
    ['channel', 'frame RMS', 'frame mean', 'frame skewness', 'frame kurtosis', 'worst kurtosis at', 'frame crest', 'RMS trend'],
    r.channels.map((c) => {
      const fr = c.stats.frames;
      const st = c.stationarity.rms;
      return [
        c.name, range(fr?.rms), range(fr?.mean), range(fr?.skewness), range(fr?.kurtosis), at(fr?.kurtosis.maxTimeS),
        range(fr?.crestFactor),
        st ? (st.stationary ? 'none' : st.z < 0 ? 'rising' : 'falling') : '–',
      ];
    }),
    [false, true, true, true, true, true, true, false],
  );
  const used = r.channels[0]?.stats.frames?.used ?? 0;
  const frameLine =
    `  over ${num(f.seconds)} s frames${f.overlap > 0 ? ` (${num(100 * f.overlap, 3)} % overlap)` : ''}, ` +
    `${used} used (a tail under half a frame is left out); kurtosis is non-excess, 3 for Gaussian data\n`;
  return head + notes + indent(whole) + frameLine + indent(frames) + '\n';
}

/** A run of 2 identical samples is common in PCM; say samples for short runs, seconds for long. */
function longestRun(run: ChannelStats['longestRun']): string {
  if (run.samples < 2) return '–';
  const where = `at ${num(run.startTimeS)} s`;
  return run.samples < 20 ? `${run.samples} samples ${where}` : `${num(run.seconds)} s ${where}`;
}

const indent = (text: string) => text.replace(/^(?=.)/gm, '  ');

function renderCsv(results: InspectedRecording[]): string {
  const cols = [
    'recording', 'index', 'channel', 'unit', 'samples', 'non_finite', 'mean', 'std', 'rms', 'min', 'min_time_s', 'max',
    'max_time_s', 'crest_factor', 'skewness', 'kurtosis', 'skewness_g1', 'excess_kurtosis_g2', 'symmetry_ratio',
    'longest_run_s', 'longest_run_start_s', 'longest_zero_run_s', 'flat_fraction', 'full_scale_fraction',
    'frame_rms_min', 'frame_rms_max', 'frame_mean_min', 'frame_mean_max', 'frame_skewness_min', 'frame_skewness_max',
    'frame_kurtosis_min', 'frame_kurtosis_max', 'frame_kurtosis_max_time_s', 'frame_crest_max',
  ];
  const q = (s: string) => (/[",\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s);
  const v = (x: number | null | undefined) => (x === null || x === undefined || !Number.isFinite(x) ? '' : String(x));
  const lines = [cols.join(',')];
  for (const r of results) {
    for (const c of r.channels) {
      const s = c.stats;
      const f = s.frames;
      lines.push(
        [
          q(r.path), String(c.index), q(c.name), q(c.unit ?? ''), String(s.samples), String(s.nonFinite), v(s.mean), v(s.std),
          v(s.rms), v(s.min), v(s.minTimeS), v(s.max), v(s.maxTimeS), v(s.crestFactor), v(s.skewness), v(s.kurtosis),
          v(s.skewnessG1), v(s.excessKurtosisG2), v(s.symmetryRatio), v(s.longestRun.seconds), v(s.longestRun.startTimeS),
          v(s.longestZeroRun.seconds), v(s.extremes.flatFraction), v(s.fullScale?.fraction),
          v(f?.rms.min), v(f?.rms.max), v(f?.mean.min), v(f?.mean.max), v(f?.skewness.min), v(f?.skewness.max),
          v(f?.kurtosis.min), v(f?.kurtosis.max), v(f?.kurtosis.maxTimeS), v(f?.crestFactor.max),
        ].join(','),
      );
    }
  }
  return lines.join('\n') + '\n';
}
