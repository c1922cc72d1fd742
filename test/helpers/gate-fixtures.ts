/**
 * Hand-built gate results for the reporter tests. The statistics are computed from seeded
 * signals by the real engine; the findings are written by hand with short decimal values so
 * a test can look for them in a report. Neither is a check value of any rule file.
 */
import { createHash } from 'node:crypto';
import type { Finding } from '../../src/checks/types.js';
import type { ChannelVerdict, GateResult, RecordingVerdict } from '../../src/gate/types.js';
import type { ChannelStats } from '../../src/stats/channel-stats.js';
import { gaussian } from './random.js';
import { statsOf } from './summarise.js';

export const FS = 1024;
const SECONDS = 30;

export const sha256 = (text: string) => createHash('sha256').update(text).digest('hex');

/** Statistics of a seeded Gaussian channel, one-second frames. */
export function gaussianStats(seed: number, sigma = 1): ChannelStats {
  return statsOf(gaussian(SECONDS * FS, seed, sigma), { sampleRate: FS, frameSamples: FS });
}

/** Statistics of a constant channel: kurtosis is NaN, the symmetry ratio is +Infinity. */
export function constantStats(value = 0.25): ChannelStats {
  return statsOf(new Float64Array(SECONDS * FS).fill(value), { sampleRate: FS, frameSamples: FS });
}

export function finding(check: string, status: Finding['status'], overrides: Partial<Finding> = {}): Finding {
  return {
    check,
    status,
    severity: status === 'warn' ? 'warning' : 'error',
    value: 1.5,
    unit: '',
    limit: '≤ 2',
    message: `${check} ${status}`,
    at: null,
    ...overrides,
  };
}

export function channel(index: number, name: string, verdict: ChannelVerdict['verdict'], findings: Finding[], stats: ChannelStats): ChannelVerdict {
  return { index, name, unit: 'g', sensor: 'accelerometer', group: null, verdict, stats, findings };
}

/** A frame-wise kurtosis failure with its time span. */
export const kurtosisFailure = finding('kurtosis', 'fail', {
  value: 9.5,
  limit: 'whole record 2.4 … 4, frames 1.6 … 8',
  at: { startS: 12, endS: 13 },
  message: 'frame kurtosis 9.5 at 12–13 s is above the frame range 1.6 … 8 (whole record 3.2): short spikes or impacts: loose connector or cable?',
});

export const symmetryWarning = finding('symmetry', 'warn', {
  value: 1.75,
  limit: '≤ 1.4',
  message: 'positive peaks 1.75 times the negative ones, above 1.4: a sensor near its range, or a mounting that rattles?',
});

export const skewnessSkipped = finding('skewness', 'skip', {
  value: null,
  limit: 'whole record −0.3 … 0.3',
  message: 'skewness is not defined: no variation in the channel',
});

export const durationFailure = finding('min-duration', 'fail', {
  value: 12.5,
  unit: 's',
  limit: '≥ 30 s',
  message: 'the record lasts 12.5 s, shorter than the 30 s the rule file expects: the acquisition stopped early, or the wrong file?',
});

export const readError = 'Cannot read "runs/broken.wav": data chunk ends at byte 4096 but the header declares 8192';

function readable(path: string, findings: Finding[], channels: ChannelVerdict[], verdict: RecordingVerdict['verdict'], durationS = SECONDS): RecordingVerdict {
  return {
    path,
    sha256: sha256(path),
    verdict,
    error: null,
    format: path.endsWith('.csv') ? 'csv' : 'wav',
    sampleRate: FS,
    durationS,
    samples: durationS * FS,
    findings,
    channels,
    notes: [],
  };
}

/**
 * Three recordings: one with a failing, a warning, a passing and an unjudged channel; one
 * too short; one unreadable.
 */
export function mixedResult(): GateResult {
  const shaker = readable(
    'runs/shaker-a.wav',
    [finding('sample-rate', 'pass', { value: FS, unit: 'Hz', limit: '1024 … 51200 Hz', message: 'sampled at 1024 Hz' })],
    [
      channel(0, 'acc-01', 'pass', [finding('kurtosis', 'pass', { value: 3.0625 }), finding('crest-factor', 'pass', { value: 4.25 })], gaussianStats(1)),
      channel(1, 'acc-02', 'fail', [kurtosisFailure, finding('crest-factor', 'pass', { value: 4.5 })], gaussianStats(2)),
      { ...channel(2, 'mic-01', 'warn', [symmetryWarning], gaussianStats(3, 0.01)), unit: 'Pa', sensor: 'microphone', group: 'room' },
      channel(3, 'acc-04', 'skip', [skewnessSkipped], constantStats()),
    ],
    'fail',
  );
  shaker.notes = ['channel names and units from runs/shaker-a.wav.channels.yaml'];
  const short = readable('runs/short-b.csv', [durationFailure], [channel(0, 'acc-01', 'pass', [finding('kurtosis', 'pass', { value: 2.875 })], gaussianStats(4))], 'fail', 12.5);
  const broken: RecordingVerdict = {
    path: 'runs/broken.wav', sha256: sha256('runs/broken.wav'), verdict: 'error', error: readError,
    format: null, sampleRate: null, durationS: null, samples: null, findings: [], channels: [], notes: [],
  };
  return {
    tool: { name: 'vibgate', version: '0.1.0' },
    createdAt: '2024-03-05T14:07:09.250Z',
    rules: {
      name: 'random-vibration',
      path: 'rules/random-vibration.yaml',
      sha256: sha256('rules/random-vibration.yaml'),
      files: [
        { path: 'rules/random-vibration.yaml', sha256: sha256('rules/random-vibration.yaml') },
        { path: 'rules/base.yaml', sha256: sha256('rules/base.yaml') },
      ],
    },
    verdict: 'error',
    recordings: [shaker, short, broken],
  };
}

/** One recording whose every check passes. */
export function passingResult(): GateResult {
  const base = mixedResult();
  const rec = readable('runs/good.wav', [], [channel(0, 'acc-01', 'pass', [finding('kurtosis', 'pass', { value: 3 })], gaussianStats(5))], 'pass');
  return { ...base, verdict: 'pass', recordings: [rec] };
}
