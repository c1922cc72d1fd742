import { ChannelAccumulator } from '../../src/stats/channel-accumulator.js';
import { channelStats } from '../../src/stats/channel-stats.js';
import type { ChannelContext, Check, CheckOutcome } from '../../src/checks/types.js';
import type { ChannelInfo } from '../../src/readers/types.js';

export interface ContextOptions {
  sampleRate?: number;
  frameSeconds?: number;
  unit?: string;
  clipLow?: number;
  clipHigh?: number;
  /** RMS levels of the other channels of the group (synthetic peers are sines of these RMS). */
  peerSignals?: Float64Array[];
}

/** The context a check sees for signal `x`, as the gate builds it. */
export function contextOf(x: Float64Array, o: ContextOptions = {}): ChannelContext {
  const fs = o.sampleRate ?? 1024;
  const frameSamples = Math.round((o.frameSeconds ?? 1) * fs);
  const summarise = (y: Float64Array, clip: boolean) => {
    const acc = new ChannelAccumulator({ frameSamples, hopSamples: frameSamples }, clip ? { low: o.clipLow, high: o.clipHigh } : undefined);
    acc.push(y);
    return acc.summary();
  };
  const summary = summarise(x, true);
  const stats = channelStats(summary, { sampleRate: fs });
  const channel: ChannelInfo = { index: 0, name: 'acc-01', unit: o.unit ?? 'g' };
  const peers = [
    { channel, stats },
    ...(o.peerSignals ?? []).map((y, i) => ({
      channel: { index: i + 1, name: `acc-0${i + 2}`, unit: o.unit ?? 'g' },
      stats: channelStats(summarise(y, false), { sampleRate: fs }),
    })),
  ];
  return { recording: { path: 'test.wav', sampleRate: fs, durationS: x.length / fs }, channel, stats, summary, peers };
}

/** Runs a check with its defaults overlaid by `options`. */
export function run<O extends object>(check: Check<O>, x: Float64Array, options: Partial<O> = {}, ctx: ContextOptions = {}): CheckOutcome {
  return check.evaluate(contextOf(x, ctx), { ...check.defaults, ...options } as O);
}

export function sine(n: number, cyclesPerN: number, amplitude: number, offset = 0): Float64Array {
  return new Float64Array(n).map((_, i) => offset + amplitude * Math.sin((2 * Math.PI * cyclesPerN * i) / n));
}
