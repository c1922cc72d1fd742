/**
 * HDF5 recordings, read with h5wasm (the HDF5 C library compiled to WebAssembly). In Node,
 * h5wasm reads the file from disk itself through the HDF5 library's own I/O, piece by
 * piece: a 210 MB dataset read in blocks grew the process by about 55 MB, as much as a
 * 52 MB one did (most of it the WebAssembly heap), so the file is never loaded whole.
 *
 * HDF5 says where its data are but not which dataset is a recording, so the sidecar's
 * `hdf5:` section names it: one 2-D dataset holding every channel (`dataset:` with a
 * `layout:` telling which axis is time), or a group of 1-D datasets of one length, one per
 * channel (`group:`, members sorted by name unless `order:` lists them). The sample rate
 * comes from a numeric attribute (`sample-rate-attribute:`, looked up on the dataset or
 * group and then on each group above it), else from the sidecar's `sample-rate` or the
 * open options.
 *
 * Sample values are taken as they are stored, integers included: unlike a WAV file, an
 * HDF5 integer says nothing about a converter's full scale (it may hold raw 24-bit codes in
 * an int32, or values already in engineering units), so nothing is divided by 2^(bits−1)
 * and no clip levels or quantisation step are claimed. A sidecar `scale` turns counts into
 * units and `full-scale` gives the clip levels; without one the clipping check looks for
 * flat runs at each channel's own extremes, which a saturated integer also shows.
 *
 * Samples are read in slices of at most one block and at most `SLICE_BYTES`, never the
 * whole dataset; the file is opened read-only for each pass and closed when the pass ends,
 * however it ends. HDF5 stores byte order per dataset; h5wasm converts big-endian data to
 * little-endian as it reads.
 */
import { existsSync } from 'node:fs';
import { open, stat } from 'node:fs/promises';
import { fileURLToPath } from 'node:url';
import { errorOf, type WorkerFailure } from '../worker-errors.js';
import type { FileHandle } from 'node:fs/promises';
import type { Dataset, Group, File as H5File, OutputData } from 'h5wasm/node';
import { RecordingError, UsageError } from '../errors.js';
import { asFileError, formatHz, recordSampleRateOrigin, sidecarOrGivenRate, sidecarPathFor } from './sidecar.js';
import type { Hdf5Mapping, Sidecar } from './sidecar.js';
import type { BlockOptions, ChannelInfo, OpenOptions, ReadMeter, Recording, SampleBlock, SampleFormat } from './types.js';

/**
 * The format signature at the start of an HDF5 superblock (HDF5 File Format
 * Specification, "Format Signature"): \x89 H D F \r \n \x1a \n.
 */
const SIGNATURE = [0x89, 0x48, 0x44, 0x46, 0x0d, 0x0a, 0x1a, 0x0a] as const;
/** The superblock follows a user block of 512 bytes or a power of two beyond (the same section). */
const FIRST_USER_BLOCK_BYTES = 512;
const DEFAULT_BLOCK_FRAMES = 65536;
/**
 * Most sample data one slice read asks h5wasm for: the library copies it out of the
 * WebAssembly heap into a fresh array, so a slice costs twice its size while it lives.
 */
const SLICE_BYTES = 4 * 1024 * 1024;
/** As many channels as a WAV header can declare (and the CSV and raw readers accept). */
const MAX_HDF5_CHANNELS = 65535;
/** Names listed when a path is not found, before "and N more". */
const MAX_NAMES_SHOWN = 8;

/**
 * True when `head` (the first bytes of a file) holds the HDF5 signature at byte 0, or at
 * 512, 1024, 2048 … (after a user block), as far as `head` reaches: given the first 1024
 * bytes, offsets 0 and 512 are checked; a superblock behind a longer user block needs a
 * longer head (openHdf5 searches the whole file).
 */
export function looksLikeHdf5(head: Uint8Array): boolean {
  for (let offset = 0; offset + SIGNATURE.length <= head.length; offset = nextSignatureOffset(offset)) {
    if (SIGNATURE.every((byte, i) => head[offset + i] === byte)) return true;
  }
  return false;
}

function nextSignatureOffset(offset: number): number {
  return offset === 0 ? FIRST_USER_BLOCK_BYTES : offset * 2;
}

/** How one HDF5 number type is read. */
interface SampleType {
  sampleFormat: SampleFormat;
  bytes: number;
}

/**
 * The HDF5 number types with a vibgate sample format. Others that h5wasm can deliver
 * (8-bit signed, 16- and 32-bit unsigned, 64-bit integers) have no SampleFormat to report
 * them as, and 64-bit integers would not convert to float64 exactly; they are refused.
 */
const SAMPLE_TYPES: Record<string, SampleType> = {
  'integer:1:unsigned': { sampleFormat: 'uint8', bytes: 1 },
  'integer:2:signed': { sampleFormat: 'int16', bytes: 2 },
  'integer:4:signed': { sampleFormat: 'int32', bytes: 4 },
  'float:4': { sampleFormat: 'float32', bytes: 4 },
  'float:8': { sampleFormat: 'float64', bytes: 8 },
};

