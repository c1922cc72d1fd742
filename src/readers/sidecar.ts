/**
 * Sidecar metadata: a small YAML file next to a recording (`<recording>.channels.yaml`)
 * that says what the recording's format cannot: channel names, units, sensors, converter
 * ranges, and for headerless formats the sample rate and sample layout.
 *
 * ```yaml
 * sample-rate: 2048            # CSV without a time column, raw binary
 * raw:                         # raw binary files only
 *   encoding: int16le          # float32le | float64le | int16le | int32le
 *   channels: 8
 *   header-bytes: 0
 * hdf5:                        # HDF5 files only: where the samples are
 *   dataset: /run-07/accel     # a 2-D dataset (or group: a group of 1-D datasets, one per channel)
 *   layout: samples-by-channels
 *   sample-rate-attribute: fs
 * channels:                    # file order; `index:` (0-based) skips channels
 *   - name: acc-01
 *     unit: g
 *     sensor: accelerometer
 *     sensitivity: 10.2
 *     sensitivity-unit: mV/g
 *     full-scale: 50
 *     group: deck
 * ```
 *
 * The file is validated against `schemas/sidecar.schema.json`; every problem is reported
 * with its line and column.
 */
import { readFile, stat } from 'node:fs/promises';
import type { ErrorObject, ValidateFunction } from 'ajv';
import { isMap, isScalar, isSeq, LineCounter, parseDocument } from 'yaml';
import type { Node as YamlNode } from 'yaml';
import { RecordingError } from '../errors.js';
import { MAX_YAML_DEPTH, tooDeeplyNested } from '../rules/yaml-source.js';
import type { ChannelInfo, Recording, SampleBlock } from './types.js';

export type RawEncoding = 'float32le' | 'float64le' | 'int16le' | 'int32le';

/** Which axis of a 2-D HDF5 dataset is time: `[samples, channels]` or `[channels, samples]`. */
export type Hdf5Layout = 'samples-by-channels' | 'channels-by-samples';

/** Attributes of an HDF5 file that hold metadata, as named in the `hdf5:` section. */
interface Hdf5Attributes {
  /** `sample-rate-attribute`: numeric attribute holding the rate in Hz. */
  sampleRateAttribute?: string;
  /** `unit-attribute`: text attribute holding units (per member, or a list on a 2-D dataset). */
  unitAttribute?: string;
}

/**
 * `hdf5:` section: where an HDF5 file keeps its samples. Either one 2-D dataset holding
 * every channel, or a group whose 1-D datasets are one channel each.
 */
export type Hdf5Mapping =
  | (Hdf5Attributes & {
      /** Path of the 2-D dataset. */
      dataset: string;
      layout: Hdf5Layout;
      /** `channel-names-attribute`: attribute holding one name per channel. */
      channelNamesAttribute?: string;
    })
  | (Hdf5Attributes & {
      /** Path of the group of 1-D datasets. */
      group: string;
      /** Members to read, in this order; default every dataset of the group, by name. */
      order?: string[];
    });

export interface Sidecar {
  /** The sidecar file's path, as given. */
  path: string;
  /** `sample-rate`, in sample frames per second. */
  sampleRate?: number;
  /** `raw:` section: layout of a raw binary file. */
  raw?: { encoding: RawEncoding; channels: number; headerBytes: number };
  /** `hdf5:` section: where the samples of an HDF5 file are. */
  hdf5?: Hdf5Mapping;
  /** `channels:` entries in the order written, each with its resolved 0-based index. */
  channels: SidecarChannel[];
}

export interface SidecarChannel {
  /** Channel position in the file, 0-based: `index:` if given, else one after the previous entry. */
  index: number;
  name?: string;
  unit?: string;
  sensor?: string;
  sensitivity?: number;
  sensitivityUnit?: string;
  /** `full-scale`: level (in `unit`) at which the measurement chain clips, ± this value. */
  fullScale?: number;
  /** Multiplier from the stored value to `unit`. */
  scale?: number;
  group?: string;
}

/** A sidecar larger than this is not a sidecar (and parsing it would waste memory). */
const MAX_SIDECAR_BYTES = 1024 * 1024;
/** Enough aliases for any honest sidecar, far too few for an alias bomb. */
const MAX_ALIAS_COUNT = 100;

