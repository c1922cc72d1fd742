/**
 * Fuzzing the WAV/RF64/BW64 reader: valid files built with the test writer, then cut at
 * every chunk boundary and at random points, given lying chunk sizes, impossible fmt
 * fields (0 or 65535 channels, a sample rate of 0, an inconsistent block align), ds64
 * sizes past the end of the file, and random bytes in the header. Every case must end in
 * statistics or a RecordingError naming the file, within the per-case timeout, with the
 * read buffers inside the reader's bound: two blocks of sample frames (double buffering).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { rm, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { buildWav, fixtureDir, type Encoding, type ChunkSpec, FORMAT_FLOAT, FORMAT_PCM } from '../helpers/wav-writer.js';
import { uniformSource } from '../helpers/random.js';
import { CaseCounter, expectNamesFile, fuzzParameters, readThrough, SAMPLE_BYTES, type ReadOutcome } from '../helpers/fuzz-harness.js';

let dir = '';
const counter = new CaseCounter();
beforeAll(async () => {
  dir = await fixtureDir('vibgate-fuzz-wav-');
});
afterAll(async () => {
  counter.print();
  await rm(dir, { recursive: true, force: true });
});

interface BaseSpec {
  container: 'RIFF' | 'RF64' | 'BW64';
  encoding: Encoding;
  extensible: boolean;
  channels: number;
  frames: number;
  sampleRate: number;
  extra: Array<{ id: string; length: number; after: boolean }>;
  seed: number;
}

const BITS: Record<Encoding, number> = { uint8: 8, int16: 16, int24: 24, int32: 32, float32: 32, float64: 64 };

const baseSpec: fc.Arbitrary<BaseSpec> = fc.record({
  container: fc.constantFrom('RIFF', 'RF64', 'BW64'),
  encoding: fc.constantFrom<Encoding>('uint8', 'int16', 'int24', 'int32', 'float32', 'float64'),
  extensible: fc.boolean(),
  channels: fc.integer({ min: 1, max: 4 }),
  frames: fc.integer({ min: 0, max: 40 }),
  sampleRate: fc.integer({ min: 1, max: 200_000 }),
  extra: fc.array(
    fc.record({ id: fc.constantFrom('LIST', 'fact', 'junk', 'bext', 'id3 '), length: fc.integer({ min: 0, max: 9 }), after: fc.boolean() }),
    { maxLength: 3 },
  ),
  seed: fc.integer({ min: 0, max: 2 ** 31 - 1 }),
});

/** A valid file (the writer's defaults are true sizes), and where its chunks are. */
function buildBase(spec: BaseSpec): { bytes: Uint8Array; chunks: Array<{ id: string; pos: number; size: number }>; dataEnd: number } {
  const width = SAMPLE_BYTES[spec.encoding];
  const random = uniformSource(spec.seed);
  const data = Uint8Array.from({ length: spec.frames * spec.channels * width }, () => Math.floor(random() * 256));
  const isFloat = spec.encoding === 'float32' || spec.encoding === 'float64';
  const extra = (after: boolean): ChunkSpec[] =>
    spec.extra.filter((e) => e.after === after).map((e) => ({ id: e.id, body: new Uint8Array(e.length).fill(0x41) }));
  const bytes = buildWav({
    container: spec.container,
    fmt: {
      channels: spec.channels,
      sampleRate: spec.sampleRate,
      bitsPerSample: BITS[spec.encoding],
      ...(spec.extensible
        ? { extensible: { subFormat: isFloat ? FORMAT_FLOAT : FORMAT_PCM } }
        : { formatTag: isFloat ? FORMAT_FLOAT : FORMAT_PCM }),
    },
    data,
    before: extra(false),
    after: extra(true),
  });
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const chunks: Array<{ id: string; pos: number; size: number }> = [];
  let dataEnd = 0;
  for (let pos = 12; pos + 8 <= bytes.length; ) {
    const id = String.fromCharCode(...bytes.subarray(pos, pos + 4));
    let size = view.getUint32(pos + 4, true);
    if (id === 'data' && size === 0xffffffff) size = data.length;
    chunks.push({ id, pos, size });
    if (id === 'data') dataEnd = pos + 8 + size;
    pos += 8 + size + (size % 2);
  }
  return { bytes, chunks, dataEnd };
}

/** Every byte offset where a part of the file starts or ends, and one byte either side. */
function boundaries(base: ReturnType<typeof buildBase>): number[] {
  const at = new Set<number>([0, 4, 8, 12, base.bytes.length]);
  for (const c of base.chunks) for (const b of [c.pos, c.pos + 4, c.pos + 8, c.pos + 8 + c.size]) at.add(b);
  const out = new Set<number>();
  for (const b of at) for (const d of [-1, 0, 1]) if (b + d >= 0 && b + d <= base.bytes.length) out.add(b + d);
  return [...out].sort((a, b) => a - b);
}

