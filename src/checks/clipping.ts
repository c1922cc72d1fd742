import type { Check } from './types.js';
import { instant, nonNegative, show, withUnit } from './util.js';

interface Options {
  'max-fraction': number;
  'without-range': 'flat-tops' | 'repeated-extremes';
}

/**
 * Overload shows as flat tops. With a known converter range (integer PCM, or a sidecar
 * `full-scale`) the samples at or beyond full scale are counted; without one, the samples in
 * runs of two or more at the channel's own min or max (clean continuous data rarely repeats
 * its extreme value: common practice, no source, ../shared/domain.md).
 *
 * Flat runs miss clipping of broadband data: sampled at 2–3 times its highest frequency, a
 * clipped peak is mostly one sample wide (a simulated 2048 Hz record with modes to 800 Hz,
 * 0.1 % of samples clamped, had 71 samples at its extremes and none in a run:
 * test/calibration). `without-range: repeated-extremes` counts instead every sample equal
 * to the min or the max when that value occurs more than once, wherever it occurs.
 */
export const clipping: Check<Options> = {
  id: 'clipping',
  description: "The fraction of samples at converter full scale (or in flat runs at the channel's extremes) stays small.",
  options: {
    'max-fraction': nonNegative('Largest accepted fraction of clipped samples (1e-4 = 0.01 %).'),
    'without-range': {
      enum: ['flat-tops', 'repeated-extremes'],
      description:
        "Without a known converter range: count the samples in runs of two or more at the channel's min or max (flat-tops), " +
        'or every sample equal to the min or max when that value occurs more than once (repeated-extremes: also catches ' +
        'clipped peaks one sample wide, as in broadband data).',
    },
  },
  defaults: { 'max-fraction': 1e-4, 'without-range': 'flat-tops' },
  defaultSeverity: 'error',
  evaluate(ctx, o) {
    const s = ctx.stats;
    const pct = (f: number) => `${show(100 * f)} %`;
    const limit = `≤ ${pct(o['max-fraction'])}`;
    if (s.finiteSamples === 0) return { ok: null, value: null, limit, message: 'no finite samples' };
    let fraction: number;
    let seen: string;
    let firstS: number | null;
    if (s.fullScale) {
      fraction = s.fullScale.fraction;
      const lo = s.fullScale.low;
      const hi = s.fullScale.high;
      const range = lo !== null && hi !== null ? `${withUnit(lo, ctx)} … ${withUnit(hi, ctx)}` : 'its limit';
      seen =
        `${pct(fraction)} of samples at converter full scale (${range}): ` +
        `${s.fullScale.atLow} at the low end, ${s.fullScale.atHigh} at the high end`;
      firstS = s.fullScale.atHigh >= s.fullScale.atLow ? s.maxTimeS : s.minTimeS;
      if (s.fullScale.atLow + s.fullScale.atHigh === 0) firstS = null;
    } else if (o['without-range'] === 'repeated-extremes') {
      // a constant channel has one extreme: count its samples once
      const atMin = s.extremes.atMin > 1 ? s.extremes.atMin : 0;
      const atMax = s.max > s.min && s.extremes.atMax > 1 ? s.extremes.atMax : 0;
      fraction = s.samples > 0 ? (atMin + atMax) / s.samples : 0;
      seen =
        `${pct(fraction)} of samples at a repeated extreme of the channel ` +
        `(${atMin} at min ${withUnit(s.min, ctx)}, ${atMax} at max ${withUnit(s.max, ctx)}; converter range unknown)`;
      firstS = atMax >= atMin ? s.maxTimeS : s.minTimeS;
      if (atMin + atMax === 0) firstS = null;
    } else {
      fraction = s.extremes.flatFraction;
      seen =
        `${pct(fraction)} of samples in flat runs at the channel's extremes ` +
        `(${s.extremes.flatAtMin} at min ${withUnit(s.min, ctx)}, ${s.extremes.flatAtMax} at max ${withUnit(s.max, ctx)}; converter range unknown)`;
      firstS = s.extremes.flatAtMax >= s.extremes.flatAtMin ? s.maxTimeS : s.minTimeS;
      if (s.extremes.flatAtMin + s.extremes.flatAtMax === 0) firstS = null;
    }
    const at = instant(ctx, firstS);
    if (fraction <= o['max-fraction']) return { ok: true, value: fraction, unit: '', limit, message: `${seen}; limit ${limit}`, at };
    return {
      ok: false,
      value: fraction,
      unit: '',
      limit,
      at,
      message: `${seen}, over the limit ${limit}, first at ${show(firstS)} s: overload: gain too high, or the sensor's or converter's range exceeded?`,
    };
  },
};
