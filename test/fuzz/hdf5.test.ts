/**
 * Fuzzing the HDF5 reader: files written by h5wasm (the HDF5 library itself) with random
 * shapes, number types, storage (contiguous, chunked, gzip), groups, file format versions
 * and attribute sets, each with a sidecar `hdf5:` mapping that is valid or carries one
 * fault (a wrong path, a group for a dataset, the other layout, a missing or wrong rate
 * attribute, names or units of the wrong length, an order naming what is not there, YAML
 * the sidecar loader refuses), then valid files with bytes flipped or cut off. Every case
 * must end in statistics or a RecordingError naming the file or its sidecar, within the
 * per-case timeout, with the read buffers inside the reader's bound (hdf5.ts: slices of at
 * most one block and at most 4 MiB, one at a time), and the HDF5 library must stay usable
 * after a corrupt file: a valid file still reads to its values.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { readFileSync, writeFileSync } from 'node:fs';
import { rm } from 'node:fs/promises';
import { join } from 'node:path';
import { stringify } from 'yaml';
import h5wasm from 'h5wasm/node';
import type { File as H5File, Group as H5Group } from 'h5wasm/node';
import { RecordingError, UsageError } from '../../src/errors.js';
import { openRecording } from '../../src/readers/index.js';
import { openHdf5 } from '../../src/readers/hdf5.js';
import { loadSidecar } from '../../src/readers/sidecar.js';
import { ReadMeter, type Recording } from '../../src/readers/types.js';
import { summariseBlocks } from '../../src/stats/summarise.js';
import { fixtureDir } from '../helpers/wav-writer.js';
import { uniformSource } from '../helpers/random.js';
import { CaseCounter, expectNamesFile, fuzzParameters } from '../helpers/fuzz-harness.js';

// HDF5 metadata read in this thread: hundreds of files, each a worker start saved (the harness's own worker stops hangs here)
process.env.VIBGATE_HDF5_IN_PROCESS = '1';

/** hdf5.ts SLICE_BYTES: the most sample data one slice read asks the library for. */
const SLICE_BYTES = 4 * 1024 * 1024;
/** A read that goes on this long is a hang (no case here holds more than a few thousand samples). */
const HANG_MS = 5000;

let dir = '';
const counter = new CaseCounter();
beforeAll(async () => {
  dir = await fixtureDir('vibgate-fuzz-hdf5-');
  await h5wasm.ready;
});
afterAll(async () => {
  counter.print();
  await rm(dir, { recursive: true, force: true });
});

// ---------------------------------------------------------------------------------------
// The files.

/** Number types h5wasm writes, with the sample format the reader gives them (or none: refused). */
const DTYPES = {
  '<d': { array: Float64Array, format: 'float64', bytes: 8 },
  '<f': { array: Float32Array, format: 'float32', bytes: 4 },
  '<i': { array: Int32Array, format: 'int32', bytes: 4 },
  '<h': { array: Int16Array, format: 'int16', bytes: 2 },
  '<B': { array: Uint8Array, format: 'uint8', bytes: 1 },
  '<b': { array: Int8Array, format: undefined, bytes: 1 },
  '<H': { array: Uint16Array, format: undefined, bytes: 2 },
  '<I': { array: Uint32Array, format: undefined, bytes: 4 },
} as const;
type Dtype = keyof typeof DTYPES;
const READ_DTYPES: Dtype[] = ['<d', '<f', '<i', '<h', '<B'];

/** Member names in natural order (numbers by value: acc-2 before acc-10), as the reader sorts them. */
const MEMBER_NAMES = ['acc-1', 'acc-2', 'acc-10', 'force', 'mic-03', 'z'];

type Fault =
  | 'none'
  | 'wrong-path'
  | 'wrong-kind'
  | 'other-layout'
  | 'rate-attribute-missing'
  | 'rate-attribute-bad'
  | 'rates-disagree'
  | 'no-rate'
  | 'rate-conflict'
  | 'names-wrong-length'
  | 'names-repeat'
  | 'names-not-text'
  | 'names-missing'
  | 'units-wrong-length'
  | 'units-missing'
  | 'order-unknown-member'
  | 'order-repeat'
  | 'order-not-dataset'
  | 'member-length'
  | 'member-type'
  | 'member-2d'
  | 'refused-type'
  | 'text-data'
  | 'matrix-rank'
  | 'broken-link'
  | 'sidecar-yaml'
  | 'no-hdf5-section'
  | 'too-many-entries';

const MATRIX_FAULTS: Fault[] = ['wrong-path', 'wrong-kind', 'other-layout', 'rate-attribute-missing', 'rate-attribute-bad', 'no-rate', 'rate-conflict', 'names-wrong-length', 'names-repeat', 'names-not-text', 'names-missing', 'units-wrong-length', 'units-missing', 'refused-type', 'text-data', 'matrix-rank', 'broken-link', 'sidecar-yaml', 'no-hdf5-section', 'too-many-entries'];
const GROUP_FAULTS: Fault[] = ['wrong-path', 'wrong-kind', 'rate-attribute-missing', 'rate-attribute-bad', 'rates-disagree', 'no-rate', 'rate-conflict', 'units-missing', 'order-unknown-member', 'order-repeat', 'order-not-dataset', 'member-length', 'member-type', 'member-2d', 'refused-type', 'text-data', 'sidecar-yaml', 'no-hdf5-section', 'too-many-entries'];