/** HDF5 type classes (H5T_class_t) in words, for messages. */
const TYPE_CLASS_WORDS: Record<number, string> = {
  2: 'time values',
  3: 'text',
  4: 'bit fields',
  5: 'opaque values',
  6: 'compound values (records of several fields)',
  7: 'references',
  8: 'enumerated values',
  9: 'variable-length sequences',
  10: 'fixed-size arrays per element',
};
const H5T_INTEGER = 0;
const H5T_FLOAT = 1;

type H5wasm = typeof import('h5wasm/node').default;

let h5wasmPromise: Promise<H5wasm> | undefined;

/**
 * h5wasm, loaded on first use (most runs read no HDF5, and every worker thread loads the
 * readers). HDF5's default error handler prints its error stack to stderr and lets the
 * call return as if it had worked (an unopenable file gives a File object; a failed read
 * gives the buffer unfilled); h5wasm's throwing handler turns every such failure into an
 * exception carrying that stack instead, which is worded below.
 */
function loadH5wasm(): Promise<H5wasm> {
  h5wasmPromise ??= (async () => {
    const { default: h5wasm } = await import('h5wasm/node');
    const module = (await h5wasm.ready) as unknown as { activate_throwing_error_handler?: () => number };
    if (module.activate_throwing_error_handler?.() !== 0) {
      throw new Error('h5wasm could not switch HDF5 errors to exceptions');
    }
    return h5wasm;
  })();
  return h5wasmPromise;
}

/** h5wasm, or an error naming the file that could not be read without it. */
async function loadLibrary(path: string): Promise<H5wasm> {
  try {
    return await loadH5wasm();
  } catch (err) {
    throw new RecordingError(path, `the HDF5 library (h5wasm) cannot be loaded: ${err instanceof Error ? err.message : String(err)}`);
  }
}

/** Where the samples are, resolved against the file when it was opened. */
interface Hdf5Source {
  path: string;
  /** One 2-D dataset, or one 1-D dataset per channel. */
  kind: 'matrix' | 'members';
  /** Dataset paths inside the file: one for a matrix, one per channel for members. */
  datasets: string[];
  /** For a matrix: is time axis 0 (samples-by-channels) or axis 1? */
  timeAxis: 0 | 1;
  /** Dataset shape when opened (to notice a file changed between passes). */
  shapes: number[][];
  channelCount: number;
  sampleCount: number;
  type: SampleType;
  meter: ReadMeter | undefined;
}

/**
 * Opens an HDF5 recording described by `sidecar.hdf5`. The sample rate is the attribute
 * named by `sample-rate-attribute`, else the sidecar's `sample-rate`, else
 * `options.sampleRate`; a rate given in the options must agree with either. (A sidecar
 * `sample-rate` next to a rate attribute is checked by `applySidecar`.)
 */
export async function openHdf5(
  path: string,
  sidecar: Sidecar | undefined,
  options: OpenOptions = {},
): Promise<Recording> {
  if (sidecar === undefined) {
    throw new RecordingError(
      path,
      `an HDF5 file needs a sidecar with an hdf5: section (dataset or group, layout, sample rate); none was given or found at "${sidecarPathFor(path)}"`,
    );
  }
  const mapping = sidecar.hdf5;
  if (mapping === undefined) {
    throw new RecordingError(
      path,
      `its sidecar "${sidecar.path}" has no hdf5: section (dataset or group, layout, sample rate), which an HDF5 file needs`,
    );
  }
  const givenRate = options.sampleRate;
  if (givenRate !== undefined && !(Number.isFinite(givenRate) && givenRate > 0)) {
    throw new UsageError(`The sample rate must be a positive number of hertz, not ${givenRate}`);
  }
  await checkSignature(path);
  const described = await describeWatched(path, sidecar, givenRate);
  const source: Hdf5Source = { ...described.source, meter: options.meter };
  const recording: Recording = {
    path,
    format: 'hdf5',
    sampleRate: described.sampleRate,
    sampleCount: source.sampleCount,
    sampleFormat: source.type.sampleFormat,
    channels: described.channels,
    notes: described.notes,
    blocks: (blockOptions?: BlockOptions) => hdf5Blocks(source, blockOptions),
  };
  recordSampleRateOrigin(recording, { says: described.says, toleranceHz: 0 });
  return recording;
}

/** What opening an HDF5 recording finds out, as plain data (it crosses a thread boundary). */
export interface Hdf5Description {
  sampleRate: number;
  /** Who says the sample rate, for a sidecar that contradicts it. */
  says: string;
  channels: ChannelInfo[];
  notes: string[];
  source: Omit<Hdf5Source, 'meter'>;
}

/** How long the HDF5 library may take to read a recording's metadata (VIBGATE_HDF5_DEADLINE_MS overrides it). */
const DESCRIBE_DEADLINE_MS = 30_000;
const deadlineMs = () => {
  const given = Number(process.env.VIBGATE_HDF5_DEADLINE_MS);
  return Number.isFinite(given) && given > 0 ? given : DESCRIBE_DEADLINE_MS;
};

/**
 * Reads the metadata in a worker thread with a deadline: a corrupt file can make the HDF5
 * library itself loop forever (a zeroed global heap under a string attribute, found by the
 * fuzz tests), and only a thread of its own can be stopped. VIBGATE_HDF5_IN_PROCESS=1 reads
 * in this thread instead (no deadline), as does a build without the worker file.
 */
