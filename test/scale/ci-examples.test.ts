import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { parse } from 'yaml';
import { parseShard } from '../../src/cli/shard.js';

const root = fileURLToPath(new URL('../../', import.meta.url));
const load = (file: string) => parse(readFileSync(`${root}examples/ci/${file}`, 'utf8')) as Record<string, any>;
const github = load('github-actions-matrix.yml');
const gitlab = load('gitlab-ci-parallel.yml');

/** The words of every `vibgate <command>` in shell lines (a folded scalar is one line). */
function commands(lines: unknown[], command: string): string[][] {
  return lines.map(String).flatMap((l) => l.split('\n')).map((l) => l.trim().split(/\s+/)).filter((w) => w[0] === 'vibgate' && w[1] === command);
}
const value = (words: string[], option: string) => {
  const i = words.indexOf(option);
  return i >= 0 ? words[i + 1] : undefined;
};
/** A shell glob of the examples (only `*`) as a regular expression. */
const globRegExp = (glob: string) => new RegExp(`^${glob.split('*').map((s) => s.replace(/[.+?^${}()|[\]\\]/g, '\\$&')).join('[^/]*')}$`);
const asList = (v: unknown): unknown[] => (Array.isArray(v) ? v : v === undefined ? [] : [v]);

describe('examples/ci/github-actions-matrix.yml', () => {
  const steps = (job: string): Array<Record<string, any>> => github.jobs[job].steps;
  const shards: number[] = github.jobs.screen.strategy.matrix.shard;
  const forShard = (text: string, k: number) => text.replaceAll('${{ matrix.shard }}', String(k));
  // the command as each matrix job runs it, `${{ matrix.shard }}` filled in
  const screenOf = (k: number) => commands(steps('screen').map((s) => forShard(String(s.run ?? ''), k)), 'screen')[0];
  const [merge] = commands(steps('merge').map((s) => s.run ?? ''), 'merge');

  it('screens four shards, each with its own share and its own partial file', () => {
    expect(shards).toEqual([1, 2, 3, 4]);
    expect(github.jobs.screen.strategy['fail-fast']).toBe(false);
    expect(steps('screen').some((s) => String(s.run ?? '').includes('--shard ${{ matrix.shard }}/4'))).toBe(true);
    expect(shards.map((k) => parseShard(value(screenOf(k), '--shard')!))).toEqual(shards.map((k) => ({ index: k, count: 4 })));
    const partials = shards.map((k) => value(screenOf(k), '--partial')!);
    expect(new Set(partials).size).toBe(4);
    const upload = steps('screen').find((s) => String(s.uses ?? '').startsWith('actions/upload-artifact@'))!;
    expect(shards.map((k) => forShard(upload.with.path, k))).toEqual(partials);
    expect(new Set(shards.map((k) => forShard(upload.with.name, k))).size).toBe(4);
    // the merge finds every partial file where the download puts them
    const download = steps('merge').find((s) => String(s.uses ?? '').startsWith('actions/download-artifact@'))!;
    const pattern = globRegExp(merge[2]);
    for (const p of partials) expect(`${download.with.path}/${p}`).toMatch(pattern);
    expect(download.with['merge-multiple']).toBe(true);
  });

  it('merges after every shard, even a failed one, and keeps the reports', () => {
    expect(asList(github.jobs.merge.needs)).toContain('screen');
    expect(github.jobs.merge.if).toBe('${{ !cancelled() }}');
    for (const option of ['--junit', '--json', '--html', '--github']) expect(merge).toContain(option);
    const upload = steps('merge').find((s) => String(s.uses ?? '').startsWith('actions/upload-artifact@'))!;
    expect(upload.if).toBe('always()');
    const paths = String(upload.with.path).split('\n').map((p) => p.trim()).filter(Boolean);
    expect(paths.sort()).toEqual(['--junit', '--json', '--html'].map((o) => value(merge, o)).sort());
  });

  it('runs the downstream processing only after the merged gate passed', () => {
    expect(asList(github.jobs.spectra.needs)).toEqual(['merge']);
    expect(String(github.jobs.spectra.if ?? '')).not.toMatch(/always\(\)|failure\(\)|cancelled\(\)/);
  });
});

describe('examples/ci/gitlab-ci-parallel.yml', () => {
  const [screen] = commands(gitlab.screen.script, 'screen');
  const [merge] = commands(gitlab.merge.script, 'merge');
  const forNode = (text: string, k: number) => text.replaceAll('$CI_NODE_INDEX', String(k)).replaceAll('$CI_NODE_TOTAL', String(gitlab.screen.parallel));

  it('screens parallel: 4 shards numbered by CI_NODE_INDEX of CI_NODE_TOTAL', () => {
    expect(gitlab.stages).toEqual(['screen', 'merge', 'spectra']);
    expect(gitlab.screen.parallel).toBe(4);
    expect(value(screen, '--shard')).toBe('$CI_NODE_INDEX/$CI_NODE_TOTAL');
    const nodes = [1, 2, 3, 4];
    expect(nodes.map((k) => parseShard(forNode(value(screen, '--shard')!, k)))).toEqual(nodes.map((k) => ({ index: k, count: 4 })));
    const partials = nodes.map((k) => forNode(value(screen, '--partial')!, k));
    expect(new Set(partials).size).toBe(4);
    expect(gitlab.screen.artifacts.paths).toEqual([value(screen, '--partial')]);
    const pattern = globRegExp(merge[2]);
    for (const p of partials) expect(p).toMatch(pattern);
  });

  it('merges with the artifacts of every screen job, the JUnit file as a test report', () => {
    expect(gitlab.merge.needs).toEqual([{ job: 'screen', artifacts: true }]);
    expect(gitlab.merge.artifacts.when).toBe('always');
    expect(gitlab.merge.artifacts.reports.junit).toBe(value(merge, '--junit'));
    expect(gitlab.merge.artifacts.paths).toEqual([value(merge, '--json'), value(merge, '--html')]);
    expect(merge).not.toContain('--github');
  });

  it('runs the downstream processing only after the merged gate passed', () => {
    expect(gitlab.spectra.needs).toEqual(['merge']);
    expect(gitlab.merge.allow_failure ?? false).toBe(false);
    expect(gitlab.spectra.when ?? 'on_success').toBe('on_success');
  });
});
