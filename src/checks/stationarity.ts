import type { Check } from './types.js';
import { stationarity as stationarityTest } from '../stats/channel-stats.js';
import { show } from './util.js';

interface Options {
  of: Array<'rms' | 'mean'>;
  alpha: number;
  segments: number;
}

/**
 * Reverse arrangements test (Bendat & Piersol, Random Data, tests for stationarity) on the
 * RMS and the mean of consecutive record segments, each made of whole frames. A trend in the
 * RMS points at drifting excitation or a loosening mount; a trend in the mean at drift, for
 * example a thermal transient on a piezoelectric sensor (../shared/domain.md).
 */
export const stationarity: Check<Options> = {
  id: 'stationarity',
  description: 'No trend in the RMS or mean over the record (reverse arrangements test).',
  options: {
    of: { type: 'array', items: { enum: ['rms', 'mean'] }, minItems: 1, uniqueItems: true, description: 'Which segment statistics to test.' },
    alpha: { type: 'number', exclusiveMinimum: 0, maximum: 0.5, description: 'Significance level of the test (two-sided).' },
    segments: { type: 'integer', minimum: 10, maximum: 1000, description: 'Number of record segments the test runs on.' },
  },
  defaults: { of: ['rms', 'mean'], alpha: 0.01, segments: 20 },
  defaultSeverity: 'warning',
  evaluate(ctx, o) {
    const results = o.of.map((of) => stationarityTest(ctx.summary.frames, of, { segments: o.segments, alpha: o.alpha }));
    const limit = `α = ${show(o.alpha)} over ${o.segments} segments`;
    if (results.some((r) => r === null)) {
      return { ok: null, value: null, limit, message: `fewer than ${o.segments} whole frames: too short for the test` };
    }
    const bad = results.filter((r) => !r!.stationary);
    const describe = (r: NonNullable<(typeof results)[number]>) =>
      `${r.of === 'rms' ? 'RMS' : 'mean'}: A = ${r.arrangements} (accepted ${r.lower} < A ≤ ${r.upper})`;
    const text = results.map((r) => describe(r!)).join('; ');
    const worst = results.reduce((a, b) => (Math.abs(b!.z) > Math.abs(a!.z) ? b : a))!;
    if (bad.length === 0) return { ok: true, value: worst.z, unit: '', limit, message: `no trend found (${text}); ${limit}` };
    const words = bad.map((r) => `the ${r!.of === 'rms' ? 'RMS' : 'mean'} ${r!.z < 0 ? 'rises' : 'falls'}`).join(' and ');
    const causes = bad.some((r) => r!.of === 'mean')
      ? 'drift: a thermal transient on a piezoelectric sensor, amplifier drift, or a DC-coupled input?'
      : 'the level changes over the record: drifting excitation, a warming or loosening sensor mount?';
    return {
      ok: false,
      value: worst.z,
      unit: '',
      limit,
      at: { startS: 0, endS: ctx.recording.durationS },
      message: `${words} over the record (reverse arrangements test, ${text}; ${limit}): ${causes}`,
    };
  },
};
