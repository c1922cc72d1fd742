import { execFileSync } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { parse } from 'yaml';

const root = fileURLToPath(new URL('../../', import.meta.url));
const load = (file: string) => parse(readFileSync(`${root}examples/ci/${file}`, 'utf8')) as Record<string, any>;

const github = load('github-actions.yml');
const gitlab = load('gitlab-ci.yml');

/** The words of every `vibgate screen` command in a list of shell lines. */
function screenCommands(lines: string[]): string[][] {
  return lines.flatMap((l) => l.split('\n')).map((l) => l.trim().split(/\s+/)).filter((w) => w[0] === 'vibgate' && w[1] === 'screen');
}

/** The value given to `--name` in a command, e.g. the file after `--junit`. */
function optionValue(words: string[], name: string): string | undefined {
  const i = words.indexOf(name);
  return i >= 0 ? words[i + 1] : undefined;
}

const asList = (v: unknown): unknown[] => (Array.isArray(v) ? v : v === undefined ? [] : [v]);

// GitHub Actions steps run by `run:`; a folded block scalar arrives as one line
const githubSteps = (job: string): Array<Record<string, any>> => github.jobs[job].steps;
const githubScreen = screenCommands(githubSteps('screen').map((s) => String(s.run ?? '')));
const gitlabScreen = screenCommands((gitlab.screen.script as string[]).map(String));

describe('examples/ci/github-actions.yml', () => {
  it('runs on pushes and pull requests', () => {
    expect(Object.keys(github.on)).toEqual(expect.arrayContaining(['push', 'pull_request']));
  });

  it('checks out, sets up Node 20 and installs vibgate from npm before screening', () => {
    const steps = githubSteps('screen');
    const at = (test: (s: Record<string, any>) => boolean) => steps.findIndex(test);
    const checkout = at((s) => String(s.uses ?? '').startsWith('actions/checkout@'));
    const node = at((s) => String(s.uses ?? '').startsWith('actions/setup-node@'));
    const install = at((s) => /\bnpm install -g vibgate\b/.test(String(s.run ?? '')));
    const screen = at((s) => /\bvibgate screen\b/.test(String(s.run ?? '')));
    expect([checkout, node, install, screen].every((i) => i >= 0)).toBe(true);
    expect(checkout).toBeLessThan(node);
    expect(node).toBeLessThan(install);
    expect(install).toBeLessThan(screen);
    expect(String(steps[node].with['node-version'])).toBe('20');
  });

  it('screens with --junit and --github in the screen job', () => {
    expect(githubScreen).toHaveLength(1);
    const [words] = githubScreen;
    for (const option of ['--rules', '--junit', '--json', '--html', '--github']) expect(words).toContain(option);
  });

  it('uploads the three reports whatever the verdict', () => {
    const upload = githubSteps('screen').find((s) => String(s.uses ?? '').startsWith('actions/upload-artifact@'));
    expect(upload).toBeDefined();
    expect(upload!.if).toBe('always()');
    const [words] = githubScreen;
    const paths = String(upload!.with.path).split('\n').map((p) => p.trim()).filter(Boolean);
    const reports = ['--junit', '--json', '--html'].map((o) => optionValue(words, o));
    expect(paths.sort()).toEqual([...reports].sort());
  });

  it('runs spectra only after screen succeeded', () => {
    expect(asList(github.jobs.spectra.needs)).toContain('screen');
    // an always() or failure() condition would let spectra run on data the gate refused
    expect(String(github.jobs.spectra.if ?? '')).not.toMatch(/always\(\)|failure\(\)|cancelled\(\)/);
    expect(githubSteps('spectra').some((s) => /compute_spectra/.test(String(s.run ?? '')))).toBe(true);
  });
});

describe('examples/ci/gitlab-ci.yml', () => {
  it('has the stages screen, then spectra', () => {
    expect(gitlab.stages).toEqual(['screen', 'spectra']);
    expect(gitlab.screen.stage).toBe('screen');
    expect(gitlab.spectra.stage).toBe('spectra');
  });

  it('runs the same screening, without --github', () => {
    expect(gitlabScreen).toHaveLength(1);
    const [words] = gitlabScreen;
    expect(words).not.toContain('--github');
    expect(words).toEqual(githubScreen[0].filter((w) => w !== '--github'));
    expect(gitlab.screen.image).toMatch(/^node:20\b/);
    expect(gitlab.screen.script.some((l: string) => /\bnpm install -g vibgate\b/.test(l))).toBe(true);
  });

  it('keeps the reports whatever the verdict, the JUnit file as a test report', () => {
    const { artifacts } = gitlab.screen;
    const [words] = gitlabScreen;
    expect(artifacts.when).toBe('always');
    expect(artifacts.reports.junit).toBe(optionValue(words, '--junit'));
    expect(artifacts.paths).toEqual(expect.arrayContaining([optionValue(words, '--json'), optionValue(words, '--html')]));
  });

  it('runs spectra only after screen succeeded', () => {
    expect(asList(gitlab.spectra.needs).map((n) => (typeof n === 'object' && n !== null ? (n as { job: string }).job : n))).toContain('screen');
    expect(gitlab.screen.allow_failure ?? false).toBe(false);
    expect(gitlab.spectra.when ?? 'on_success').toBe('on_success');
  });
});

describe('the example commands', () => {
  it('use only options that `vibgate screen` accepts', () => {
    const bin = `${root}dist/cli/bin.js`;
    expect(existsSync(bin), 'dist/cli/bin.js is built (npm run build; npm test builds it first)').toBe(true);
    const help = execFileSync(process.execPath, [bin, 'screen', '--help'], { encoding: 'utf8' });
    const used = new Set([...githubScreen, ...gitlabScreen].flat().filter((w) => w.startsWith('--')));
    expect(used.size).toBeGreaterThanOrEqual(5);
    const missing = [...used].filter((option) => !new RegExp(`(?<![\\w-])${option}(?![\\w-])`).test(help));
    expect(missing, `options in the examples that screen --help does not list`).toEqual([]);
  });
});
