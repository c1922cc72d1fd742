import { beforeAll, describe, expect, it } from 'vitest';
import {
  addRecordings,
  channelEvidence,
  EVIDENCE_FORMAT,
  EVIDENCE_KIND,
  evidenceText,
  learnedStatistics,
  parseEvidence,
  STATISTIC_NAMES,
  type Evidence,
  type LearnedStatistics,
  type RecordingEvidence,
} from '../../src/learn/evidence.js';
import { DEFAULT_LEARNED_CHECKS, planLimits, type LearnedGroup } from '../../src/learn/plan.js';
import { learnedRulesText } from '../../src/learn/write-rules.js';
import { loadRules } from '../../src/rules/load.js';
import type { ResolvedRules } from '../../src/rules/types.js';
import { channelStats } from '../../src/stats/channel-stats.js';
import { gaussian, uniformSource } from '../helpers/random.js';
import { summaryOf } from '../helpers/summarise.js';

/** Statistics of a channel, all set to `v` unless given (invented values, for the plan's logic). */
const stats = (v: number, over: Partial<LearnedStatistics> = {}): LearnedStatistics =>
  ({ ...Object.fromEntries(STATISTIC_NAMES.map((k) => [k, v])), ...over }) as LearnedStatistics;

function recording(i: number, channels: Array<{ name: string; sensor?: string | null; unit?: string; s: LearnedStatistics }>): RecordingEvidence {
  return {
    path: `run-${String(i).padStart(2, '0')}.wav`,
    sha256: i.toString(16).padStart(64, 'a'),
    sampleRate: 2048,
    durationS: 60,
    channels: channels.map((c) => ({ name: c.name, unit: c.unit ?? 'g', sensor: c.sensor === undefined ? 'accelerometer' : c.sensor, group: null, stats: c.s })),
  };
}

function evidenceOf(recordings: RecordingEvidence[], over: Partial<Evidence['settings']> = {}): Evidence {
  return {
    format: EVIDENCE_FORMAT,
    kind: EVIDENCE_KIND,
    settings: { extends: 'bundled:random-vibration', by: 'channel', margin: 8, name: 't', checks: [...DEFAULT_LEARNED_CHECKS], frameSeconds: 1, overlap: 0, ...over },
    recordings,
  };
}

const option = (g: LearnedGroup, check: string, key: string) => g.checks.find((c) => c.id === check)!.options.find((o) => o.spec.option === key)!;

let random: ResolvedRules;
let base: ResolvedRules;
beforeAll(async () => {
  random = await loadRules('bundled:random-vibration');
  base = await loadRules('bundled:base');
});

describe('the evidence file', () => {
  const sample = evidenceOf([
    recording(2, [{ name: 'acc-1', s: stats(0.1, { meanToStd: -1e-5, rms: null }) }]),
    recording(1, [{ name: 'acc-1', s: stats(1 / 3) }]),
  ]);

  it('reads back exactly what it wrote (numbers round-trip as doubles), recordings sorted by path', () => {
    const text = evidenceText(sample);
    const back = parseEvidence(text, 'e.json');
    expect(back.recordings.map((r) => r.path)).toEqual(['run-01.wav', 'run-02.wav']);
    expect(back.recordings[0].channels[0].stats.meanToStd).toBe(1 / 3);
    expect(back.recordings[1].channels[0].stats.rms).toBeNull();
    expect(evidenceText(back)).toBe(evidenceText({ ...sample, recordings: [sample.recordings[1], sample.recordings[0]] }));
  });

  it.each([
    ['not json', 'Cannot read "e.json": is not JSON'],
    ['{"kind":"x"}', 'Cannot read "e.json": kind: must be "vibgate learn evidence": is this the evidence file of a learned rule file?'],
    [JSON.stringify({ kind: EVIDENCE_KIND, format: 2 }), 'Cannot read "e.json": format: is 2; this vibgate reads evidence format 1'],
  ])('refuses %s, naming the file', (text, message) => {
    expect(() => parseEvidence(text, 'e.json')).toThrow(message);
  });

  it('refuses a bad hash, a hash listed twice and a statistic that is not a number, naming the key', () => {
    const good = JSON.parse(evidenceText(sample));
    const bad = (edit: (e: typeof good) => void) => {
      const copy = structuredClone(good);
      edit(copy);
      return () => parseEvidence(JSON.stringify(copy), 'e.json');
    };
    expect(bad((e) => (e.recordings[0].sha256 = 'ABC'))).toThrow('Cannot read "e.json": recordings[0].sha256: must be 64 lower-case hex digits');
    expect(bad((e) => (e.recordings[1].sha256 = e.recordings[0].sha256))).toThrow('Cannot read "e.json": recordings[1].sha256: is listed twice');
    expect(bad((e) => (e.recordings[0].channels[0].stats.kurtosis = 'high'))).toThrow(
      'Cannot read "e.json": recordings[0].channels[0].stats.kurtosis: must be a number or null',
    );
    expect(bad((e) => (e.settings.by = 'group'))).toThrow('Cannot read "e.json": settings.by: must be channel, sensor or all');
  });

  it('addRecordings() counts a recording once by its bytes, keeps what is there, and sorts by path then hash', () => {
    const a = recording(1, []);
    const b = recording(2, []);
    const copyOfA = { ...recording(1, []), path: 'elsewhere/copy.wav' };
    const { recordings, duplicates } = addRecordings([a], [b, copyOfA]);
    expect(recordings.map((r) => r.path)).toEqual(['run-01.wav', 'run-02.wav']);
    expect(duplicates).toEqual([{ path: 'elsewhere/copy.wav', sameAs: 'run-01.wav' }]);
    // the same set in any order, in one go or in two, gives the same list
    const once = addRecordings([], [copyOfA, b, a]).recordings.map((r) => r.path);
    const twice = addRecordings(addRecordings([], [b]).recordings, [a, copyOfA]).recordings.map((r) => r.path);
    expect(once).toEqual(['elsewhere/copy.wav', 'run-02.wav']);
    expect(twice).toEqual(['elsewhere/copy.wav', 'run-02.wav']);
  });
});

