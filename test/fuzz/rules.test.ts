/**
 * Fuzzing the rule-file loader: token soup with the format's own keys, well-formed YAML
 * with wrong values and `__proto__`/`constructor` keys, alias bombs, deep nesting, and
 * `extends` entries that loop, escape the allowed directories or name nothing. Every case
 * must end in ResolvedRules or a RulesError whose every line starts with the file it is
 * about, within the per-case timeout, and Object.prototype must stay empty.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { mkdir, rm, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { stringify } from 'yaml';
import { loadRules, RulesError } from '../../src/rules/load.js';
import { checks } from '../../src/checks/registry.js';
import { fixtureDir } from '../helpers/wav-writer.js';
import { CaseCounter, expectPrototypeClean, expectRulesErrorNamesFile, fuzzParameters } from '../helpers/fuzz-harness.js';
import { aliasBomb, deepNesting, yamlOfMaps, yamlSoup } from '../helpers/fuzz-yaml.js';

let dir = '';
const counter = new CaseCounter();
beforeAll(async () => {
  dir = await fixtureDir('vibgate-fuzz-rules-');
  await mkdir(join(dir, 'lab'), { recursive: true });
  await writeFile(join(dir, 'lab', 'base.yaml'), 'format: 1\nname: base\nchecks:\n  non-finite: on\n');
  await writeFile(join(dir, 'outside.yaml'), 'format: 1\nname: outside\n');
});
afterAll(async () => {
  counter.print();
  await rm(dir, { recursive: true, force: true });
});

const CHECK_IDS = checks.map((c) => c.id);
const RULE_KEYS = ['format', 'name', 'description', 'test-kind', 'owner', 'extends', 'analysis', 'checks', 'channels', 'expect', 'frame-seconds', 'overlap', 'match', 'sensor', 'unit', 'group', 'min-duration-seconds', 'sample-rate', 'channel-names', 'severity', 'error', 'warning', 'whole', 'frames', 'max', 'min', 'max-seconds', 'on', 'off', ...CHECK_IDS];
const EXTENDS = ['./base.yaml', 'base.yaml', './lab.yaml', '../outside.yaml', '/etc/passwd', 'bundled:base', 'bundled:random-vibration', 'bundled:../lab/base', 'bundled:', 'missing.yaml', '.', '', 'lab.yaml'];

/** Reads `text` as lab/lab.yaml and checks the outcome; returns which it was. */
async function loadText(text: string): Promise<'rules' | 'error'> {
  const path = join(dir, 'lab', 'lab.yaml');
  await writeFile(path, text);
  let outcome: 'rules' | 'error';
  try {
    const rules = await loadRules(path, { cwd: dir });
    expect(rules.files[0].path).toBe(path);
    expect(typeof rules.name).toBe('string');
    outcome = 'rules';
  } catch (err) {
    if (!(err instanceof RulesError)) throw err;
    expectRulesErrorNamesFile(err, path);
    expect(err.message).not.toMatch(/\n\s+at /);
    outcome = 'error';
  }
  expectPrototypeClean();
  counter.add('rules', outcome === 'rules' ? 'stats' : 'error');
  return outcome;
}