async function describeWatched(path: string, sidecar: Sidecar, givenRate: number | undefined): Promise<Hdf5Description> {
  const url = workerUrl();
  if (url === null || process.env.VIBGATE_HDF5_IN_PROCESS === '1') return describeHdf5(path, sidecar, givenRate);
  const { Worker } = await import('node:worker_threads');
  const deadline = deadlineMs();
  return new Promise((resolve, reject) => {
    const worker = new Worker(url, { workerData: { path, sidecar, givenRate } });
    let settled = false;
    const timer = setTimeout(() => {
      if (settled) return;
      settled = true;
      void worker.terminate();
      reject(new RecordingError(path, `the HDF5 library did not finish reading its metadata within ${deadline / 1000} s: the file is probably corrupt`));
    }, deadline);
    worker.once('message', (m: { ok: true; described: Hdf5Description } | WorkerFailure) => {
      if (settled) return;
      settled = true;
      clearTimeout(timer);
      void worker.terminate();
      if (m.ok) return resolve(m.described);
      reject(errorOf(m, path, (message) => new RecordingError(path, `the HDF5 library cannot read it: ${message}`)));
    });
    worker.once('error', (err) => {
      if (settled) return;
      settled = true;
      clearTimeout(timer);
      reject(new RecordingError(path, `the HDF5 library stopped while reading it: ${err.message}`));
    });
  });
}

function workerUrl(): URL | null {
  // from dist/ the worker sits beside this file; from the TypeScript sources (tests) use the build
  const local = new URL('./hdf5-worker.js', import.meta.url);
  if (existsSync(fileURLToPath(local))) return local;
  const built = new URL('../../dist/readers/hdf5-worker.js', import.meta.url);
  return existsSync(fileURLToPath(built)) ? built : null;
}

/** Opens the file and reads what `Hdf5Description` holds (in this thread). */
export async function describeHdf5(path: string, sidecar: Sidecar, givenRate: number | undefined): Promise<Hdf5Description> {
  const mapping = sidecar.hdf5!;
  const h5wasm = await loadLibrary(path);
  const file = openFile(h5wasm, path);
  try {
    return await describeRecording(h5wasm, file, path, sidecar, mapping, givenRate);
  } catch (err) {
    throw asRecordingError(path, err);
  } finally {
    file.close();
  }
}

/**
 * Everything h5wasm throws that is not already one of our errors (a corrupt B-tree or
 * symbol table node surfaces as a plain Error from deep in the library) becomes a
 * RecordingError naming the file.
 */
function asRecordingError(path: string, err: unknown): Error {
  if (err instanceof RecordingError || err instanceof UsageError) return err;
  return new RecordingError(path, `the HDF5 library cannot read it: ${hdf5Detail(err)}`);
}

async function describeRecording(
  h5wasm: H5wasm,
  file: H5File,
  path: string,
  sidecar: Sidecar,
  mapping: Hdf5Mapping,
  givenRate: number | undefined,
): Promise<Hdf5Description> {
  {
    const notes: string[] = [];
    const where = `hdf5.${'dataset' in mapping ? 'dataset' : 'group'} in the sidecar "${sidecar.path}"`;
    const { source, channels } =
      'dataset' in mapping
        ? matrixSource(h5wasm, file, path, mapping, where)
        : membersSource(h5wasm, file, path, mapping, where, notes);
    const holder = 'dataset' in mapping ? mapping.dataset : mapping.group;
    let sampleRate: number;
    let says: string;
    if (mapping.sampleRateAttribute !== undefined) {
      const found = sampleRateAttribute(h5wasm, file, path, absolute(holder), mapping.sampleRateAttribute, source);
      sampleRate = found.rate;
      says = `the attribute "${mapping.sampleRateAttribute}" of "${found.on}" in "${path}" says`;
      if (givenRate !== undefined && givenRate !== sampleRate) {
        throw new RecordingError(
          path,
          `the attribute "${mapping.sampleRateAttribute}" of "${found.on}" says ${formatHz(sampleRate)} Hz but the sample rate given is ${formatHz(givenRate)} Hz`,
        );
      }
    } else {
      ({ rate: sampleRate, says } = sidecarOrGivenRate(
        path,
        sidecar,
        givenRate,
        `give hdf5.sample-rate-attribute or sample-rate in the sidecar "${sidecar.path}", or --sample-rate`,
      ));
    }

    const { meter: _meter, ...plain } = source;
    return { sampleRate, says, channels, notes, source: plain };
  }
}

/** Refuses, in plain words, a file that is empty or has no HDF5 signature where one may be. */
async function checkSignature(path: string): Promise<void> {
  let size: number;
  try {
    const info = await stat(path);
    if (info.isDirectory()) throw new RecordingError(path, 'is a directory');
    size = info.size;
  } catch (err) {
    throw asFileError(path, err);
  }
  if (size === 0) throw new RecordingError(path, 'the file is empty');
  let handle: FileHandle;
  try {
    handle = await open(path, 'r');
  } catch (err) {
    throw asFileError(path, err);
  }
  try {
    const bytes = new Uint8Array(SIGNATURE.length);
    for (let offset = 0; offset + SIGNATURE.length <= size; offset = nextSignatureOffset(offset)) {
      const { bytesRead } = await handle.read(bytes, 0, bytes.length, offset);
      if (bytesRead === bytes.length && looksLikeHdf5(bytes)) return;
    }
  } finally {
    await handle.close();
  }
  throw new RecordingError(
    path,
    'is not an HDF5 file: the HDF5 signature (\\x89HDF\\r\\n\\x1a\\n) is neither at byte 0 nor at 512, 1024, 2048 … (after a user block)',
    0,
  );
}

