import { readFileSync } from 'node:fs';
import { Ajv2020 } from 'ajv/dist/2020.js';
import { describe, expect, it } from 'vitest';
import { jsonRecord } from '../../src/report/json-record.js';
import type { GateResult } from '../../src/gate/types.js';
import { statsOf } from '../helpers/summarise.js';
import { gaussian } from '../helpers/random.js';
import { FS, channel, finding, gaussianStats, mixedResult, passingResult } from '../helpers/gate-fixtures.js';

const schema = JSON.parse(readFileSync(new URL('../../schemas/record.schema.json', import.meta.url), 'utf8')) as {
  $id: string;
  $defs: { stats: { properties: Record<string, unknown> } };
};
const validate = new Ajv2020({ strict: true, allErrors: true }).compile(schema);

type Json = any;
const parse = (result: GateResult): Json => JSON.parse(jsonRecord(result));

function expectValid(record: unknown): void {
  const ok = validate(record);
  expect(validate.errors ?? [], JSON.stringify(validate.errors, null, 2)).toEqual([]);
  expect(ok).toBe(true);
}

/** The same object with every key order reversed, at every depth. */
function reversedKeys<T>(value: T): T {
  if (Array.isArray(value)) return value.map(reversedKeys) as T;
  if (value === null || typeof value !== 'object') return value;
  return Object.fromEntries(Object.entries(value).reverse().map(([k, v]) => [k, reversedKeys(v)])) as T;
}

describe('JSON record against schemas/record.schema.json (ajv, draft 2020-12)', () => {
  it('has the versioned $id', () => {
    expect(schema.$id).toBe('https://vibgate.dev/schemas/record-1.json');
  });

  it('records of a mixed run and of a passing run are valid', () => {
    expectValid(parse(mixedResult()));
    expectValid(parse(passingResult()));
  });

  it('a channel with known clip levels and one without frames are valid', () => {
    const result = passingResult();
    const clipped = statsOf(gaussian(4 * FS, 11), { sampleRate: FS, frameSamples: FS, clipLow: -2, clipHigh: 2 });
    const tiny = statsOf([0.5, -0.25], { sampleRate: FS, frameSamples: FS });
    expect(clipped.fullScale).not.toBeNull();
    expect(tiny.frames).toBeNull();
    result.recordings[0].channels = [channel(0, 'a', 'pass', [], clipped), channel(1, 'b', 'pass', [], tiny)];
    expectValid(parse(result));
  });

  it.each<[string, (r: Json) => void]>([
    ['an unknown field on a finding', (r) => { r.recordings[0].channels[1].findings[0].extra = 1; }],
    ['an unknown field on a channel', (r) => { r.recordings[0].channels[0].colour = 'red'; }],
    ['an unknown field on a recording', (r) => { r.recordings[0].durationS = 30; }],
    ['an unknown field on the record', (r) => { r.generatedBy = 'x'; }],
    ['an unknown verdict word', (r) => { r.verdict = 'ok'; }],
    ['a missing duration', (r) => { delete r.recordings[0].duration; }],
    ['a hash that is not SHA-256 hex', (r) => { r.rules.sha256 = 'abc'; }],
    ['a statistic that is a string', (r) => { r.recordings[0].channels[0].stats.kurtosis = '3.1'; }],
    ['an unknown statistic', (r) => { r.recordings[0].channels[0].stats.kurtosisExcess = 0; }],
  ])('rejects %s', (_what, spoil) => {
    const record = parse(mixedResult());
    expectValid(record);
    spoil(record);
    expect(validate(record)).toBe(false);
  });

  it('describes every statistic the engine computes, and no other', () => {
    const real = gaussianStats(1);
    expect(Object.keys(schema.$defs.stats.properties).sort()).toEqual(Object.keys(real).sort());
  });
});

describe('JSON record content', () => {
  it('keeps the contract key order at every level', () => {
    const r = parse(mixedResult());
    expect(Object.keys(r)).toEqual(['tool', 'createdAt', 'rules', 'verdict', 'recordings']);
    expect(Object.keys(r.tool)).toEqual(['name', 'version']);
    expect(Object.keys(r.rules)).toEqual(['path', 'sha256', 'name', 'files']);
    expect(Object.keys(r.recordings[0])).toEqual([
      'path', 'sha256', 'verdict', 'error', 'format', 'sampleRate', 'duration', 'samples', 'notes', 'findings', 'channels',
    ]);
    expect(Object.keys(r.recordings[0].channels[0])).toEqual(['index', 'name', 'unit', 'sensor', 'group', 'verdict', 'stats', 'findings']);
    expect(Object.keys(r.recordings[0].channels[1].findings[0])).toEqual(['check', 'status', 'severity', 'value', 'unit', 'limit', 'message', 'at']);
  });

  it('gives the same text for the same result, whatever order its objects were built in', () => {
    const text = jsonRecord(mixedResult());
    expect(jsonRecord(mixedResult())).toBe(text);
    expect(jsonRecord(reversedKeys(mixedResult()))).toBe(text);
  });

  it('is indented by two spaces and ends with a newline', () => {
    const text = jsonRecord(mixedResult());
    expect(text.split('\n')[1]).toBe('  "tool": {');
    expect(text.endsWith('}\n')).toBe(true);
  });

  it('lists channels in file order', () => {
    const result = mixedResult();
    const inFileOrder = result.recordings[0].channels.map((c) => c.name);
    result.recordings[0].channels.reverse();
    const channels = parse(result).recordings[0].channels;
    expect(channels.map((c: Json) => c.index)).toEqual([0, 1, 2, 3]);
    expect(channels.map((c: Json) => c.name)).toEqual(inFileOrder);
  });

  it('writes NaN and ±Infinity as null', () => {
    const result = mixedResult();
    const constant = result.recordings[0].channels[3].stats; // a constant channel
    expect(constant.kurtosis).toBeNaN();
    expect(constant.symmetryRatio).toBe(Infinity);
    result.recordings[0].channels[0].findings[0] = finding('crest-factor', 'pass', { value: -Infinity });
    const text = jsonRecord(result);
    expect(text).not.toMatch(/NaN|Infinity/);
    const r = JSON.parse(text);
    expect(r.recordings[0].channels[3].stats.kurtosis).toBeNull();
    expect(r.recordings[0].channels[3].stats.symmetryRatio).toBeNull();
    expect(r.recordings[0].channels[0].findings[0].value).toBeNull();
    expectValid(r);
  });

  it('keeps finite statistics exactly', () => {
    const result = mixedResult();
    const stats = result.recordings[0].channels[0].stats;
    const r = parse(result);
    expect(r.recordings[0].channels[0].stats.kurtosis).toBe(stats.kurtosis);
    expect(r.recordings[0].channels[0].stats.frames.rms).toEqual(stats.frames!.rms);
  });

  it('names the duration in seconds `duration` and keeps the time span of a finding', () => {
    const r = parse(mixedResult());
    expect(r.recordings[1].duration).toBe(12.5);
    expect(r.recordings[0].channels[1].findings[0].at).toEqual({ startS: 12, endS: 13 });
  });

  it('records an unreadable recording with its error and nulls for what is not known', () => {
    const broken = parse(mixedResult()).recordings[2];
    expect(broken).toMatchObject({ verdict: 'error', format: null, sampleRate: null, duration: null, samples: null, channels: [] });
    expect(broken.error).toMatch(/^Cannot read "runs\/broken.wav"/);
  });
});