type Mutation =
  | { kind: 'truncate'; at: number }
  | { kind: 'size'; chunk: number; value: number }
  | { kind: 'fmt'; field: 'tag' | 'channels' | 'rate' | 'align' | 'bits' | 'valid'; value: number }
  | { kind: 'ds64'; field: 0 | 1 | 2; value: bigint }
  | { kind: 'ds64-table'; value: number }
  | { kind: 'flips'; flips: Array<{ at: number; byte: number }> };

const lyingSize = fc.oneof(
  fc.constantFrom(0, 1, 2, 7, 15, 16, 17, 39, 40, 0x7fffffff, 0x80000000, 0xfffffffe, 0xffffffff),
  fc.integer({ min: 0, max: 0xffffffff }),
  fc.integer({ min: 0, max: 512 }),
);
const mutation: fc.Arbitrary<Mutation> = fc.oneof(
  fc.record({ kind: fc.constant('truncate' as const), at: fc.nat() }),
  fc.record({ kind: fc.constant('size' as const), chunk: fc.nat(), value: lyingSize }),
  fc.record({
    kind: fc.constant('fmt' as const),
    field: fc.constantFrom('tag', 'channels', 'rate', 'align', 'bits', 'valid'),
    value: fc.oneof(fc.constantFrom(0, 1, 2, 3, 8, 16, 24, 32, 64, 0xfffe, 65535), fc.integer({ min: 0, max: 65535 })),
  }),
  fc.record({
    kind: fc.constant('ds64' as const),
    field: fc.constantFrom<0 | 1 | 2>(0, 1, 2),
    value: fc.oneof(
      fc.constantFrom(0n, 1n, 2n ** 32n, 2n ** 40n, 2n ** 53n - 1n, 2n ** 53n, 2n ** 64n - 1n),
      fc.bigInt({ min: 0n, max: 2n ** 64n - 1n }),
      fc.bigInt({ min: 0n, max: 4096n }),
    ),
  }),
  fc.record({ kind: fc.constant('ds64-table' as const), value: fc.oneof(fc.constantFrom(1, 2, 1000, 0xffffffff), fc.nat()) }),
  fc.record({
    kind: fc.constant('flips' as const),
    flips: fc.array(fc.record({ at: fc.integer({ min: 0, max: 119 }), byte: fc.integer({ min: 0, max: 255 }) }), { minLength: 1, maxLength: 8 }),
  }),
);

const FMT_FIELDS = { tag: 0, channels: 2, rate: 4, align: 12, bits: 14, valid: 18 } as const;

function mutate(base: ReturnType<typeof buildBase>, mutations: Mutation[]): { bytes: Uint8Array; truncatedBeforeDataEnd: boolean } {
  let bytes = Uint8Array.from(base.bytes);
  let cut = bytes.length;
  const fmt = base.chunks.find((c) => c.id === 'fmt ');
  for (const m of mutations) {
    const view = new DataView(bytes.buffer);
    switch (m.kind) {
      case 'truncate':
        cut = Math.min(cut, m.at % (bytes.length + 1));
        break;
      case 'size': {
        // chunk 0 is the RIFF size, then each chunk's size field
        const k = m.chunk % (base.chunks.length + 1);
        view.setUint32(k === 0 ? 4 : base.chunks[k - 1].pos + 4, m.value >>> 0, true);
        break;
      }
      case 'fmt': {
        if (!fmt) break;
        const at = fmt.pos + 8 + FMT_FIELDS[m.field];
        if (at + 4 > bytes.length) break;
        if (m.field === 'rate') view.setUint32(at, m.value, true);
        else view.setUint16(at, m.value & 0xffff, true);
        break;
      }
      case 'ds64':
        if (base.chunks[0]?.id === 'ds64') view.setBigUint64(20 + 8 * m.field, m.value, true);
        break;
      case 'ds64-table':
        if (base.chunks[0]?.id === 'ds64') view.setUint32(44, m.value >>> 0, true);
        break;
      case 'flips':
        for (const f of m.flips) if (f.at < bytes.length) bytes[f.at] = f.byte;
        break;
    }
  }
  bytes = bytes.subarray(0, cut);
  return { bytes, truncatedBeforeDataEnd: cut < base.dataEnd };
}

function checkOutcome(outcome: ReadOutcome, path: string, blockFrames: number): void {
  if (outcome.kind === 'error') {
    expectNamesFile(outcome.error, [path]);
    return;
  }
  const { recording } = outcome;
  expect(outcome.samples).toBe(recording.sampleCount);
  // the documented bound: two read buffers of one block of sample frames each, never
  // more than the data the file holds twice over
  const frameBytes = recording.channels.length * SAMPLE_BYTES[recording.sampleFormat];
  expect(outcome.peakHeld).toBeLessThanOrEqual(2 * Math.min(blockFrames, recording.sampleCount ?? 0) * frameBytes);
  expect(outcome.peakHeld).toBeLessThanOrEqual(2 * outcome.fileBytes);
}

