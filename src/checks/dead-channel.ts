import type { Check } from './types.js';
import { nonNegative, positive, show, withUnit } from './util.js';

interface Options {
  'min-ratio-to-median': number;
  'min-rms'?: number;
  'min-peers': number;
}

/**
 * A dead or open sensor shows only the amplifier's noise floor: its RMS is far below the
 * other channels of its group. Levels legitimately differ from point to point on a
 * structure, so the comparison is with the median channel of the group (common practice,
 * no source), and the default threshold is wide (1/100, 40 dB).
 */
export const deadChannel: Check<Options> = {
  id: 'dead-channel',
  description: 'The RMS is not far below the median RMS of the channels in its group (or below a floor in units).',
  options: {
    'min-ratio-to-median': nonNegative("Smallest accepted RMS / median RMS of the channel's group."),
    'min-rms': positive("Smallest accepted RMS in the channel's unit."),
    'min-peers': { type: 'integer', minimum: 2, description: 'Fewest channels in a group (this one included) for the group comparison.' },
  },
  defaults: { 'min-ratio-to-median': 0.01, 'min-peers': 3 },
  defaultSeverity: 'error',
  evaluate(ctx, o) {
    const rms = ctx.stats.rms;
    const limits: string[] = [];
    const peers = ctx.peers.map((p) => p.stats.rms).filter((v) => Number.isFinite(v));
    const usePeers = peers.length >= o['min-peers'];
    if (usePeers) limits.push(`≥ ${show(o['min-ratio-to-median'])} × group median`);
    if (o['min-rms'] !== undefined) limits.push(`≥ ${withUnit(o['min-rms'], ctx)}`);
    const limit = limits.join(' and ') || `group of ≥ ${o['min-peers']} channels`;
    if (!Number.isFinite(rms)) return { ok: null, value: null, limit, message: 'no finite samples' };
    if (!usePeers && o['min-rms'] === undefined) {
      return { ok: null, value: null, limit, message: `only ${peers.length} channel(s) in the group; ${o['min-peers']} needed to compare levels` };
    }
    const sorted = peers.slice().sort((a, b) => a - b);
    const median = sorted.length % 2 ? sorted[(sorted.length - 1) / 2] : (sorted[sorted.length / 2 - 1] + sorted[sorted.length / 2]) / 2;
    const ratio = usePeers && median > 0 ? rms / median : null;
    const ratioBad = ratio !== null && ratio < o['min-ratio-to-median'];
    const floorBad = o['min-rms'] !== undefined && rms < o['min-rms'];
    const seen =
      `RMS ${withUnit(rms, ctx)}` +
      (ratio !== null ? ` is ${show(ratio)} × the median of its group of ${peers.length} (${withUnit(median, ctx)})` : '');
    if (!ratioBad && !floorBad) return { ok: true, value: ratio ?? rms, unit: ratio !== null ? '' : ctx.channel.unit ?? '', limit, message: `${seen}; limit ${limit}` };
    return {
      ok: false,
      value: ratio ?? rms,
      unit: ratio !== null ? '' : ctx.channel.unit ?? '',
      limit,
      at: { startS: 0, endS: ctx.recording.durationS },
      message: `${seen}, below the limit ${limit}: dead or disconnected sensor, missing sensor power (IEPE), or the wrong channel patched?`,
    };
  },
};
