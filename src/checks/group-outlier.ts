import type { ChannelStats } from '../stats/channel-stats.js';
import type { Check } from './types.js';
import { positive, show } from './util.js';
import { globMatch } from '../rules/glob.js';

type Statistic = 'rms' | 'crest-factor' | 'kurtosis';

interface Options {
  of: Statistic[];
  'max-z': number;
  'min-peers': number;
  groups?: string[];
}

/**
 * What each statistic is compared on: levels on a log scale (they differ by factors from
 * point to point). `floor` is the smallest spread (σ-equivalent) the yardstick is allowed:
 * channels of one group can agree more closely than their honest differences (six
 * channels of one shaker run may share a kurtosis to ±0.02), and a yardstick that narrow
 * would call sampling scatter an outlier. With the default limit of 5 a channel must then
 * lie at least 10 times from the median RMS, or 1.5 from the median crest factor
 * or kurtosis (common practice, no source).
 */
const measures: Record<Statistic, { label: string; value: (s: ChannelStats) => number; log: boolean; floor: number }> = {
  rms: { label: 'RMS', value: (s) => s.rms, log: true, floor: 0.2 },
  'crest-factor': { label: 'crest factor', value: (s) => s.crestFactor, log: false, floor: 0.3 },
  kurtosis: { label: 'kurtosis', value: (s) => s.kurtosis, log: false, floor: 0.3 },
};

const median = (v: number[]): number => {
  const s = v.slice().sort((a, b) => a - b);
  const h = s.length >> 1;
  return s.length % 2 ? s[h] : (s[h - 1] + s[h]) / 2;
};

/**
 * Modified z-score of `x` among `values` (Iglewicz & Hoaglin 1993, "How to Detect and
 * Handle Outliers", ASQC Basic References 16): M = 0.6745 (x − median) / MAD, where 0.6745
 * is the normal quartile that makes the MAD consistent with σ. When more than half the
 * values are equal (MAD = 0) they use the mean absolute deviation instead: M = (x − median)
 * / (1.253314 · MeanAD), 1.253314 = √(π/2). Both from memory of that booklet. `floor`
 * bounds the spread (σ-equivalent) from below.
 */
export function modifiedZ(x: number, values: number[], floor = 0): number {
  const m = median(values);
  const mad = median(values.map((v) => Math.abs(v - m)));
  const meanAd = values.reduce((a, v) => a + Math.abs(v - m), 0) / values.length;
  // the σ-equivalent spread, never below `floor`
  const spread = Math.max(floor, mad > 0 ? mad / 0.6745 : 1.253314 * meanAd);
  if (spread > 0) return (x - m) / spread;
  return x === m ? 0 : Infinity * Math.sign(x - m);
}

/**
 * A channel that stands out from the channels of its group (the sidecar's `group`, else
 * those with the same unit): its RMS, crest factor or kurtosis far from the group's median,
 * measured in robust z-scores so that the odd channel does not widen the yardstick it is
 * measured with. RMS is compared on a log scale. Iglewicz & Hoaglin suggest |M| > 3.5 as
 * an outlier; channels of one structure differ for honest reasons (node lines, load paths),
 * so the default limit is 5 and the check warns unless the rule file says otherwise.
 */
export const groupOutlier: Check<Options> = {
  id: 'group-outlier',
  description: "RMS, crest factor and kurtosis stay within a robust z-score of the group's median (modified z-score, Iglewicz & Hoaglin).",
  options: {
    of: {
      type: 'array',
      items: { enum: Object.keys(measures) },
      minItems: 1,
      uniqueItems: true,
      description: 'The statistics compared with the group: rms (on a log scale), crest-factor, kurtosis.',
    },
    'max-z': positive('Largest accepted |modified z-score| = 0.6745·|x − median| / MAD over the group.'),
    'min-peers': { type: 'integer', minimum: 3, description: 'Fewest channels in a group (this one included) for the comparison.' },
    groups: {
      type: 'array',
      items: { type: 'string', minLength: 1 },
      minItems: 1,
      description:
        'Groups by channel name: globs (* any run of characters, ? one character); a channel belongs to the first that matches its name. Channels matching none are grouped by the sidecar group, else by unit.',
    },
  },
  defaults: { of: ['rms', 'crest-factor', 'kurtosis'], 'max-z': 5, 'min-peers': 4 },
  defaultSeverity: 'warning',
  evaluate(ctx, o) {
    const limit = `|z| ≤ ${show(o['max-z'])} in a group of ≥ ${o['min-peers']}`;
    const byName = o.groups && ctx.channels ? o.groups.find((g) => globMatch(g, ctx.channel.name)) : undefined;
    const peers = byName !== undefined
      ? ctx.channels!.filter((p) => o.groups!.find((g) => globMatch(g, p.channel.name)) === byName)
      : ctx.peers;
    const group = byName !== undefined
      ? `the channels named "${byName}"`
      : ctx.channel.group !== undefined ? `group "${ctx.channel.group}"` : ctx.channel.unit ? `the ${ctx.channel.unit} channels` : 'the channels without a unit';
    let worst: { stat: Statistic; z: number; x: number; median: number; n: number } | null = null;
    for (const stat of o.of) {
      const m = measures[stat];
      const f = (s: ChannelStats) => (m.log ? Math.log10(m.value(s)) : m.value(s));
      const values = peers.map((p) => f(p.stats)).filter(Number.isFinite);
      const x = f(ctx.stats);
      if (values.length < o['min-peers'] || !Number.isFinite(x)) continue;
      const z = modifiedZ(x, values, m.floor);
      if (worst === null || Math.abs(z) > Math.abs(worst.z)) {
        const mid = median(values);
        worst = { stat, z, x: m.value(ctx.stats), median: m.log ? 10 ** mid : mid, n: values.length };
      }
    }
    if (worst === null) {
      return { ok: null, value: null, limit, message: `fewer than ${o['min-peers']} channels with finite statistics in ${group}: nothing to compare with` };
    }
    const m = measures[worst.stat];
    const unit = worst.stat === 'rms' && ctx.channel.unit ? ` ${ctx.channel.unit}` : '';
    const seen = `${m.label} ${show(worst.x)}${unit} against the median ${show(worst.median)}${unit} of ${group} (${worst.n} channels): z = ${show(worst.z)}`;
    if (Math.abs(worst.z) <= o['max-z']) {
      return { ok: true, value: worst.z, unit: '', limit, message: `largest deviation: ${seen}; limit ${limit}` };
    }
    const why =
      worst.stat === 'rms'
        ? worst.z > 0 ? 'wrong sensitivity or gain in the channel table, a sensor on a local resonance, or the wrong unit?' : 'a loose or badly mounted sensor, wrong sensitivity, or a half-broken cable?'
        : worst.stat === 'kurtosis'
          ? worst.z > 0 ? 'spikes or rattle only this channel sees: its connector, cable or mounting?' : 'clipping or a periodic pick-up only on this channel?'
          : worst.z > 0 ? 'peaks only this channel has: spikes, impacts at its mounting, or a loose connector?' : 'flattened peaks: clipping or a saturated amplifier on this channel?';
    return { ok: false, value: worst.z, unit: '', limit, message: `${seen}, beyond the limit ${limit}: ${why}` };
  },
};
