import type { Check } from './types.js';
import { show } from './util.js';

interface Options {
  'min-correlation': number;
}

/**
 * Two channels carrying the same signal are a patching error: one input wired to two
 * channels (a Y-cable, a bridged connector), or a channel table row pointing at the wrong
 * input. Identical samples say it outright; a correlation beyond ±0.9999 over the sampled
 * segments says it through a different gain or polarity. Two honest sensors — even side by
 * side on a rigid body — differ by their own noise and mounting, far more than 1e-4 of the
 * variance (common practice, no source). Each channel of a pair is flagged, naming the other.
 */
export const duplicateChannel: Check<Options> = {
  id: 'duplicate-channel',
  description: 'No other channel of the recording has identical samples, or a correlation beyond ±min-correlation (a patching error).',
  options: {
    'min-correlation': {
      type: 'number', minimum: 0.9, maximum: 1,
      description: 'Smallest |Pearson r| over the sampled segments that counts as the same signal (0.9 … 1).',
    },
  },
  defaults: { 'min-correlation': 0.9999 },
  defaultSeverity: 'error',
  needs: () => ({ cross: true }),
  evaluate(ctx, o) {
    const limit = `|r| < ${show(o['min-correlation'])} with every other channel`;
    const seg = ctx.segments;
    if (!seg?.correlated || seg.used === 0) {
      return { ok: null, value: null, limit, message: `no sampled segment to compare channels on (the record is shorter than ${seg?.segmentSamples ?? 'one'} samples, or every segment held a non-finite sample)` };
    }
    const hits = seg.correlated.filter((p) => p.identical || Math.abs(p.r) >= o['min-correlation']);
    const closest = seg.correlated.reduce<(typeof seg.correlated)[number] | null>((a, p) => (a === null || Math.abs(p.r) > Math.abs(a.r) ? p : a), null);
    if (hits.length === 0) {
      return {
        ok: true, value: closest ? closest.r : null, unit: '', limit,
        message: closest
          ? `most alike: "${closest.channel.name}" with r = ${rText(closest.r)}; limit ${limit}`
          : `no other channel correlates beyond |r| = 0.9 over ${seg.used} sampled segments`,
      };
    }
    const names = hits.map((p) => `"${p.channel.name}"`).join(', ');
    const first = hits[0];
    const how = first.identical
      ? `has the same samples as ${names} in all ${seg.used} sampled segments`
      : `correlates with ${names} at r = ${rText(first.r)}${first.r < 0 ? ' (reversed polarity)' : ''} over ${seg.used} sampled segments`;
    return {
      ok: false, value: first.identical ? 1 : first.r, unit: '', limit,
      message: `${how}, beyond the limit ${limit}: one input patched to two channels (a Y-cable, a bridged connector), or a channel table row pointing at the wrong input?`,
    };
  },
};

/** r shown with enough nines to tell 0.99999 from 0.9999. */
function rText(r: number): string {
  const a = Math.abs(r);
  if (a < 0.999) return show(r);
  if (a >= 1) return r < 0 ? '−1' : '1';
  const digits = Math.min(12, Math.ceil(-Math.log10(1 - a)) + 2);
  return r.toFixed(digits).replace('-', '−');
}
