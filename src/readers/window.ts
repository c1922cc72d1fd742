import type { Recording } from './types.js';

/**
 * Samples [startFrame, endFrame) of some channels, for a waveform excerpt in a report.
 * Seekable readers jump straight there; others are read up to the window and trimmed here.
 */
export async function readWindow(
  recording: Recording,
  channels: number[],
  startFrame: number,
  endFrame: number,
): Promise<Float64Array[]> {
  const first = Math.max(0, Math.floor(startFrame));
  const end = Math.max(first, Math.ceil(endFrame));
  const out = channels.map(() => new Float64Array(end - first));
  let filled = 0;
  for await (const block of recording.blocks({ startFrame: first, endFrame: end, blockFrames: 65536 })) {
    const from = Math.max(first, block.start);
    const to = Math.min(end, block.start + block.length);
    if (to > from) {
      channels.forEach((c, k) => out[k].set(block.channels[c].subarray(from - block.start, to - block.start), from - first));
      filled = Math.max(filled, to - first);
    }
    if (block.start + block.length >= end) break;
  }
  return out.map((a) => a.subarray(0, filled));
}
