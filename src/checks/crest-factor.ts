import type { Check } from './types.js';
import { judgeWholeAndFrames } from './whole-and-frames.js';
import { positive } from './util.js';

interface Options {
  max?: number;
  min?: number;
  'frames-max'?: number;
}

/**
 * Crest factor = peak / RMS. The largest of N Gaussian samples is near √(2 ln N) standard
 * deviations (4.8 for N = 10⁵, 5.3 for 10⁶; extreme-value result, common practice), so a
 * crest factor well above that in random data is a spike; one well below it (√2 for a sine)
 * can mean compression or clipping.
 */
export const crestFactor: Check<Options> = {
  id: 'crest-factor',
  description: 'Crest factor (peak / RMS) of the whole record, and optionally of every frame, stays within limits.',
  options: {
    max: positive('Largest accepted crest factor of the whole record.'),
    min: positive('Smallest accepted crest factor of the whole record (compression, clipping).'),
    'frames-max': positive('Largest accepted crest factor of any frame.'),
  },
  defaults: { max: 7 },
  defaultSeverity: 'error',
  evaluate(ctx, o) {
    return judgeWholeAndFrames(
      ctx,
      'crest factor',
      ctx.stats.crestFactor,
      ctx.stats.frames?.crestFactor,
      {
        whole: o.max !== undefined || o.min !== undefined ? [o.min ?? -Infinity, o.max ?? Infinity] : undefined,
        frames: o['frames-max'] !== undefined ? [-Infinity, o['frames-max']] : undefined,
      },
      {
        high: 'isolated spikes far above the signal: loose connector or cable, or static discharge?',
        low: 'peaks flattened: compression, clipping or an overloaded amplifier?',
      },
    );
  },
};
