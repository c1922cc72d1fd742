import { ChannelAccumulator } from '../../src/stats/channel-accumulator.js';
import { channelStats } from '../../src/stats/channel-stats.js';
import type { ChannelContext, Check, CheckOutcome } from '../../src/checks/types.js';
import type { ChannelInfo } from '../../src/readers/types.js';
import { summariseBlocks } from '../../src/stats/summarise.js';
import type { SegmentNeeds } from '../../src/stats/segment-analyses.js';
import { channelSegments } from '../../src/gate/judge.js';

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

/**
 * The contexts the gate builds for the channels `xs` of one recording (same group), with
 * the segment analyses the checks need run as the engine runs them: summariseBlocks with
 * `needs`, then the judge's per-channel view.
 */
export async function recordingContexts(
  xs: Float64Array[],
  o: { sampleRate: number; needs: SegmentNeeds; frameSeconds?: number; names?: string[]; unit?: string; blockFrames?: number },
): Promise<ChannelContext[]> {
  const fs = o.sampleRate;
  const n = xs[0].length;
  const channels: ChannelInfo[] = xs.map((_, i) => ({ index: i, name: o.names?.[i] ?? `acc-${String(i + 1).padStart(2, '0')}`, unit: o.unit ?? 'g' }));
  const step = o.blockFrames ?? 8192;
  async function* blocks() {
    for (let at = 0; at < n; at += step) {
      const len = Math.min(step, n - at);
      yield { start: at, length: len, channels: xs.map((x) => x.subarray(at, at + len)) };
    }
  }
  const summary = await summariseBlocks(blocks(), { sampleRate: fs, sampleCount: n, channels }, { frameSeconds: o.frameSeconds ?? 1, segments: o.needs });
  const stats = summary.channels.map((s) => channelStats(s, { sampleRate: fs }));
  const views = summary.segments ? channelSegments(summary.segments, channels) : null;
  return channels.map((channel, i) => ({
    recording: { path: 'test.wav', sampleRate: fs, durationS: n / fs },
    channel,
    stats: stats[i],
    summary: summary.channels[i],
    peers: channels.map((c, j) => ({ channel: c, stats: stats[j] })),
    channels: channels.map((c, j) => ({ channel: c, stats: stats[j] })),
    ...(views ? { segments: views[i] } : {}),
  }));
}
