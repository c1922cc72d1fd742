import type { Check } from './types.js';
import { instant, show } from './util.js';

interface Options {
  'max-count': number;
}

/** NaN or ±Inf samples come from a faulty writing process; they are counted, never averaged. */
export const nonFinite: Check<Options> = {
  id: 'non-finite',
  description: 'No NaN or infinite samples (or at most a given number).',
  options: { 'max-count': { type: 'integer', minimum: 0, description: 'Largest accepted number of NaN or ±Inf samples.' } },
  defaults: { 'max-count': 0 },
  defaultSeverity: 'error',
  evaluate(ctx, o) {
    const n = ctx.stats.nonFinite;
    const limit = `≤ ${o['max-count']}`;
    if (n <= o['max-count']) return { ok: true, value: n, unit: '', limit, message: `${n} NaN or infinite samples; limit ${limit}` };
    const at = instant(ctx, ctx.stats.firstNonFiniteTimeS);
    return {
      ok: false,
      value: n,
      unit: '',
      limit,
      at,
      message:
        `${n} NaN or infinite samples (${show((100 * n) / ctx.stats.samples)} % of the record), the first at ${show(at?.startS)} s ` +
        `(limit ${limit}); statistics use the finite samples only: corrupt float data from the program that wrote the file?`,
    };
  },
};
