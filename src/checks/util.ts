import type { FrameExtremes } from '../stats/channel-stats.js';
import type { ChannelContext, JsonSchema, TimeSpan } from './types.js';

/** A number as messages show it: 4 significant digits, no trailing zeros. */
export function show(value: number | null | undefined): string {
  if (value === null || value === undefined || Number.isNaN(value)) return 'n/a';
  if (value === Infinity) return '∞';
  if (value === -Infinity) return '−∞';
  if (value === 0) return '0';
  const abs = Math.abs(value);
  const text =
    abs >= 1e-3 && abs < 1e6
      ? Number(value.toPrecision(4)).toString()
      : value.toExponential(3).replace(/\.?0+e/, 'e');
  return text.replace(/^-/, '−');
}

/** A value with the channel's unit: `0.895 g`, or the bare number without a unit. */
export function withUnit(value: number, ctx: ChannelContext): string {
  return ctx.channel.unit ? `${show(value)} ${ctx.channel.unit}` : show(value);
}

/** `2.4 … 4`; a range open on one side reads `≤ 6.5` or `≥ 1.2`. */
export function rangeText([lo, hi]: readonly [number, number]): string {
  if (lo === -Infinity && hi === Infinity) return 'any value';
  if (lo === -Infinity) return `≤ ${show(hi)}`;
  if (hi === Infinity) return `≥ ${show(lo)}`;
  return `${show(lo)} … ${show(hi)}`;
}

/** The frame starting at `startS` as a time span. */
export function frameSpan(ctx: ChannelContext, startS: number): TimeSpan {
  const frameS = ctx.stats.frames?.frameS ?? 0;
  return { startS, endS: Math.min(startS + frameS, ctx.recording.durationS) };
}

export function spanText(span: TimeSpan): string {
  return span.endS > span.startS ? `${show(span.startS)}–${show(span.endS)} s` : `${show(span.startS)} s`;
}

/** A point in time, as a span of one sample. */
export function instant(ctx: ChannelContext, timeS: number | null): TimeSpan | null {
  if (timeS === null || Number.isNaN(timeS)) return null;
  return { startS: timeS, endS: timeS + 1 / ctx.recording.sampleRate };
}

/**
 * The frame statistic that lies farthest outside [lo, hi], or null when every frame is
 * inside. Returns its value and the frame's start time.
 */
export function worstFrame(e: FrameExtremes, [lo, hi]: readonly [number, number]): { value: number; timeS: number } | null {
  const below = lo - e.min;
  const above = e.max - hi;
  if (!(below > 0) && !(above > 0)) return null;
  return above >= below ? { value: e.max, timeS: e.maxTimeS } : { value: e.min, timeS: e.minTimeS };
}

/** JSON Schema of a [low, high] range of numbers. */
export const rangeSchema = (description: string): JsonSchema => ({
  type: 'array',
  description,
  prefixItems: [{ type: 'number' }, { type: 'number' }],
  items: false,
  minItems: 2,
  maxItems: 2,
});

export const positive = (description: string): JsonSchema => ({ type: 'number', exclusiveMinimum: 0, description });
export const nonNegative = (description: string): JsonSchema => ({ type: 'number', minimum: 0, description });