function openFile(h5wasm: H5wasm, path: string): H5File {
  try {
    return new h5wasm.File(path, 'r');
  } catch (err) {
    const detail = hdf5Detail(err);
    const truncated = /truncated file: eof = (\d+),.*stored_eof = (\d+)/.exec(detail);
    if (truncated !== null) {
      throw new RecordingError(
        path,
        `is truncated: it is ${truncated[1]} bytes long but its HDF5 superblock says ${truncated[2]}`,
        Number(truncated[1]),
      );
    }
    throw new RecordingError(path, `the HDF5 library cannot open it: ${detail}`);
  }
}

/**
 * The innermost message of an HDF5 error stack ("  #006: …/H5Fsuper.c line 388 in
 * H5F__super_read(): file signature not found"), which says what was wrong; the outer
 * frames only say which calls gave up.
 */
function hdf5Detail(err: unknown): string {
  const text = err instanceof Error ? err.message : String(err);
  let detail: string | undefined;
  for (const line of text.split('\n')) {
    const frame = /^\s*#\d+: .* in [\w.]+\(\): (.*)$/.exec(line);
    if (frame !== null) detail = frame[1].trim();
  }
  return detail ?? text.trim().split('\n')[0];
}

/** `run-07/accel` → `/run-07/accel`; HDF5 paths here are always taken from the root. */
function absolute(objectPath: string): string {
  const parts = objectPath.split('/').filter((p) => p !== '' && p !== '.');
  return `/${parts.join('/')}`;
}

function parentOf(objectPath: string): string | undefined {
  if (objectPath === '/') return undefined;
  const cut = objectPath.lastIndexOf('/');
  return cut <= 0 ? '/' : objectPath.slice(0, cut);
}

function nameOf(objectPath: string): string {
  return objectPath.slice(objectPath.lastIndexOf('/') + 1);
}

/** `"a", "b", "c" and 4 more`. */
function someNames(names: string[]): string {
  const shown = names.slice(0, MAX_NAMES_SHOWN).map((n) => `"${n}"`).join(', ');
  return names.length > MAX_NAMES_SHOWN ? `${shown} and ${names.length - MAX_NAMES_SHOWN} more` : shown;
}

type Found = { kind: 'dataset'; dataset: Dataset } | { kind: 'group'; group: Group };

/**
 * The dataset or group at `objectPath`, or an error naming what the nearest existing group
 * above it holds (the top level when the first name is already wrong).
 */
function findObject(h5wasm: H5wasm, file: H5File, path: string, objectPath: string, where: string): Found {
  const entity = getEntity(file, objectPath);
  if (entity instanceof h5wasm.Dataset) return { kind: 'dataset', dataset: entity };
  if (entity instanceof h5wasm.Group) return { kind: 'group', group: entity };
  if (entity !== null && entity !== undefined) {
    const what =
      'filename' in entity
        ? `a link to "${entity.obj_path}" in the file "${entity.filename}", which is not followed`
        : 'target' in entity
          ? `a link to "${entity.target}", which does not exist`
          : 'a named data type, not data';
    throw new RecordingError(path, `"${objectPath}" (${where}) is ${what}`);
  }
  let ancestor = parentOf(objectPath);
  while (ancestor !== undefined && !(getEntity(file, ancestor) instanceof h5wasm.Group)) ancestor = parentOf(ancestor);
  const group = (ancestor === undefined ? file : getEntity(file, ancestor)) as Group;
  const names = group.keys();
  const place = group.path === '/' ? 'the top level' : `"${group.path}"`;
  const holds = names.length === 0 ? `${place} is empty` : `${place} holds ${someNames(names)}`;
  throw new RecordingError(path, `has no "${objectPath}" (${where}); ${holds}`);
}

/** `file.get`, with "not there" for a path through a dataset (which HDF5 reports as an error). */
function getEntity(file: H5File, objectPath: string): ReturnType<H5File['get']> | undefined {
  try {
    return file.get(objectPath);
  } catch {
    return undefined;
  }
}

/** The sample type of a dataset, or an error saying what it holds instead of numbers. */
function sampleTypeOf(dataset: Dataset, path: string): SampleType {
  const { type, size, signed } = dataset.metadata;
  if (type === H5T_INTEGER || type === H5T_FLOAT) {
    const key = type === H5T_FLOAT ? `float:${size}` : `integer:${size}:${signed ? 'signed' : 'unsigned'}`;
    const known = SAMPLE_TYPES[key];
    if (known !== undefined) return known;
    const words =
      type === H5T_FLOAT ? `${size * 8}-bit floats` : `${size * 8}-bit ${signed ? 'signed' : 'unsigned'} integers`;
    throw new RecordingError(
      path,
      `"${dataset.path}" holds ${words}; HDF5 samples are read as unsigned 8-bit, signed 16- or 32-bit integers, or 32- or 64-bit floats`,
    );
  }
  throw new RecordingError(
    path,
    `"${dataset.path}" holds ${TYPE_CLASS_WORDS[type] ?? `values of HDF5 type class ${type}`}, not numbers; HDF5 samples must be integers or floats`,
  );
}

