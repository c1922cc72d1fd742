import type { Check } from './types.js';
import { rangeSchema } from './util.js';
import { judgeWholeAndFrames } from './whole-and-frames.js';
import { confidenceSchema, gaussianLimits } from './gaussian-limits.js';

interface Options {
  whole?: [number, number];
  frames?: [number, number];
  confidence?: number;
}

/**
 * Skewness (population g1) reacts to faults that make a signal one-sided: spikes of one sign,
 * clipping on one side, a rattling sensor (common practice, no source). Stationary random
 * response is near 0; on clean narrow-band response one-second frames scatter to about ±0.5
 * (simulation, ../shared/domain.md).
 */
export const skewness: Check<Options> = {
  id: 'skewness',
  description: 'Skewness (population g1) of the whole record and of every frame stays within ranges.',
  options: {
    whole: rangeSchema('Accepted [low, high] skewness of the whole record.'),
    frames: rangeSchema('Accepted [low, high] skewness of every frame.'),
    confidence: confidenceSchema,
  },
  defaults: { whole: [-0.5, 0.5], frames: [-1.5, 1.5] },
  defaultSeverity: 'error',
  needs: (o) => (o.confidence !== undefined ? { autocorrelation: true } : {}),
  evaluate(ctx, o) {
    const limits = gaussianLimits(ctx, 'skewness', o);
    const outcome = judgeWholeAndFrames(ctx, 'skewness', ctx.stats.skewness, ctx.stats.frames?.skewness, limits, {
      high: 'one-sided positive spikes or impacts: loose connector or cable, or a rattling sensor?',
      low: 'one-sided negative spikes or impacts: loose connector or cable, or a rattling sensor?',
    });
    return limits.note ? { ...outcome, message: outcome.message + limits.note } : outcome;
  },
};