/** The default sidecar path for a recording: `run3.wav` → `run3.wav.channels.yaml`. */
export function sidecarPathFor(recordingPath: string): string {
  return `${recordingPath}.channels.yaml`;
}

/**
 * Reads and validates a sidecar file. Throws a RecordingError naming the file that lists
 * every problem as `line:column key.path: what is wrong`.
 */
export async function loadSidecar(path: string): Promise<Sidecar> {
  await checkSmallFile(path, MAX_SIDECAR_BYTES, 'a sidecar file');
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (err) {
    throw asFileError(path, err);
  }
  return parseSidecar(path, text, await sidecarValidator());
}

/**
 * The sample rate of a format that has none of its own (raw, HDF5 without a rate attribute):
 * the sidecar's `sample-rate`, else the rate the recording was opened with; both given must
 * agree. `missing` says, for the error, where a rate could be given. Returns the rate and
 * who says it (for `recordSampleRateOrigin`).
 */
export function sidecarOrGivenRate(
  path: string,
  sidecar: Sidecar,
  givenRate: number | undefined,
  missing: string,
): { rate: number; says: string } {
  if (sidecar.sampleRate !== undefined && givenRate !== undefined && sidecar.sampleRate !== givenRate) {
    throw new RecordingError(
      path,
      `its sidecar "${sidecar.path}" says ${formatHz(sidecar.sampleRate)} Hz but the sample rate given is ${formatHz(givenRate)} Hz`,
    );
  }
  const rate = sidecar.sampleRate ?? givenRate;
  if (rate === undefined) throw new RecordingError(path, `no sample rate (${missing})`);
  const says = sidecar.sampleRate !== undefined ? `the sidecar "${sidecar.path}" of "${path}" says` : `"${path}" was opened with a sample rate of`;
  return { rate, says };
}

/**
 * Refuses what is not a file, or a file larger than `maxBytes` (a metadata file that size is
 * not one, and parsing it would waste memory): `is 3.2 MiB; a sidecar file may be at most 1 MiB`.
 */
export async function checkSmallFile(path: string, maxBytes: number, what: string): Promise<void> {
  let size: number;
  try {
    const info = await stat(path);
    if (!info.isFile()) throw new RecordingError(path, 'is not a file');
    size = info.size;
  } catch (err) {
    throw asFileError(path, err);
  }
  if (size > maxBytes) {
    const mib = (n: number) => n / (1024 * 1024);
    throw new RecordingError(path, `is ${mib(size).toFixed(1)} MiB; ${what} may be at most ${mib(maxBytes)} MiB`);
  }
}

/**
 * The sidecar for a recording: the `explicit` file (which must exist), else
 * `<recording>.channels.yaml` when it exists, else undefined.
 */
export async function findSidecar(
  recordingPath: string,
  explicit?: string,
): Promise<Sidecar | undefined> {
  if (explicit !== undefined) {
    try {
      await stat(explicit);
    } catch (err) {
      if (errorCode(err) === 'ENOENT') {
        throw new RecordingError(explicit, `file not found (given as the sidecar for "${recordingPath}")`);
      }
      throw asFileError(explicit, err);
    }
    return loadSidecar(explicit);
  }
  const path = sidecarPathFor(recordingPath);
  try {
    await stat(path);
  } catch (err) {
    if (errorCode(err) === 'ENOENT') return undefined;
    throw asFileError(path, err);
  }
  return loadSidecar(path);
}

/**
 * Merges a sidecar into a recording and returns a new Recording; the input is not changed.
 *
 * - Names, units, sensor, sensitivity and group: the sidecar wins over the file.
 * - Scaling: every stored value is multiplied by the channel's scale factor into its unit.
 *   The factor is `scale` when given. When `scale` is absent, the recording is integer PCM
 *   (`quantisationStep` known) and `full-scale: F` is given, the factor is F: readers
 *   normalise PCM to ±1 of converter full scale, so ±1 becomes ±F units. Otherwise 1.
 * - Clip levels: integer PCM's converter levels are multiplied by the factor; with
 *   `full-scale: F` the levels are ±F, or the scaled converter levels where those are
 *   tighter (the chain clips at whichever limit comes first). For float and text formats
 *   `full-scale: F` gives clipLow = −F, clipHigh = +F.
 * - `quantisationStep` stays as the reader gave it (before sidecar scaling, per types.ts).
 * - Sample rate: a sidecar `sample-rate` must agree with a rate the recording already has
 *   (its header, its time column, or the rate it was opened with).
 *
 * Errors: more channel entries than the recording has channels, an entry whose index is
 * beyond the last channel, duplicate channel names after merging, a sample-rate conflict.
 */
