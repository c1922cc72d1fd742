/**
 * What a learned rule file says, before it is written: which channels are learned together
 * (per channel name, per sensor type, or all at once), which checks are learned for each
 * group, and each limit with the evidence it rests on. Pure: evidence and the base's
 * resolved rules in, a plan out.
 */
import { checksForChannel, selectorMatches } from '../rules/select.js';
import type { ResolvedRules } from '../rules/types.js';
import type { ChannelEvidence, Evidence, StatisticName } from './evidence.js';
import { learnBound, MIN_VALUES_PER_LIMIT, type LearnedBound, type Side } from './limits.js';

/** One option of a check that is learned: a `[low, high]` range, or one value. */
export interface OptionSpec {
  option: string;
  /** The statistic(s) and side each bound comes from: a range has a low then a high part. */
  parts: ReadonlyArray<{ statistic: StatisticName; side: Side; what: string }>;
  range: boolean;
  /**
   * A range learned on a signed statistic for an option that limits its magnitude
   * (mean-offset judges |mean| / std): the value written is the larger of |low| and |high|.
   */
  folded?: boolean;
  scale?: 'log';
  /** A statistic whose largest value over the group is the least spread allowed (BoundOptions.minSpread). */
  floor?: StatisticName;
}

export interface LearnableCheck {
  id: string;
  options: readonly OptionSpec[];
}

const one = (option: string, statistic: StatisticName, side: Side, what: string, extra: Partial<OptionSpec> = {}): OptionSpec => ({
  option,
  parts: [{ statistic, side, what }],
  range: false,
  ...extra,
});
const range = (option: string, low: StatisticName, high: StatisticName, whatLow: string, whatHigh: string): OptionSpec => ({
  option,
  parts: [
    { statistic: low, side: 'low', what: whatLow },
    { statistic: high, side: 'high', what: whatHigh },
  ],
  range: true,
});

/**
 * The checks whose limits describe what is normal for an application and can be learned.
 * Statistics that only go wrong one way get one-sided limits: a crest factor, a frame RMS
 * ratio, |mean| / std or max / −min that is small is never a data fault in itself (too
 * little crest factor is judged, where wanted, by the base's `min`). Not learned: the
 * universal faults of the base (non-finite samples, flat and dead channels, dropouts,
 * clipping), whose limits are physical, not empirical, and the statistical tests
 * (stationarity), whose limit is a significance level.
 */
export const LEARNABLE_CHECKS: readonly LearnableCheck[] = [
  // |mean| / std is the size of a near-normal scatter about 0: its distribution is folded
  // (half-normal), with a long right tail a median and MAD of |mean| / std judge poorly.
  // The signed mean / std is learned as a range instead; the limit is the larger end.
  {
    id: 'mean-offset',
    options: [{ ...range('max-ratio-to-std', 'meanToStd', 'meanToStd', 'mean / std (signed)', 'mean / std (signed)'), folded: true }],
  },
  { id: 'symmetry', options: [one('max-ratio', 'symmetryRatio', 'high', 'max and −min, the larger over the smaller')] },
  {
    id: 'skewness',
    options: [
      // a few recordings of narrow-band response show less of the scatter than it has: at
      // least the Gaussian scatter of the channel's autocorrelation (Lomnicki 1961)
      { ...range('whole', 'skewness', 'skewness', 'skewness (population g1) of the whole record', 'skewness (population g1) of the whole record'), floor: 'skewnessScatter' },
      range('frames', 'frameSkewnessMin', 'frameSkewnessMax', 'skewness of the lowest frame', 'skewness of the highest frame'),
    ],
  },
  {
    id: 'kurtosis',
    options: [
      { ...range('whole', 'kurtosis', 'kurtosis', 'kurtosis (non-excess) of the whole record', 'kurtosis (non-excess) of the whole record'), floor: 'kurtosisScatter' },
      range('frames', 'frameKurtosisMin', 'frameKurtosisMax', 'kurtosis of the lowest frame', 'kurtosis of the highest frame'),
    ],
  },
  {
    id: 'crest-factor',
    options: [
      one('max', 'crestFactor', 'high', 'crest factor of the whole record'),
      one('frames-max', 'frameCrestFactorMax', 'high', 'crest factor of the highest frame'),
    ],
  },
  {
    id: 'frame-rms-spread',
    options: [
      // level ratios: their natural variation is a factor (dB), so they are learned on a log scale
      one('max-ratio', 'frameRmsMaxRatio', 'high', 'highest frame RMS / median frame RMS', { scale: 'log' }),
      one('min-ratio', 'frameRmsMinRatio', 'low', 'lowest frame RMS / median frame RMS', { scale: 'log' }),
    ],
  },
  {
    id: 'rms-level',
    options: [
      one('min', 'rms', 'low', 'RMS', { scale: 'log' }),
      one('max', 'rms', 'high', 'RMS', { scale: 'log' }),
    ],
  },
];