interface H5Case {
  kind: 'matrix' | 'group';
  /** Matrix: the axis order it is written in. */
  layout: 'samples-by-channels' | 'channels-by-samples';
  channels: number;
  samples: number;
  dtype: Dtype;
  storage: 'contiguous' | 'chunked' | 'gzip';
  chunkFrames: number;
  libver: 'earliest' | 'latest';
  /** The group holding the dataset or the members. */
  at: '/' | '/run-07' | '/campaign/day-2';
  rate: number;
  /** Where the rate is: an attribute of the holder, of a group above, of every member, or the sidecar's sample-rate. */
  rateOn: 'holder' | 'above' | 'members' | 'sidecar';
  /** Also write the rate as sidecar sample-rate (it must agree). */
  rateTwice: boolean;
  names: boolean;
  units: 'none' | 'one' | 'each';
  /** Group: list this many members in order: (0: no order), shuffled. */
  order: number;
  /** Group: a subgroup beside the members, which is not a channel. */
  subgroup: boolean;
  sidecarChannels: number;
  seed: number;
  blockFrames: number;
  fault: Fault;
}

const h5Case: fc.Arbitrary<H5Case> = fc
  .record({
    kind: fc.constantFrom<'matrix' | 'group'>('matrix', 'group'),
    layout: fc.constantFrom<'samples-by-channels' | 'channels-by-samples'>('samples-by-channels', 'channels-by-samples'),
    channels: fc.integer({ min: 1, max: 6 }),
    samples: fc.oneof({ weight: 4, arbitrary: fc.integer({ min: 1, max: 400 }) }, { weight: 1, arbitrary: fc.constantFrom(0, 1, 2, 4097) }),
    dtype: fc.constantFrom(...READ_DTYPES),
    storage: fc.constantFrom<'contiguous' | 'chunked' | 'gzip'>('contiguous', 'chunked', 'gzip'),
    chunkFrames: fc.integer({ min: 1, max: 64 }),
    libver: fc.constantFrom<'earliest' | 'latest'>('earliest', 'latest'),
    at: fc.constantFrom<'/' | '/run-07' | '/campaign/day-2'>('/', '/run-07', '/campaign/day-2'),
    rate: fc.oneof(fc.constantFrom(2048, 25_600, 51_200, 1000, 0.5), fc.double({ min: 1e-3, max: 1e6, noNaN: true })),
    rateOn: fc.constantFrom<'holder' | 'above' | 'members' | 'sidecar'>('holder', 'above', 'members', 'sidecar'),
    rateTwice: fc.boolean(),
    names: fc.boolean(),
    units: fc.constantFrom<'none' | 'one' | 'each'>('none', 'one', 'each'),
    order: fc.nat(6),
    subgroup: fc.boolean(),
    sidecarChannels: fc.nat(2),
    seed: fc.integer({ min: 0, max: 2 ** 31 - 1 }),
    blockFrames: fc.oneof(fc.integer({ min: 1, max: 500 }), fc.constant(65536)),
    faultIndex: fc.nat(),
    faulty: fc.boolean(),
  })
  .map(({ faultIndex, faulty, ...c }) => {
    const faults = c.kind === 'matrix' ? MATRIX_FAULTS : GROUP_FAULTS;
    const fault: Fault = faulty ? faults[faultIndex % faults.length] : 'none';
    // a group needs as many members as names to choose from; an order lists at most all of them
    let channels = c.kind === 'group' ? Math.min(c.channels, MEMBER_NAMES.length) : c.channels;
    let rateOn = c.kind === 'matrix' && c.rateOn === 'members' ? 'holder' : c.rateOn;
    let order = Math.min(c.order, channels);
    let samples = c.samples;
    // each fault where it shows: a rate attribute that is read, two members to disagree, every member read
    if (['rate-attribute-missing', 'rate-attribute-bad', 'rate-conflict'].includes(fault) && rateOn === 'sidecar') rateOn = 'holder';
    if (fault === 'rates-disagree') rateOn = 'members';
    if (fault === 'member-length' || fault === 'member-type' || fault === 'rates-disagree') channels = Math.max(2, channels);
    if (fault.startsWith('member-') || fault === 'text-data' || fault === 'rates-disagree') order = 0;
    if (fault === 'member-2d') samples = Math.max(1, samples);
    return { ...c, channels, samples, rateOn, order, fault };
  });

/** Seeded values in the range of the number type (simulated; only the round trip is checked). */
function channelValues(c: H5Case, channel: number): Float64Array {
  const random = uniformSource(c.seed + 7919 * channel);
  const span: Record<Dtype, [number, number]> = {
    '<d': [-1e6, 1e6], '<f': [-1e3, 1e3], '<i': [-(2 ** 31), 2 ** 31 - 1], '<h': [-32768, 32767], '<B': [0, 255], '<b': [-128, 127], '<H': [0, 65535], '<I': [0, 2 ** 32 - 1],
  };
  const [lo, hi] = span[c.dtype];
  const integer = c.dtype !== '<d' && c.dtype !== '<f';
  return Float64Array.from({ length: c.samples }, () => {
    const v = lo + random() * (hi - lo);
    return integer ? Math.round(v) + 0 : c.dtype === '<f' ? Math.fround(v) : v; // + 0: an integer has no −0
  });
}

/** The values as the dtype's array (BigInt-free types only). */
function typed(dtype: Dtype, values: ArrayLike<number>) {
  return DTYPES[dtype].array.from(values as ArrayLike<number>);
}

