/**
 * Fuzzing raw binary files with their sidecar, and the sidecar loader on its own: sizes
 * that are not whole frames, header bytes beyond the end of the file, impossible channel
 * counts, and sidecar YAML of every kind (token soup, wrong values, `__proto__` keys,
 * alias bombs, deep nesting). Every case must end in statistics or a RecordingError
 * naming the recording or its sidecar, within the per-case timeout, with the read buffer
 * inside the raw reader's bound: 1 MiB, or one sample frame when a frame is larger.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { rm, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { stringify } from 'yaml';
import { fixtureDir } from '../helpers/wav-writer.js';
import { CaseCounter, expectNamesFile, expectPrototypeClean, fuzzParameters, readThrough, type ReadOutcome } from '../helpers/fuzz-harness.js';
import { aliasBomb, deepNesting, yamlOfMaps, yamlSoup } from '../helpers/fuzz-yaml.js';

const MiB = 1024 * 1024;
let dir = '';
const counter = new CaseCounter();
beforeAll(async () => {
  dir = await fixtureDir('vibgate-fuzz-raw-');
});
afterAll(async () => {
  counter.print();
  await rm(dir, { recursive: true, force: true });
});

const MAX_SIZE = 400;
const ENCODING_BYTES: Record<string, number> = { float32le: 4, float64le: 8, int16le: 2, int32le: 4 };

interface RawCase {
  encoding: string;
  channels: number;
  headerBytes: number | undefined;
  sampleRate: number | string | undefined;
  size: number;
  names: number;
}
const rawCase: fc.Arbitrary<RawCase> = fc.record({
  encoding: fc.oneof({ weight: 6, arbitrary: fc.constantFrom('float32le', 'float64le', 'int16le', 'int32le') }, { weight: 1, arbitrary: fc.constantFrom('int24le', 'float32be', '') }),
  channels: fc.oneof({ weight: 5, arbitrary: fc.integer({ min: 1, max: 6 }) }, { weight: 1, arbitrary: fc.constantFrom(0, -1, 65535, 65536, 70000, 2 ** 31, 1.5) }),
  headerBytes: fc.option(fc.oneof({ weight: 5, arbitrary: fc.integer({ min: 0, max: 64 }) }, { weight: 1, arbitrary: fc.constantFrom(-1, 1000, 2 ** 40, 0.5) }), { nil: undefined }),
  sampleRate: fc.option(fc.oneof({ weight: 5, arbitrary: fc.integer({ min: 1, max: 100_000 }) }, { weight: 1, arbitrary: fc.constantFrom(0, -5, '.inf', '.nan', 'fast') }), { nil: undefined, freq: 8 }),
  size: fc.integer({ min: 0, max: 300 }),
  names: fc.oneof({ weight: 4, arbitrary: fc.constant(0) }, { weight: 2, arbitrary: fc.integer({ min: 1, max: 7 }) }),
}).chain((c) =>
  // most sizes are whole frames after the header, so that many cases read through
  fc.oneof(
    { weight: 1, arbitrary: fc.constant(c) },
    {
      weight: 2,
      arbitrary: fc.integer({ min: 0, max: 40 }).map((frames) => {
        const header = typeof c.headerBytes === 'number' && Number.isInteger(c.headerBytes) && c.headerBytes >= 0 && c.headerBytes < 64 ? c.headerBytes : 0;
        const frameBytes = (ENCODING_BYTES[c.encoding] ?? 4) * (Number.isInteger(c.channels) && c.channels > 0 && c.channels <= 6 ? c.channels : 1);
        return { ...c, size: Math.min(MAX_SIZE, header + frames * frameBytes) };
      }),
    },
  ),
);

function sidecarText(c: RawCase): string {
  const lines: string[] = [];
  if (c.sampleRate !== undefined) lines.push(`sample-rate: ${c.sampleRate}`);
  lines.push('raw:', `  encoding: ${c.encoding === '' ? '""' : c.encoding}`, `  channels: ${c.channels}`);
  if (c.headerBytes !== undefined) lines.push(`  header-bytes: ${c.headerBytes}`);
  if (c.names > 0) {
    lines.push('channels:');
    for (let i = 0; i < c.names; i++) lines.push(`  - name: ch-${i}`, '    unit: g');
  }
  return lines.join('\n') + '\n';
}

function expectedFrames(c: RawCase): number | undefined {
  const bytes = ENCODING_BYTES[c.encoding];
  const header = c.headerBytes ?? 0;
  const rateOk = typeof c.sampleRate === 'number' && c.sampleRate > 0;
  if (bytes === undefined || !Number.isInteger(c.channels) || c.channels < 1 || c.channels > 65535) return undefined;
  if (!Number.isInteger(header) || header < 0 || !rateOk || c.names > c.channels) return undefined;
  const data = c.size - header;
  if (data <= 0 || data % (bytes * c.channels) !== 0) return undefined;
  return data / (bytes * c.channels);
}

function checkRaw(outcome: ReadOutcome, files: string[]): void {
  if (outcome.kind === 'error') {
    expectNamesFile(outcome.error, files);
    return;
  }
  const frameBytes = outcome.recording.channels.length * ({ float32: 4, float64: 8, int16: 2, int32: 4 } as Record<string, number>)[outcome.recording.sampleFormat];
  // the documented bound: one read buffer of 1 MiB, or of one frame when a frame is larger
  expect(outcome.peakHeld).toBeLessThanOrEqual(Math.max(MiB, frameBytes));
}

/** A small valid CSV recording, so that only its sidecar can be wrong. */
async function csvWithSidecar(yaml: string): Promise<{ recording: string; sidecar: string }> {
  const recording = join(dir, 'rec.csv');
  const sidecar = `${recording}.channels.yaml`;
  await writeFile(recording, 't,x,y\n0,1,2\n0.01,2,3\n0.02,3,4\n');
  await writeFile(sidecar, yaml);
  return { recording, sidecar };
}