/** Mostly-valid rule files: format 1 and a name, then checks, channels, expect and extends, now and then wrong. */
const sometimes = <T, U>(good: fc.Arbitrary<T>, bad: fc.Arbitrary<U>) => fc.oneof({ weight: 15, arbitrary: good }, { weight: 1, arbitrary: bad });
const nearlyValid = fc.record({
  checks: fc.dictionary(
    sometimes(fc.constantFrom('non-finite', 'dropout', 'kurtosis', 'clipping', 'flat-channel'), fc.constantFrom('__proto__', 'constructor', 'kurtosiss', ...CHECK_IDS)),
    sometimes(
      fc.constantFrom<unknown>('on', 'off', true, false, { severity: 'warning' }, { severity: 'error' }),
      fc.constantFrom<unknown>(null, 3, 'x', { severity: 'fatal' }, { whole: [3.6, 2.5] }, { whole: [2.5, 3.6], frames: [1.5, 8] }, { 'max-seconds': -1 }, { 'max-seconds': 0.01 }, { __proto__: { polluted: 1 } }),
    ),
    { maxKeys: 4 },
  ),
  extends: fc.option(sometimes(fc.constantFrom('./base.yaml', 'bundled:base', ['./base.yaml', 'bundled:random-vibration']), fc.oneof(fc.constantFrom(...EXTENDS), fc.array(fc.constantFrom(...EXTENDS), { maxLength: 3 }))), { freq: 2 }),
  expect: fc.option(sometimes(fc.record({ 'min-duration-seconds': fc.integer({ min: 1, max: 600 }), 'sample-rate': fc.constantFrom(2048, [1024, 51200]) }, { requiredKeys: [] }), fc.record({ 'min-duration-seconds': fc.oneof(fc.double(), fc.constant(-1)), 'sample-rate': fc.oneof(fc.integer(), fc.tuple(fc.integer(), fc.integer())), channels: fc.integer() }, { requiredKeys: [] }))),
  channels: fc.option(fc.array(sometimes(
    fc.record({ match: fc.constantFrom({ name: 'force-*' }, { sensor: 'microphone' }, { unit: ['g', 'm/s^2'] }), checks: fc.constantFrom({ kurtosis: 'off' }, { dropout: { 'max-seconds': 0.1 } }) }),
    fc.record({ match: fc.record({ name: fc.constantFrom('acc-*', '[', '**', ''), sensor: fc.constantFrom('force', 7) }, { requiredKeys: [] }), checks: fc.dictionary(fc.constantFrom(...CHECK_IDS, '__proto__'), fc.constantFrom<unknown>('off', 'on', {}, 5)) }, { requiredKeys: [] }),
  ), { maxLength: 3 })),
}).map((r) => {
  const data: Record<string, unknown> = { format: 1, name: 'fuzz' };
  for (const [k, v] of Object.entries(r)) if (v !== null) data[k] = v;
  return stringify(data);
});

describe('fuzzing the rule-file loader', () => {
  it('ends token soup in rules or a RulesError naming the file at every line', async () => {
    await fc.assert(fc.asyncProperty(yamlSoup(RULE_KEYS), async (yaml) => { await loadText(yaml); }), fuzzParameters(400));
  });

  it('ends well-formed YAML with wrong values and __proto__ keys the same way', async () => {
    await fc.assert(
      fc.asyncProperty(yamlOfMaps(['format', 'name', 'description', 'extends'], { checks: CHECK_IDS, analysis: ['frame-seconds', 'overlap'], expect: ['min-duration-seconds', 'sample-rate', 'channels', 'severity'] }), async (yaml) => {
        await loadText(yaml);
      }),
      fuzzParameters(400),
    );
  });

  it('loads or refuses nearly valid rule files with any extends entry, never reading outside the allowed directories', async () => {
    await fc.assert(
      fc.asyncProperty(nearlyValid, async (yaml) => {
        await loadText(yaml);
      }),
      fuzzParameters(400),
    );
  });

  it('refuses alias bombs and deep nesting with a positioned message, never a crash', async () => {
    await fc.assert(
      fc.asyncProperty(fc.oneof(aliasBomb, deepNesting), fc.boolean(), async (yaml, prefixed) => {
        const outcome = await loadText(prefixed ? `format: 1\nname: x\ndescription: ${yaml.includes('\n') ? '\n' + yaml.replace(/^/gm, '  ') : yaml}\n` : yaml);
        expect(outcome).toBe('error');
      }),
      fuzzParameters(200),
    );
  });

  it('refuses 100 000 nested brackets (200 KB, under the size limit) at line 1, column 65', async () => {
    const path = join(dir, 'lab', 'deep.yaml');
    await writeFile(path, '['.repeat(100_000) + ']'.repeat(100_000));
    const err = await loadRules(path).then(() => undefined, (e: unknown) => e);
    expect(err).toBeInstanceOf(RulesError);
    counter.add('rules', 'error');
    expect((err as RulesError).message).toBe(`${path}:1:65 YAML: collections nested more than 64 levels deep; a rule file needs a handful`);
  });
});
