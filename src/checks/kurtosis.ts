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
 * Kurtosis (population, non-excess: 3 for Gaussian data, 1.5 for a sine) reacts most strongly
 * to short spikes; it drops when a signal is clipped or dominated by a periodic component
 * (common practice, no source; closed forms in references.md §3).
 */
export const kurtosis: Check<Options> = {
  id: 'kurtosis',
  description: 'Kurtosis (non-excess, 3 for Gaussian data) of the whole record and of every frame stays within ranges.',
  options: {
    whole: rangeSchema('Accepted [low, high] kurtosis of the whole record (non-excess).'),
    frames: rangeSchema('Accepted [low, high] kurtosis of every frame (non-excess).'),
    confidence: confidenceSchema,
  },
  defaults: { whole: [2.4, 4], frames: [1.6, 8] },
  defaultSeverity: 'error',
  needs: (o) => (o.confidence !== undefined ? { autocorrelation: true } : {}),
  evaluate(ctx, o) {
    const limits = gaussianLimits(ctx, 'kurtosis', o);
    const outcome = judgeWholeAndFrames(ctx, 'kurtosis', ctx.stats.kurtosis, ctx.stats.frames?.kurtosis, limits, {
      high: 'short spikes or impacts: loose connector or cable, static discharge, or a rattling sensor?',
      low: 'flat tops from clipping or overload, or a strong periodic component such as mains hum?',
    });
    return limits.note ? { ...outcome, message: outcome.message + limits.note } : outcome;
  },
};
