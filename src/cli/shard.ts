/**
 * Splitting a campaign across CI jobs. `--shard i/n` gives job i of n its share of the
 * recordings (each screened whole); `--section i/n` gives it section i of n of every
 * recording (sample frames). Shares are 1-based, as CI servers number parallel jobs
 * (GitLab's CI_NODE_INDEX runs from 1 to CI_NODE_TOTAL).
 */
import { createHash } from 'node:crypto';
import { UsageError } from '../errors.js';
import type { Share } from '../stats/summary-file.js';

/**
 * Parses `i/n` (for example `2/4`): whole numbers with 1 ≤ i ≤ n. `option` names the
 * option in the error message. Throws UsageError.
 */
export function parseShard(text: string, option = '--shard'): Share {
  const m = /^\s*(\d+)\s*\/\s*(\d+)\s*$/.exec(text);
  if (!m) {
    throw new UsageError(`${option} must be i/n, job i of n counted from 1 (for example ${option} 2/4), not "${text}"`);
  }
  const index = Number(m[1]);
  const count = Number(m[2]);
  if (!Number.isSafeInteger(count) || count < 1) throw new UsageError(`${option} ${text}: the number of jobs n must be at least 1`);
  if (!Number.isSafeInteger(index) || index < 1 || index > count) {
    throw new UsageError(`${option} ${text}: the job number i must be between 1 and ${count}`);
  }
  return { index, count };
}

/** The paths, each once, in code-unit order: independent of locale and of the given order. */
export function campaignOrder(paths: readonly string[]): string[] {
  return [...new Set(paths)].sort((a, b) => (a < b ? -1 : a > b ? 1 : 0));
}

/**
 * Job `shard.index` of `shard.count`'s share of the recordings, in the given order.
 *
 * The distinct paths are sorted by code unit (not by locale: every runner must agree) and
 * dealt out in turn, the k-th (from 0) to job (k mod n) + 1. So the share depends only on
 * the set of paths, not on the order the shell or the CI server listed them in; the shares
 * of jobs 1..n are disjoint and together hold every path exactly once; and they differ in
 * size by at most one recording. A path given twice is screened once. Paths are compared
 * as written: give every job the same glob from the same directory.
 */
export function selectShard(paths: string[], shard: Share): string[] {
  if (!Number.isSafeInteger(shard.count) || shard.count < 1 || !Number.isSafeInteger(shard.index) || shard.index < 1 || shard.index > shard.count) {
    throw new UsageError(`Shard ${shard.index}/${shard.count} is not valid: it must be i/n with 1 ≤ i ≤ n`);
  }
  const mine = new Set(campaignOrder(paths).filter((_, k) => k % shard.count === shard.index - 1));
  // in the given order, each once
  const out: string[] = [];
  for (const p of paths) if (mine.delete(p)) out.push(p);
  return out;
}

/**
 * What identifies a campaign's list of recordings in every job's partial file: the number
 * of distinct paths and the SHA-256 of their sorted list, one per line.
 */
export function selectionOf(paths: readonly string[]): { recordings: number; sha256: string } {
  const sorted = campaignOrder(paths);
  return { recordings: sorted.length, sha256: createHash('sha256').update(sorted.join('\n')).digest('hex') };
}
