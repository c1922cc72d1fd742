import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { XMLParser } from 'fast-xml-parser';
import { describe, expect, it } from 'vitest';
import { junitReport } from '../../src/report/junit.js';
import type { GateResult } from '../../src/gate/types.js';
import { skipWithout } from '../helpers/tools.js';
import {
  channel, durationFailure, finding, gaussianStats, kurtosisFailure, mixedResult, passingResult, readError,
  skewnessSkipped, symmetryWarning,
} from '../helpers/gate-fixtures.js';

const XSD = fileURLToPath(new URL('./junit.xsd', import.meta.url));

/** xmllint's verdict on a document against test/report/junit.xsd. */
function validate(xml: string): { ok: boolean; output: string } {
  const dir = mkdtempSync(join(tmpdir(), 'vibgate-junit-'));
  const file = join(dir, 'report.xml');
  writeFileSync(file, xml);
  try {
    const output = execFileSync('xmllint', ['--noout', '--schema', XSD, file], { stdio: 'pipe' }).toString();
    return { ok: true, output };
  } catch (err) {
    return { ok: false, output: String((err as { stderr?: Buffer }).stderr ?? err) };
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

interface Problem { '@_message'?: string; '@_type'?: string; '#text'?: string }
interface Case {
  '@_classname': string; '@_name': string; '@_time'?: string;
  failure?: Problem; error?: Problem; skipped?: unknown; 'system-out'?: string;
}
interface Suite {
  '@_name': string; '@_tests': string; '@_failures': string; '@_errors': string; '@_skipped': string; '@_timestamp'?: string;
  properties?: { property: Array<{ '@_name': string; '@_value': string }> };
  testcase?: Case[];
}

const parser = new XMLParser({
  ignoreAttributes: false,
  attributeNamePrefix: '@_',
  parseAttributeValue: false,
  parseTagValue: false,
  isArray: (name) => name === 'testsuite' || name === 'testcase' || name === 'property',
});

function suitesOf(xml: string): Suite[] {
  return (parser.parse(xml) as { testsuites: { testsuite?: Suite[] } }).testsuites.testsuite ?? [];
}
const cases = (s: Suite) => s.testcase ?? [];
const byName = (s: Suite, name: string) => {
  const found = cases(s).filter((c) => c['@_name'] === name);
  expect(found, `testcase "${name}"`).toHaveLength(1);
  return found[0];
};
const properties = (s: Suite) => Object.fromEntries((s.properties?.property ?? []).map((p) => [p['@_name'], p['@_value']]));

describe.skipIf(skipWithout('xmllint'))('JUnit XML against the common JUnit schema (xmllint)', () => {
  it('a run with failures, warnings, skips and an unreadable recording is valid', () => {
    const result = validate(junitReport(mixedResult()));
    expect(result.output).toBe('');
    expect(result.ok).toBe(true);
  });

  it('a run where everything passes is valid', () => {
    expect(validate(junitReport(passingResult())).ok).toBe(true);
  });

  it('a run of no recordings is valid', () => {
    expect(validate(junitReport({ ...passingResult(), verdict: 'skip', recordings: [] })).ok).toBe(true);
  });

  it('stays valid with markup characters and a CDATA terminator in names and texts', () => {
    const result = mixedResult();
    result.recordings[0].path = 'runs/a&b <1> "q".wav';
    result.recordings[2].error = 'Cannot read "x.wav": found "]]>" then "]]>" again where a header was expected';
    const xml = junitReport(result);
    expect(validate(xml).ok).toBe(true);
    const suites = suitesOf(xml);
    expect(suites[0]['@_name']).toBe('runs/a&b <1> "q".wav');
    expect(byName(suites[2], '(recording) / read').error!['@_message']).toBe(result.recordings[2].error);
  });

  // the XSD must be able to say no, or the tests above prove nothing
  it('the schema rejects a testcase without classname', () => {
    const broken = junitReport(mixedResult()).replace(/ classname="[^"]*"/, '');
    const result = validate(broken);
    expect(result.ok).toBe(false);
    expect(result.output).toMatch(/classname/);
  });

  it('the schema rejects a suite timestamp with a time zone', () => {
    const broken = junitReport(mixedResult()).replace(/timestamp="([^"]*)"/, 'timestamp="$1Z"');
    expect(validate(broken).ok).toBe(false);
  });

  it('the schema rejects a testcase with two outcomes', () => {
    const broken = junitReport(mixedResult()).replace('<skipped/>', '<skipped/><failure message="x"/>');
    expect(validate(broken).ok).toBe(false);
  });
});

describe('JUnit XML read back', () => {
  const result = mixedResult();
  const xml = junitReport(result);
  const suites = suitesOf(xml);

  it('has one testsuite per recording, named by the path as given, in order', () => {
    expect(suites.map((s) => s['@_name'])).toEqual(result.recordings.map((r) => r.path));
  });

  it('has one testcase per channel × check, recording findings first, classname = recording path', () => {
    result.recordings.forEach((r, i) => {
      const expected = [
        ...(r.verdict === 'error' ? ['(recording) / read'] : []),
        ...r.findings.map((f) => `(recording) / ${f.check}`),
        ...r.channels.flatMap((c) => c.findings.map((f) => `${c.name} / ${f.check}`)),
      ];
      expect(cases(suites[i]).map((c) => c['@_name'])).toEqual(expected);
      for (const c of cases(suites[i])) expect(c['@_classname']).toBe(r.path);
    });
    expect(byName(suites[0], 'acc-02 / kurtosis')).toBeDefined();
  });

  it('a failure carries the message as attribute and the message, value, limit, span and severity in its body', () => {
    const failure = byName(suites[0], 'acc-02 / kurtosis').failure!;
    expect(failure['@_message']).toBe(kurtosisFailure.message);
    const body = failure['#text']!;
    expect(body.startsWith(kurtosisFailure.message)).toBe(true);
    expect(body).toMatch(/^value: +9\.5$/m);
    expect(body).toMatch(/^limit: +whole record 2\.4 … 4, frames 1\.6 … 8$/m);
    expect(body).toMatch(/^at: +12–13 s$/m);
    expect(body).toMatch(/^severity: +error$/m);
  });

  it('a recording-level failure is a testcase "(recording) / <check>" with the value and its unit', () => {
    const failure = byName(suites[1], '(recording) / min-duration').failure!;
    expect(failure['@_message']).toBe(durationFailure.message);
    expect(failure['#text']).toMatch(/^value: +12\.5 s$/m);
    expect(failure['#text']).toMatch(/^limit: +≥ 30 s$/m);
  });

  it('a warning passes, with its text in system-out', () => {
    const warned = byName(suites[0], 'mic-01 / symmetry');
    expect(warned.failure).toBeUndefined();
    expect(warned.error).toBeUndefined();
    expect(warned.skipped).toBeUndefined();
    expect(warned['system-out']).toContain(symmetryWarning.message);
    expect(warned['system-out']).toMatch(/^value: +1\.75$/m);
    expect(warned['system-out']).toMatch(/^severity: +warning$/m);
  });

  it('a skipped check is <skipped/> with its reason in system-out', () => {
    const skipped = byName(suites[0], 'acc-04 / skewness');
    expect('skipped' in skipped).toBe(true);
    expect(skipped.failure).toBeUndefined();
    expect(skipped['system-out']).toContain(skewnessSkipped.message);
  });

  it('a passing check is a bare testcase', () => {
    const passed = byName(suites[0], 'acc-01 / kurtosis');
    expect(Object.keys(passed).sort()).toEqual(['@_classname', '@_name']);
  });

  it('an unreadable recording is one testcase "(recording) / read" with an error carrying the text in attribute and body', () => {
    const unreadable = suites[2];
    expect(cases(unreadable)).toHaveLength(1);
    const error = byName(unreadable, '(recording) / read').error!;
    expect(error['@_message']).toBe(readError);
    expect(error['#text']).toContain(readError);
    expect(unreadable['@_errors']).toBe('1');
  });

  it('counts on each suite match its testcases', () => {
    for (const s of suites) {
      expect(s['@_tests']).toBe(String(cases(s).length));
      expect(s['@_failures']).toBe(String(cases(s).filter((c) => c.failure !== undefined).length));
      expect(s['@_errors']).toBe(String(cases(s).filter((c) => c.error !== undefined).length));
      expect(s['@_skipped']).toBe(String(cases(s).filter((c) => 'skipped' in c).length));
    }
  });

  it('each suite carries rule file, recording hash, sample rate, duration and tool version as properties', () => {
    expect(properties(suites[0])).toEqual({
      'rules.path': result.rules.path,
      'rules.sha256': result.rules.sha256,
      'recording.sha256': result.recordings[0].sha256,
      'sample-rate': '1024',
      'duration-s': '30',
      'tool.version': result.tool.version,
    });
    expect(properties(suites[1])['duration-s']).toBe('12.5');
    expect(properties(suites[1])['recording.sha256']).toBe(result.recordings[1].sha256);
  });

  it('leaves out the properties of an unreadable recording that are not known', () => {
    const p = properties(suites[2]);
    expect(p['recording.sha256']).toBe(result.recordings[2].sha256);
    expect(p['sample-rate']).toBeUndefined();
    expect(p['duration-s']).toBeUndefined();
    const noHash = mixedResult();
    noHash.recordings[2].sha256 = null;
    expect(properties(suitesOf(junitReport(noHash))[2])['recording.sha256']).toBeUndefined();
  });
});

describe('JUnit XML is deterministic', () => {
  it('the same result gives the same XML, call after call', () => {
    const first = junitReport(mixedResult());
    expect(junitReport(mixedResult())).toBe(first);
    expect(suitesOf(junitReport(mixedResult()))).toHaveLength(3); // no suites left over in a shared builder
  });

  it('writes no testcase times, and the suite timestamp is createdAt in UTC without a zone', () => {
    const xml = junitReport(mixedResult()); // createdAt 2024-03-05T14:07:09.250Z
    expect(xml).not.toMatch(/ time="/);
    for (const s of suitesOf(xml)) expect(s['@_timestamp']).toBe('2024-03-05T14:07:09');
    const offset: GateResult = { ...mixedResult(), createdAt: '2024-03-05T16:07:09+02:00' };
    expect(suitesOf(junitReport(offset))[0]['@_timestamp']).toBe('2024-03-05T14:07:09');
  });

  it('a createdAt that is not a date leaves the timestamp out', () => {
    expect(suitesOf(junitReport({ ...mixedResult(), createdAt: 'yesterday' }))[0]['@_timestamp']).toBeUndefined();
  });
});

describe('JUnit testcase names stay unique', () => {
  it('two channels of one name are told apart by their index (GitLab keeps only the first of duplicates)', () => {
    const result = passingResult();
    const f = [finding('kurtosis', 'pass')];
    result.recordings[0].channels = [channel(0, 'acc', 'pass', f, gaussianStats(7)), channel(1, 'acc', 'pass', f, gaussianStats(8))];
    const names = cases(suitesOf(junitReport(result))[0]).map((c) => c['@_name']);
    expect(names).toEqual(['acc #0 / kurtosis', 'acc #1 / kurtosis']);
  });
});