export function applySidecar(recording: Recording, sidecar: Sidecar): Recording {
  const count = recording.channels.length;
  if (sidecar.channels.length > count) {
    throw new RecordingError(
      sidecar.path,
      `describes ${sidecar.channels.length} channels but "${recording.path}" has ${count}`,
    );
  }
  sidecar.channels.forEach((entry, i) => {
    if (entry.index >= count) {
      throw new RecordingError(
        sidecar.path,
        `channels[${i}] is for channel index ${entry.index} but "${recording.path}" has ${count} channels (index 0 to ${count - 1})`,
      );
    }
  });

  let sampleRate = recording.sampleRate;
  if (sidecar.sampleRate !== undefined && sidecar.sampleRate !== recording.sampleRate) {
    const origin = sampleRateOrigins.get(recording) ?? {
      says: `the ${recording.format.toUpperCase()} header of "${recording.path}" says`,
      toleranceHz: 0,
    };
    if (Math.abs(sidecar.sampleRate - recording.sampleRate) > origin.toleranceHz) {
      throw new RecordingError(
        sidecar.path,
        `sample-rate is ${formatHz(sidecar.sampleRate)} Hz but ${origin.says} ${formatHz(recording.sampleRate)} Hz`,
      );
    }
    // Within what the recording can resolve (a rounded time column): the sidecar's exact value wins.
    sampleRate = sidecar.sampleRate;
  }

  const isIntegerPcm = recording.quantisationStep !== undefined;
  const byIndex = new Map<number, SidecarChannel>();
  for (const entry of sidecar.channels) byIndex.set(entry.index, entry);
  const scales = new Float64Array(count).fill(1);
  const channels = recording.channels.map((file, c): ChannelInfo => {
    const entry = byIndex.get(c);
    if (entry === undefined) return { ...file };
    const scale =
      entry.scale ?? (isIntegerPcm && entry.fullScale !== undefined ? entry.fullScale : 1);
    scales[c] = scale;
    const merged: ChannelInfo = { ...file };
    if (entry.name !== undefined) merged.name = entry.name;
    if (entry.unit !== undefined) merged.unit = entry.unit;
    if (entry.sensor !== undefined) merged.sensor = entry.sensor;
    if (entry.sensitivity !== undefined) merged.sensitivity = entry.sensitivity;
    if (entry.sensitivityUnit !== undefined) merged.sensitivityUnit = entry.sensitivityUnit;
    if (entry.group !== undefined) merged.group = entry.group;
    let low = file.clipLow === undefined ? undefined : file.clipLow * scale;
    let high = file.clipHigh === undefined ? undefined : file.clipHigh * scale;
    if (low !== undefined && high !== undefined && low > high) [low, high] = [high, low];
    if (entry.fullScale !== undefined) {
      low = low === undefined ? -entry.fullScale : Math.max(low, -entry.fullScale);
      high = high === undefined ? entry.fullScale : Math.min(high, entry.fullScale);
    }
    if (low === undefined) delete merged.clipLow;
    else merged.clipLow = low;
    if (high === undefined) delete merged.clipHigh;
    else merged.clipHigh = high;
    return merged;
  });

  const seen = new Map<string, number>();
  for (const channel of channels) {
    const first = seen.get(channel.name);
    if (first !== undefined) {
      throw new RecordingError(
        sidecar.path,
        `channel name "${channel.name}" is used twice in "${recording.path}" (channel index ${first} and ${channel.index})`,
      );
    }
    seen.set(channel.name, channel.index);
  }

  const extraNotes: string[] = [];
  if (sidecar.raw !== undefined && recording.format !== 'raw') {
    extraNotes.push(
      `sidecar "${sidecar.path}": its raw: section applies only to raw binary files and was ignored`,
    );
  }
  if (sidecar.channels.length > 0 && sidecar.channels.length < count) {
    extraNotes.push(
      `sidecar "${sidecar.path}" describes ${sidecar.channels.length} of the ${count} channels`,
    );
  }

  const scaled = scales.some((s) => s !== 1);
  const source = recording;
  const result: Recording = {
    path: recording.path,
    format: recording.format,
    sampleRate,
    sampleCount: recording.sampleCount,
    sampleFormat: recording.sampleFormat,
    validBits: recording.validBits,
    quantisationStep: recording.quantisationStep,
    channels,
    // A getter, so notes the reader adds while streaming (an irregular time column) show.
    get notes(): string[] {
      return extraNotes.length === 0 ? source.notes : [...source.notes, ...extraNotes];
    },
    blocks: scaled
      ? (options) => scaleBlocks(source.blocks(options), scales)
      : (options) => source.blocks(options),
  };
  if (result.validBits === undefined) delete result.validBits;
  if (result.quantisationStep === undefined) delete result.quantisationStep;
  const origin = sampleRateOrigins.get(recording);
  if (sampleRate !== recording.sampleRate) {
    sampleRateOrigins.set(result, { says: `the sidecar "${sidecar.path}" of "${recording.path}" says`, toleranceHz: 0 });
  } else if (origin !== undefined) {
    sampleRateOrigins.set(result, origin);
  }
  return result;
}

