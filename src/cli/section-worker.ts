/**
 * Worker thread: summarises one section [startFrame, endFrame) of a recording and posts the
 * per-channel summaries back. The parent merges sections exactly (mergeRecordingSummaries).
 */
import { parentPort, workerData } from 'node:worker_threads';
import { summariseSection, type SectionJob } from './parallel.js';
import { failureOf } from '../worker-errors.js';

const job = workerData as SectionJob;
summariseSection(job).then(
  (summary) => parentPort!.postMessage({ ok: true, summary }),
  (err: unknown) => parentPort!.postMessage(failureOf(err)),
);