describe('learnedStatistics', () => {
  it('of white Gaussian noise gives kurtosis near 3 and a learned spread near √(24/N) over 20 recordings', () => {
    // seeded simulation: 20 records of N = 40960 N(0, 1) samples. For normal data the sample
    // kurtosis has mean 3(N − 1)/(N + 1) and standard deviation √(24/N) = 0.0242 for large N
    // (Kendall & Stuart; from memory), skewness √(6/N) = 0.0121. The robust spread of 20
    // values scatters by ~25 % (MAD efficiency 37 %), hence the wide tolerance.
    const N = 40960;
    const recordings = Array.from({ length: 20 }, (_, i) => {
      const summary = summaryOf(gaussian(N, 100 + i), { frameSamples: 2048 });
      const s = learnedStatistics(channelStats(summary, { sampleRate: 2048 }), summary, 2048);
      return recording(i + 1, [{ name: 'noise', s }]);
    });
    const plan = planLimits(evidenceOf(recordings, { margin: 1 }), base);
    const kurtosis = option(plan.groups[0], 'kurtosis', 'whole');
    const skewness = option(plan.groups[0], 'skewness', 'whole');
    expect(Math.abs(kurtosis.bounds[1].median - 3)).toBeLessThan(3 * Math.sqrt(24 / N));
    for (const b of kurtosis.bounds) {
      expect(b.spread / Math.sqrt(24 / N)).toBeGreaterThan(0.5);
      expect(b.spread / Math.sqrt(24 / N)).toBeLessThan(1.8);
    }
    for (const b of skewness.bounds) {
      expect(b.spread / Math.sqrt(6 / N)).toBeGreaterThan(0.5);
      expect(b.spread / Math.sqrt(6 / N)).toBeLessThan(1.8);
    }
  });
});

