import type { FrameExtremes } from '../stats/channel-stats.js';
import type { ChannelContext, CheckOutcome } from './types.js';
import { frameSpan, rangeText, show, spanText, worstFrame } from './util.js';

/**
 * Shared judgement of a statistic with a whole-record range and a frame-wise range (skewness,
 * kurtosis, crest factor): statistics over the whole record hide a short fault, so both are
 * kept (common practice, no source). The value reported is the one farthest outside its range
 * (the whole-record value when everything passes); the time span is the worst frame's.
 */
export function judgeWholeAndFrames(
  ctx: ChannelContext,
  what: string,
  whole: number,
  frames: FrameExtremes | undefined,
  limits: { whole?: readonly [number, number]; frames?: readonly [number, number] },
  causes: { high: string; low: string },
): CheckOutcome {
  const parts: string[] = [];
  if (limits.whole) parts.push(`whole record ${rangeText(limits.whole)}`);
  if (limits.frames) parts.push(`frames ${rangeText(limits.frames)}`);
  const limit = parts.join(', ') || 'none';
  if (Number.isNaN(whole)) return { ok: null, value: null, limit, message: `${what} is not defined: no variation in the channel` };

  const wholeBad = limits.whole && (whole < limits.whole[0] || whole > limits.whole[1]);
  const worst = limits.frames && frames && !Number.isNaN(frames.min) ? worstFrame(frames, limits.frames) : null;
  const frameRange = frames && !Number.isNaN(frames.min) ? `, frames ${show(frames.min)} … ${show(frames.max)}` : '';
  if (!wholeBad && !worst) {
    return { ok: true, value: whole, unit: '', limit, message: `${what} ${show(whole)}${frameRange}; limits ${limit}` };
  }
  if (worst) {
    const at = frameSpan(ctx, worst.timeS);
    const high = worst.value > limits.frames![1];
    return {
      ok: false,
      value: worst.value,
      unit: '',
      limit,
      at,
      message:
        `frame ${what} ${show(worst.value)} at ${spanText(at)} is ${beyond(limits.frames!, high, 'frame ')}` +
        ` (whole record ${show(whole)}${wholeBad ? `, also outside ${rangeText(limits.whole!)}` : ''}): ` +
        (high ? causes.high : causes.low),
    };
  }
  const high = whole > limits.whole![1];
  return {
    ok: false,
    value: whole,
    unit: '',
    limit,
    message:
      `${what} ${show(whole)} over the whole record is ${beyond(limits.whole!, high)}${frameRange}: ` +
      (high ? causes.high : causes.low),
  };
}

/** `above the frame range 1.6 … 8`, or `above the limit 6.5` for a range open on one side. */
function beyond(range: readonly [number, number], high: boolean, prefix = ''): string {
  const word = high ? 'above' : 'below';
  if (Number.isFinite(range[0]) && Number.isFinite(range[1])) return `${word} the ${prefix}range ${rangeText(range)}`;
  return `${word} the ${prefix}limit ${show(high ? range[1] : range[0])}`;
}
