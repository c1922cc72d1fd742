import { distinctLevelCount, smallestLevelStep } from '../stats/distinct-levels.js';
import type { Check } from './types.js';
import { show, withUnit } from './util.js';

interface Options {
  'min-levels': number;
  'min-peak-fraction'?: number;
}

/**
 * A channel whose input range is set far wider than its signal uses only a few of the
 * converter's codes: its samples come in coarse steps, the quantisation noise fills the
 * spectrum's low end and the shape statistics (kurtosis, crest factor) describe the
 * staircase, not the response. Judged on the distinct values in the sampled segments
 * (`min-levels`; 256 levels ≈ 8 bits ≈ 48 dB of dynamic range by the 6.02 dB-per-bit rule
 * of uniform quantisation, handbook fact; the limit itself is common practice, no source),
 * and, where the converter's full scale is known, on the peak as a fraction of it.
 */
export const rangeUtilisation: Check<Options> = {
  id: 'range-utilisation',
  description: 'The channel uses enough distinct converter levels (and, if set, enough of its full scale) to keep its resolution.',
  options: {
    'min-levels': { type: 'integer', minimum: 2, maximum: 4096, description: 'Fewest distinct sample values accepted in the sampled segments (counted up to 4096).' },
    'min-peak-fraction': { type: 'number', exclusiveMinimum: 0, maximum: 1, description: "Smallest accepted peak / converter full scale (needs a known full scale: integer PCM or the sidecar's full-scale)." },
  },
  defaults: { 'min-levels': 256 },
  defaultSeverity: 'warning',
  needs: () => ({ levels: true }),
  evaluate(ctx, o) {
    const parts = [`≥ ${o['min-levels']} levels`];
    if (o['min-peak-fraction'] !== undefined) parts.push(`peak ≥ ${show(o['min-peak-fraction'])} × full scale`);
    const limit = parts.join(', ');
    const levels = ctx.segments?.levels;
    if (!levels || ctx.segments!.used === 0 || levels.samples === 0) {
      return { ok: null, value: null, limit, message: 'no sampled segment to count levels in (the record is shorter than one segment, or every segment held a non-finite sample)' };
    }
    const { count, exact } = distinctLevelCount(levels);
    const step = smallestLevelStep(levels);
    const fullScale = Math.max(Math.abs(ctx.channel.clipLow ?? NaN), Math.abs(ctx.channel.clipHigh ?? NaN));
    const fraction = Number.isFinite(fullScale) && fullScale > 0 ? ctx.stats.peak / fullScale : null;
    const seen =
      `${exact ? count : `at least ${count}`} distinct levels in ${levels.samples} sampled samples` +
      (exact && Number.isFinite(step) ? ` (smallest step ${withUnit(step, ctx)})` : '') +
      (fraction !== null ? `, peak ${show(100 * fraction)} % of the ±${withUnit(fullScale, ctx)} full scale` : '');
    const fewLevels = exact && count < o['min-levels'];
    const lowPeak = o['min-peak-fraction'] !== undefined && fraction !== null && fraction < o['min-peak-fraction'];
    if (!fewLevels && !lowPeak) return { ok: true, value: count, unit: '', limit, message: `${seen}; limit ${limit}` };
    return {
      ok: false, value: fewLevels ? count : fraction, unit: '', limit,
      message: `${seen}, below the limit ${limit}: the input range is set far too wide for this signal (or the gain too low): resolution is lost`,
    };
  },
};
