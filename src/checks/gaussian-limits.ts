import type { CorrelationShape } from '../stats/autocorrelation.js';
import { frameTooShort, gaussianBands, kurtosisBand, skewnessBand, type GaussianBands } from '../stats/gaussian-bands.js';
import type { ChannelContext, JsonSchema } from './types.js';
import { show } from './util.js';

/** The rule-file option of kurtosis and skewness that states their limits as a confidence level. */
export const confidenceSchema: JsonSchema = {
  type: 'number',
  exclusiveMinimum: 0.5,
  exclusiveMaximum: 1,
  description:
    'Limits as a confidence level instead of fixed ranges: the band a stationary Gaussian process with this ' +
    "channel's autocorrelation gives the whole record, and all its frames together (each frame at c^(1/frames), Šidák), " +
    'e.g. 0.999. Where the band cannot be set (correlation longer than the lags estimated, frames too short), ' +
    'the whole and frames ranges apply.',
};

/** 99.99917 rather than show()'s 100: enough digits to tell the level from 1. */
function percent(p: number): string {
  const digits = Math.max(4, Math.ceil(-Math.log10(1 - p)) + 2);
  return Number((100 * p).toPrecision(digits)).toString();
}

const cache = new WeakMap<CorrelationShape, Map<string, GaussianBands>>();

/** Bands are pure in (length, shape, confidence) and cost FFTs: kurtosis and skewness share them. */
function bandsFor(samples: number, shape: CorrelationShape, confidence: number): GaussianBands {
  let byKey = cache.get(shape);
  if (!byKey) cache.set(shape, (byKey = new Map()));
  const key = `${samples}:${confidence}`;
  let bands = byKey.get(key);
  if (!bands) byKey.set(key, (bands = gaussianBands(samples, shape, confidence)));
  return bands;
}

/**
 * The limits kurtosis or skewness judges a channel with when its rule file gives a
 * `confidence` (Gaussian bands, stats/gaussian-bands.ts), falling back to the fixed ranges
 * where a band cannot be set; `note` says which were used, for the message.
 */
export function gaussianLimits(
  ctx: ChannelContext,
  statistic: 'kurtosis' | 'skewness',
  o: { whole?: [number, number]; frames?: [number, number]; confidence?: number },
): { whole?: [number, number]; frames?: [number, number]; note: string } {
  if (o.confidence === undefined) return { whole: o.whole, frames: o.frames, note: '' };
  const shape = ctx.segments && ctx.segments.used > 0 ? ctx.segments.correlation : null;
  const pct = `${show(100 * o.confidence)} %`;
  if (shape === null || !shape.settled || !Number.isFinite(shape.sumRho4)) {
    const why = shape === null ? 'no autocorrelation could be estimated (record shorter than a segment?)' : 'the autocorrelation outlasts the lags estimated';
    return { whole: o.whole, frames: o.frames, note: ` (no ${pct} Gaussian band: ${why}; fixed ranges used)` };
  }
  // a whole record is long against the correlation (when it is not, the frames are too
  // short too and frame-length says so): the asymptotic transformations at n = N/Σρ^p are
  // right there, and cost nothing (gaussian-bands.ts, method 1)
  const n = ctx.stats.finiteSamples;
  const whole = statistic === 'kurtosis' ? kurtosisBand(n, shape.sumRho4, o.confidence) : skewnessBand(n, shape.sumRho3, o.confidence);
  const frames = ctx.stats.frames;
  const frameSamples = frames ? Math.round(frames.frameS * ctx.recording.sampleRate) : 0;
  if (!frames || frames.used === 0) return { whole, frames: o.frames, note: ` (${pct} Gaussian band of this channel's autocorrelation)` };
  if (frameTooShort(frameSamples, shape)) {
    return {
      whole,
      frames: o.frames,
      note: ` (whole record: ${pct} Gaussian band; frames too short for this channel's content to set one, fixed frame range used)`,
    };
  }
  // all frames of a clean channel inside together with probability c: each at c^(1/F) (Šidák 1967)
  const perFrame = o.confidence ** (1 / frames.used);
  return {
    whole,
    frames: bandsFor(frameSamples, shape, perFrame)[statistic],
    note: ` (${pct} Gaussian bands of this channel's autocorrelation; frames each at ${percent(perFrame)} % for ${frames.used} frames together)`,
  };
}