function ensureGroup(file: H5File, path: string): H5Group {
  let group: H5Group = file;
  for (const part of path.split('/').filter((p) => p !== '')) {
    const next = group.get(part);
    group = next instanceof h5wasm.Group ? next : group.create_group(part);
  }
  return group;
}

function storageOptions(c: H5Case, shape: number[]): { chunks?: number[]; compression?: 'gzip'; maxshape?: (number | null)[] } {
  if (c.storage === 'contiguous' || shape.some((n) => n === 0)) return {};
  const chunks = shape.map((n, axis) => Math.max(1, Math.min(n, axis === 0 ? c.chunkFrames : n)));
  return { chunks, ...(c.storage === 'gzip' ? { compression: 'gzip' as const } : {}) };
}

interface Written {
  path: string;
  sidecar: string;
  /** What the reader must deliver: channel values in order, names, units; undefined when the case must be refused. */
  expected?: { columns: Float64Array[]; names: string[]; units: Array<string | undefined>; rate: number };
  /** The other layout: how the transposed read must look. */
  transposed?: { samples: number; channels: number };
}

let fileNumber = 0;

/** Writes the HDF5 file and its sidecar for one case, with its fault, and says what must come of it. */
function writeCase(c: H5Case): Written {
  fileNumber += 1;
  // a new name each time: HDF5 keeps a file open after some failed reads (see the report), and
  // h5wasm cannot then create a file at that path
  const path = join(dir, `case-${fileNumber}.h5`);
  const sidecar = `${path}.channels.yaml`;
  const fault = c.fault;
  const columns = Array.from({ length: c.channels }, (_, k) => channelValues(c, k));
  const dtype: Dtype = fault === 'refused-type' ? (['<b', '<H', '<I'] as const)[c.seed % 3] : c.dtype;
  const rateName = 'fs';
  const rateValue: unknown =
    fault === 'rate-attribute-bad' ? (['fast', 0, -1, Number.NaN, [c.rate, c.rate]] as const)[c.seed % 5] : c.rate;
  const unitsOf = Array.from({ length: c.channels }, (_, k) => ['g', 'm/s^2', 'Pa', 'N', 'V', 'g'][k]);

  // the oldest file format HDF5 1.8 reads (version 0 superblock), or the newest
  const file = new h5wasm.File(path, 'w', { libver: c.libver === 'earliest' ? ['earliest', 'v108'] : 'latest' });
  let holderPath: string;
  let memberOrder: string[] = [];
  try {
    const group = ensureGroup(file, c.at);
    const child = (name: string) => (c.at === '/' ? `/${name}` : `${c.at}/${name}`);
    const setRate = (object: { create_attribute: H5Group['create_attribute'] }, value: unknown) =>
      object.create_attribute(rateName, value as never);
    if (c.kind === 'matrix') {
      holderPath = child('accel');
      const shape = c.layout === 'samples-by-channels' ? [c.samples, c.channels] : [c.channels, c.samples];
      const flat = new Float64Array(c.samples * c.channels);
      columns.forEach((x, k) => {
        for (let i = 0; i < c.samples; i++) flat[c.layout === 'samples-by-channels' ? i * c.channels + k : k * c.samples + i] = x[i];
      });
      let dataset;
      if (fault === 'text-data') {
        dataset = group.create_dataset({ name: 'accel', data: Array.from({ length: c.channels }, (_, k) => `ch${k}`) });
      } else if (fault === 'matrix-rank') {
        const rank3 = c.seed % 2 === 0;
        dataset = group.create_dataset({ name: 'accel', data: typed(dtype, flat), shape: rank3 ? [...shape, 1] : [flat.length], dtype });
      } else {
        dataset = group.create_dataset({ name: 'accel', data: typed(dtype, flat), shape, dtype, ...storageOptions(c, shape) });
      }
      if (fault === 'broken-link') group.create_soft_link(child('nowhere'), 'accel-link');
      if (c.rateOn === 'holder' && fault !== 'rate-attribute-missing') setRate(dataset, rateValue);
      if (c.names || fault.startsWith('names-')) {
        const names = Array.from({ length: c.channels }, (_, k) => `${['acc', 'mic', 'force'][k % 3]}-${k + 1}`);
        if (fault === 'names-wrong-length') names.push('extra');
        if (fault === 'names-repeat' && c.channels > 1) names[c.channels - 1] = names[0];
        if (fault === 'names-repeat' && c.channels === 1) names[0] = '';
        if (fault === 'names-not-text') dataset.create_attribute('names', Float64Array.from(names, (_, k) => k));
        else if (fault !== 'names-missing') dataset.create_attribute('names', names);
      }
      if (c.units !== 'none' || fault.startsWith('units-')) {
        if (fault === 'units-wrong-length') dataset.create_attribute('unit', [...unitsOf, 'g', 'g'].slice(0, c.channels === 1 ? 2 : c.channels + 1));
        else if (fault !== 'units-missing') dataset.create_attribute('unit', c.units === 'one' ? 'g' : unitsOf);
      }
    } else {
      holderPath = c.at;
      const names = MEMBER_NAMES.slice(0, c.channels);
      // created in a shuffled order: the reader sorts them by name
      const creation = [...names.keys()].sort((a, b) => ((a * 7 + c.seed) % 11) - ((b * 7 + c.seed) % 11));
      for (const k of creation) {
        const name = names[k];
        let data: Float64Array = columns[k];
        let memberType = dtype;
        if (fault === 'member-length' && k === c.channels - 1) data = Float64Array.from([...data, 1]);
        if (fault === 'member-type' && k === c.channels - 1) memberType = dtype === '<d' ? '<f' : '<d';
        if (fault === 'text-data' && k === 0) {
          group.create_dataset({ name, data: ['a', 'b'] });
          continue;
        }
        const shape = fault === 'member-2d' && k === 0 && data.length > 0 ? [1, data.length] : [data.length];
        const member = group.create_dataset({ name, data: typed(memberType, data), shape, dtype: memberType, ...storageOptions(c, shape) });
        if (c.rateOn === 'members' && fault !== 'rate-attribute-missing') setRate(member, fault === 'rates-disagree' && k === c.channels - 1 ? c.rate * 2 : rateValue);
        if (c.units !== 'none' && fault !== 'units-missing') member.create_attribute('unit', unitsOf[k]);
      }
      if (c.subgroup || fault === 'order-not-dataset') group.create_group('notes');
      if (c.rateOn === 'holder' && fault !== 'rate-attribute-missing') setRate(group, rateValue);
      memberOrder = names;
      if (c.order > 0) {
        memberOrder = [...names].sort((a, b) => ((a.length * 13 + a.charCodeAt(0) + c.seed) % 17) - ((b.length * 13 + b.charCodeAt(0) + c.seed) % 17)).slice(0, c.order);
      }
    }
    if (c.rateOn === 'above' && fault !== 'rate-attribute-missing') {
      const above = c.kind === 'matrix' ? c.at : c.at === '/' ? '/' : c.at.slice(0, c.at.lastIndexOf('/')) || '/';
      // a matrix's group is above it; a group's parent is above the group (the root has none but itself)
      setRate(above === '/' ? file : ensureGroup(file, above), rateValue);
    }
  } finally {
    file.close();
  }

  // the sidecar
  const mapping: Record<string, unknown> = {};
  const target = fault === 'wrong-path' ? `${holderPath!}-typo` : holderPath!;
  if (c.kind === 'matrix') {
    mapping[fault === 'wrong-kind' ? 'group' : 'dataset'] = fault === 'wrong-kind' ? target : fault === 'broken-link' ? `${c.at === '/' ? '' : c.at}/accel-link` : target;
    if (fault !== 'wrong-kind') mapping.layout = fault === 'other-layout' ? (c.layout === 'samples-by-channels' ? 'channels-by-samples' : 'samples-by-channels') : c.layout;
    if (c.names || fault.startsWith('names-')) mapping['channel-names-attribute'] = 'names';
    if (c.units !== 'none' || fault.startsWith('units-')) mapping['unit-attribute'] = 'unit';
  } else {
    if (fault === 'wrong-kind') {
      mapping.dataset = `${target === '/' ? '' : target}/${MEMBER_NAMES[0]}`;
      mapping.layout = 'samples-by-channels';
    } else {
      mapping.group = target;
    }
    let order = c.order > 0 ? [...memberOrder] : undefined;
    if (fault === 'order-unknown-member') order = [...(order ?? []), 'missing-member'];
    if (fault === 'order-repeat') order = [...(order ?? [MEMBER_NAMES[0]]), (order ?? [MEMBER_NAMES[0]])[0]];
    if (fault === 'order-not-dataset') order = [...(order ?? []), 'notes'];
    if (order !== undefined && fault !== 'wrong-kind') mapping.order = order;
    if (c.units !== 'none' || fault === 'units-missing') mapping['unit-attribute'] = 'unit';
  }
  const rateFromSidecar = c.rateOn === 'sidecar' || fault === 'no-rate';
  if (!rateFromSidecar) mapping['sample-rate-attribute'] = rateName;
  const data: Record<string, unknown> = {};
  if ((c.rateOn === 'sidecar' && fault !== 'no-rate') || (c.rateTwice && fault !== 'no-rate')) data['sample-rate'] = c.rate;
  if (fault === 'rate-conflict') data['sample-rate'] = c.rate * 3;
  if (fault !== 'no-hdf5-section') data.hdf5 = mapping;
  if (fault === 'sidecar-yaml') (data.hdf5 as Record<string, unknown>)[['group', 'dataset', 'rate', 'layout'][c.seed % 4]] = c.seed % 4 === 3 ? 'rows' : '/x';
  const readChannels = c.kind === 'group' && c.order > 0 ? c.order : c.channels;
  const entries = fault === 'too-many-entries' ? readChannels + 1 : Math.min(c.sidecarChannels, readChannels);
  if (entries > 0) data.channels = Array.from({ length: entries }, (_, k) => ({ name: `side-${k}` }));
  writeFileSync(sidecar, stringify(data));

  if (fault === 'other-layout' && c.kind === 'matrix') {
    // read the other way round, either shape is c.channels samples of c.samples channels;
    // only a channel axis of length 0, or names, units and sidecar entries that do not fit, are refused
    const channels = c.samples;
    const samples = c.channels;
    if (channels === 0 || (c.names && channels !== c.channels) || (c.units === 'each' && c.channels !== 1 && channels !== c.channels) || entries > channels) {
      return { path, sidecar };
    }
    return { path, sidecar, transposed: { samples, channels } };
  }
  if (fault !== 'none') return { path, sidecar };
  const order = c.kind === 'group' ? memberOrder : [];
  const picked = c.kind === 'group' ? order.map((name) => MEMBER_NAMES.indexOf(name)) : columns.map((_, k) => k);
  const fileNames = c.kind === 'group' ? order : Array.from({ length: c.channels }, (_, k) => (c.names ? `${['acc', 'mic', 'force'][k % 3]}-${k + 1}` : `ch${k + 1}`));
  return {
    path,
    sidecar,
    expected: {
      columns: picked.map((k) => columns[k]),
      names: fileNames.map((name, k) => (k < entries ? `side-${k}` : name)),
      units: picked.map((k) => (c.units === 'none' ? undefined : c.units === 'one' && c.kind === 'matrix' ? 'g' : unitsOf[k])),
      rate: c.rate,
    },
  };
}

