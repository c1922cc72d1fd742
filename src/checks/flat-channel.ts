import type { Check } from './types.js';
import { withUnit } from './util.js';

type Options = Record<string, never>;

/** A channel that never changes carries no measurement: dead sensor, open cable, no power. */
export const flatChannel: Check<Options> = {
  id: 'flat-channel',
  description: 'The channel is not constant over the whole record.',
  options: {},
  defaults: {},
  defaultSeverity: 'error',
  evaluate(ctx) {
    const s = ctx.stats;
    if (s.finiteSamples === 0) {
      return { ok: false, value: 0, unit: '', limit: 'not constant', message: 'the channel has no finite samples at all: corrupt or empty data?' };
    }
    if (s.max > s.min) return { ok: true, value: s.max - s.min, unit: ctx.channel.unit ?? '', limit: 'not constant', message: `the channel varies over ${withUnit(s.max - s.min, ctx)}` };
    return {
      ok: false,
      value: 0,
      unit: ctx.channel.unit ?? '',
      limit: 'not constant',
      at: { startS: 0, endS: ctx.recording.durationS },
      message: `the channel is constant at ${withUnit(s.min, ctx)} for the whole record: dead sensor, open cable, or missing sensor power?`,
    };
  },
};