function shapeText(shape: number[]): string {
  return `[${shape.join(', ')}]`;
}

/** A 2-D dataset holding every channel. */
function matrixSource(
  h5wasm: H5wasm,
  file: H5File,
  path: string,
  mapping: Extract<Hdf5Mapping, { dataset: string }>,
  where: string,
): { source: Hdf5Source; channels: ChannelInfo[] } {
  const objectPath = absolute(mapping.dataset);
  const found = findObject(h5wasm, file, path, objectPath, where);
  if (found.kind === 'group') {
    throw new RecordingError(
      path,
      `"${objectPath}" (${where}) is a group, not a dataset; for a group of 1-D datasets, one per channel, give hdf5.group instead`,
    );
  }
  const dataset = found.dataset;
  const shape = dataset.shape;
  if (shape === null || shape.length !== 2) {
    const rank = shape === null ? 'has no data space' : shape.length === 0 ? 'is a single value' : `is ${shape.length}-D (shape ${shapeText(shape)})`;
    throw new RecordingError(
      path,
      `"${objectPath}" (${where}) ${rank}; hdf5.dataset must be a 2-D dataset (samples × channels); ` +
        'for one 1-D dataset per channel give hdf5.group (the group that holds them, with order: to pick some)',
    );
  }
  const type = sampleTypeOf(dataset, path);
  const timeAxis = mapping.layout === 'samples-by-channels' ? 0 : 1;
  const sampleCount = shape[timeAxis];
  const channelCount = shape[1 - timeAxis];
  if (channelCount === 0) {
    throw new RecordingError(
      path,
      `"${objectPath}" has shape ${shapeText(shape)}: with layout ${mapping.layout} its channel axis (axis ${1 - timeAxis}) is 0 long, so it holds no channels`,
    );
  }
  if (channelCount > MAX_HDF5_CHANNELS) {
    // as for WAV, CSV and raw: each channel costs its accumulators kilobytes, and a 3 KB file
    // of unwritten chunks can declare 2^31 of them
    throw new RecordingError(
      path,
      `"${objectPath}" has shape ${shapeText(shape)}: with layout ${mapping.layout} that is ${channelCount} channels; at most ${MAX_HDF5_CHANNELS} are read`,
    );
  }

  const names =
    mapping.channelNamesAttribute === undefined
      ? undefined
      : channelNames(dataset, path, mapping.channelNamesAttribute, channelCount);
  const units = mapping.unitAttribute === undefined ? undefined : matrixUnits(dataset, path, mapping.unitAttribute, channelCount);
  const channels = Array.from({ length: channelCount }, (_, index): ChannelInfo => {
    const channel: ChannelInfo = { index, name: names?.[index] ?? `ch${index + 1}` };
    const unit = units?.[index];
    if (unit !== undefined && unit !== '') channel.unit = unit;
    return channel;
  });
  return {
    source: {
      path,
      kind: 'matrix',
      datasets: [objectPath],
      timeAxis,
      shapes: [shape],
      channelCount,
      sampleCount,
      type,
      meter: undefined,
    },
    channels,
  };
}

/** A group of 1-D datasets of one length and sample type, one per channel. */
function membersSource(
  h5wasm: H5wasm,
  file: H5File,
  path: string,
  mapping: Extract<Hdf5Mapping, { group: string }>,
  where: string,
  notes: string[],
): { source: Hdf5Source; channels: ChannelInfo[] } {
  const objectPath = absolute(mapping.group);
  const found = findObject(h5wasm, file, path, objectPath, where);
  if (found.kind === 'dataset') {
    throw new RecordingError(
      path,
      `"${objectPath}" (${where}) is a dataset, not a group; for one 2-D dataset holding every channel give hdf5.dataset and hdf5.layout instead`,
    );
  }
  const group = found.group;
  const memberNames = group.keys();
  const child = (name: string): string => (objectPath === '/' ? `/${name}` : `${objectPath}/${name}`);

  let names: string[];
  if (mapping.order !== undefined) {
    const present = new Set(memberNames);
    for (const name of mapping.order) {
      if (!present.has(name)) {
        throw new RecordingError(
          path,
          `hdf5.order lists "${name}" but the group "${objectPath}" has no such member; it holds ${memberNames.length === 0 ? 'nothing' : someNames(memberNames)}`,
        );
      }
    }
    names = mapping.order;
    const left = memberNames.filter((n) => !mapping.order!.includes(n));
    if (left.length > 0) {
      notes.push(`the group "${objectPath}" also holds ${someNames(left)}, not listed in hdf5.order and not read`);
    }
  } else {
    names = [];
    const skipped: string[] = [];
    for (const name of memberNames) {
      if (getEntity(file, child(name)) instanceof h5wasm.Dataset) names.push(name);
      else skipped.push(name);
    }
    names.sort(compareNames);
    if (skipped.length > 0) {
      notes.push(`the group "${objectPath}" also holds ${someNames(skipped)}, which ${skipped.length === 1 ? 'is not a dataset' : 'are not datasets'} and ${skipped.length === 1 ? 'was' : 'were'} not read`);
    }
  }
  if (names.length === 0) throw new RecordingError(path, `the group "${objectPath}" (${where}) holds no datasets`);

  let first: { path: string; length: number; type: SampleType } | undefined;
  const shapes: number[][] = [];
  const datasets: Dataset[] = [];
  for (const name of names) {
    const memberPath = child(name);
    const entity = getEntity(file, memberPath);
    if (!(entity instanceof h5wasm.Dataset)) {
      throw new RecordingError(path, `hdf5.order lists "${name}", but "${memberPath}" is not a dataset`);
    }
    const shape = entity.shape;
    if (shape === null || shape.length !== 1) {
      const rank = shape === null ? 'has no data space' : shape.length === 0 ? 'is a single value' : `is ${shape.length}-D (shape ${shapeText(shape)})`;
      throw new RecordingError(
        path,
        `group member "${memberPath}" ${rank}; every channel of hdf5.group must be a 1-D dataset`,
      );
    }
    const type = sampleTypeOf(entity, path);
    if (first === undefined) {
      first = { path: memberPath, length: shape[0], type };
    } else if (shape[0] !== first.length) {
      throw new RecordingError(
        path,
        `group member "${memberPath}" has ${shape[0]} samples but "${first.path}" has ${first.length}; every channel must have the same length`,
      );
    } else if (type.sampleFormat !== first.type.sampleFormat) {
      throw new RecordingError(
        path,
        `group member "${memberPath}" holds ${type.sampleFormat} but "${first.path}" holds ${first.type.sampleFormat}; every channel must have the same sample type`,
      );
    }
    shapes.push(shape);
    datasets.push(entity);
  }

  const units = mapping.unitAttribute === undefined ? undefined : memberUnits(datasets, objectPath, path, mapping.unitAttribute, notes);
  const channels = names.map((name, index): ChannelInfo => {
    const channel: ChannelInfo = { index, name };
    const unit = units?.[index];
    if (unit !== undefined && unit !== '') channel.unit = unit;
    return channel;
  });
  return {
    source: {
      path,
      kind: 'members',
      datasets: names.map(child),
      timeAxis: 0,
      shapes,
      channelCount: names.length,
      sampleCount: first!.length,
      type: first!.type,
      meter: undefined,
    },
    channels,
  };
}