// ---------------------------------------------------------------------------------------
// Reading.

type Outcome =
  | { kind: 'stats'; recording: Recording; columns: Float64Array[]; peakHeld: number }
  | { kind: 'error'; error: RecordingError | UsageError; peakHeld: number };

/**
 * Opens `path` as `vibgate screen` would (its sidecar found beside it), streams every block
 * into the statistics engine keeping a copy, and stops with a plain Error (which fails the
 * property) when the read outlasts HANG_MS. Throws whatever is not a vibgate error.
 */
async function readH5(path: string, blockFrames: number): Promise<Outcome> {
  const meter = new ReadMeter();
  const started = Date.now();
  try {
    const recording = await openRecording(path, { meter });
    const columns: number[][] = recording.channels.map(() => []);
    async function* watched() {
      for await (const block of recording.blocks({ blockFrames })) {
        if (Date.now() - started > HANG_MS) {
          throw new Error(`still reading "${path}" after ${HANG_MS} ms, at sample ${block.start} of ${recording.sampleCount} (${recording.channels.length} channels)`);
        }
        if (columns.length <= 16) block.channels.forEach((values, k) => { for (let i = 0; i < block.length; i++) columns[k].push(values[i]); });
        yield block;
      }
    }
    await summariseBlocks(watched(), recording, { frameSeconds: 1 });
    expect(meter.held, 'every slice is released at the end').toBe(0);
    return { kind: 'stats', recording, columns: columns.map((x) => Float64Array.from(x)), peakHeld: meter.peakHeld };
  } catch (error) {
    if (error instanceof RecordingError || error instanceof UsageError) {
      expect(meter.held, 'every slice is released after an error').toBe(0);
      return { kind: 'error', error, peakHeld: meter.peakHeld };
    }
    throw error;
  }
}

