import type { Check } from './types.js';
import { frameSeries } from '../stats/channel-stats.js';
import { frameSpan, positive, show, spanText, withUnit } from './util.js';

interface Options {
  'max-ratio'?: number;
  'min-ratio'?: number;
}

/**
 * A passing disturbance (footsteps, a dropped tool, speech near a microphone) is a burst in
 * a few frames; an intermittent connection is a collapse. Both show as frame RMS far from the
 * channel's median frame RMS (a robust reference: one bad frame does not move it).
 */
export const frameRmsSpread: Check<Options> = {
  id: 'frame-rms-spread',
  description: 'Every frame RMS stays within ratios of the median frame RMS.',
  options: {
    'max-ratio': positive('Largest accepted frame RMS / median frame RMS (bursts).'),
    'min-ratio': positive('Smallest accepted frame RMS / median frame RMS (collapses).'),
  },
  defaults: { 'max-ratio': 3, 'min-ratio': 0.2 },
  defaultSeverity: 'error',
  evaluate(ctx, o) {
    const { value, timeS } = frameSeries(ctx.summary.frames, 'rms', ctx.recording.sampleRate);
    const parts = [o['max-ratio'] !== undefined ? `≤ ${show(o['max-ratio'])}` : '', o['min-ratio'] !== undefined ? `≥ ${show(o['min-ratio'])}` : ''].filter(Boolean);
    const limit = `${parts.join(' and ')} × median frame RMS`;
    if (value.length < 3) return { ok: null, value: null, limit, message: `only ${value.length} frame(s): too few to compare` };
    const sorted = Array.from(value).sort((a, b) => a - b);
    const mid = sorted.length >> 1;
    const median = sorted.length % 2 ? sorted[mid] : (sorted[mid - 1] + sorted[mid]) / 2;
    if (!(median > 0)) return { ok: null, value: null, limit, message: 'median frame RMS is 0 (see flat-channel and dropout)' };
    let hiI = 0;
    let loI = 0;
    for (let i = 1; i < value.length; i++) {
      if (value[i] > value[hiI]) hiI = i;
      if (value[i] < value[loI]) loI = i;
    }
    const hi = value[hiI] / median;
    const lo = value[loI] / median;
    const burst = o['max-ratio'] !== undefined && hi > o['max-ratio'];
    const collapse = o['min-ratio'] !== undefined && lo < o['min-ratio'];
    const seen = `frame RMS ${show(lo)} … ${show(hi)} × the median frame RMS (${withUnit(median, ctx)})`;
    if (!burst && !collapse) return { ok: true, value: hi, unit: '', limit, message: `${seen}; limit ${limit}` };
    const useBurst = burst && (!collapse || hi / o['max-ratio']! >= o['min-ratio']! / lo);
    const at = frameSpan(ctx, timeS[useBurst ? hiI : loI]);
    return {
      ok: false,
      value: useBurst ? hi : lo,
      unit: '',
      limit,
      at,
      message: useBurst
        ? `frame RMS at ${spanText(at)} is ${show(hi)} × the median frame RMS (${withUnit(median, ctx)}), over ${show(o['max-ratio'])}: a burst: a passing disturbance (footsteps, a dropped tool, speech), an impact, or spikes?`
        : `frame RMS at ${spanText(at)} is ${show(lo)} × the median frame RMS (${withUnit(median, ctx)}), under ${show(o['min-ratio'])}: the level collapses: dropout or an intermittent connection?`,
    };
  },
};