describe('fuzzing the WAV reader', () => {
  it('reads every valid file the writer makes to statistics with the header\'s sample count', async () => {
    const path = join(dir, 'valid.wav');
    await fc.assert(
      fc.asyncProperty(baseSpec, fc.integer({ min: 1, max: 70_000 }), async (spec, blockFrames) => {
        const base = buildBase(spec);
        await writeFile(path, base.bytes);
        const outcome = await readThrough(path, {}, blockFrames);
        counter.add('wav', outcome.kind);
        expect(outcome.kind).toBe('stats');
        checkOutcome(outcome, path, blockFrames);
        if (outcome.kind === 'stats') expect(outcome.samples).toBe(spec.frames);
      }),
      fuzzParameters(300),
    );
  });

  it('refuses a file cut at any chunk boundary (or a byte either side) before the end of its data, and reads the rest', async () => {
    const path = join(dir, 'cut.wav');
    await fc.assert(
      fc.asyncProperty(baseSpec, async (spec) => {
        const base = buildBase(spec);
        for (const at of boundaries(base)) {
          await writeFile(path, base.bytes.subarray(0, at));
          const outcome = await readThrough(path, {}, 16);
          counter.add('wav', outcome.kind);
          checkOutcome(outcome, path, 16);
          // a file cut inside its header or its samples never passes as a shorter record
          if (at < base.dataEnd) expect(outcome.kind, `cut at byte ${at} of ${base.bytes.length}`).toBe('error');
        }
      }),
      fuzzParameters(25),
    );
  });

  it('ends every mutated file in statistics or a RecordingError naming it, within the read-buffer bound', async () => {
    const path = join(dir, 'mutated.wav');
    await fc.assert(
      fc.asyncProperty(
        baseSpec,
        fc.array(mutation, { minLength: 1, maxLength: 3 }),
        fc.integer({ min: 1, max: 70_000 }),
        async (spec, mutations, blockFrames) => {
          const base = buildBase(spec);
          const { bytes, truncatedBeforeDataEnd } = mutate(base, mutations);
          await writeFile(path, bytes);
          const outcome = await readThrough(path, {}, blockFrames);
          counter.add('wav', outcome.kind);
          checkOutcome(outcome, path, blockFrames);
          if (truncatedBeforeDataEnd && mutations.every((m) => m.kind === 'truncate')) expect(outcome.kind).toBe('error');
        },
      ),
      fuzzParameters(1200),
    );
  });

  it('refuses 0 and 65535 channels, a sample rate of 0 and a block align that does not fit, naming the file', async () => {
    const path = join(dir, 'fmt.wav');
    const cases: Array<[Mutation, RegExp]> = [
      [{ kind: 'fmt', field: 'channels', value: 0 }, /"fmt " chunk declares 0 channels/],
      [{ kind: 'fmt', field: 'channels', value: 65535 }, /block align \d+ does not match 65535 channels/],
      [{ kind: 'fmt', field: 'rate', value: 0 }, /"fmt " chunk declares a sample rate of 0/],
      [{ kind: 'fmt', field: 'align', value: 3 }, /block align 3 does not match 2 channels of 16 bits \(expected 4\)/],
    ];
    for (const [m, message] of cases) {
      const base = buildBase({ container: 'RIFF', encoding: 'int16', extensible: false, channels: 2, frames: 10, sampleRate: 8000, extra: [], seed: 1 });
      await writeFile(path, mutate(base, [m]).bytes);
      const outcome = await readThrough(path);
      counter.add('wav', outcome.kind);
      expect(outcome.kind).toBe('error');
      if (outcome.kind === 'error') {
        expectNamesFile(outcome.error, [path]);
        expect(outcome.error.message).toMatch(message);
      }
    }
  });

  it('reads a file of 65535 8-bit channels, the most a header can declare, to statistics', async () => {
    const path = join(dir, 'widest.wav');
    await writeFile(path, buildWav({ fmt: { channels: 65535, bitsPerSample: 8, sampleRate: 100 }, data: new Uint8Array(65535 * 3).fill(128) }));
    const outcome = await readThrough(path);
    counter.add('wav', outcome.kind);
    expect(outcome.kind).toBe('stats');
    checkOutcome(outcome, path, 65536);
    if (outcome.kind === 'stats') expect(outcome.recording.channels).toHaveLength(65535);
  });

  it('refuses ds64 sizes past the end of the file, naming the chunk and both ends', async () => {
    const path = join(dir, 'ds64.wav');
    const base = buildBase({ container: 'RF64', encoding: 'float32', extensible: false, channels: 1, frames: 8, sampleRate: 100, extra: [], seed: 2 });
    for (const size of [33n, 4096n, 2n ** 40n]) {
      await writeFile(path, mutate(base, [{ kind: 'ds64', field: 1, value: size }]).bytes);
      const outcome = await readThrough(path);
      counter.add('wav', outcome.kind);
      expect(outcome.kind).toBe('error');
      if (outcome.kind === 'error') {
        expect(outcome.error.message).toMatch(new RegExp(`^Cannot read "${path.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}": "data" chunk at byte \\d+ is cut short: the file ends at byte ${base.bytes.length} but the "ds64" chunk declares it ends at byte \\d+$`));
      }
    }
  });
});
