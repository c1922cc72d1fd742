/**
 * Gate results with report detail (frame trends, waveform excerpts) for the HTML report
 * tests. Two kinds:
 *
 * - `mixedReport()`: the hand-built `mixedResult()` of gate-fixtures.ts with detail made
 *   from the same seeded signals (findings hand-written, so they need not match the data);
 * - `labReport()`: seeded channels with invented faults put through the real engine and the
 *   real gate under a rule set built here from the check registry's defaults, so findings,
 *   limit texts and time spans are exactly what the checks write. Everything is invented
 *   data made by seeded code; none of it is a calibration of any bundled rule file.
 */
import type { Finding } from '../../src/checks/types.js';
import { checks } from '../../src/checks/registry.js';
import { judgeRecording, worst } from '../../src/gate/judge.js';
import type { GateResult, RecordingVerdict } from '../../src/gate/types.js';
import type { ChannelInfo } from '../../src/readers/types.js';
import type { ChannelDetail, ReportDetail } from '../../src/report/detail.js';
import type { ResolvedRules } from '../../src/rules/types.js';
import type { ChannelSummary } from '../../src/stats/channel-accumulator.js';
import { frameSeries } from '../../src/stats/channel-stats.js';
import { frameGeometry } from '../../src/stats/summarise.js';
import { FS, mixedResult, sha256 } from './gate-fixtures.js';
import { gaussian } from './random.js';
import { summaryOf } from './summarise.js';

/** As src/cli/screen.ts picks an excerpt: the longest shown, and context either side. */
const EXCERPT_MAX_S = 2;
const EXCERPT_CONTEXT_S = 0.25;

/** Frame trends of one channel from its summary, as the CLI builds them. */
export function framesOf(summary: ChannelSummary, sampleRate: number): ChannelDetail['frames'] {
  const series = (k: Parameters<typeof frameSeries>[1]) => Array.from(frameSeries(summary.frames, k, sampleRate).value);
  return {
    timeS: Array.from(frameSeries(summary.frames, 'rms', sampleRate).timeS),
    rms: series('rms'),
    mean: series('mean'),
    kurtosis: series('kurtosis'),
    skewness: series('skewness'),
  };
}

/** The excerpt the CLI would read for a channel: around its first located failing (else warning) finding. */
export function excerptOf(findings: Finding[], x: Float64Array, sampleRate: number): ChannelDetail['excerpt'] {
  const located = findings.filter((f) => f.at && f.at.endS - f.at.startS <= EXCERPT_MAX_S * 4);
  const pick = located.find((f) => f.status === 'fail') ?? located.find((f) => f.status === 'warn');
  if (!pick?.at) return null;
  const mid = (pick.at.startS + pick.at.endS) / 2;
  const half = Math.min(EXCERPT_MAX_S / 2, (pick.at.endS - pick.at.startS) / 2 + EXCERPT_CONTEXT_S);
  const from = Math.floor(Math.max(0, mid - half) * sampleRate);
  const to = Math.min(x.length, Math.ceil((mid + half) * sampleRate));
  return { startS: from / sampleRate, sampleRate, values: Array.from(x.subarray(from, to)), check: pick.check };
}

/** Detail of a recording from its channels' samples (one-second frames). */
function detailOf(recording: RecordingVerdict, signals: Float64Array[], sampleRate: number): ChannelDetail[] {
  return recording.channels.map((c, i) => ({
    frames: framesOf(summaryOf(signals[i], { frameSamples: sampleRate }), sampleRate),
    excerpt: c.verdict === 'fail' || c.verdict === 'warn' ? excerptOf(c.findings, signals[i], sampleRate) : null,
  }));
}

/** mixedResult() and its detail: no detail for the unreadable recording. */
export function mixedReport(): { result: GateResult; detail: ReportDetail } {
  const result = mixedResult();
  const [shaker, short] = result.recordings;
  const n = 30 * FS;
  const shakerSignals = [gaussian(n, 1), gaussian(n, 2), gaussian(n, 3, 0.01), new Float64Array(n).fill(0.25)];
  const shortSignals = [gaussian(12.5 * FS, 4)];
  const detail: ReportDetail = new Map([
    [shaker.path, detailOf(shaker, shakerSignals, FS)],
    [short.path, detailOf(short, shortSignals, FS)],
  ]);
  return { result, detail };
}