/** Learned unless `--checks` says otherwise. rms-level is not: a test's level may change by design. */
export const DEFAULT_LEARNED_CHECKS: readonly string[] = ['mean-offset', 'symmetry', 'skewness', 'kurtosis', 'crest-factor', 'frame-rms-spread'];

/** Checks that are learned per channel name only: their values differ from point to point. */
export const PER_CHANNEL_ONLY: readonly string[] = ['rms-level'];

/** One channel of one recording of the evidence. */
export interface Member {
  /** Index in evidence.recordings. */
  recording: number;
  channel: ChannelEvidence;
}

export interface LearnedOption {
  spec: OptionSpec;
  /**
   * - learned: from the values with the margin asked for;
   * - widened: fewer than MIN_VALUES_PER_LIMIT values: learned with twice the margin;
   * - no-values: the check could judge none of the channels (too few frames, no variation).
   */
  outcome: 'learned' | 'widened' | 'no-values';
  /** What is written: a range, one value, or null (nothing: the base's limit applies as it is). */
  value: [number, number] | number | null;
  /** Learned from the values, one per part of the spec (none for no-values). */
  bounds: LearnedBound[];
  /**
   * Per part, the base's bound where it is kept instead of the learned one: tighter than
   * it, and every value passes it (undefined: the learned bound is written).
   */
  baseKept: Array<number | undefined>;
  /** Values learned from (for a range: the fewer of its two parts). */
  n: number;
  /** The base's value of this option for the group's channels (undefined: none). */
  baseValue?: unknown;
}

export interface LearnedCheck {
  id: string;
  /** Why the check is not learned for the group; then `options` is empty. */
  notLearned?: string;
  /** The base does not run the check for these channels: the learned file switches it on. */
  switchesOn: boolean;
  /** The channels it was learned from (with --by all: those the base does not switch it off for). */
  from: Member[];
  /** Channels of the group left out: the base switches the check off for them (--by all). */
  leftOut: Member[];
  options: LearnedOption[];
}

export interface LearnedGroup {
  /** The `channels:` selector, or null for the file's top-level `checks:` (--by all). */
  match: { name: string } | { sensor: string } | null;
  /** `channel "acc-1"`, `sensor type "accelerometer"`, `all channels`. */
  label: string;
  members: Member[];
  checks: LearnedCheck[];
}

export interface LearnPlan {
  groups: LearnedGroup[];
  /** For the user (stderr) and, in short, the file's comments. */
  warnings: string[];
  /** Channels not learned from at all, with why (--by sensor: no sensor type). */
  excluded: Array<{ member: Member; why: string }>;
}

/** What a selector sees of a channel in the evidence. */
function factsOf(c: ChannelEvidence) {
  return { name: c.name, unit: c.unit ?? undefined, sensor: c.sensor ?? undefined, group: c.group ?? undefined };
}

/** How the base treats a check on one channel: runs it, switches it off by a `channels:` entry, or never runs it. */
function baseState(base: ResolvedRules, c: ChannelEvidence, id: string): { state: 'runs' | 'off' | 'not-run'; options?: Record<string, unknown> } {
  const facts = factsOf(c);
  const setting = checksForChannel(base, facts)[id];
  if (setting) return { state: 'runs', options: setting.options };
  const off = base.channels.some((rule) => rule.checks[id] === false && selectorMatches(rule.match, facts));
  return { state: off ? 'off' : 'not-run' };
}