describe('planLimits', () => {
  const ten = (make: (i: number) => Array<{ name: string; sensor?: string | null; unit?: string; s: LearnedStatistics }>) =>
    Array.from({ length: 10 }, (_, i) => recording(i + 1, make(i)));

  it('learns the checks the base switches off for none of a group, and no others', () => {
    // bundled:random-vibration switches kurtosis, skewness, crest factor and symmetry off for sensor force
    const plan = planLimits(evidenceOf(ten((i) => [{ name: 'f', sensor: 'force', unit: 'N', s: stats(1 + i / 100) }])), random);
    const checks = Object.fromEntries(plan.groups[0].checks.map((c) => [c.id, c.notLearned ?? 'learned']));
    expect(checks).toEqual({
      'mean-offset': 'learned',
      symmetry: 'the base switches it off for these channels',
      skewness: 'the base switches it off for these channels',
      kurtosis: 'the base switches it off for these channels',
      'crest-factor': 'the base switches it off for these channels',
      'frame-rms-spread': 'learned',
    });
  });

  it('does not learn a check for a sensor group the base switches off for some of its channels (an entry would switch it back on)', async () => {
    // a base that switches kurtosis off by name for one accelerometer
    const mixed: ResolvedRules = { ...random, channels: [...random.channels, { match: { name: 'acc-9' }, checks: { kurtosis: false }, source: 'x' }] };
    const plan = planLimits(
      evidenceOf(ten((i) => [{ name: 'acc-1', s: stats(3 + i / 100) }, { name: 'acc-9', s: stats(3 + i / 90) }]), { by: 'sensor' }),
      mixed,
    );
    expect(plan.groups[0].checks.find((c) => c.id === 'kurtosis')!.notLearned).toBe('the base switches it off for "acc-9" of this group');
    // over all channels the top-level setting is safe: the base's entry still switches it off afterwards
    const all = planLimits(evidenceOf(ten((i) => [{ name: 'acc-1', s: stats(3 + i / 100) }, { name: 'acc-9', s: stats(3 + i / 90) }]), { by: 'all' }), mixed);
    const k = all.groups[0].checks.find((c) => c.id === 'kurtosis')!;
    expect(k.notLearned).toBeUndefined();
    expect(k.leftOut.map((m) => m.channel.name)).toEqual(Array(10).fill('acc-9'));
    expect(k.from).toHaveLength(10);
  });

  it('switches on a check the base does not run, and says so in the file', () => {
    const evidence = evidenceOf(ten((i) => [{ name: 'acc-1', s: stats(3 + i / 100) }]), { extends: 'bundled:base' });
    const plan = planLimits(evidence, base);
    expect(plan.groups[0].checks.every((c) => c.switchesOn)).toBe(true);
    expect(learnedRulesText(plan, evidence, { evidenceFile: 'e.json', rulesFile: 'r.yaml' })).toContain(
      '# kurtosis: the base does not run it here; the limits below switch it on.',
    );
  });

  it('keeps a base bound that is tighter and passed by every value, per side', () => {
    // kurtosis 2.90, 2.92 … 3.08 (invented): median 2.99; deviations on each side 0.01 … 0.09,
    // median 0.05, spread 1.4826 × 0.05 = 0.0741 (above the floor 0.18 / 3.078 = 0.0585).
    // Low: 2.99 − 8 × 0.0741 = 2.397, looser than the bundled 2.4, which every value passes:
    // 2.4 is kept. High: 2.99 + 0.593 = 3.583, tighter than the bundled 4: learned (worked by hand).
    const plan = planLimits(evidenceOf(ten((i) => [{ name: 'acc-1', s: stats(0, { kurtosis: 2.9 + i / 50 }) }])), random);
    const whole = option(plan.groups[0], 'kurtosis', 'whole');
    expect(whole.bounds[0].exact).toBeCloseTo(2.99 - 8 * 1.4826 * 0.05, 10);
    expect(whole.bounds[1].exact).toBeCloseTo(2.99 + 8 * 1.4826 * 0.05, 10);
    expect(whole.baseKept).toEqual([2.4, undefined]);
    expect(whole.value).toEqual([2.4, 3.59]);
    // wider scatter, 2.7 … 3.3: both learned bounds (1.02, 4.98) are looser than 2.4 … 4,
    // which every value passes: the base's range applies as it is, no key is written
    const wide = planLimits(evidenceOf(ten((i) => [{ name: 'acc-1', s: stats(0, { kurtosis: 2.7 + i / 15 }) }])), random);
    const w = option(wide.groups[0], 'kurtosis', 'whole');
    expect(w.baseKept).toEqual([2.4, 4]);
    expect(w.value).toBeNull();
    // a good value beyond the base: the learned bound loosens that side
    const beyond = planLimits(evidenceOf(ten((i) => [{ name: 'acc-1', s: stats(0, { kurtosis: i === 9 ? 4.2 : 3 + i / 50 }) }])), random);
    const b = option(beyond.groups[0], 'kurtosis', 'whole');
    expect(b.baseKept[1]).toBeUndefined();
    expect((b.value as [number, number])[1]).toBeGreaterThanOrEqual(4.2);
  });

  it('learns |mean| / std from the signed mean / std and writes the larger end', () => {
    // signed values −5e-4 … +4e-4 (invented): median −0.5e-4, floored spread 9e-4 / 3.078
    const plan = planLimits(evidenceOf(ten((i) => [{ name: 'acc-1', s: stats(3, { meanToStd: (i - 5) * 1e-4 }) }])), random);
    const o = option(plan.groups[0], 'mean-offset', 'max-ratio-to-std');
    expect(o.bounds.map((b) => b.side)).toEqual(['low', 'high']);
    expect(o.value).toBe(Math.max(-o.bounds[0].value, o.bounds[1].value));
    expect(o.value).toBeLessThan(0.1);
  });

  it('with fewer than 5 values doubles the margin and warns', () => {
    const three = [1, 2, 3].map((i) => recording(i, [{ name: 'acc-1', s: stats(3 + i / 100) }]));
    const plan = planLimits(evidenceOf(three), random);
    const o = option(plan.groups[0], 'crest-factor', 'frames-max');
    expect(o.outcome).toBe('widened');
    expect(o.bounds[0].margin).toBe(16);
    expect(plan.warnings).toEqual([
      'channel "acc-1": only 3 values per limit, fewer than 5: its limits are learned with the margin doubled (16), and the base\'s are kept where they are tighter and every value passes them',
    ]);
  });

  it('learns nothing for an option no channel had a value for', () => {
    const plan = planLimits(evidenceOf(ten(() => [{ name: 'acc-1', s: stats(3, { frameRmsMaxRatio: null, frameRmsMinRatio: null }) }])), random);
    expect(option(plan.groups[0], 'frame-rms-spread', 'max-ratio').outcome).toBe('no-values');
  });

  it('leaves out channels without a sensor type when learning by sensor, and warns of names a selector reads as globs', () => {
    const bySensor = planLimits(evidenceOf(ten(() => [{ name: 'acc-1', s: stats(3) }, { name: 'mic', sensor: null, s: stats(3) }]), { by: 'sensor' }), random);
    expect(bySensor.groups.map((g) => g.match)).toEqual([{ sensor: 'accelerometer' }]);
    expect(bySensor.warnings[0]).toBe(
      '1 channel name(s) have no sensor type and are not learned from (--by sensor): "mic"; give their sensor in a sidecar, or learn --by channel',
    );
    const globby = planLimits(evidenceOf(ten(() => [{ name: 'acc*1', s: stats(3) }])), random);
    expect(globby.warnings[0]).toBe('channel name(s) "acc*1" hold * or ?, which a name selector reads as a wildcard: their entries also match other names');
  });

  it('refuses rms-level unless learned per channel, and a check that cannot be learned', () => {
    const e = (checks: string[], by: 'channel' | 'sensor') => evidenceOf([recording(1, [])], { checks, by });
    expect(() => planLimits(e(['rms-level'], 'sensor'), random)).toThrow('rms-level is learned per channel only (--by channel)');
    expect(() => planLimits(e(['dropout'], 'channel'), random)).toThrow('"dropout" is not a check that can be learned');
  });

  it('writes a file that loads, whatever the channel names (quotes, colons, a newline)', async () => {
    const { mkdtemp, writeFile } = await import('node:fs/promises');
    const { tmpdir } = await import('node:os');
    const { join } = await import('node:path');
    const u = uniformSource(1);
    const names = ['a: b', 'quote"d', "it's", '#hash', 'new\nline', '- dash'];
    const evidence = evidenceOf(ten(() => names.map((name) => ({ name, s: stats(3, { kurtosis: 3 + u() / 10 }) }))));
    const dir = await mkdtemp(join(tmpdir(), 'vibgate-learn-names-'));
    await writeFile(join(dir, 'r.yaml'), learnedRulesText(planLimits(evidence, random), evidence, { evidenceFile: 'e.json', rulesFile: 'r.yaml' }));
    const rules = await loadRules(join(dir, 'r.yaml'));
    expect(rules.channels.slice(1).map((c) => c.match.name)).toEqual(names);
  });
});

describe('channelEvidence', () => {
  it('stores what a selector can match: name, unit, sensor, group (empty words as unknown)', () => {
    expect(channelEvidence({ index: 0, name: 'a', unit: '', sensor: 'mic', group: 'room' }, stats(1))).toMatchObject({ name: 'a', unit: null, sensor: 'mic', group: 'room' });
  });
});
