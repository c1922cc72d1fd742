/**
 * What every fuzz case must end in: statistics (the blocks iterated to the end and
 * summarised) or one of vibgate's own errors naming the file. Anything else — another
 * exception, a hang (the per-case timeout of fast-check), a read meter that holds more
 * than the reader's documented bound — fails the property.
 */
import { expect } from 'vitest';
import { stat } from 'node:fs/promises';
import { RecordingError, UsageError } from '../../src/errors.js';
import { openRecording } from '../../src/readers/index.js';
import { ReadMeter, type OpenOptions, type Recording } from '../../src/readers/types.js';
import { summariseBlocks } from '../../src/stats/summarise.js';
import { RulesError } from '../../src/rules/load.js';

/** One seed for every property, so a failure reproduces; shift it to explore further. */
export const FUZZ_SEED = Number(process.env.VIBGATE_FUZZ_SEED ?? 20261202);
/** A hang is a case that takes longer than this; no case should come near it. */
export const CASE_TIMEOUT_MS = 15_000;

export const fuzzParameters = (numRuns: number) => ({ seed: FUZZ_SEED, numRuns, timeout: CASE_TIMEOUT_MS, endOnFailure: true });

export type ReadOutcome =
  | { kind: 'stats'; recording: Recording; samples: number; peakHeld: number; fileBytes: number }
  | { kind: 'error'; error: RecordingError | UsageError; peakHeld: number; fileBytes: number };

/** Bytes per stored sample of each sample format the binary readers produce. */
export const SAMPLE_BYTES: Record<string, number> = { uint8: 1, int16: 2, int24: 3, int32: 4, float32: 4, float64: 8 };

/**
 * Opens `path` as `vibgate screen` would, iterates every block (of `blockFrames`) into the
 * statistics engine, and returns what happened. Throws whatever is not a vibgate error.
 */
export async function readThrough(path: string, options: OpenOptions = {}, blockFrames?: number): Promise<ReadOutcome> {
  const meter = new ReadMeter();
  const fileBytes = (await stat(path)).size;
  try {
    const recording = await openRecording(path, { ...options, meter });
    const summary = await summariseBlocks(recording.blocks(blockFrames === undefined ? {} : { blockFrames }), recording, { frameSeconds: 1 });
    expect(meter.held, 'every read buffer is released at the end').toBe(0);
    return { kind: 'stats', recording, samples: summary.samples, peakHeld: meter.peakHeld, fileBytes };
  } catch (error) {
    if (error instanceof RecordingError || error instanceof UsageError) {
      expect(meter.held, 'every read buffer is released after an error').toBe(0);
      return { kind: 'error', error, peakHeld: meter.peakHeld, fileBytes };
    }
    throw error;
  }
}

/** A RecordingError names the file it is about (the recording or its sidecar), quoted. */
export function expectNamesFile(error: RecordingError | UsageError, files: string[]): void {
  if (error instanceof RecordingError) {
    expect(files).toContain(error.file);
    expect(error.message.startsWith(`Cannot read "${error.file}": `)).toBe(true);
    expect(error.message.length).toBeGreaterThan(`Cannot read "${error.file}": `.length);
  } else {
    // A usage error is about how the reader was called, not about a file.
    expect(error.message).not.toBe('');
  }
  expect(error.message).not.toMatch(/\n\s+at /); // never a stack trace
}

/** A RulesError names the file at the start of every line (`file:line:col ...` or `file: ...`). */
export function expectRulesErrorNamesFile(error: RulesError, file: string): void {
  expect(error.problems.length).toBeGreaterThan(0);
  for (const line of error.message.split('\n')) {
    expect(line.startsWith(`${file}:`) || error.problems.some((p) => line.startsWith(`${p.file}:`))).toBe(true);
  }
  for (const p of error.problems) expect(p.message).not.toBe('');
}

/** Object.prototype must never gain a key from an input file (`__proto__:` in YAML). */
export function expectPrototypeClean(): void {
  expect(Object.keys(Object.prototype)).toEqual([]);
  expect(({} as Record<string, unknown>).polluted).toBeUndefined();
}

/** Counts of cases run, per reader, printed at the end of each fuzz file for the report. */
export class CaseCounter {
  private readonly counts = new Map<string, { stats: number; error: number }>();
  add(reader: string, outcome: 'stats' | 'error'): void {
    const c = this.counts.get(reader) ?? { stats: 0, error: 0 };
    c[outcome] += 1;
    this.counts.set(reader, c);
  }
  get(reader: string): { stats: number; error: number } {
    return this.counts.get(reader) ?? { stats: 0, error: 0 };
  }
  print(): void {
    for (const [reader, c] of this.counts) {
      console.log(`fuzz ${reader}: ${c.stats + c.error} cases (${c.stats} read through, ${c.error} refused with a named error)`);
    }
  }
}