async function checkSidecar(yaml: string, what: string): Promise<ReadOutcome> {
  const { recording, sidecar } = await csvWithSidecar(yaml);
  const outcome = await readThrough(recording);
  counter.add(what, outcome.kind);
  if (outcome.kind === 'error') expectNamesFile(outcome.error, [recording, sidecar]);
  expectPrototypeClean();
  return outcome;
}

const SIDECAR_KEYS = ['sample-rate', 'raw', 'channels', 'encoding', 'header-bytes', 'index', 'name', 'unit', 'sensor', 'sensitivity', 'sensitivity-unit', 'full-scale', 'scale', 'group'] as const;

describe('fuzzing raw files and their sidecar', () => {
  it('reads a raw file to statistics exactly when its sidecar is valid and its size is whole frames, else names the file', async () => {
    const recording = join(dir, 'rec.bin');
    const sidecar = `${recording}.channels.yaml`;
    await fc.assert(
      fc.asyncProperty(rawCase, fc.uint8Array({ minLength: MAX_SIZE, maxLength: MAX_SIZE }), fc.integer({ min: 1, max: 70_000 }), async (c, noise, blockFrames) => {
        await writeFile(recording, noise.subarray(0, c.size));
        await writeFile(sidecar, sidecarText(c));
        const outcome = await readThrough(recording, {}, blockFrames);
        counter.add('raw', outcome.kind);
        checkRaw(outcome, [recording, sidecar]);
        const frames = expectedFrames(c);
        expect(outcome.kind).toBe(frames === undefined ? 'error' : 'stats');
        if (outcome.kind === 'stats') expect(outcome.samples).toBe(frames);
      }),
      fuzzParameters(700),
    );
  });

  it('refuses header bytes beyond the end of the file and sizes that are not whole frames, saying so', async () => {
    const recording = join(dir, 'exact.bin');
    const sidecar = `${recording}.channels.yaml`;
    await writeFile(recording, new Uint8Array(10));
    const cases: Array<[string, RegExp]> = [
      ['header-bytes: 16', /is 10 bytes long, which leaves no samples after the 16 header bytes the sidecar declares/],
      ['header-bytes: 0', /10 bytes after the 0-byte header are not a whole number of frames of 2 channels × 4 bytes \(8 bytes a frame\): 2 bytes are left over/],
    ];
    for (const [header, message] of cases) {
      await writeFile(sidecar, `sample-rate: 100\nraw:\n  encoding: float32le\n  channels: 2\n  ${header}\n`);
      const outcome = await readThrough(recording);
      counter.add('raw', outcome.kind);
      expect(outcome.kind).toBe('error');
      if (outcome.kind === 'error') {
        expectNamesFile(outcome.error, [recording]);
        expect(outcome.error.message).toMatch(message);
      }
    }
  });
});