/**
 * Name order with numbers compared by value, so that `acc-2` comes before `acc-10`
 * (plain code-unit order would put it after): runs of digits compare as numbers, the rest
 * by UTF-16 code units; equal numbers with different leading zeros fall back to plain order.
 */
function compareNames(a: string, b: string): number {
  const partsA = a.match(/\d+|\D+/g) ?? [];
  const partsB = b.match(/\d+|\D+/g) ?? [];
  for (let i = 0; i < Math.min(partsA.length, partsB.length); i++) {
    const x = partsA[i];
    const y = partsB[i];
    if (x === y) continue;
    const xDigits = /^\d/.test(x);
    const yDigits = /^\d/.test(y);
    if (xDigits && yDigits) {
      const xv = x.replace(/^0+(?=\d)/, '');
      const yv = y.replace(/^0+(?=\d)/, '');
      if (xv.length !== yv.length) return xv.length - yv.length;
      if (xv !== yv) return xv < yv ? -1 : 1;
      continue;
    }
    return x < y ? -1 : 1;
  }
  if (partsA.length !== partsB.length) return partsA.length - partsB.length;
  return a < b ? -1 : a > b ? 1 : 0;
}

/** An attribute's value, or undefined when the object has none of that name. */
function attributeOf(object: Dataset | Group, name: string, path: string): OutputData | undefined {
  if (!Object.keys(object.attrs).includes(name)) return undefined;
  try {
    return object.get_attribute(name, false);
  } catch (err) {
    throw new RecordingError(path, `the attribute "${name}" of "${object.path}" cannot be read: ${hdf5Detail(err)}`);
  }
}

/** The values of an attribute as a plain list (a scalar is a list of one). */
function attributeList(value: OutputData): unknown[] {
  if (typeof value === 'string' || typeof value === 'number' || typeof value === 'bigint' || typeof value === 'boolean') {
    return [value];
  }
  if (Array.isArray(value)) return value;
  if (ArrayBuffer.isView(value)) return Array.from(value as unknown as ArrayLike<unknown>);
  return [value];
}

/**
 * The sample rate from a numeric attribute: on the dataset or group itself; for a group,
 * else on its members when every one has it (all must agree); else on the nearest group
 * above that has one (a rate is often stored once for a whole run).
 */
function sampleRateAttribute(
  h5wasm: H5wasm,
  file: H5File,
  path: string,
  holderPath: string,
  name: string,
  source: Hdf5Source,
): { rate: number; on: string } {
  const on = (at: string): { rate: number; on: string } | undefined => {
    const object = at === '/' ? file : getEntity(file, at);
    if (!(object instanceof h5wasm.Dataset || object instanceof h5wasm.Group)) return undefined;
    const value = attributeOf(object, name, path);
    return value === undefined ? undefined : { rate: rateValue(value, name, at, path), on: at };
  };
  const own = on(holderPath);
  if (own !== undefined) return own;
  if (source.kind === 'members') {
    const rates = source.datasets.map(on);
    if (rates.every((r) => r !== undefined)) {
      const first = rates[0]!;
      const other = rates.find((r) => r!.rate !== first.rate);
      if (other !== undefined) {
        throw new RecordingError(
          path,
          `the attribute "${name}" of "${other.on}" is ${formatHz(other.rate)} Hz but that of "${first.on}" is ${formatHz(first.rate)} Hz; all channels must have one sample rate`,
        );
      }
      return first;
    }
  }
  for (let at = parentOf(holderPath); at !== undefined; at = parentOf(at)) {
    const found = on(at);
    if (found !== undefined) return found;
  }
  const holder = holderPath === '/' ? file : (getEntity(file, holderPath) as Dataset | Group);
  const present = Object.keys(holder.attrs);
  const places =
    source.kind === 'members'
      ? `on "${holderPath}", on every one of its members, or on a group above it`
      : `on "${holderPath}" or on a group above it`;
  throw new RecordingError(
    path,
    `has no attribute "${name}" (hdf5.sample-rate-attribute) ${places}; ` +
      (present.length === 0 ? `"${holderPath}" has no attributes` : `"${holderPath}" has ${someNames(present)}`),
  );
}

