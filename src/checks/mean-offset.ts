import type { Check } from './types.js';
import { nonNegative, show, withUnit } from './util.js';

interface Options {
  'max-ratio-to-std': number;
  'max-abs'?: number;
}

/**
 * Vibration signals are near zero-mean: a mean that is a noticeable fraction of the
 * standard deviation points at an offset, a drifting sensor or amplifier, or a failing sensor
 * (common practice, no source).
 */
export const meanOffset: Check<Options> = {
  id: 'mean-offset',
  description: 'The mean stays small relative to the standard deviation (and, optionally, in absolute units).',
  options: {
    'max-ratio-to-std': nonNegative('Largest accepted |mean| / standard deviation.'),
    'max-abs': nonNegative("Largest accepted |mean| in the channel's unit."),
  },
  defaults: { 'max-ratio-to-std': 0.1 },
  defaultSeverity: 'error',
  evaluate(ctx, o) {
    const { mean, std } = ctx.stats;
    if (!Number.isFinite(mean) || !(std > 0)) {
      return { ok: null, value: null, limit: `≤ ${show(o['max-ratio-to-std'])}`, message: 'no variation to compare the mean with (see flat-channel)' };
    }
    const ratio = Math.abs(mean) / std;
    const absBad = o['max-abs'] !== undefined && Math.abs(mean) > o['max-abs'];
    const ratioBad = ratio > o['max-ratio-to-std'];
    const limit = `≤ ${show(o['max-ratio-to-std'])} × std` + (o['max-abs'] !== undefined ? ` and |mean| ≤ ${withUnit(o['max-abs'], ctx)}` : '');
    const seen = `mean ${withUnit(mean, ctx)} is ${show(ratio)} × the standard deviation (${withUnit(std, ctx)})`;
    if (!ratioBad && !absBad) return { ok: true, value: ratio, unit: '', limit, message: `${seen}; limit ${limit}` };
    return {
      ok: false,
      value: ratio,
      unit: '',
      limit,
      message: `${seen}, over the limit ${limit}: DC offset from the sensor or amplifier, a drifting or failing sensor, or a DC-coupled input?`,
    };
  },
};
