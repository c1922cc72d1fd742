import type { Check } from './types.js';
import { instant, positive, show, withUnit } from './util.js';

interface Options {
  'max-ratio': number;
}

/**
 * Most vibration signals are roughly symmetric about zero, so max and −min are of similar
 * size; a large asymmetry points at one-sided spikes, clipping on one side, or a rattling
 * sensor (common practice, no source).
 */
export const symmetry: Check<Options> = {
  id: 'symmetry',
  description: 'Max and −min are of similar size: the larger over the smaller stays below a ratio.',
  options: { 'max-ratio': positive('Largest accepted ratio of the larger of max and −min to the smaller (≥ 1).') },
  defaults: { 'max-ratio': 1.5 },
  defaultSeverity: 'warning',
  evaluate(ctx, o) {
    const { min, max, symmetryRatio, largerSide } = ctx.stats;
    const limit = `≤ ${show(o['max-ratio'])}`;
    if (Number.isNaN(symmetryRatio)) return { ok: null, value: null, limit, message: 'no finite samples' };
    const side = largerSide === 'positive' ? 'positive' : 'negative';
    const seen = `max ${withUnit(max, ctx)} and min ${withUnit(min, ctx)}: the ${side} side reaches ${show(symmetryRatio)} × further`;
    const at = instant(ctx, largerSide === 'positive' ? ctx.stats.maxTimeS : ctx.stats.minTimeS);
    if (symmetryRatio <= o['max-ratio']) return { ok: true, value: symmetryRatio, unit: '', limit, message: `${seen}; limit ${limit}`, at };
    return {
      ok: false,
      value: Number.isFinite(symmetryRatio) ? symmetryRatio : null,
      unit: '',
      limit,
      message:
        `${seen} (limit ${limit}), the larger extreme at ${show(at?.startS)} s: ` +
        'one-sided spikes (loose connector?), clipping on one side, or a loose, rattling sensor?',
      at,
    };
  },
};
