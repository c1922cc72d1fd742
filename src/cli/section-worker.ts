/**
 * Worker thread: summarises one section [startFrame, endFrame) of a recording and posts the
 * per-channel summaries back. The parent merges sections exactly (mergeRecordingSummaries).
 */
import { parentPort, workerData } from 'node:worker_threads';
import { summariseSection, type SectionJob } from './parallel.js';

const job = workerData as SectionJob;
summariseSection(job).then(
  (summary) => parentPort!.postMessage({ ok: true, summary }),
  (err: unknown) =>
    parentPort!.postMessage({
      ok: false,
      name: err instanceof Error ? err.name : 'Error',
      message: err instanceof Error ? err.message : String(err),
      file: (err as { file?: string }).file,
      offset: (err as { offset?: number }).offset,
    }),
);