/** Statistics within the slice bound, or an error naming the file or its sidecar. */
function checkContract(outcome: Outcome, files: string[], blockFrames: number, suite: string): void {
  counter.add(`hdf5 ${suite}`, outcome.kind);
  if (outcome.kind === 'error') {
    expectNamesFile(outcome.error, files);
    expect(outcome.peakHeld).toBeLessThanOrEqual(SLICE_BYTES);
    return;
  }
  const { recording } = outcome;
  const bytes = { uint8: 1, int16: 2, int32: 4, float32: 4, float64: 8 }[recording.sampleFormat as string] ?? 8;
  // a slice is one block at most, and at most 4 MiB unless one sample frame (matrix) is larger
  const frameBytes = recording.channels.length * bytes;
  expect(outcome.peakHeld).toBeLessThanOrEqual(Math.min(blockFrames, recording.sampleCount ?? 0) * frameBytes);
  expect(outcome.peakHeld).toBeLessThanOrEqual(Math.max(SLICE_BYTES, frameBytes));
}

describe('fuzzing the HDF5 reader with files h5wasm writes', () => {
  it('reads every valid mapping to the values written, and refuses every faulty one naming the file or its sidecar', async () => {
    let read = 0;
    let refused = 0;
    await fc.assert(
      fc.asyncProperty(h5Case, async (c) => {
        const written = writeCase(c);
        const outcome = await readH5(written.path, c.blockFrames);
        checkContract(outcome, [written.path, written.sidecar], c.blockFrames, 'written');
        if (written.transposed !== undefined) {
          expect(outcome.kind, outcome.kind === 'error' ? outcome.error.message : '').toBe('stats');
          if (outcome.kind === 'stats') {
            expect(outcome.recording.sampleCount).toBe(written.transposed.samples);
            expect(outcome.recording.channels).toHaveLength(written.transposed.channels);
          }
          return;
        }
        if (written.expected === undefined) {
          expect(outcome.kind, `fault ${c.fault}`).toBe('error');
          refused += 1;
          return;
        }
        expect(outcome.kind, outcome.kind === 'error' ? outcome.error.message : '').toBe('stats');
        if (outcome.kind !== 'stats') return;
        read += 1;
        const { recording } = outcome;
        expect(recording.format).toBe('hdf5');
        expect(recording.sampleRate).toBe(written.expected.rate);
        expect(recording.sampleCount).toBe(c.samples);
        expect(recording.sampleFormat).toBe(DTYPES[c.dtype].format);
        expect(recording.channels.map((ch) => ch.name)).toEqual(written.expected.names);
        expect(recording.channels.map((ch) => ch.unit)).toEqual(written.expected.units);
        // values as stored, integers included (hdf5.ts: nothing is divided by 2^(bits−1))
        expect(outcome.columns).toEqual(written.expected.columns);
      }),
      fuzzParameters(300),
    );
    expect(read).toBeGreaterThan(50);
    expect(refused).toBeGreaterThan(50);
  });
});

/** A valid matrix case, the base of the corrupt files and of the files that broke the reader. */
const VALID: H5Case = {
  kind: 'matrix', layout: 'samples-by-channels', channels: 3, samples: 300, dtype: '<f', storage: 'contiguous', chunkFrames: 32, libver: 'earliest',
  at: '/run-07', rate: 2048, rateOn: 'holder', rateTwice: false, names: true, units: 'each', order: 0, subgroup: false, sidecarChannels: 0, seed: 1, blockFrames: 100, fault: 'none',
};