/**
 * The base's bound for each part of an option (undefined where it has none): a range's
 * ends, a one-sided value, or ±value for a folded (magnitude) option.
 */
function baseBounds(spec: OptionSpec, base: unknown): Array<number | undefined> {
  const num = (v: unknown) => (typeof v === 'number' && Number.isFinite(v) ? v : undefined);
  if (spec.folded) {
    const b = num(base);
    return [b === undefined ? undefined : -b, b];
  }
  if (spec.range) return Array.isArray(base) && base.length === 2 ? [num(base[0]), num(base[1])] : [undefined, undefined];
  return [num(base)];
}

function learnOption(spec: OptionSpec, from: Member[], baseValue: unknown, margin: number): LearnedOption {
  const values = spec.parts.map((p) =>
    from.map((m) => m.channel.stats[p.statistic]).filter((v): v is number => v !== null && (spec.scale !== 'log' || v > 0)),
  );
  const n = Math.min(...values.map((v) => v.length));
  if (n === 0) return { spec, outcome: 'no-values', value: null, bounds: [], baseKept: [], n, baseValue };
  const few = n < MIN_VALUES_PER_LIMIT;
  const floors = spec.floor === undefined ? [] : from.map((m) => m.channel.stats[spec.floor!]).filter((v): v is number => v !== null);
  // the largest: channels pooled by sensor type or over all channels share one limit, which
  // must hold the scatter of the most narrow-band of them
  const minSpread = floors.length > 0 ? Math.max(...floors) : undefined;
  const bounds = spec.parts.map((p, i) => learnBound(values[i], p.side, { margin: few ? 2 * margin : margin, scale: spec.scale, minSpread }));
  // The base's bound stays where it is tighter and every good value passes it: learning
  // loosens a limit only where good recordings need it.
  const baseKept = baseBounds(spec, baseValue).map((bb, i) => {
    if (bb === undefined) return undefined;
    const high = spec.parts[i].side === 'high';
    const passes = values[i].every((v) => (high ? v <= bb : v >= bb));
    const tighter = high ? bb < bounds[i].value : bb > bounds[i].value;
    return passes && tighter ? bb : undefined;
  });
  const ends = bounds.map((b, i) => baseKept[i] ?? b.value);
  const value: [number, number] | number = spec.folded
    ? Math.max(Math.abs(ends[0]), Math.abs(ends[1]))
    : spec.range
      ? [ends[0], ends[1]]
      : ends[0];
  // the base's own value needs no key of its own (and keeps following the base)
  const same = JSON.stringify(value) === JSON.stringify(baseValue);
  return { spec, outcome: few ? 'widened' : 'learned', value: same ? null : value, bounds, baseKept, n, baseValue };
}

function learnCheck(check: LearnableCheck, members: Member[], base: ResolvedRules, margin: number, topLevel: boolean): LearnedCheck {
  const states = members.map((m) => ({ m, ...baseState(base, m.channel, check.id) }));
  const off = states.filter((s) => s.state === 'off');
  const kept = states.filter((s) => s.state !== 'off');
  const names = (list: typeof states) => [...new Set(list.map((s) => s.m.channel.name))];
  const none = (why: string): LearnedCheck => ({ id: check.id, notLearned: why, switchesOn: false, from: [], leftOut: off.map((s) => s.m), options: [] });
  if (kept.length === 0) return none('the base switches it off for these channels');
  if (off.length > 0 && !topLevel) {
    // a `channels:` entry for the whole group would switch it back on for those channels
    return none(`the base switches it off for ${quoteList(names(off))} of this group`);
  }
  // top-level checks: a base `channels:` entry still switches it off afterwards
  const switchesOn = topLevel ? base.checks[check.id] === undefined : kept.some((s) => s.state === 'not-run');
  // the base's setting the learned one replaces keys of: the top level's, or the group's channels'
  const baseOptions = topLevel ? base.checks[check.id]?.options : kept.find((s) => s.state === 'runs')?.options;
  const options = check.options.map((spec) => learnOption(spec, kept.map((s) => s.m), baseOptions?.[spec.option], margin));
  return { id: check.id, switchesOn, from: kept.map((s) => s.m), leftOut: off.map((s) => s.m), options };
}