async function* scaleBlocks(
  blocks: AsyncIterable<SampleBlock>,
  scales: Float64Array,
): AsyncGenerator<SampleBlock> {
  for await (const block of blocks) {
    for (let c = 0; c < block.channels.length; c++) {
      const s = scales[c];
      if (s === 1) continue;
      const values = block.channels[c];
      for (let i = 0; i < block.length; i++) values[i] *= s;
    }
    yield block;
  }
}

// ---------------------------------------------------------------------------------------
// Internal helpers shared with the other readers (not part of the library API).

interface SampleRateOrigin {
  /** Completes "... but <says> 4096 Hz", e.g. `the time column of "x.csv" gives`. */
  says: string;
  /** How far a sidecar rate may differ and still be taken as the same rate. */
  toleranceHz: number;
}

const sampleRateOrigins = new WeakMap<Recording, SampleRateOrigin>();

/**
 * @internal Readers say where their sample rate came from, so that a conflicting sidecar
 * `sample-rate` is reported in the reader's terms. Without it, the header is assumed.
 */
export function recordSampleRateOrigin(recording: Recording, origin: SampleRateOrigin): void {
  sampleRateOrigins.set(recording, origin);
}

/** @internal A file-system error as a RecordingError naming the file. */
export function asFileError(path: string, err: unknown): Error {
  if (err instanceof RecordingError) return err;
  switch (errorCode(err)) {
    case 'ENOENT':
      return new RecordingError(path, 'file not found');
    case 'EACCES':
    case 'EPERM':
      return new RecordingError(path, 'permission denied');
    case 'EISDIR':
      return new RecordingError(path, 'is a directory');
    case undefined:
      return err instanceof Error ? err : new Error(String(err));
    default:
      return new RecordingError(path, `the file system reports ${errorCode(err)}`);
  }
}

/** @internal A sample rate for messages: `2048`, `2047.83`. */
export function formatHz(rate: number): string {
  return String(Number(rate.toPrecision(9)));
}

function errorCode(err: unknown): string | undefined {
  if (typeof err === 'object' && err !== null && 'code' in err && typeof err.code === 'string') {
    return err.code;
  }
  return undefined;
}

// ---------------------------------------------------------------------------------------
// Parsing and validation.

let validatorPromise: Promise<ValidateFunction> | undefined;

function sidecarValidator(): Promise<ValidateFunction> {
  validatorPromise ??= (async () => {
    // src/readers and dist/readers are both two levels below the package root.
    const url = new URL('../../schemas/sidecar.schema.json', import.meta.url);
    const schema = JSON.parse(await readFile(url, 'utf8')) as object;
    // loaded on first use: most recordings have no sidecar, and every worker thread loads this module
    const { Ajv2020 } = await import('ajv/dist/2020.js');
    // strictNumbers: YAML `.inf` and `.nan` are numbers to JavaScript but never valid here.
    const ajv = new Ajv2020({ allErrors: true, strict: true, strictNumbers: true, verbose: true });
    return ajv.compile(schema);
  })();
  return validatorPromise;
}

