import { describe, expect, it } from 'vitest';
import { mkdtemp, writeFile, readFile } from 'node:fs/promises';
import { createHash } from 'node:crypto';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { loadRules, RulesError } from '../../src/rules/load.js';

async function ruleFile(text: string): Promise<string> {
  const dir = await mkdtemp(join(tmpdir(), 'vibgate-bundled-'));
  const file = join(dir, 'lab.yaml');
  await writeFile(file, text);
  return file;
}

describe('extends: bundled:NAME', () => {
  it('reaches a bundled rule file from anywhere, and its own bases', async () => {
    const file = await ruleFile('format: 1\nname: lab\nextends: bundled:ambient-survey\n');
    const rules = await loadRules(file);
    expect(rules.files.map((f) => f.path)).toEqual([file, 'bundled:ambient-survey', 'bundled:base.yaml']);
    const bytes = await readFile(new URL('../../rules/ambient-survey.yaml', import.meta.url));
    expect(rules.files[1].sha256).toBe(createHash('sha256').update(bytes).digest('hex'));
  });

  it('refuses a name that is not a plain file name, and a missing one', async () => {
    const file = await ruleFile('format: 1\nname: lab\nextends: [bundled:../x, bundled:nosuch]\n');
    const err = await loadRules(file).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(RulesError);
    expect((err as RulesError).message).toBe(
      `${file}:3:11 extends[0]: "bundled:../x" does not name a bundled rule file (bundled:NAME, for example bundled:random-vibration)\n` +
        `${file}:3:25 extends[1]: file "bundled:nosuch" not found`,
    );
  });
});

describe('--rules bundled:NAME', () => {
  it('loads a bundled rule file by name, with its bases', async () => {
    const rules = await loadRules('bundled:shock');
    expect(rules.name).toBe('shock');
    expect(rules.files.map((f) => f.path)).toEqual(['bundled:shock', 'bundled:base.yaml']);
  });
  it('refuses a name that could climb out of rules/', async () => {
    await expect(loadRules('bundled:../package.json')).rejects.toThrow(
      'bundled:../package.json: does not name a bundled rule file (bundled:NAME, for example bundled:random-vibration)',
    );
  });
});