// ---------------------------------------------------------------------------------------
// Corrupt files, read by the built reader in a worker thread with a watchdog.
//
// A corrupt file can make the HDF5 library loop inside WebAssembly, where no timer of the
// same thread ever fires again (found here: a zeroed global heap behind a text attribute),
// or make the reader allocate without bound; the whole test process would hang or die. So
// corrupt files are read by dist/ (the build `npm test` makes first) in a worker thread
// that is ended when it outlasts the deadline or runs out of its own memory limit.

const DIST = new URL('../../dist/', import.meta.url);
/** A corrupt file of a few KB is read in milliseconds; one that takes this long is a hang. */
const WORKER_DEADLINE_MS = 3000;
/** The worker's own heap limit: a reader that tries to allocate more has no bound. */
const WORKER_HEAP_MB = 256;

type WorkerOutcome =
  | { kind: 'stats'; samples: number; sampleCount: number; channels: number; sampleFormat: string; peakHeld: number; held: number }
  | { kind: 'error'; typed: boolean; name: string; message: string; file: string | undefined; peakHeld: number; held: number; stack: string }
  | { kind: 'hang' }
  | { kind: 'crash'; message: string };

const WORKER_SOURCE = `
const { parentPort, workerData } = require('node:worker_threads');
const load = Promise.all(['readers/index.js', 'readers/types.js', 'stats/summarise.js', 'errors.js'].map((f) => import(new URL(f, workerData.dist).href)));
parentPort.on('message', async ({ path, blockFrames }) => {
  const [{ openRecording }, { ReadMeter }, { summariseBlocks }, { RecordingError, UsageError }] = await load;
  const meter = new ReadMeter();
  try {
    const recording = await openRecording(path, { meter });
    const summary = await summariseBlocks(recording.blocks({ blockFrames }), recording, { frameSeconds: 1 });
    parentPort.postMessage({ kind: 'stats', samples: summary.samples, sampleCount: recording.sampleCount, channels: recording.channels.length, sampleFormat: recording.sampleFormat, peakHeld: meter.peakHeld, held: meter.held });
  } catch (error) {
    const typed = error instanceof RecordingError || error instanceof UsageError;
    parentPort.postMessage({ kind: 'error', typed, name: error?.constructor?.name ?? typeof error, message: String(error?.message ?? error).slice(0, 2000), file: error?.file, peakHeld: meter.peakHeld, held: meter.held, stack: String(error?.stack ?? '').split('\\n').filter((l) => l.includes('/dist/') || l.includes('h5wasm')).slice(0, 8).join(' | ') });
  }
});
`;

/** One worker, reused from case to case (so a library left broken by one file shows in the next) until it must be ended. */
class ReaderWorker {
  private worker: import('node:worker_threads').Worker | undefined;

  async read(path: string, blockFrames: number): Promise<WorkerOutcome> {
    const { Worker } = await import('node:worker_threads');
    this.worker ??= new Worker(WORKER_SOURCE, { eval: true, workerData: { dist: DIST.href }, resourceLimits: { maxOldGenerationSizeMb: WORKER_HEAP_MB } });
    const worker = this.worker;
    return new Promise<WorkerOutcome>((resolve) => {
      let timer: NodeJS.Timeout | undefined;
      const done = (outcome: WorkerOutcome, end: boolean) => {
        clearTimeout(timer);
        worker.off('message', onMessage);
        worker.off('error', onError);
        if (end) {
          // a new worker, warmed, for the next case
          void this.end().then(() => this.warm()).then(() => resolve(outcome), () => resolve(outcome));
          return;
        }
        resolve(outcome);
      };
      const onMessage = (outcome: WorkerOutcome) => done(outcome, false);
      const onError = (error: Error) => done({ kind: 'crash', message: `${(error as NodeJS.ErrnoException).code ?? error.name}: ${error.message}` }, true);
      worker.on('message', onMessage);
      worker.on('error', onError);
      timer = setTimeout(() => done({ kind: 'hang' }, true), WORKER_DEADLINE_MS);
      worker.postMessage({ path, blockFrames });
    });
  }

  /** Starts the worker and loads dist/ and h5wasm in it, so that no case's deadline pays for that. */
  async warm(): Promise<void> {
    const written = writeCase({ ...VALID, at: '/', seed: 7 });
    const { Worker } = await import('node:worker_threads');
    this.worker ??= new Worker(WORKER_SOURCE, { eval: true, workerData: { dist: DIST.href }, resourceLimits: { maxOldGenerationSizeMb: WORKER_HEAP_MB } });
    const worker = this.worker;
    const outcome = await new Promise<WorkerOutcome>((resolve, reject) => {
      worker.once('message', resolve);
      worker.once('error', reject);
      worker.postMessage({ path: written.path, blockFrames: 100 });
    });
    expect(outcome.kind, JSON.stringify(outcome)).toBe('stats');
  }

  async end(): Promise<void> {
    const worker = this.worker;
    this.worker = undefined;
    await worker?.terminate();
  }
}

