import { describe, expect, it } from 'vitest';
import { judgeRecording, unreadableRecording, worst, channelVerdict } from '../../src/gate/judge.js';
import { ChannelAccumulator } from '../../src/stats/channel-accumulator.js';
import type { RecordingSummary } from '../../src/stats/summarise.js';
import type { ResolvedRules } from '../../src/rules/types.js';
import type { ChannelInfo } from '../../src/readers/types.js';
import { gaussian } from '../helpers/random.js';

const fs = 1024;

function recordingOf(signals: Float64Array[], channels: ChannelInfo[]) {
  const geometry = { frameSamples: fs, hopSamples: fs };
  const summary: RecordingSummary = {
    sampleRate: fs,
    geometry,
    start: 0,
    samples: signals[0].length,
    channels: signals.map((x) => {
      const acc = new ChannelAccumulator(geometry);
      acc.push(x);
      return acc.summary();
    }),
  };
  return { path: 'run.wav', sha256: 'ab'.repeat(32), format: 'wav', sampleRate: fs, channels, notes: [], summary };
}

function rules(partial: Partial<ResolvedRules> = {}): ResolvedRules {
  return {
    name: 'test',
    files: [{ path: 'r.yaml', sha256: 'cd'.repeat(32) }],
    analysis: { frameSeconds: 1, overlap: 0 },
    checks: {
      'non-finite': { severity: 'error', options: { 'max-count': 0 } },
      dropout: { severity: 'error', options: { 'max-seconds': 0.01 } },
      kurtosis: { severity: 'warning', options: { whole: [2.4, 4], frames: [1.6, 8] } },
    },
    channels: [],
    expect: { severity: 'error' },
    ...partial,
  };
}

const ch = (index: number, name: string, extra: Partial<ChannelInfo> = {}): ChannelInfo => ({ index, name, unit: 'g', ...extra });

describe('judging a recording', () => {
  it('passes clean channels and reports one finding per channel and check, in registry order', () => {
    const v = judgeRecording(recordingOf([gaussian(30 * fs, 1), gaussian(30 * fs, 2)], [ch(0, 'a'), ch(1, 'b')]), rules());
    expect(v.verdict).toBe('pass');
    expect(v.channels.map((c) => c.verdict)).toEqual(['pass', 'pass']);
    expect(v.channels[0].findings.map((f) => f.check)).toEqual(['non-finite', 'dropout', 'kurtosis']);
  });

  it('an error-severity failure fails the channel and the recording; a warning only warns', () => {
    const spiky = gaussian(30 * fs, 3);
    spiky[5 * fs] = 15; // frame kurtosis far above 8: a warning under these rules
    const dropped = gaussian(30 * fs, 4).fill(0, 2 * fs, 3 * fs); // 1 s of zeros: an error
    const v = judgeRecording(recordingOf([spiky, dropped], [ch(0, 'a'), ch(1, 'b')]), rules());
    expect(v.channels[0].verdict).toBe('warn');
    expect(v.channels[1].verdict).toBe('fail');
    expect(v.verdict).toBe('fail');
    const f = v.channels[1].findings.find((x) => x.check === 'dropout')!;
    expect(f).toMatchObject({ status: 'fail', severity: 'error', value: 1, unit: 's', at: { startS: 2, endS: 3 } });
  });

  it('a channel whose checks are all switched off is not screened: skip, never pass', () => {
    const r = rules({ channels: [{ match: { name: 'force*' }, checks: { 'non-finite': false, dropout: false, kurtosis: false }, source: 'r.yaml:9:5' }] });
    const v = judgeRecording(recordingOf([gaussian(30 * fs, 5), gaussian(30 * fs, 6)], [ch(0, 'acc'), ch(1, 'force-1', { unit: 'N' })]), r);
    expect(v.channels[1].verdict).toBe('skip');
    expect(v.channels[1].findings).toEqual([]);
    expect(v.verdict).toBe('pass');
  });

  it('a recording none of whose channels was judged is skip, which fails the gate', () => {
    const r = rules({ checks: {} });
    const v = judgeRecording(recordingOf([gaussian(10 * fs, 7)], [ch(0, 'a')]), r);
    expect(v.verdict).toBe('skip');
  });

  it('a channel whose checks ran but could none of them judge it makes the recording skip (the gate fails)', () => {
    const r = rules({ checks: { kurtosis: { severity: 'error', options: { whole: [2.4, 4], frames: [1.6, 8] } } } });
    // a constant channel: kurtosis is undefined, so the only check skips
    const v = judgeRecording(recordingOf([gaussian(30 * fs, 20), new Float64Array(30 * fs).fill(0.5)], [ch(0, 'a'), ch(1, 'b')]), r);
    expect(v.channels.map((c) => c.verdict)).toEqual(['pass', 'skip']);
    expect(v.verdict).toBe('skip');
  });

  it('checks the recording expectations: duration, sample rate, channel count and names', () => {
    const r = rules({ expect: { minDurationS: 60, sampleRate: [2048, 51200], channelCount: 3, channelNames: ['a', 'z'], severity: 'error' } });
    const v = judgeRecording(recordingOf([gaussian(30 * fs, 8), gaussian(30 * fs, 9)], [ch(0, 'a'), ch(1, 'b')]), r);
    expect(v.verdict).toBe('fail');
    expect(v.findings.map((f) => [f.check, f.status])).toEqual([
      ['min-duration', 'fail'], ['sample-rate', 'fail'], ['channel-count', 'fail'], ['channel-names', 'fail'],
    ]);
    expect(v.findings[0].message).toBe('the record lasts 30 s, shorter than the 60 s the rule file expects: the acquisition stopped early, or the wrong file?');
    expect(v.findings[3].message).toContain('missing channel "z"');
  });

  it('an unreadable recording has the verdict error', () => {
    const v = unreadableRecording('bad.wav', 'Cannot read "bad.wav": no such file');
    expect(v.verdict).toBe('error');
    expect(worst([v.verdict, 'pass', 'fail'])).toBe('error');
  });

  it('verdict order: error > fail > skip > warn > pass', () => {
    expect(worst(['pass', 'warn'])).toBe('warn');
    expect(worst(['warn', 'skip'])).toBe('skip');
    expect(worst(['skip', 'fail'])).toBe('fail');
    expect(worst([])).toBe('skip');
    expect(channelVerdict([])).toBe('skip');
  });

  it('compares levels within the sidecar group, else among channels of the same unit', () => {
    const r = rules({ checks: { 'dead-channel': { severity: 'error', options: { 'min-ratio-to-median': 0.01, 'min-peers': 3 } } } });
    const loud = [gaussian(10 * fs, 10, 2), gaussian(10 * fs, 11, 3), gaussian(10 * fs, 12, 2.5)];
    const quiet = gaussian(10 * fs, 13, 0.001);
    // same unit, no groups: the quiet channel is compared with the loud ones and fails
    const v1 = judgeRecording(recordingOf([...loud, quiet], [ch(0, 'a'), ch(1, 'b'), ch(2, 'c'), ch(3, 'd')]), r);
    expect(v1.channels[3].verdict).toBe('fail');
    // in a group of its own, with too few peers to compare: skipped
    const v2 = judgeRecording(
      recordingOf([...loud, quiet], [ch(0, 'a', { group: 'x' }), ch(1, 'b', { group: 'x' }), ch(2, 'c', { group: 'x' }), ch(3, 'd', { group: 'y' })]),
      r,
    );
    expect(v2.channels[3].verdict).toBe('skip');
  });
});