function rateValue(value: OutputData, name: string, on: string, path: string): number {
  const values = attributeList(value);
  const what = `the attribute "${name}" of "${on}"`;
  if (values.length !== 1) {
    throw new RecordingError(path, `${what} holds ${values.length} values; a sample rate is one number of hertz`);
  }
  const v = values[0];
  if (typeof v === 'string') throw new RecordingError(path, `${what} is the text "${v}", not a number of hertz`);
  const rate = typeof v === 'bigint' ? Number(v) : v;
  if (typeof rate !== 'number' || !Number.isFinite(rate) || rate <= 0) {
    throw new RecordingError(path, `${what} is ${String(rate)}, not a positive number of hertz`);
  }
  return rate;
}

/** A list of text from an attribute, or an error naming what it holds instead. */
function textList(value: OutputData, what: string, path: string): string[] {
  const values = attributeList(value);
  const notText = values.find((v) => typeof v !== 'string');
  if (notText !== undefined) {
    throw new RecordingError(path, `${what} holds ${typeof notText === 'object' ? 'values' : `${typeof notText}s`}, not text`);
  }
  return values as string[];
}

/** One name per channel from an attribute of the dataset; each must be non-empty and unique. */
function channelNames(dataset: Dataset, path: string, name: string, channelCount: number): string[] {
  const what = `the attribute "${name}" (hdf5.channel-names-attribute) of "${dataset.path}"`;
  const value = attributeOf(dataset, name, path);
  if (value === undefined) {
    const present = Object.keys(dataset.attrs);
    throw new RecordingError(
      path,
      `"${dataset.path}" has no attribute "${name}" (hdf5.channel-names-attribute); ` +
        (present.length === 0 ? 'it has no attributes' : `it has ${someNames(present)}`),
    );
  }
  const names = textList(value, what, path);
  if (names.length !== channelCount) {
    throw new RecordingError(path, `${what} has ${names.length} names but the dataset has ${channelCount} channels`);
  }
  const seen = new Map<string, number>();
  names.forEach((n, i) => {
    if (n === '') throw new RecordingError(path, `${what} gives channel ${i + 1} an empty name`);
    const earlier = seen.get(n);
    if (earlier !== undefined) {
      throw new RecordingError(path, `${what} gives the name "${n}" to channels ${earlier + 1} and ${i + 1}`);
    }
    seen.set(n, i);
  });
  return names;
}

/** Units of a 2-D dataset: one text for every channel, or a list of one per channel. */
function matrixUnits(dataset: Dataset, path: string, name: string, channelCount: number): string[] {
  const what = `the attribute "${name}" (hdf5.unit-attribute) of "${dataset.path}"`;
  const value = attributeOf(dataset, name, path);
  if (value === undefined) {
    throw new RecordingError(path, `"${dataset.path}" has no attribute "${name}" (hdf5.unit-attribute)`);
  }
  const units = textList(value, what, path);
  if (units.length === 1) return Array.from({ length: channelCount }, () => units[0]);
  if (units.length !== channelCount) {
    throw new RecordingError(path, `${what} has ${units.length} units but the dataset has ${channelCount} channels (give one for all, or one each)`);
  }
  return units;
}

/**
 * Units of group members, each from its own attribute. A member without one keeps an
 * unknown unit (a note says so); none having one is taken as a wrong attribute name.
 */
function memberUnits(datasets: Dataset[], groupPath: string, path: string, name: string, notes: string[]): Array<string | undefined> {
  const units = datasets.map((dataset) => {
    const value = attributeOf(dataset, name, path);
    if (value === undefined) return undefined;
    const list = textList(value, `the attribute "${name}" (hdf5.unit-attribute) of "${dataset.path}"`, path);
    if (list.length !== 1) {
      throw new RecordingError(path, `the attribute "${name}" (hdf5.unit-attribute) of "${dataset.path}" holds ${list.length} units; a channel has one`);
    }
    return list[0];
  });
  const missing = datasets.filter((_, i) => units[i] === undefined).map((d) => nameOf(d.path));
  if (missing.length === datasets.length) {
    throw new RecordingError(path, `no member of the group "${groupPath}" has an attribute "${name}" (hdf5.unit-attribute)`);
  }
  if (missing.length > 0) {
    notes.push(`${someNames(missing)} in "${groupPath}" ${missing.length === 1 ? 'has' : 'have'} no attribute "${name}"; ${missing.length === 1 ? 'its unit is' : 'their units are'} not known`);
  }
  return units;
}