/** What is wrong with a worker outcome by the fuzz contract, or undefined when it keeps it. */
function violation(outcome: WorkerOutcome, files: string[], blockFrames: number): string | undefined {
  switch (outcome.kind) {
    case 'hang':
      return `no outcome within ${WORKER_DEADLINE_MS} ms (a hang; the worker was ended)`;
    case 'crash':
      return `the reader's worker died: ${outcome.message}`;
    case 'error':
      if (!outcome.typed) {
        const call = /#000: .* in (\w+\(\)): (.*)/.exec(outcome.message);
        const through = [...outcome.stack.matchAll(/at (\S+) \(file:[^)]*?(dist\/readers\/[\w.]+:\d+)/g)].map((m) => `${m[1]} ${m[2]}`);
        return `an untyped ${outcome.name} ${call ? `from ${call[1]} ("${call[2].trim()}")` : `"${outcome.message.slice(0, 160)}"`} through ${through.join(' < ') || outcome.stack}`;
      }
      if (outcome.held !== 0) return `${outcome.held} bytes of slices still held after the error`;
      if (outcome.file !== undefined && !files.includes(outcome.file)) return `a RecordingError naming "${outcome.file}"`;
      if (!outcome.message.startsWith('Cannot read "') && outcome.name !== 'UsageError') return `a message not naming the file: ${outcome.message.slice(0, 200)}`;
      if (outcome.peakHeld > SLICE_BYTES) return `${outcome.peakHeld} bytes of slices held at once`;
      return undefined;
    case 'stats': {
      if (outcome.held !== 0) return `${outcome.held} bytes of slices still held at the end`;
      const bytes = { uint8: 1, int16: 2, int32: 4, float32: 4, float64: 8 }[outcome.sampleFormat] ?? 8;
      const frameBytes = outcome.channels * bytes;
      if (outcome.samples !== outcome.sampleCount) return `${outcome.samples} samples streamed of the ${outcome.sampleCount} declared`;
      if (outcome.peakHeld > Math.min(blockFrames, outcome.sampleCount) * frameBytes || outcome.peakHeld > Math.max(SLICE_BYTES, frameBytes)) {
        return `${outcome.peakHeld} bytes of slices held at once, beyond one block and 4 MiB`;
      }
      return undefined;
    }
  }
}

describe('fuzzing the HDF5 reader with corrupt files', () => {
  const reader = new ReaderWorker();
  beforeAll(() => reader.warm());
  afterAll(() => reader.end());

  const valid = fc.record({
    kind: fc.constantFrom<'matrix' | 'group'>('matrix', 'group'),
    layout: fc.constantFrom<'samples-by-channels' | 'channels-by-samples'>('samples-by-channels', 'channels-by-samples'),
    channels: fc.integer({ min: 1, max: 4 }),
    samples: fc.integer({ min: 1, max: 200 }),
    dtype: fc.constantFrom(...READ_DTYPES),
    storage: fc.constantFrom<'contiguous' | 'chunked' | 'gzip'>('contiguous', 'chunked', 'gzip'),
    libver: fc.constantFrom<'earliest' | 'latest'>('earliest', 'latest'),
    seed: fc.integer({ min: 0, max: 2 ** 31 - 1 }),
  }).map((v): H5Case => ({ ...VALID, ...v, rateOn: v.kind === 'group' ? 'members' : 'holder', names: v.kind === 'matrix' }));

  type Corruption = { kind: 'flips'; flips: Array<{ at: number; byte: number; metadata: boolean }> } | { kind: 'cut'; at: number } | { kind: 'zeros'; at: number; length: number };
  const corruption: fc.Arbitrary<Corruption> = fc.oneof(
    // most flips land in the first 2 KiB, where the superblock and the root group's metadata are
    fc.record({ kind: fc.constant('flips' as const), flips: fc.array(fc.record({ at: fc.nat(), byte: fc.integer({ min: 0, max: 255 }), metadata: fc.boolean() }), { minLength: 1, maxLength: 8 }) }),
    fc.record({ kind: fc.constant('cut' as const), at: fc.nat() }),
    fc.record({ kind: fc.constant('zeros' as const), at: fc.nat(), length: fc.integer({ min: 1, max: 64 }) }),
  );

  function corrupt(bytes: Buffer, corruptions: Corruption[]): Buffer {
    let out = Buffer.from(bytes);
    for (const k of corruptions) {
      if (k.kind === 'cut') out = out.subarray(0, k.at % (out.length + 1));
      else if (k.kind === 'zeros') {
        const from = k.at % Math.max(1, out.length);
        out.fill(0, from, Math.min(out.length, from + k.length));
      }
      else for (const f of k.flips) if (out.length > 0) out[f.metadata ? f.at % Math.min(out.length, 2048) : f.at % out.length] = f.byte;
    }
    return out;
  }

  it('ends every file with flipped bytes, zeroed runs or a cut in statistics or a RecordingError naming it, and the library keeps working', async () => {
    const found = new Map<string, string>();
    let hangs = 0;
    await fc.assert(
      fc.asyncProperty(valid, fc.array(corruption, { minLength: 1, maxLength: 3 }), fc.integer({ min: 1, max: 500 }), async (c, corruptions, blockFrames) => {
        // after two hangs (3 s each) the rest of the cases would only add time
        if (hangs >= 2) return;
        const written = writeCase(c);
        writeFileSync(written.path, corrupt(readFileSync(written.path), corruptions));
        const outcome = await reader.read(written.path, blockFrames);
        counter.add('hdf5 corrupt', outcome.kind === 'stats' ? 'stats' : 'error');
        if (outcome.kind === 'hang') hangs += 1;
        // the harness's deadline (3 s) is shorter than the reader's own watchdog (30 s): a hang
        // inside the HDF5 library (a zeroed global heap, the case below) is counted here, and
        // the case below shows the watchdog refusing it; every other violation fails
        const wrong = outcome.kind === 'hang' ? undefined : violation(outcome, [written.path, written.sidecar], blockFrames);
        // one reproduction of each kind of violation: what went wrong and, for an untyped
        // exception, the HDF5 call that failed and the line of the reader it came through
        const kind =
          outcome.kind === 'error' && !outcome.typed
            ? `untyped ${/#000: .* in (\w+)\(\)/.exec(outcome.message)?.[1] ?? outcome.name} through ${/dist\/readers\/[\w.]+:\d+/.exec(outcome.stack)?.[0] ?? 'no reader line'}`
            : wrong?.slice(0, 40);
        if (wrong !== undefined && !found.has(kind!)) found.set(kind!, `${wrong}; case ${JSON.stringify(c)}, corruption ${JSON.stringify(corruptions)}, blockFrames ${blockFrames}`);
      }),
      fuzzParameters(200),
    );
    // the library, in the worker that read the corrupt files, still reads a valid file
    const check = writeCase({ ...VALID, at: '/', seed: 99 });
    const outcome = await reader.read(check.path, 128);
    expect(outcome.kind, JSON.stringify(outcome)).toBe('stats');
    expect([...found.values()]).toEqual([]);
    // 1 case of 200 at the default seed loops inside the library
    expect(hangs).toBeLessThanOrEqual(2);
  });
});

