import { Worker } from 'node:worker_threads';
import { existsSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import { fileURLToPath } from 'node:url';
import { openRecording } from '../readers/index.js';
import type { OpenOptions, Recording } from '../readers/types.js';
import { RecordingError } from '../errors.js';
import { errorOf, type WorkerFailure } from '../worker-errors.js';
import { mergeRecordingSummaries, summariseBlocks, type FrameOptions, type RecordingSummary } from '../stats/summarise.js';
import { needsNothing, type SegmentNeeds } from '../stats/segment-analyses.js';
import { sectionBounds, segmentPlan } from '../stats/segments.js';

/** One section of a recording for one worker. */
export interface SectionJob {
  path: string;
  open: Omit<OpenOptions, 'meter'>;
  frames: FrameOptions;
  startFrame: number;
  endFrame: number;
  /** Analyses on sampled segments the checks need. */
  segments?: SegmentNeeds;
}

/** Formats whose readers can start at any sample frame. */
export const SEEKABLE: ReadonlySet<string> = new Set(['wav', 'rf64', 'bw64', 'raw', 'hdf5']);
/** Below this many samples (all channels) a recording is not worth splitting. */
const MIN_SPLIT_SAMPLES = 4_000_000;
/**
 * Sample frames per block: about 256 k samples, so a block's decoded arrays (2 MB) stay in
 * the core's L2 cache between decoding and summing (measured faster than 64 k frames).
 */
export function blockFramesFor(channels: number): number {
  return Math.max(1024, Math.min(65536, Math.floor(262144 / Math.max(1, channels))));
}

export const defaultJobs = (): number => Math.max(1, availableParallelism());

/** Summarises one section in this thread (a worker's job; also the parent's own share). */
export async function summariseSection(job: SectionJob, recording?: Recording): Promise<RecordingSummary> {
  const rec = recording ?? (await openRecording(job.path, job.open));
  const blocks = rec.blocks({ startFrame: job.startFrame, endFrame: job.endFrame, blockFrames: blockFramesFor(rec.channels.length), reuse: true });
  return summariseBlocks(blocks, rec, { ...job.frames, start: job.startFrame, segments: job.segments });
}

function workerUrl(): URL {
  // from dist/ the worker sits beside this file; from the TypeScript sources (tests) use the build
  const local = new URL('./section-worker.js', import.meta.url);
  return existsSync(fileURLToPath(local)) ? local : new URL('../../dist/cli/section-worker.js', import.meta.url);
}

function runWorker(job: SectionJob): Promise<RecordingSummary> {
  return new Promise((resolve, reject) => {
    const worker = new Worker(workerUrl(), { workerData: job });
    let settled = false;
    worker.once('message', (m: { ok: true; summary: RecordingSummary } | WorkerFailure) => {
      settled = true;
      if (m.ok) resolve(m.summary);
      else reject(errorOf(m, job.path, (message) => new Error(message)));
      void worker.terminate();
    });
    worker.once('error', (err) => {
      if (!settled) reject(new RecordingError(job.path, `a worker thread failed while reading it: ${err.message}`));
    });
    worker.once('exit', (code) => {
      if (!settled) reject(new RecordingError(job.path, `a worker thread stopped (exit code ${code}) before it had read its share`));
    });
  });
}

/**
 * Summary of a whole recording using `jobs` threads: seekable recordings that are large
 * enough are cut into `jobs` sections of sample frames, one per thread (this one takes the
 * first), and the section summaries are merged exactly. Others are read in this thread.
 */
export async function summariseRecording(
  recording: Recording,
  open: Omit<OpenOptions, 'meter'>,
  frames: FrameOptions,
  options: { jobs?: number; onProgress?: (read: number, total: number) => void; segments?: SegmentNeeds } = {},
): Promise<RecordingSummary> {
  const jobs = Math.max(1, Math.floor(options.jobs ?? defaultJobs()));
  const total = recording.sampleCount;
  const split =
    jobs > 1 && total !== undefined && SEEKABLE.has(recording.format) && total * recording.channels.length >= MIN_SPLIT_SAMPLES;
  if (!split) {
    return summariseBlocks(recording.blocks({ blockFrames: blockFramesFor(recording.channels.length), onProgress: options.onProgress, reuse: true }), recording, { ...frames, segments: options.segments });
  }
  const bounds = sectionBounds(total!, jobs, sectionGrid(recording, options.segments));
  const sections = bounds.slice(0, -1).map((startFrame, k) => ({ path: recording.path, open, frames, startFrame, endFrame: bounds[k + 1], segments: options.segments }));
  const [first, ...rest] = sections;
  const results = await Promise.all([summariseSection(first, recording), ...rest.map(runWorker)]);
  return results.reduce((a, b) => mergeRecordingSummaries(a, b));
}

/**
 * Section bounds must fall on multiples of this many sample frames: the segment stride when
 * segment analyses run (so that no segment straddles two sections), else any frame.
 */
export function sectionGrid(recording: Pick<Recording, 'sampleRate' | 'sampleCount'>, segments: SegmentNeeds | undefined): number {
  return needsNothing(segments) ? 1 : segmentPlan(recording.sampleRate, recording.sampleCount).strideSamples;
}