describe('raw files the sidecar makes too wide', () => {
  it('refuses raw.channels above 65535, naming the sidecar, before any sample is read', async () => {
    const recording = join(dir, 'wide.bin');
    const sidecar = `${recording}.channels.yaml`;
    await writeFile(recording, new Uint8Array(70_000 * 2));
    await writeFile(sidecar, 'sample-rate: 100\nraw:\n  encoding: int16le\n  channels: 70000\n');
    const outcome = await readThrough(recording);
    counter.add('raw', outcome.kind);
    expect(outcome.kind).toBe('error');
    if (outcome.kind === 'error') {
      expect(outcome.error.message).toBe(`Cannot read "${recording}": its sidecar "${sidecar}" says raw.channels is 70000; at most 65535 channels are read`);
      expect(outcome.peakHeld).toBe(0);
    }
  });
});

describe('fuzzing the sidecar loader', () => {
  it('ends token soup in statistics or a RecordingError naming the sidecar, and never touches Object.prototype', async () => {
    await fc.assert(fc.asyncProperty(yamlSoup(SIDECAR_KEYS), async (yaml) => { await checkSidecar(yaml, 'sidecar'); }), fuzzParameters(400));
  });

  it('ends well-formed YAML with wrong values and __proto__ keys the same way', async () => {
    const channelKeys = ['index', 'name', 'unit', 'sensor', 'sensitivity', 'sensitivity-unit', 'full-scale', 'scale', 'group'];
    await fc.assert(
      fc.asyncProperty(yamlOfMaps(['sample-rate'], { raw: ['encoding', 'channels', 'header-bytes'], channels: channelKeys }), async (yaml) => {
        await checkSidecar(yaml, 'sidecar');
      }),
      fuzzParameters(400),
    );
  });

  it('applies nearly valid sidecars (names, units, full scale, index, sample rate) or refuses them naming the sidecar', async () => {
    const sometimes = <T, U>(good: fc.Arbitrary<T>, bad: fc.Arbitrary<U>) => fc.oneof({ weight: 12, arbitrary: good }, { weight: 1, arbitrary: bad });
    const entry = fc.record({
      name: sometimes(fc.constantFrom('acc-01', 'acc-02', 'mic', 'force'), fc.constantFrom('', 7, null)),
      unit: sometimes(fc.constantFrom('g', 'Pa', 'N'), fc.constantFrom('', [])),
      sensor: sometimes(fc.constantFrom('accelerometer', 'microphone'), fc.constant({})),
      'full-scale': sometimes(fc.constantFrom(10, 50, 0.5), fc.constantFrom(0, -1, '.inf')),
      scale: sometimes(fc.constantFrom(1, 2, 9.81), fc.constantFrom('x', '.nan')),
      index: sometimes(fc.constantFrom(0, 1), fc.constantFrom(2, -1, 1.5)),
      group: fc.constantFrom('deck', 'pier'),
    }, { requiredKeys: [] });
    const sidecar = fc.record({
      'sample-rate': sometimes(fc.constantFrom(100), fc.constantFrom(99, 0, 'fast')),
      channels: fc.array(entry, { maxLength: 3 }),
    }, { requiredKeys: [] });
    let applied = 0;
    await fc.assert(
      fc.asyncProperty(sidecar, async (data) => {
        const outcome = await checkSidecar(stringify(data), 'sidecar');
        if (outcome.kind === 'stats') {
          applied += 1;
          expect(outcome.samples).toBe(3);
        }
      }),
      fuzzParameters(300),
    );
    expect(applied).toBeGreaterThan(0);
  });

  it('refuses alias bombs and deep nesting with a positioned message, never a crash or a stack overflow', async () => {
    await fc.assert(
      fc.asyncProperty(fc.oneof(aliasBomb, deepNesting), async (yaml) => {
        const outcome = await checkSidecar(yaml, 'sidecar');
        expect(outcome.kind).toBe('error');
        if (outcome.kind === 'error') expect(outcome.error.message).toMatch(/\.channels\.yaml": (\d+ problems:\n {2})?\d+:\d+ /);
      }),
      fuzzParameters(150),
    );
  });

  it('refuses collections nested more than 64 deep before composing them, at their line and column', async () => {
    for (const depth of [65, 100_000]) {
      const outcome = await checkSidecar('channels:\n  - name: a\n    unit: ' + '['.repeat(depth) + ']'.repeat(depth) + '\n', 'sidecar');
      expect(outcome.kind).toBe('error');
      if (outcome.kind === 'error') {
        expect(outcome.error.message).toMatch(/\.channels\.yaml": 3:\d+ YAML: collections nested more than 64 levels deep; a sidecar needs three$/);
      }
    }
  });
});