describe('HDF5 files that broke the reader in the fuzz cases above', () => {
  const reader = new ReaderWorker();
  beforeAll(() => reader.warm());
  afterAll(() => reader.end());

  it('refuses, with a RecordingError, a file whose group symbol table node is corrupt', async () => {
    // A flip in a version 0 group's symbol table node ("SNOD") makes HDF5's link iteration
    // fail; hdf5.ts lists the group's members (findObject, membersSource) without wording
    // that failure, so a plain Error with the library's error stack reached the user.
    const written = writeCase({ ...VALID, kind: 'group', rateOn: 'members', names: false, units: 'none', libver: 'earliest', samples: 3, channels: 1 });
    const bytes = readFileSync(written.path);
    const snod = bytes.indexOf('SNOD');
    expect(snod).toBeGreaterThan(0);
    bytes.write('XXXX', snod, 'latin1');
    writeFileSync(written.path, bytes);
    const outcome = await readH5(written.path, 100).catch((error: Error) => ({ kind: 'untyped', error }) as const);
    expect(outcome.kind === 'untyped' ? `untyped ${outcome.error.message.split('\n').slice(0, 2).join(' ')}` : outcome.kind).toBe('error');
    if (outcome.kind === 'error') expectNamesFile(outcome.error, [written.path, written.sidecar]);
  });

  it('ends, within the deadline, a file whose global heap (the text of a names attribute) is zeroed', async () => {
    // HDF5 keeps variable-length text in a global heap collection ("GCOL"); with its object
    // headers zeroed, reading the attribute loops inside the library (HDF5 2.0.0 in h5wasm
    // 0.10.3) and never returns. hdf5.ts reads the metadata in a worker thread with a
    // deadline (VIBGATE_HDF5_DEADLINE_MS, 30 s by default; 1.5 s here) and refuses the file.
    const written = writeCase({ ...VALID, names: true, units: 'each', samples: 20 });
    const bytes = readFileSync(written.path);
    const heap = bytes.indexOf('GCOL');
    expect(heap).toBeGreaterThan(0);
    bytes.fill(0, heap + 16, heap + 16 + 56);
    writeFileSync(written.path, bytes);
    const before = process.env.VIBGATE_HDF5_DEADLINE_MS;
    process.env.VIBGATE_HDF5_DEADLINE_MS = '1500';
    delete process.env.VIBGATE_HDF5_IN_PROCESS;
    try {
      const sidecar = await loadSidecar(written.sidecar);
      await expect(openHdf5(written.path, sidecar)).rejects.toThrow(
        `Cannot read "${written.path}": the HDF5 library did not finish reading its metadata within 1.5 s: the file is probably corrupt`,
      );
    } finally {
      if (before === undefined) delete process.env.VIBGATE_HDF5_DEADLINE_MS;
      else process.env.VIBGATE_HDF5_DEADLINE_MS = before;
      process.env.VIBGATE_HDF5_IN_PROCESS = '1';
    }
  });

  it('refuses a 2-D dataset that declares 2^31 channels (a 3 KB file of unwritten chunks) without running out of memory', async () => {
    // A chunked dataset resized to [2, 2^31] holds no data yet (every chunk unallocated,
    // read as the fill value), so the file stays small. hdf5.ts builds one ChannelInfo per
    // channel (Array.from over the channel axis) before a sample is read; at 2^31 the heap
    // is exhausted. WAV, CSV and raw files stop at 65535 channels.
    fileNumber += 1;
    const path = join(dir, `wide-${fileNumber}.h5`);
    const file = new h5wasm.File(path, 'w');
    try {
      file.create_dataset({ name: 'm', data: new Float32Array(6), shape: [2, 3], dtype: '<f', maxshape: [null, null], chunks: [2, 3] }).resize([2, 2 ** 31]);
    } finally {
      file.close();
    }
    writeFileSync(`${path}.channels.yaml`, 'sample-rate: 100\nhdf5:\n  dataset: /m\n  layout: samples-by-channels\n');
    const outcome = await reader.read(path, 65536);
    expect(outcome.kind, JSON.stringify(outcome)).toBe('error');
    expect(violation(outcome, [path, `${path}.channels.yaml`], 65536)).toBeUndefined();
  });
});
