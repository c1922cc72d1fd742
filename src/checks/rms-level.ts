import type { Check } from './types.js';
import { show, withUnit } from './util.js';

interface Options {
  min?: number;
  max?: number;
}

/** Level limits in the channel's unit, for tests whose expected level is known. */
export const rmsLevel: Check<Options> = {
  id: 'rms-level',
  description: "The RMS lies within limits in the channel's unit.",
  options: {
    min: { type: 'number', minimum: 0, description: "Smallest accepted RMS in the channel's unit." },
    max: { type: 'number', exclusiveMinimum: 0, description: "Largest accepted RMS in the channel's unit." },
  },
  defaults: {},
  defaultSeverity: 'error',
  evaluate(ctx, o) {
    const rms = ctx.stats.rms;
    const parts = [o.min !== undefined ? `≥ ${withUnit(o.min, ctx)}` : '', o.max !== undefined ? `≤ ${withUnit(o.max, ctx)}` : ''].filter(Boolean);
    const limit = parts.join(' and ') || 'none';
    if (!Number.isFinite(rms)) return { ok: null, value: null, limit, message: 'no finite samples' };
    const unit = ctx.channel.unit ?? '';
    if (parts.length === 0) return { ok: null, value: rms, unit, limit, message: 'no level limits given' };
    const low = o.min !== undefined && rms < o.min;
    const high = o.max !== undefined && rms > o.max;
    if (!low && !high) return { ok: true, value: rms, unit, limit, message: `RMS ${withUnit(rms, ctx)}; limit ${limit}` };
    return {
      ok: false,
      value: rms,
      unit,
      limit,
      message: high
        ? `RMS ${withUnit(rms, ctx)} is above ${withUnit(o.max!, ctx)}: excitation too high, wrong sensitivity or units (a factor like 9.81 or 1000?)`
        : `RMS ${withUnit(rms, ctx)} is below ${withUnit(o.min!, ctx)}: excitation missing or low, wrong sensitivity or units, or a dead sensor? (${show(rms)})`,
    };
  },
};