/** mixedReport() with names, paths, messages and notes that try to break out of HTML. */
export const HOSTILE = {
  channel: '<script>alert(1)</script>',
  path: 'runs/"><img src=x onerror=alert(2)>.wav',
  message: 'spikes <b>here</b> & "there" \'too\' <iframe src="javascript:alert(3)">',
  note: '</li></ul><script>alert(4)</script>',
  rules: 'rules/<svg onload=alert(5)>.yaml',
  unit: '<i>g</i>',
} as const;

export function hostileReport(): { result: GateResult; detail: ReportDetail } {
  const { result, detail } = mixedReport();
  const shaker = result.recordings[0];
  const shakerDetail = detail.get(shaker.path)!;
  detail.delete(shaker.path);
  shaker.path = HOSTILE.path;
  shaker.notes = [HOSTILE.note];
  const failing = shaker.channels[1];
  failing.name = HOSTILE.channel;
  failing.unit = HOSTILE.unit;
  failing.findings = failing.findings.map((f) => (f.status === 'fail' ? { ...f, message: HOSTILE.message } : f));
  detail.set(shaker.path, shakerDetail);
  result.rules = { ...result.rules, path: HOSTILE.rules, files: [{ path: HOSTILE.rules, sha256: result.rules.sha256 }] };
  return { result, detail };
}

// ---------------------------------------------------------------------------------------
// Through the real gate.

/** Invented faults, each strong enough that its check reacts on white Gaussian data. */
export type LabFault =
  | 'spikes' // 12 one-sided spikes of 10 σ within 12–13 s: kurtosis, crest factor, skewness
  | 'clipping' // clamped at ±2.2 σ with the converter range known: clipping, kurtosis
  | 'dropout' // exact zeros for 0.3 s from 20 s: dropout
  | 'dead' // only a noise floor of 1e-3 of the level: dead-channel
  | 'offset' // a mean of 0.3 σ: mean-offset (a warning in labRules)
  | 'flat' // a constant: flat-channel fails, the shape checks cannot judge it
  | 'lopsided'; // one peak of 7 σ at 7.5 s: symmetry, a warning

export interface LabOptions {
  /** Accelerometer channels, `acc-01` …, levels differing from channel to channel. */
  accelerometers?: number;
  /** Faults by accelerometer position (0-based). */
  faults?: Record<number, LabFault>;
  /** Add a force channel `force-01` (unit N) for which the rules switch kurtosis and skewness off. */
  force?: boolean;
  sampleRate?: number;
  durationS?: number;
  path?: string;
}

/** The rule set: every registered check with its defaults, a wider crest-factor limit, force channels exempt from the shape checks. */
export function labRules(): ResolvedRules {
  const settings = Object.fromEntries(
    checks.map((c) => [c.id, { severity: c.defaultSeverity, options: structuredClone(c.defaults) as Record<string, unknown> }]),
  );
  settings['crest-factor'].options = { max: 8 };
  // an offset only warns here, so the report shows a warning on a chart
  settings['mean-offset'].severity = 'warning';
  return {
    name: 'lab-random',
    files: [
      { path: 'rules/lab-random.yaml', sha256: sha256('rules/lab-random.yaml') },
      { path: 'rules/base.yaml', sha256: sha256('rules/base.yaml') },
    ],
    analysis: { frameSeconds: 1, overlap: 0 },
    checks: settings,
    channels: [{ match: { name: 'force-*' }, checks: { kurtosis: false, skewness: false }, source: 'rules/lab-random.yaml:20:5' }],
    expect: { minDurationS: 10, sampleRate: [512, 51200], severity: 'error' },
  };
}