interface Problem {
  offset: number;
  text: string;
}

function parseSidecar(path: string, text: string, validate: ValidateFunction): Sidecar {
  const deep = tooDeeplyNested(text);
  if (deep !== undefined) {
    const { line, col } = positionOf(text, deep);
    throw new RecordingError(path, `${line}:${col} YAML: collections nested more than ${MAX_YAML_DEPTH} levels deep; a sidecar needs three`);
  }
  const lineCounter = new LineCounter();
  const doc = parseDocument(text, { lineCounter, prettyErrors: false, uniqueKeys: true, logLevel: 'error' });
  const fail = (problems: Problem[]): never => {
    problems.sort((a, b) => a.offset - b.offset);
    const lines = problems.map((p) => {
      const { line, col } = lineCounter.linePos(p.offset);
      return `${line}:${col} ${p.text}`;
    });
    throw new RecordingError(
      path,
      lines.length === 1 ? lines[0] : `${lines.length} problems:\n  ${lines.join('\n  ')}`,
    );
  };

  if (doc.errors.length > 0) {
    fail(doc.errors.map((e) => ({ offset: e.pos[0], text: e.message })));
  }
  let data: unknown;
  try {
    data = doc.toJS({ maxAliasCount: MAX_ALIAS_COUNT });
  } catch (err) {
    // yaml throws a ReferenceError when aliases expand past maxAliasCount.
    fail([{ offset: 0, text: err instanceof Error ? err.message : String(err) }]);
  }
  if (data === null || data === undefined) throw new RecordingError(path, 'the file is empty');

  if (!validate(data)) {
    fail((validate.errors ?? []).map((e) => schemaProblem(doc.contents, e)));
  }
  return buildSidecar(path, data as SidecarData, doc.contents, fail);
}

/** The validated YAML, keyed as written. */
interface SidecarData {
  'sample-rate'?: number;
  raw?: { encoding: RawEncoding; channels: number; 'header-bytes'?: number };
  hdf5?: {
    dataset?: string;
    group?: string;
    order?: string[];
    layout?: Hdf5Layout;
    'sample-rate-attribute'?: string;
    'channel-names-attribute'?: string;
    'unit-attribute'?: string;
  };
  channels?: Array<{
    index?: number;
    name?: string;
    unit?: string;
    sensor?: string;
    sensitivity?: number;
    'sensitivity-unit'?: string;
    'full-scale'?: number;
    scale?: number;
    group?: string;
  }>;
}

function buildSidecar(
  path: string,
  data: SidecarData,
  root: unknown,
  fail: (problems: Problem[]) => never,
): Sidecar {
  const sidecar: Sidecar = { path, channels: [] };
  if (data['sample-rate'] !== undefined) sidecar.sampleRate = data['sample-rate'];
  if (data.raw !== undefined) {
    sidecar.raw = {
      encoding: data.raw.encoding,
      channels: data.raw.channels,
      headerBytes: data.raw['header-bytes'] ?? 0,
    };
  }

  const problems: Problem[] = [];
  const at = (segments: Array<string | number>, text: string): void => {
    problems.push({ offset: nodeOffset(root, segments), text: `${keyPath(segments)}: ${text}` });
  };
  if (data.hdf5 !== undefined) {
    const hdf5 = hdf5Mapping(data.hdf5, at);
    if (hdf5 !== undefined) sidecar.hdf5 = hdf5;
  }
  const usedIndex = new Map<number, number>();
  const usedName = new Map<string, number>();
  let next = 0;
  (data.channels ?? []).forEach((entry, i) => {
    const index = entry.index ?? next;
    next = index + 1;
    const earlier = usedIndex.get(index);
    if (earlier !== undefined) {
      at(['channels', i], `channel index ${index} is already described by channels[${earlier}]`);
    }
    usedIndex.set(index, i);
    if (sidecar.raw !== undefined && index >= sidecar.raw.channels) {
      at(['channels', i], `channel index ${index} is beyond the ${sidecar.raw.channels} channels of raw.channels`);
    }
    if (entry.name !== undefined) {
      const sameName = usedName.get(entry.name);
      if (sameName !== undefined) {
        at(['channels', i, 'name'], `"${entry.name}" is already the name of channels[${sameName}]`);
      }
      usedName.set(entry.name, i);
    }

    const channel: SidecarChannel = { index };
    if (entry.name !== undefined) channel.name = entry.name;
    if (entry.unit !== undefined) channel.unit = entry.unit;
    if (entry.sensor !== undefined) channel.sensor = entry.sensor;
    if (entry.sensitivity !== undefined) channel.sensitivity = entry.sensitivity;
    if (entry['sensitivity-unit'] !== undefined) channel.sensitivityUnit = entry['sensitivity-unit'];
    if (entry['full-scale'] !== undefined) channel.fullScale = entry['full-scale'];
    if (entry.scale !== undefined) channel.scale = entry.scale;
    if (entry.group !== undefined) channel.group = entry.group;
    sidecar.channels.push(channel);
  });
  if (problems.length > 0) fail(problems);
  return sidecar;
}

