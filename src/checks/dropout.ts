import type { Check } from './types.js';
import { nonNegative, show, spanText, withUnit } from './util.js';

interface Options {
  'max-seconds': number;
  'max-zero-seconds'?: number;
}

/**
 * A dropout (cable break, connector, lost telemetry or buffers) or a stuck converter shows as
 * a stretch of identical samples: exact zeros or a frozen value (../shared/domain.md).
 */
export const dropout: Check<Options> = {
  id: 'dropout',
  description: 'The longest run of identical consecutive samples (and of exact zeros) stays short.',
  options: {
    'max-seconds': nonNegative('Longest accepted run of identical samples, in seconds.'),
    'max-zero-seconds': nonNegative('Longest accepted run of exact zeros, in seconds (default: max-seconds).'),
  },
  defaults: { 'max-seconds': 0.01 },
  defaultSeverity: 'error',
  evaluate(ctx, o) {
    const run = ctx.stats.longestRun;
    const zero = ctx.stats.longestZeroRun;
    const maxZero = o['max-zero-seconds'] ?? o['max-seconds'];
    const limit = `≤ ${show(o['max-seconds'])} s` + (o['max-zero-seconds'] !== undefined ? `, zeros ≤ ${show(maxZero)} s` : '');
    const zeroBad = zero.samples > 1 && zero.seconds > maxZero;
    const runBad = run.samples > 1 && run.seconds > o['max-seconds'];
    if (!zeroBad && !runBad) {
      const what = run.samples > 1 ? `longest run of identical samples ${run.samples} samples (${show(run.seconds)} s)` : 'no repeated samples';
      return { ok: true, value: run.samples > 1 ? run.seconds : 0, unit: 's', limit, message: `${what}; limit ${limit}` };
    }
    const useZero = zeroBad && (!runBad || zero.seconds >= run.seconds || run.value === 0);
    const r = useZero ? { ...zero, value: 0 } : run;
    const at = { startS: r.startTimeS, endS: r.startTimeS + r.seconds };
    const cause =
      r.value === 0
        ? 'dropout to zero: cable break, loose connector, or lost data?'
        : 'frozen value: stuck converter, a dropout that holds the last value, or lost data?';
    return {
      ok: false,
      value: r.seconds,
      unit: 's',
      limit,
      at,
      message: `${r.samples} identical samples (${show(r.seconds)} s) of ${withUnit(r.value, ctx)} at ${spanText(at)}, over the limit ${limit}: ${cause}`,
    };
  },
};