function injure(x: Float64Array, fault: LabFault, sigma: number, fs: number): { clipLow?: number; clipHigh?: number } {
  const at = (s: number) => Math.round(s * fs);
  switch (fault) {
    case 'spikes':
      for (let k = 0; k < 12; k++) x[at(12) + Math.floor((k * fs) / 12) + 7] += 10 * sigma;
      return {};
    case 'clipping': {
      const level = 2.2 * sigma;
      for (let i = 0; i < x.length; i++) x[i] = Math.max(-level, Math.min(level, x[i]));
      return { clipLow: -level, clipHigh: level };
    }
    case 'dropout':
      x.fill(0, at(20), at(20.3));
      return {};
    case 'dead': {
      const floor = gaussian(x.length, 999, 1e-3 * sigma);
      x.set(floor);
      return {};
    }
    case 'offset':
      for (let i = 0; i < x.length; i++) x[i] += 0.3 * sigma;
      return {};
    case 'flat':
      x.fill(0.02 * sigma);
      return {};
    case 'lopsided':
      x[at(7.5)] = 7 * sigma;
      return {};
  }
}

/** A recording of seeded channels with faults, judged by the real gate, with its detail. */
export function labRecording(o: LabOptions = {}): { recording: RecordingVerdict; detail: ChannelDetail[]; signals: Float64Array[] } {
  const fs = o.sampleRate ?? 1024;
  const n = Math.round((o.durationS ?? 30) * fs);
  const count = o.accelerometers ?? 12;
  const channels: ChannelInfo[] = [];
  const signals: Float64Array[] = [];
  const clips: Array<{ clipLow?: number; clipHigh?: number }> = [];
  for (let i = 0; i < count; i++) {
    const sigma = 0.4 + 0.35 * (i % 5); // levels legitimately differ from point to point
    const x = gaussian(n, 100 + i, sigma);
    const fault = o.faults?.[i];
    clips.push(fault ? injure(x, fault, sigma, fs) : {});
    channels.push({ index: i, name: `acc-${String(i + 1).padStart(2, '0')}`, unit: 'g', sensor: 'accelerometer' });
    signals.push(x);
  }
  if (o.force) {
    channels.push({ index: count, name: 'force-01', unit: 'N', sensor: 'force' });
    signals.push(gaussian(n, 77, 20));
    clips.push({});
  }
  const geometry = frameGeometry(fs, { frameSeconds: 1 });
  const summaries = signals.map((x, i) => summaryOf(x, { frameSamples: geometry.frameSamples, hopSamples: geometry.hopSamples, ...clips[i] }));
  const path = o.path ?? 'runs/lab-run1.wav';
  const recording = judgeRecording(
    {
      path,
      sha256: sha256(path),
      format: 'wav',
      sampleRate: fs,
      channels,
      notes: ['channel names and units from the sidecar'],
      summary: { sampleRate: fs, geometry, start: 0, samples: n, channels: summaries },
    },
    labRules(),
  );
  const detail = recording.channels.map((c, i) => ({
    frames: framesOf(summaries[i], fs),
    excerpt: c.verdict === 'fail' || c.verdict === 'warn' ? excerptOf(c.findings, signals[i], fs) : null,
  }));
  return { recording, detail, signals };
}

/** A gate result of lab recordings (each as labRecording), with its detail. */
export function labReport(...recordings: LabOptions[]): { result: GateResult; detail: ReportDetail } {
  const made = (recordings.length ? recordings : [{}]).map((o, i) => labRecording({ path: `runs/lab-run${i + 1}.wav`, ...o }));
  const rules = labRules();
  const result: GateResult = {
    tool: { name: 'vibgate', version: '0.1.0' },
    createdAt: '2024-05-17T09:30:00.000Z',
    rules: { name: rules.name, path: rules.files[0].path, sha256: rules.files[0].sha256, files: rules.files },
    verdict: worst(made.map((m) => m.recording.verdict)),
    recordings: made.map((m) => m.recording),
  };
  return { result, detail: new Map(made.map((m) => [m.recording.path, m.detail])) };
}

/** The usual lab scenario: 12 accelerometers, one fault of each kind, and a force channel. */
export const LAB_FAULTS: Record<number, LabFault> = { 1: 'spikes', 3: 'clipping', 5: 'dropout', 7: 'dead', 8: 'offset', 10: 'lopsided', 11: 'flat' };