/**
 * The `hdf5:` section, checked for what the schema cannot say: exactly one of dataset and
 * group, the keys that belong to only one of them, a layout for a 2-D dataset. Problems go
 * to `at`; the mapping is returned only when there are none.
 */
function hdf5Mapping(
  data: NonNullable<SidecarData['hdf5']>,
  at: (segments: Array<string | number>, text: string) => void,
): Hdf5Mapping | undefined {
  let ok = true;
  const problem = (segments: Array<string | number>, text: string): void => {
    ok = false;
    at(['hdf5', ...segments], text);
  };
  const { dataset, group, order, layout } = data;
  if (dataset !== undefined && group !== undefined) {
    problem(['group'], 'give either dataset (one 2-D dataset) or group (1-D datasets, one per channel), not both');
  } else if (dataset === undefined && group === undefined) {
    problem([], 'needs dataset (one 2-D dataset) or group (a group of 1-D datasets, one per channel)');
  }
  // With both or neither given, the keys that belong to one of them cannot be judged yet.
  if (dataset !== undefined && group === undefined) {
    if (layout === undefined) {
      problem([], 'needs layout (samples-by-channels or channels-by-samples) to tell which axis of the dataset is time');
    }
    if (order !== undefined) problem(['order'], 'applies only to group; the channels of a 2-D dataset are in its order');
  }
  if (group !== undefined && dataset === undefined) {
    if (layout !== undefined) problem(['layout'], 'applies only to dataset; each member of a group is one channel');
    if (data['channel-names-attribute'] !== undefined) {
      problem(['channel-names-attribute'], 'applies only to dataset; the channels of a group are named after its members');
    }
  }
  const listed = new Map<string, number>();
  (order ?? []).forEach((name, i) => {
    const earlier = listed.get(name);
    if (earlier !== undefined) problem(['order', i], `"${name}" is already listed as order[${earlier}]`);
    listed.set(name, i);
  });
  if (!ok) return undefined;

  const attributes: Hdf5Attributes = {};
  if (data['sample-rate-attribute'] !== undefined) attributes.sampleRateAttribute = data['sample-rate-attribute'];
  if (data['unit-attribute'] !== undefined) attributes.unitAttribute = data['unit-attribute'];
  if (dataset !== undefined && layout !== undefined) {
    const mapping: Hdf5Mapping = { dataset, layout, ...attributes };
    if (data['channel-names-attribute'] !== undefined) mapping.channelNamesAttribute = data['channel-names-attribute'];
    return mapping;
  }
  const mapping: Hdf5Mapping = { group: group!, ...attributes };
  if (order !== undefined) mapping.order = order;
  return mapping;
}

/** 1-based line and column of an offset in `text`. */
function positionOf(text: string, offset: number): { line: number; col: number } {
  const before = text.slice(0, offset);
  const lastBreak = before.lastIndexOf('\n');
  return { line: before.split('\n').length, col: offset - lastBreak };
}