/**
 * The samples, block by block. Each block is read in slices of at most SLICE_BYTES of
 * stored data (one slice per channel for a group), which are held on `meter` from the
 * read until they are copied into the block's Float64Arrays.
 */
async function* hdf5Blocks(source: Hdf5Source, options: BlockOptions = {}): AsyncGenerator<SampleBlock> {
  const frames = options.blockFrames ?? DEFAULT_BLOCK_FRAMES;
  if (!Number.isInteger(frames) || frames < 1) {
    throw new UsageError(`blockFrames must be a whole number of sample frames, at least 1, not ${frames}`);
  }
  const { path, channelCount, sampleCount, type } = source;
  const rowBytes = source.kind === 'matrix' ? channelCount * type.bytes : type.bytes;
  const sliceFrames = Math.max(1, Math.min(frames, Math.floor(SLICE_BYTES / rowBytes)));
  const frameBytes = channelCount * type.bytes;

  // The file may have been replaced or removed since it was opened: the same words as then.
  await checkSignature(path);
  const h5wasm = await loadLibrary(path);
  const file = openFile(h5wasm, path);
  try {
    const datasets = source.datasets.map((datasetPath, i) => {
      const entity = getEntity(file, datasetPath);
      const shape = entity instanceof h5wasm.Dataset ? entity.shape : null;
      if (shape === null || shapeText(shape) !== shapeText(source.shapes[i])) {
        throw new RecordingError(
          path,
          `"${datasetPath}" has changed since the file was opened (its shape was ${shapeText(source.shapes[i])})`,
        );
      }
      return entity as Dataset;
    });

    let frame = Math.max(0, Math.min(sampleCount, Math.floor(options.startFrame ?? 0)));
    const end = Math.max(frame, Math.min(sampleCount, Math.ceil(options.endFrame ?? sampleCount)));
    let reused: Float64Array[] | undefined;
    while (frame < end) {
      const length = Math.min(frames, end - frame);
      let block: Float64Array[];
      if (options.reuse) {
        reused ??= Array.from({ length: channelCount }, () => new Float64Array(length));
        block = length === reused[0].length ? reused : reused.map((values) => values.subarray(0, length));
      } else {
        block = Array.from({ length: channelCount }, () => new Float64Array(length));
      }
      for (let filled = 0; filled < length; ) {
        const count = Math.min(sliceFrames, length - filled);
        readSlice(source, datasets, frame + filled, count, block, filled);
        filled += count;
      }
      yield { start: frame, length, channels: block };
      frame += length;
      options.onProgress?.(frame * frameBytes, sampleCount * frameBytes);
    }
  } catch (err) {
    throw asRecordingError(path, err);
  } finally {
    file.close();
  }
}

/**
 * Reads `count` sample frames from `first` into `out[c][at ..]`. Each slice is held on the
 * meter from the read until it has been copied into the block.
 */
function readSlice(
  source: Hdf5Source,
  datasets: Dataset[],
  first: number,
  count: number,
  out: Float64Array[],
  at: number,
): void {
  const { channelCount, type, meter } = source;
  const rows: [number, number] = [first, first + count];
  if (source.kind === 'members') {
    const bytes = count * type.bytes;
    for (let c = 0; c < channelCount; c++) {
      meter?.acquire(bytes);
      try {
        out[c].set(sliceOf(source, datasets[c], [rows], rows, bytes), at);
      } finally {
        meter?.release(bytes);
      }
    }
    return;
  }
  const bytes = count * channelCount * type.bytes;
  meter?.acquire(bytes);
  try {
    if (source.timeAxis === 1) {
      // [channels, samples]: the slice is channel after channel, each `count` samples long.
      const values = sliceOf(source, datasets[0], [[], rows], rows, bytes);
      for (let c = 0; c < channelCount; c++) out[c].set(values.subarray(c * count, (c + 1) * count), at);
      return;
    }
    // [samples, channels]: the slice is frame after frame, one sample per channel.
    const values = sliceOf(source, datasets[0], [rows, []], rows, bytes);
    for (let c = 0; c < channelCount; c++) {
      const channel = out[c];
      for (let i = 0, k = c; i < count; i++, k += channelCount) channel[at + i] = values[k];
    }
  } finally {
    meter?.release(bytes);
  }
}

type NumberArray = Uint8Array | Int16Array | Int32Array | Float32Array | Float64Array;

/** One hyperslab read of `bytes` bytes (sample frames `rows`), any failure worded. */
function sliceOf(
  source: Hdf5Source,
  dataset: Dataset,
  ranges: Array<[] | [number, number]>,
  rows: [number, number],
  bytes: number,
): NumberArray {
  try {
    const values = dataset.slice(ranges);
    if (!ArrayBuffer.isView(values) || (values as NumberArray).length * source.type.bytes !== bytes) {
      throw new Error(`h5wasm returned ${describeValue(values)} for a slice of ${bytes} bytes`);
    }
    return values as NumberArray;
  } catch (err) {
    throw new RecordingError(
      source.path,
      `the HDF5 library cannot read sample frames ${rows[0]} to ${rows[1] - 1} of "${dataset.path}": ${hdf5Detail(err)}`,
    );
  }
}

function describeValue(value: unknown): string {
  if (value === null) return 'nothing';
  if (ArrayBuffer.isView(value)) return `${(value as NumberArray).length} values`;
  return typeof value;
}
