/**
 * Worker thread: reads an HDF5 recording's metadata (hdf5.ts `describeHdf5`) and posts it
 * back, so that the parent can stop a library that never returns on a corrupt file.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { describeHdf5 } from './hdf5.js';
import type { Sidecar } from './sidecar.js';
import { failureOf } from '../worker-errors.js';

const job = workerData as { path: string; sidecar: Sidecar; givenRate: number | undefined };
describeHdf5(job.path, job.sidecar, job.givenRate).then(
  (described) => parentPort!.postMessage({ ok: true, described }),
  (err: unknown) => parentPort!.postMessage(failureOf(err)),
);