/** `"a", "b" and "c"` */
export function quoteList(items: readonly string[]): string {
  const q = items.map((s) => JSON.stringify(s));
  return q.length <= 1 ? q.join('') : `${q.slice(0, -1).join(', ')} and ${q[q.length - 1]}`;
}

/**
 * The learned limits for the evidence's recordings on top of `base`, grouped as
 * `evidence.settings.by` says: per channel name and per sensor type in the order the
 * channels first appear in the (sorted) recordings, or one group of all channels. Throws a
 * RangeError when a check is unknown or is learned per channel only and `by` is not channel.
 */
export function planLimits(evidence: Evidence, base: ResolvedRules): LearnPlan {
  const { by, margin } = evidence.settings;
  const wanted = evidence.settings.checks;
  for (const id of wanted) {
    if (!LEARNABLE_CHECKS.some((c) => c.id === id)) throw new RangeError(`"${id}" is not a check that can be learned (${LEARNABLE_CHECKS.map((c) => c.id).join(', ')})`);
    if (PER_CHANNEL_ONLY.includes(id) && by !== 'channel') throw new RangeError(`${id} is learned per channel only (--by channel): its values differ from point to point`);
  }
  const learnable = LEARNABLE_CHECKS.filter((c) => wanted.includes(c.id));
  const warnings: string[] = [];
  const excluded: LearnPlan['excluded'] = [];
  const members: Member[] = evidence.recordings.flatMap((r, recording) => r.channels.map((channel) => ({ recording, channel })));

  const groups = new Map<string, { match: LearnedGroup['match']; label: string; members: Member[] }>();
  for (const m of members) {
    let key: string;
    let match: LearnedGroup['match'];
    let label: string;
    if (by === 'channel') {
      key = m.channel.name;
      match = { name: m.channel.name };
      label = `channel ${JSON.stringify(m.channel.name)}`;
    } else if (by === 'sensor') {
      if (m.channel.sensor === null) {
        excluded.push({ member: m, why: 'no sensor type' });
        continue;
      }
      // selectors compare sensor types case-insensitively
      key = m.channel.sensor.toLowerCase();
      match = { sensor: key };
      label = `sensor type ${JSON.stringify(key)}`;
    } else {
      key = '';
      match = null;
      label = 'all channels';
    }
    const g = groups.get(key) ?? { match, label, members: [] };
    g.members.push(m);
    groups.set(key, g);
  }

  if (excluded.length > 0) {
    const names = [...new Set(excluded.map((e) => e.member.channel.name))];
    warnings.push(`${names.length} channel name(s) have no sensor type and are not learned from (--by sensor): ${quoteList(names)}; give their sensor in a sidecar, or learn --by channel`);
  }
  if (by === 'channel') {
    const globby = [...groups.keys()].filter((name) => /[*?]/.test(name));
    if (globby.length > 0) {
      warnings.push(`channel name(s) ${quoteList(globby)} hold * or ?, which a name selector reads as a wildcard: their entries also match other names`);
    }
  }

  const learned: LearnedGroup[] = [...groups.values()].map((g) => ({
    ...g,
    checks: learnable.map((check) => learnCheck(check, g.members, base, margin, g.match === null)),
  }));
  for (const g of learned) {
    const few = g.checks.flatMap((c) => c.options).filter((o) => o.outcome === 'widened');
    if (few.length === 0) continue;
    const n = Math.min(...few.map((o) => o.n));
    warnings.push(
      `${g.label}: only ${n} value${n === 1 ? '' : 's'} per limit, fewer than ${MIN_VALUES_PER_LIMIT}: its limits are learned with ` +
        `the margin doubled (${2 * margin}), and the base's are kept where they are tighter and every value passes them`,
    );
  }
  return { groups: learned, warnings, excluded };
}
