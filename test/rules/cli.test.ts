import { afterAll, describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { runRulesChecks, runRulesValidate } from '../../src/cli/rules.js';
import type { CliIo } from '../../src/cli/io.js';
import { checks, getCheck } from '../../src/checks/registry.js';

const dir = mkdtempSync(join(tmpdir(), 'vibgate-rules-cli-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function capture(): { io: CliIo; out: () => string; err: () => string } {
  let stdout = '';
  let stderr = '';
  const io: CliIo = {
    stdout: { write: (s: string) => (stdout += s) },
    stderr: { write: (s: string) => (stderr += s) },
    env: {},
    cwd: dir,
  };
  return { io, out: () => stdout, err: () => stderr };
}

const base = 'format: 1\nname: base\nchecks:\n  kurtosis: { whole: [2.5, 3.6] }\n  stationarity: on\n';
const lab = [
  'format: 1',
  'name: random-vibration',
  'description: Stationary random response.',
  'extends: ./base.yaml',
  'analysis: { frame-seconds: 0.5, overlap: 0.5 }',
  'checks:',
  '  mean-offset: { max-ratio-to-std: 0.1 }',
  'channels:',
  '  - match: { name: "force-*" }',
  '    checks: { kurtosis: off }',
  'expect: { sample-rate: [1024, 51200], min-duration-seconds: 30 }',
  '',
].join('\n');
writeFileSync(join(dir, 'base.yaml'), base);
writeFileSync(join(dir, 'lab.yaml'), lab);
writeFileSync(join(dir, 'bad.yaml'), 'format: 1\nname: bad\nchecks:\n  kurtosiss: on\n  skewness: { whole: [1, -1] }\n');
const sha = (text: string) => createHash('sha256').update(text).digest('hex');

describe('vibgate rules validate', () => {
  it('prints the resolved rules for people and exits 0', async () => {
    const { io, out, err } = capture();
    expect(await runRulesValidate('lab.yaml', io, { format: 'text' })).toBe(0);
    const text = out();
    expect(err()).toBe('');
    expect(text).toContain('lab.yaml: valid rule file "random-vibration"\n  Stationary random response.\n');
    expect(text).toContain(`  lab.yaml   sha256 ${sha(lab)}\n  base.yaml  sha256 ${sha(base)}\n`);
    expect(text).toContain('Analysis: frames of 0.5 s, overlap 0.5\n');
    expect(text).toMatch(/mean-offset\s+error\s+max-ratio-to-std: 0\.1\n/);
    expect(text).toMatch(/kurtosis\s+error\s+whole: \[2\.5, 3\.6\], frames: \[[-\d., ]+\]\n/);
    expect(text).toMatch(new RegExp(`stationarity\\s+${getCheck('stationarity')!.defaultSeverity}\\s+of: \\[rms, mean\\]`));
    expect(text).toContain('  lab.yaml:9:5  name force-*: kurtosis off\n');
    expect(text).toContain('Expectations on each recording (error):\n  duration ≥ 30 s\n  sample rate 1024 … 51200 Hz\n');
  });

  it('prints the resolved rules as JSON for tools', async () => {
    const { io, out } = capture();
    expect(await runRulesValidate('lab.yaml', io, { format: 'json' })).toBe(0);
    const json = JSON.parse(out());
    expect(json).toMatchObject({ path: 'lab.yaml', valid: true, tool: { name: 'vibgate' } });
    expect(json.rules.files).toEqual([
      { path: 'lab.yaml', sha256: sha(lab) },
      { path: 'base.yaml', sha256: sha(base) },
    ]);
    expect(Object.keys(json.rules.checks)).toEqual(['mean-offset', 'kurtosis', 'stationarity']);
    expect(json.rules.expect).toEqual({ sampleRate: [1024, 51200], minDurationS: 30, severity: 'error' });
  });

  it('lists every problem on stderr, each prefixed "vibgate: ", and exits 2', async () => {
    const { io, out, err } = capture();
    expect(await runRulesValidate('bad.yaml', io, { format: 'text' })).toBe(2);
    expect(out()).toBe('');
    expect(err()).toBe(
      `vibgate: bad.yaml:4:3 checks.kurtosiss: unknown check "kurtosiss"; did you mean "kurtosis"? (known: ${checks.map((c) => c.id).join(', ')})\n` +
        'vibgate: bad.yaml:5:22 checks.skewness.whole: limit range inverted: low 1 is above high -1\n',
    );
  });

  it('gives tools the problems as JSON too', async () => {
    const { io, out } = capture();
    expect(await runRulesValidate('bad.yaml', io, { format: 'json' })).toBe(2);
    const json = JSON.parse(out());
    expect(json.valid).toBe(false);
    expect(json.problems[1]).toEqual({
      file: 'bad.yaml',
      line: 5,
      column: 22,
      path: 'checks.skewness.whole',
      message: 'limit range inverted: low 1 is above high -1',
    });
  });

  it('reports a missing file with exit 2', async () => {
    const { io, err } = capture();
    expect(await runRulesValidate('nope.yaml', io, { format: 'text' })).toBe(2);
    expect(err()).toBe('vibgate: nope.yaml: file not found\n');
  });
});

describe('vibgate rules checks', () => {
  it('lists every check with its description, default severity and every option with its meaning and default', () => {
    const { io, out } = capture();
    expect(runRulesChecks(io)).toBe(0);
    const text = out();
    const sections = text.split('\n\n');
    for (const check of checks) {
      const section = sections.find((s) => s.startsWith(`${check.id}: `));
      expect(section, check.id).toBeDefined();
      expect(section).toContain(`${check.id}: ${check.description}\n  default severity: ${check.defaultSeverity}`);
      const defaults = check.defaults as Record<string, unknown>;
      for (const [option, schema] of Object.entries(check.options)) {
        const line = section!.split('\n').find((l) => l.startsWith(`  ${option} `));
        expect(line, `${check.id}.${option}`).toBeDefined();
        expect(line!.endsWith(String(schema.description)), line).toBe(true);
        const shown = defaults[option] === undefined ? 'not set' : Array.isArray(defaults[option]) ? `[${(defaults[option] as unknown[]).join(', ')}]` : String(defaults[option]);
        expect(line).toContain(`  ${shown}  `);
      }
    }
    expect(text).toMatch(/\n {2}whole +\[low, high\] /);
    expect(text).toMatch(/\n {2}max-count +integer ≥ 0 /);
  });
});