/** Turns one ajv error into a positioned, plain-language problem. */
function schemaProblem(root: unknown, error: ErrorObject): Problem {
  const segments = pointerSegments(error.instancePath);
  const params = error.params as Record<string, unknown>;
  switch (error.keyword) {
    case 'additionalProperties': {
      const key = String(params.additionalProperty);
      const allowed = allowedKeys(segments);
      return {
        offset: keyOffset(root, segments, key) ?? nodeOffset(root, segments),
        text: `${keyPath([...segments, key])}: unknown key${allowed ? ` (known keys: ${allowed})` : ''}`,
      };
    }
    case 'required':
      return {
        offset: nodeOffset(root, segments),
        text: `${keyPath(segments)}: missing key "${String(params.missingProperty)}"`,
      };
    case 'not':
      // The schema uses `not` only as `{ not: { const: X } }`; verbose mode gives the subschema.
      return {
        offset: nodeOffset(root, segments),
        text: `${keyPath(segments)}: must not be ${JSON.stringify((error.schema as { const?: unknown }).const)}`,
      };
    case 'minLength':
      if (params.limit === 1) {
        return { offset: nodeOffset(root, segments), text: `${keyPath(segments)}: must not be empty` };
      }
      break;
    case 'enum':
      return {
        offset: nodeOffset(root, segments),
        text: `${keyPath(segments)}: must be one of ${(params.allowedValues as unknown[]).join(', ')}`,
      };
  }
  return { offset: nodeOffset(root, segments), text: `${keyPath(segments)}: ${error.message ?? 'is not valid'}` };
}

function allowedKeys(segments: Array<string | number>): string | undefined {
  if (segments.length === 0) return 'sample-rate, raw, hdf5, channels';
  if (segments.length === 1 && segments[0] === 'raw') return 'encoding, channels, header-bytes';
  if (segments.length === 1 && segments[0] === 'hdf5') {
    return 'dataset, group, order, layout, sample-rate-attribute, channel-names-attribute, unit-attribute';
  }
  if (segments.length === 2 && segments[0] === 'channels') {
    return 'index, name, unit, sensor, sensitivity, sensitivity-unit, full-scale, scale, group';
  }
  return undefined;
}

/** `/channels/0/full-scale` → `['channels', 0, 'full-scale']` (RFC 6901 unescaping). */
function pointerSegments(pointer: string): Array<string | number> {
  if (pointer === '') return [];
  return pointer
    .slice(1)
    .split('/')
    .map((s) => s.replace(/~1/g, '/').replace(/~0/g, '~'))
    .map((s) => (/^(0|[1-9][0-9]*)$/.test(s) ? Number(s) : s));
}

/** `['channels', 0, 'full-scale']` → `channels[0].full-scale`; the root is `(top level)`. */
function keyPath(segments: Array<string | number>): string {
  if (segments.length === 0) return '(top level)';
  let out = '';
  for (const s of segments) out += typeof s === 'number' ? `[${s}]` : out === '' ? s : `.${s}`;
  return out;
}

/** Offset of the YAML node at `segments`, or of its nearest ancestor that exists. */
function nodeOffset(root: unknown, segments: Array<string | number>): number {
  let node = root;
  let offset = rangeStart(root) ?? 0;
  for (const segment of segments) {
    node = childNode(node, segment);
    const start = rangeStart(node);
    if (start === undefined) break;
    offset = start;
  }
  return offset;
}

/** Offset of the key `key` in the map at `segments`. */
function keyOffset(root: unknown, segments: Array<string | number>, key: string): number | undefined {
  let node = root;
  for (const segment of segments) node = childNode(node, segment);
  if (!isMap(node)) return undefined;
  const pair = node.items.find((p) => isScalar(p.key) && String(p.key.value) === key);
  return pair === undefined ? undefined : rangeStart(pair.key);
}

function childNode(node: unknown, segment: string | number): unknown {
  if (isSeq(node) && typeof segment === 'number') return node.items[segment];
  if (isMap(node)) {
    const pair = node.items.find((p) => isScalar(p.key) && String(p.key.value) === String(segment));
    return pair?.value;
  }
  return undefined;
}

function rangeStart(node: unknown): number | undefined {
  const range = (node as YamlNode | undefined)?.range;
  return Array.isArray(range) ? range[0] : undefined;
}
