import { frameTooShort } from '../stats/gaussian-bands.js';
import type { Check } from './types.js';
import { show } from './util.js';

interface Options {
  'min-independent-samples': number;
}

/**
 * Frame statistics mean something only when a frame holds enough of the channel's
 * content: narrow-band response (a lightly damped mode) decorrelates slowly, so a
 * one-second frame may hold only a few dozen independent samples and its kurtosis and
 * skewness scatter widely however clean the data (Lomnicki 1961: the variance of kurtosis
 * grows with Σρ⁴; domain.md). This check warns when the frames are too short for the
 * channel, from its autocorrelation estimated on sampled segments: fewer than
 * `min-independent-samples` per frame as kurtosis counts them (frame samples / Σρ⁴), or a
 * frame shorter than 10 decay lengths of the correlation, or a correlation that outlasts the
 * lags estimated (stats/gaussian-bands.ts `frameTooShort`; the round numbers are common
 * practice, no source). The cure is a longer `analysis.frame-seconds`.
 */
export const frameLength: Check<Options> = {
  id: 'frame-length',
  description: "Frames hold enough independent samples of the channel's content for frame statistics to mean something.",
  options: {
    'min-independent-samples': { type: 'number', minimum: 1, description: 'Fewest independent samples per frame (frame samples / Σρ⁴) accepted.' },
  },
  defaults: { 'min-independent-samples': 30 },
  defaultSeverity: 'warning',
  needs: () => ({ autocorrelation: true }),
  evaluate(ctx, o) {
    const limit = `≥ ${show(o['min-independent-samples'])} independent samples per frame`;
    const shape = ctx.segments?.correlation ?? null;
    const frames = ctx.stats.frames;
    if (!frames || frames.used === 0) return { ok: null, value: null, limit, message: 'no complete frame to judge' };
    if (shape === null || !Number.isFinite(shape.sumRho4)) {
      return { ok: null, value: null, limit, message: 'no autocorrelation could be estimated (the record is shorter than one segment, or every segment held a non-finite sample)' };
    }
    const frameSamples = Math.round(frames.frameS * ctx.recording.sampleRate);
    const independent = frameSamples / shape.sumRho4;
    const decayS = shape.correlationSamples / ctx.recording.sampleRate;
    const seen = `frames of ${show(frames.frameS)} s hold ${show(independent)} independent samples (Σρ⁴ = ${show(shape.sumRho4)}); the correlation decays in ${show(decayS)} s`;
    const short = independent < o['min-independent-samples'] || frameTooShort(frameSamples, shape);
    if (!shape.settled) {
      return {
        ok: false, value: independent, unit: '', limit,
        message: `the autocorrelation has not decayed within the ${show(shape.maxLag / ctx.recording.sampleRate)} s of lag estimated: frames of ${show(frames.frameS)} s are far too short for this channel's content (a very lightly damped mode, or a periodic signal); frame statistics scatter widely on clean data: a longer analysis.frame-seconds?`,
      };
    }
    if (!short) return { ok: true, value: independent, unit: '', limit, message: `${seen}; limit ${limit}` };
    return {
      ok: false, value: independent, unit: '', limit,
      message: `${seen}: too few for frame statistics to mean much (limit ${limit}, and a frame of at least 10 decay lengths): frame kurtosis and skewness scatter widely on clean data: a longer analysis.frame-seconds?`,
    };
  },
};
