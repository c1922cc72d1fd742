import type { Check } from './types.js';
import { instant, nonNegative, show, withUnit } from './util.js';

interface Options {
  'max-fraction': number;
}

/**
 * Overload shows as flat tops. With a known converter range (integer PCM, or a sidecar
 * `full-scale`) the samples at or beyond full scale are counted; without one, the samples in
 * runs of two or more at the channel's own min or max (clean continuous data rarely repeats
 * its extreme value: common practice, no source, ../shared/domain.md).
 */
export const clipping: Check<Options> = {
  id: 'clipping',
  description: "The fraction of samples at converter full scale (or in flat runs at the channel's extremes) stays small.",
  options: { 'max-fraction': nonNegative('Largest accepted fraction of clipped samples (1e-4 = 0.01 %).') },
  defaults: { 'max-fraction': 1e-4 },
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
