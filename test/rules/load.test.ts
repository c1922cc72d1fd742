import { afterAll, describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import { mkdirSync, mkdtempSync, readFileSync, readdirSync, realpathSync, rmSync, symlinkSync, writeFileSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { loadRules, RulesError, MAX_RULE_FILE_BYTES } from '../../src/rules/load.js';
import { checks, getCheck } from '../../src/checks/registry.js';
import type { ResolvedRules } from '../../src/rules/types.js';

const root = mkdtempSync(join(tmpdir(), 'vibgate-rules-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));

let caseNumber = 0;
/**
 * Writes `files` (paths relative to a fresh `project/` directory; `../x` lands beside it)
 * and returns the project directory, which the tests use as the working directory.
 */
function project(files: Record<string, string | Buffer>): string {
  caseNumber += 1;
  const dir = join(root, `case${caseNumber}`, 'project');
  mkdirSync(dir, { recursive: true });
  for (const [name, content] of Object.entries(files)) {
    const path = join(dir, name);
    mkdirSync(dirname(path), { recursive: true });
    writeFileSync(path, content);
  }
  return dir;
}

async function rulesErrorOf(promise: Promise<unknown>): Promise<RulesError> {
  try {
    await promise;
  } catch (err) {
    if (err instanceof RulesError) return err;
    throw err;
  }
  throw new Error('expected a RulesError');
}

const checkIds = checks.map((c) => c.id).join(', ');
const topKeys = 'format, name, description, test-kind, owner, extends, analysis, checks, channels, expect';
const outsideHint =
  "outside the directories rule files may come from (the given file's directory tree and vibgate's bundled rules; allow more with --rules-root DIR)";

/** A billion-laughs document: each level multiplies the data tenfold. */
const aliasBomb = [
  'format: 1',
  'name: bomb',
  'description: &a [x, x, x, x, x, x, x, x, x, x]',
  'owner: &b [*a, *a, *a, *a, *a, *a, *a, *a, *a, *a]',
  'test-kind: &c [*b, *b, *b, *b, *b, *b, *b, *b, *b, *b]',
  'extends: [*c, *c, *c, *c, *c, *c, *c, *c, *c, *c]',
  '',
].join('\n');

interface BadCase {
  what: string;
  files: Record<string, string | Buffer>;
  /** Exact RulesError message; a function when it holds a machine-specific path. */
  message: string | ((dir: string) => string);
  setup?: (dir: string) => void;
}

const badFiles: BadCase[] = [
  {
    what: 'an unknown check name, with the nearest check suggested',
    files: { 'main.yaml': 'format: 1\nname: lab\nchecks:\n  kurtosiss: { whole: [2, 5] }\n' },
    message: `main.yaml:4:3 checks.kurtosiss: unknown check "kurtosiss"; did you mean "kurtosis"? (known: ${checkIds})`,
  },
  {
    what: 'an unknown check name in a channels entry',
    files: { 'main.yaml': 'format: 1\nname: lab\nchannels:\n  - match: { name: "f*" }\n    checks: { skewnes: off }\n' },
    message: `main.yaml:5:15 channels[0].checks.skewnes: unknown check "skewnes"; did you mean "skewness"? (known: ${checkIds})`,
  },
  {
    what: 'an unknown top-level key, with a suggestion',
    files: { 'main.yaml': 'format: 1\nname: lab\nnmae: other\n' },
    message: `main.yaml:3:1 nmae: unknown key "nmae"; did you mean "name"? (known: ${topKeys})`,
  },
  {
    what: 'an unknown option of a check, listing the options it has',
    files: { 'main.yaml': 'format: 1\nname: lab\nchecks:\n  kurtosis:\n    limit: 3\n' },
    message: 'main.yaml:5:5 checks.kurtosis.limit: unknown key "limit" (known: severity, whole, frames, confidence)',
  },
  {
    what: 'a number where a range belongs',
    files: { 'main.yaml': 'format: 1\nname: lab\nchecks:\n  kurtosis: { whole: 3 }\n' },
    message: 'main.yaml:4:22 checks.kurtosis.whole: must be array, not 3',
  },
  {
    what: 'text where a number belongs',
    files: { 'main.yaml': 'format: 1\nname: lab\nchecks:\n  crest-factor:\n    max: six\n' },
    message: 'main.yaml:5:10 checks.crest-factor.max: must be number, not "six"',
  },
  {
    what: 'an inverted range',
    files: { 'main.yaml': 'format: 1\nname: lab\nchecks:\n  kurtosis: { whole: [4, 2.4] }\n' },
    message: 'main.yaml:4:22 checks.kurtosis.whole: limit range inverted: low 4 is above high 2.4',
  },
  {
    what: 'an inverted range in a channels entry',
    files: { 'main.yaml': 'format: 1\nname: lab\nchannels:\n  - match: { sensor: microphone }\n    checks:\n      skewness: { frames: [1, -1] }\n' },
    message: 'main.yaml:6:27 channels[0].checks.skewness.frames: limit range inverted: low 1 is above high -1',
  },
  {
    what: 'a range of three numbers',
    files: { 'main.yaml': 'format: 1\nname: lab\nchecks:\n  kurtosis:\n    frames: [1, 2, 3]\n' },
    message: 'main.yaml:5:13 checks.kurtosis.frames: must be [low, high], not a list of 3',
  },
  {
    what: 'a range of one number',
    files: { 'main.yaml': 'format: 1\nname: lab\nchecks:\n  skewness:\n    whole: [0.5]\n' },
    message: 'main.yaml:5:12 checks.skewness.whole: must be [low, high], not a list of 1',
  },
  {
    what: 'a severity that is not error or warning',
    files: { 'main.yaml': 'format: 1\nname: lab\nchecks:\n  symmetry: { severity: fatal }\n' },
    message: 'main.yaml:4:25 checks.symmetry.severity: must be one of "error", "warning", not "fatal"',
  },
  {
    what: 'a check switched with a word other than on and off',
    files: { 'main.yaml': 'format: 1\nname: lab\nchecks:\n  clipping: yes\n' },
    message: 'main.yaml:4:13 checks.clipping: must be on, off, true, false or object, not "yes"',
  },
  {
    what: 'a missing format',
    files: { 'main.yaml': '# a lab file\nname: lab\n' },
    message: 'main.yaml:2:1 format: is required but missing',
  },
  {
    what: 'a format other than 1',
    files: { 'main.yaml': 'format: 2\nname: lab\n' },
    message: 'main.yaml:1:9 format: must be 1, not 2',
  },
  {
    what: 'a format written as text',
    files: { 'main.yaml': 'format: "1"\nname: lab\n' },
    message: 'main.yaml:1:9 format: must be 1, not "1"',
  },
  {
    what: 'a missing name',
    files: { 'main.yaml': 'format: 1\nchecks: { kurtosis: on }\n' },
    message: 'main.yaml:1:1 name: is required but missing',
  },
  {
    what: 'an empty name',
    files: { 'main.yaml': 'format: 1\nname: ""\n' },
    message: 'main.yaml:2:7 name: must not be empty',
  },
  {
    what: 'a cycle of two files',
    files: {
      'main.yaml': 'format: 1\nname: a\nextends: ./b.yaml\n',
      'b.yaml': 'format: 1\nname: b\nextends: [main.yaml]\n',
    },
    message: 'main.yaml:3:10 extends: cycle main.yaml → b.yaml → main.yaml',
  },
  {
    what: 'a cycle of three files, reported where it starts',
    files: {
      'main.yaml': 'format: 1\nname: top\nextends: ./a.yaml\n',
      'a.yaml': 'format: 1\nname: a\nextends:\n  - ./b.yaml\n',
      'b.yaml': 'format: 1\nname: b\nextends: ./c.yaml\n',
      'c.yaml': 'format: 1\nname: c\nextends: [./a.yaml]\n',
    },
    message: 'a.yaml:4:5 extends[0]: cycle a.yaml → b.yaml → c.yaml → a.yaml',
  },
  {
    what: 'a file that extends itself',
    files: { 'main.yaml': 'format: 1\nname: a\nextends: main.yaml\n' },
    message: 'main.yaml:3:10 extends: cycle main.yaml → main.yaml',
  },
  {
    what: 'a missing base file',
    files: {
      'main.yaml': 'format: 1\nname: a\nextends: [./base.yaml, x.yaml]\n',
      'base.yaml': 'format: 1\nname: base\n',
    },
    message: 'main.yaml:3:24 extends[1]: file "x.yaml" not found',
  },
  {
    what: 'a base file outside the given file’s directory tree',
    files: {
      'main.yaml': 'format: 1\nname: a\nextends: ../outside.yaml\n',
      '../outside.yaml': 'format: 1\nname: outside\n',
    },
    message: (dir) =>
      `main.yaml:3:10 extends: file "../outside.yaml" resolves to "${realpathSync(join(dir, '..', 'outside.yaml'))}", ${outsideHint}`,
  },
  {
    what: 'a symbolic link inside the tree that points outside it',
    files: {
      'main.yaml': 'format: 1\nname: a\nextends: ./sub/link.yaml\n',
      '../outside.yaml': 'format: 1\nname: outside\n',
    },
    setup: (dir) => {
      mkdirSync(join(dir, 'sub'));
      symlinkSync(join(dir, '..', 'outside.yaml'), join(dir, 'sub', 'link.yaml'));
    },
    message: (dir) =>
      `main.yaml:3:10 extends: file "./sub/link.yaml" resolves to "${realpathSync(join(dir, '..', 'outside.yaml'))}", ${outsideHint}`,
  },
  {
    what: 'a base that is a directory',
    files: { 'main.yaml': 'format: 1\nname: a\nextends: ./sub\n', 'sub/x.yaml': 'format: 1\nname: x\n' },
    message: 'main.yaml:3:10 extends: "./sub" is not a file',
  },
  {
    what: 'a key written twice',
    files: { 'main.yaml': 'format: 1\nname: lab\nchecks:\n  kurtosis: on\n  skewness: on\n  kurtosis: off\n' },
    message: 'main.yaml:6:3 checks.kurtosis: duplicate key "kurtosis" (first written at line 4)',
  },
  {
    what: 'a key written twice inside a list item',
    files: { 'main.yaml': 'format: 1\nname: lab\nchannels:\n  - match:\n      name: "a*"\n      name: "b*"\n    checks: { kurtosis: off }\n' },
    message: 'main.yaml:6:7 channels[0].match.name: duplicate key "name" (first written at line 5)',
  },
  {
    what: 'a YAML syntax error',
    files: { 'main.yaml': 'format: 1\nname: "lab\nchecks: {}\n' },
    message: 'main.yaml:4:1 YAML: Missing closing "quote',
  },
  {
    what: 'tabs as indentation',
    files: { 'main.yaml': 'format: 1\nname: lab\nchecks:\n\tkurtosis: on\n' },
    message: 'main.yaml:4:1 YAML: Tabs are not allowed as indentation',
  },
  {
    what: 'two YAML documents in one file',
    files: { 'main.yaml': 'format: 1\nname: lab\n---\nformat: 1\n' },
    message: 'main.yaml:3:1 YAML: a rule file is one YAML document, but a second one starts here',
  },
  {
    what: 'an alias bomb',
    files: { 'main.yaml': aliasBomb },
    message: 'main.yaml:4:12 YAML aliases expand to too much data (more than 100 alias expansions); an alias bomb?',
  },
  {
    what: 'a file over 256 KiB',
    files: { 'main.yaml': 'format: 1\nname: big\n' + '#'.repeat(MAX_RULE_FILE_BYTES - 20) + '\n' },
    message: `main.yaml:1:1 the file is ${MAX_RULE_FILE_BYTES + 1} bytes; a rule file may be at most ${MAX_RULE_FILE_BYTES} bytes (256 KiB)`,
  },
  {
    what: 'an empty file',
    files: { 'main.yaml': '' },
    message: 'main.yaml:1:1 the file is empty; a rule file needs at least "format: 1" and a name',
  },
  {
    what: 'a file of comments only',
    files: { 'main.yaml': '# nothing yet\n\n' },
    message: 'main.yaml:1:1 the file is empty; a rule file needs at least "format: 1" and a name',
  },
  {
    what: 'a list instead of a map',
    files: { 'main.yaml': '- format: 1\n- name: lab\n' },
    message: 'main.yaml:1:1 a rule file must be a map of keys (format, name, checks, ...), not array',
  },
  {
    what: 'text that is not UTF-8',
    files: { 'main.yaml': Buffer.from([0x66, 0x6f, 0x72, 0x6d, 0x61, 0x74, 0x3a, 0x20, 0xff, 0x0a]) },
    message: 'main.yaml:1:1 is not UTF-8 text',
  },
  {
    what: 'a __proto__ key at the top level and constructor as a check',
    files: { 'main.yaml': 'format: 1\nname: lab\n__proto__: { polluted: true }\nchecks:\n  constructor: { polluted: true }\n' },
    message:
      `main.yaml:3:1 __proto__: unknown key "__proto__" (known: ${topKeys})\n` +
      `main.yaml:5:3 checks.constructor: unknown check "constructor" (known: ${checkIds})`,
  },
  {
    what: 'three problems in one file, all reported at once in line order',
    files: { 'main.yaml': 'format: 1\nname: 3\nanalysis:\n  overlap: 1\nchecks:\n  crest-factor: maybe\n' },
    message:
      'main.yaml:2:7 name: must be string, not 3\n' +
      'main.yaml:4:12 analysis.overlap: must be < 1, not 1\n' +
      'main.yaml:6:17 checks.crest-factor: must be on, off, true, false or object, not "maybe"',
  },
  {
    what: 'a channel selector with no fields',
    files: { 'main.yaml': 'format: 1\nname: lab\nchannels:\n  - match: {}\n    checks: { kurtosis: off }\n' },
    message: 'main.yaml:4:12 channels[0].match: must give at least one of name, sensor, unit, group',
  },
  {
    what: 'a channel selector with a number and an empty list',
    files: { 'main.yaml': 'format: 1\nname: lab\nchannels:\n  - match: { name: 3, unit: [] }\n    checks: { kurtosis: off }\n' },
    message:
      'main.yaml:4:20 channels[0].match.name: must be string or array of strings, not 3\n' +
      'main.yaml:4:29 channels[0].match.unit: must not be empty',
  },
  {
    what: 'a channels entry without checks',
    files: { 'main.yaml': 'format: 1\nname: lab\nchannels:\n  - match: { name: "force-*" }\n' },
    message: 'main.yaml:4:5 channels[0].checks: is required but missing',
  },
  {
    what: 'an overlap of 1 and a frame of 0 s',
    files: { 'main.yaml': 'format: 1\nname: lab\nanalysis:\n  overlap: 1\n  frame-seconds: 0\n' },
    message: 'main.yaml:4:12 analysis.overlap: must be < 1, not 1\nmain.yaml:5:18 analysis.frame-seconds: must be > 0, not 0',
  },
  {
    what: 'an infinite limit',
    files: { 'main.yaml': 'format: 1\nname: lab\nchecks:\n  crest-factor: { max: .inf }\n' },
    message: 'main.yaml:4:24 checks.crest-factor.max: must be a finite number, not .inf',
  },
  {
    what: 'bad expectations',
    files: { 'main.yaml': 'format: 1\nname: lab\nexpect:\n  sample-rate: fast\n  channel-names: [a, b, a]\n  channels: 0\n' },
    message:
      'main.yaml:4:16 expect.sample-rate: must be number or [low, high], not "fast"\n' +
      'main.yaml:5:18 expect.channel-names: must not list "a" twice (items [0] and [2])\n' +
      'main.yaml:6:13 expect.channels: must be ≥ 1, not 0',
  },
  {
    what: 'an inverted sample-rate range',
    files: { 'main.yaml': 'format: 1\nname: lab\nexpect:\n  sample-rate: [51200, 1024]\n' },
    message: 'main.yaml:4:16 expect.sample-rate: limit range inverted: low 51200 is above high 1024',
  },
  {
    what: 'a check with an empty value',
    files: { 'main.yaml': 'format: 1\nname: lab\nchecks:\n  kurtosis:\n  skewness: on\n' },
    message: 'main.yaml:4:3 checks.kurtosis: must be on, off, true, false or object, not an empty value',
  },
  {
    what: 'problems in the file and in its base, the given file first',
    files: {
      'main.yaml': 'format: 1\nname: lab\nextends: ./base.yaml\nchecks: { kurtosis: { whole: [5, 1] } }\n',
      'base.yaml': 'format: 1\nname: base\nchecks:\n  dropout: { max-seconds: -1 }\n',
    },
    message:
      'main.yaml:4:30 checks.kurtosis.whole: limit range inverted: low 5 is above high 1\n' +
      'base.yaml:4:27 checks.dropout.max-seconds: must be ≥ 0, not -1',
  },
];

describe('loadRules() refuses a bad rule file with every problem at file:line:column', () => {
  it('has at least 20 cases in its table', () => {
    expect(badFiles.length).toBeGreaterThanOrEqual(20);
  });

  it.each(badFiles)('$what', async ({ files, message, setup }) => {
    const dir = project(files);
    setup?.(dir);
    const error = await rulesErrorOf(loadRules('main.yaml', { cwd: dir }));
    expect(error.message).toBe(typeof message === 'function' ? message(dir) : message);
    expect(error.problems).toHaveLength(error.message.split('\n').length);
  });

  it('names a missing given file without a position', async () => {
    const dir = project({});
    const error = await rulesErrorOf(loadRules('nothing.yaml', { cwd: dir }));
    expect(error.message).toBe('nothing.yaml: file not found');
    expect(error.problems).toEqual([{ file: 'nothing.yaml', line: 0, column: 0, path: '', message: 'file not found' }]);
  });

  it('names a given directory without a position', async () => {
    const dir = project({ 'sub/x.yaml': 'format: 1\nname: x\n' });
    const error = await rulesErrorOf(loadRules('sub', { cwd: dir }));
    expect(error.message).toBe('sub: is not a file');
  });

  it('carries each problem as data: file, line, column, key path and message', async () => {
    const dir = project({ 'main.yaml': 'format: 1\nname: lab\nchecks:\n  kurtosis: { whole: 3 }\n' });
    const error = await rulesErrorOf(loadRules('main.yaml', { cwd: dir }));
    expect(error.name).toBe('RulesError');
    expect(error.problems).toEqual([
      { file: 'main.yaml', line: 4, column: 22, path: 'checks.kurtosis.whole', message: 'must be array, not 3' },
    ]);
  });

  it('reads a file of exactly 256 KiB', async () => {
    const head = 'format: 1\nname: big\n';
    const dir = project({ 'main.yaml': head + '#'.repeat(MAX_RULE_FILE_BYTES - head.length - 1) + '\n' });
    expect(readFileSync(join(dir, 'main.yaml')).length).toBe(MAX_RULE_FILE_BYTES);
    expect((await loadRules('main.yaml', { cwd: dir })).name).toBe('big');
  });

  it('expands a few honest aliases', async () => {
    const dir = project({
      'main.yaml': 'format: 1\nname: lab\nchecks:\n  kurtosis: { whole: &r [2, 5], frames: *r }\n',
    });
    const rules = await loadRules('main.yaml', { cwd: dir });
    expect(rules.checks.kurtosis.options).toMatchObject({ whole: [2, 5], frames: [2, 5] });
  });

  it('rejects __proto__ and constructor keys without touching Object.prototype', async () => {
    const dir = project({
      'main.yaml':
        'format: 1\nname: lab\n__proto__: { polluted: yes }\nchecks:\n  kurtosis: { __proto__: { polluted: yes }, constructor: { prototype: { polluted: yes } } }\n',
    });
    const error = await rulesErrorOf(loadRules('main.yaml', { cwd: dir }));
    expect(error.problems.map((p) => `${p.path}: ${p.message}`)).toEqual([
      `__proto__: unknown key "__proto__" (known: ${topKeys})`,
      'checks.kurtosis.__proto__: unknown key "__proto__" (known: severity, whole, frames, confidence)',
      'checks.kurtosis.constructor: unknown key "constructor" (known: severity, whole, frames, confidence)',
    ]);
    expect(({} as Record<string, unknown>).polluted).toBeUndefined();
    expect(Object.prototype).not.toHaveProperty('polluted');
  });
});

describe('loadRules() confines extends to the allowed directories', () => {
  it('follows a base in a directory given with allowRoots', async () => {
    const dir = project({
      'main.yaml': 'format: 1\nname: a\nextends: ../shared/base.yaml\n',
      '../shared/base.yaml': 'format: 1\nname: shared\nchecks: { kurtosis: on }\n',
    });
    await expect(loadRules('main.yaml', { cwd: dir })).rejects.toThrow(/resolves to .*outside the directories/);
    const rules = await loadRules('main.yaml', { cwd: dir, allowRoots: ['../shared'] });
    expect(Object.keys(rules.checks)).toEqual(['kurtosis']);
    expect(rules.files.map((f) => f.path)).toEqual(['main.yaml', '../shared/base.yaml']);
  });

  it('follows a base in the bundled rules directory', async () => {
    const dir = project({
      'main.yaml': 'format: 1\nname: a\nextends: ../bundled/random.yaml\n',
      '../bundled/random.yaml': 'format: 1\nname: random\nchecks: { skewness: on }\n',
    });
    const rules = await loadRules('main.yaml', { cwd: dir, bundledRoot: join(dir, '..', 'bundled') });
    expect(Object.keys(rules.checks)).toEqual(['skewness']);
  });

  it('follows a symbolic link that stays inside the tree', async () => {
    const dir = project({
      'main.yaml': 'format: 1\nname: a\nextends: ./link.yaml\n',
      'real/base.yaml': 'format: 1\nname: base\nchecks: { dropout: on }\n',
    });
    symlinkSync(join(dir, 'real', 'base.yaml'), join(dir, 'link.yaml'));
    const rules = await loadRules('main.yaml', { cwd: dir });
    expect(Object.keys(rules.checks)).toEqual(['dropout']);
  });
});

describe('loadRules() merges a file with the files it extends', () => {
  const base = [
    'format: 1',
    'name: base',
    'description: The shared base.',
    'owner: lab',
    'analysis: { frame-seconds: 2, overlap: 0.5 }',
    'checks:',
    '  kurtosis: { whole: [2, 5], severity: warning }',
    '  skewness: on',
    '  stationarity: true',
    '  crest-factor: { max: 6 }',
    'channels:',
    '  - match: { name: "force-*" }',
    '    checks: { kurtosis: off }',
    'expect: { min-duration-seconds: 30, sample-rate: [1024, 51200], channels: 8 }',
    '',
  ].join('\n');
  const child = [
    'format: 1',
    'name: child',
    'extends: ./base.yaml',
    'analysis:',
    '  overlap: 0.25',
    'checks:',
    '  kurtosis: { frames: [1, 9] }',
    '  stationarity: off',
    '  crest-factor: false',
    '  mean-offset: { max-abs: 0.2 }',
    'channels:',
    '  - match: { sensor: microphone }',
    '    checks: { mean-offset: { max-ratio-to-std: 0.05 }, skewness: on }',
    'expect:',
    '  sample-rate: 2048',
    '  severity: warning',
    '',
  ].join('\n');
  const grandchild = 'format: 1\nname: grandchild\ntest-kind: random vibration\nextends: [child.yaml]\nchecks:\n  crest-factor: on\n';

  it('lets the later file win key by key, off remove a check and on bring back its defaults', async () => {
    const dir = project({ 'base.yaml': base, 'child.yaml': child, 'grandchild.yaml': grandchild });
    const rules = await loadRules('grandchild.yaml', { cwd: dir });
    const defaults = (id: string) => getCheck(id)!.defaults as Record<string, unknown>;
    expect(rules).toEqual<ResolvedRules>({
      name: 'grandchild',
      testKind: 'random vibration',
      files: rules.files,
      analysis: { frameSeconds: 2, overlap: 0.25 },
      checks: {
        'mean-offset': { severity: getCheck('mean-offset')!.defaultSeverity, options: { ...defaults('mean-offset'), 'max-abs': 0.2 } },
        skewness: { severity: getCheck('skewness')!.defaultSeverity, options: defaults('skewness') },
        kurtosis: { severity: 'warning', options: { whole: [2, 5], frames: [1, 9] } },
        // Switched off by child.yaml, on again in grandchild.yaml: its defaults, not base.yaml's max 6.
        'crest-factor': { severity: getCheck('crest-factor')!.defaultSeverity, options: defaults('crest-factor') },
      },
      channels: [
        { match: { name: 'force-*' }, checks: { kurtosis: false }, source: 'base.yaml:12:5' },
        { match: { sensor: 'microphone' }, checks: { 'mean-offset': { 'max-ratio-to-std': 0.05 }, skewness: {} }, source: 'child.yaml:12:5' },
      ],
      expect: { minDurationS: 30, sampleRate: [2048, 2048], channelCount: 8, severity: 'warning' },
    });
    expect(Object.keys(rules.checks)).toEqual(checks.map((c) => c.id).filter((id) => id in rules.checks));
  });

  it('takes name, description, test-kind and owner from the file given only', async () => {
    const dir = project({ 'base.yaml': base, 'child.yaml': child });
    const rules = await loadRules('child.yaml', { cwd: dir });
    expect(rules.name).toBe('child');
    expect(rules).not.toHaveProperty('description');
    expect(rules).not.toHaveProperty('owner');
    expect((await loadRules('base.yaml', { cwd: dir })).description).toBe('The shared base.');
  });

  it('lists the given file first, then its bases depth first, each with the SHA-256 of its bytes', async () => {
    const dir = project({ 'base.yaml': base, 'child.yaml': child, 'grandchild.yaml': grandchild });
    const rules = await loadRules('grandchild.yaml', { cwd: dir });
    const sha = (name: string) => createHash('sha256').update(readFileSync(join(dir, name))).digest('hex');
    expect(rules.files).toEqual([
      { path: 'grandchild.yaml', sha256: sha('grandchild.yaml') },
      { path: 'child.yaml', sha256: sha('child.yaml') },
      { path: 'base.yaml', sha256: sha('base.yaml') },
    ]);
  });

  it('hashes the bytes as written, so two files that parse alike differ in hash', async () => {
    const dir = project({ 'a.yaml': 'format: 1\nname: same\n', 'b.yaml': 'format: 1\nname:   same   # spaced\n' });
    const [a, b] = [await loadRules('a.yaml', { cwd: dir }), await loadRules('b.yaml', { cwd: dir })];
    expect(a.name).toBe(b.name);
    expect(a.files[0].sha256).not.toBe(b.files[0].sha256);
    expect(a.files[0].sha256).toBe(createHash('sha256').update('format: 1\nname: same\n').digest('hex'));
  });

  it('resolves a base shared by two bases once, where it is first reached', async () => {
    const common = 'format: 1\nname: common\nchannels:\n  - match: { unit: g }\n    checks: { kurtosis: off }\n';
    const dir = project({
      'top.yaml': 'format: 1\nname: top\nextends: [left.yaml, right.yaml]\n',
      'left.yaml': 'format: 1\nname: left\nextends: common.yaml\nchecks: { skewness: { whole: [-1, 1] } }\n',
      'right.yaml': 'format: 1\nname: right\nextends: ./common.yaml\nchecks: { skewness: { frames: [-2, 2] } }\n',
      'common.yaml': common,
    });
    const rules = await loadRules('top.yaml', { cwd: dir });
    expect(rules.files.map((f) => f.path)).toEqual(['top.yaml', 'left.yaml', 'common.yaml', 'right.yaml']);
    expect(rules.channels).toHaveLength(1);
    expect(rules.checks.skewness.options).toEqual({ whole: [-1, 1], frames: [-2, 2] });
  });

  it('concatenates channels entries, base files first, each file in its own order', async () => {
    const dir = project({
      'main.yaml':
        'format: 1\nname: main\nextends: [a.yaml, b.yaml]\nchannels:\n  - match: { name: m1 }\n    checks: { dropout: off }\n  - match: { name: m2 }\n    checks: { dropout: off }\n',
      'a.yaml': 'format: 1\nname: a\nchannels:\n  - match: { name: a1 }\n    checks: { dropout: off }\n  - match: { name: a2 }\n    checks: { dropout: off }\n',
      'b.yaml': 'format: 1\nname: b\nchannels:\n  - match: { name: b1 }\n    checks: { dropout: off }\n',
    });
    const rules = await loadRules('main.yaml', { cwd: dir });
    expect(rules.channels.map((c) => [c.match.name, c.source])).toEqual([
      ['a1', 'a.yaml:4:5'],
      ['a2', 'a.yaml:6:5'],
      ['b1', 'b.yaml:4:5'],
      ['m1', 'main.yaml:5:5'],
      ['m2', 'main.yaml:7:5'],
    ]);
  });

  it('fills analysis and expect defaults: frames of 1 s, no overlap, severity error', async () => {
    const dir = project({ 'main.yaml': 'format: 1\nname: bare\n' });
    expect(await loadRules('main.yaml', { cwd: dir })).toEqual({
      name: 'bare',
      files: [{ path: 'main.yaml', sha256: createHash('sha256').update('format: 1\nname: bare\n').digest('hex') }],
      analysis: { frameSeconds: 1, overlap: 0 },
      checks: {},
      channels: [],
      expect: { severity: 'error' },
    });
  });

  it('gives each check its defaults and default severity when switched on', async () => {
    const dir = project({ 'main.yaml': `format: 1\nname: all\nchecks:\n${checks.map((c) => `  ${c.id}: on`).join('\n')}\n` });
    const rules = await loadRules('main.yaml', { cwd: dir });
    for (const check of checks) {
      expect(rules.checks[check.id]).toEqual({ severity: check.defaultSeverity, options: check.defaults });
    }
  });

  it('does not share option arrays between the result and the registry defaults', async () => {
    const dir = project({ 'main.yaml': 'format: 1\nname: a\nchecks: { kurtosis: on }\n' });
    const rules = await loadRules('main.yaml', { cwd: dir });
    (rules.checks.kurtosis.options.whole as number[])[0] = -99;
    expect((getCheck('kurtosis')!.defaults as { whole: number[] }).whole[0]).not.toBe(-99);
  });
});

describe('the bundled rule files', () => {
  const bundled = fileURLToPath(new URL('../../rules/', import.meta.url));
  const files = existsSync(bundled) ? readdirSync(bundled).filter((f) => /\.ya?ml$/.test(f)) : [];

  it.skipIf(files.length === 0)('each loads without problems', async () => {
    for (const file of files) {
      const rules = await loadRules(join(bundled, file));
      expect(rules.name, file).not.toBe('');
    }
  });
});
