/**
 * Raw binary recordings: interleaved little-endian samples with no header of their own
 * (a fixed number of bytes may be skipped at the start). Everything about the layout
 * comes from the sidecar's `raw:` section, the sample rate from its `sample-rate` or the
 * open options.
 *
 * Integer samples are scaled as PCM WAV is, to ±1 of converter full scale (÷ 2^(bits−1)),
 * so that a sidecar `full-scale` turns them into units the same way; float samples are
 * taken as they are. Names, units and scaling are applied by `applySidecar` afterwards.
 */
import { open, stat } from 'node:fs/promises';
import type { FileHandle } from 'node:fs/promises';
import { RecordingError, UsageError } from '../errors.js';
import { asFileError, recordSampleRateOrigin, sidecarOrGivenRate, sidecarPathFor } from './sidecar.js';
import type { RawEncoding, Sidecar } from './sidecar.js';
import type { BlockOptions, ChannelInfo, OpenOptions, Recording, SampleBlock, SampleFormat } from './types.js';

/** Read buffer size; one buffer is reused for the whole file. */
const READ_BYTES = 1024 * 1024;
const DEFAULT_BLOCK_FRAMES = 65536;
/** As many channels as a WAV header can declare; each costs its accumulators some kilobytes. */
const MAX_RAW_CHANNELS = 65535;

interface Encoding {
  bytes: number;
  sampleFormat: SampleFormat;
  /** Integer encodings: bits per sample. */
  bits?: number;
}

const ENCODINGS: Record<RawEncoding, Encoding> = {
  float32le: { bytes: 4, sampleFormat: 'float32' },
  float64le: { bytes: 8, sampleFormat: 'float64' },
  int16le: { bytes: 2, sampleFormat: 'int16', bits: 16 },
  int32le: { bytes: 4, sampleFormat: 'int32', bits: 32 },
};

/**
 * Opens a raw binary recording described by `sidecar.raw`. The sample rate is the
 * sidecar's `sample-rate`, else `options.sampleRate`; when both are given they must agree.
 */
export async function openRaw(
  path: string,
  sidecar: Sidecar | undefined,
  options: OpenOptions = {},
): Promise<Recording> {
  if (sidecar === undefined) {
    throw new RecordingError(
      path,
      `a raw binary file needs a sidecar with a raw: section (encoding, channels, header-bytes); none was given or found at "${sidecarPathFor(path)}"`,
    );
  }
  const layout = sidecar.raw;
  if (layout === undefined) {
    throw new RecordingError(
      path,
      `its sidecar "${sidecar.path}" has no raw: section (encoding, channels, header-bytes), which a raw binary file needs`,
    );
  }
  const givenRate = options.sampleRate;
  if (givenRate !== undefined && !(Number.isFinite(givenRate) && givenRate > 0)) {
    throw new UsageError(`The sample rate must be a positive number of hertz, not ${givenRate}`);
  }
  const { rate: sampleRate, says } = sidecarOrGivenRate(path, sidecar, givenRate, `give --sample-rate or sample-rate in the sidecar "${sidecar.path}"`);

  if (layout.channels > MAX_RAW_CHANNELS) {
    throw new RecordingError(
      path,
      `its sidecar "${sidecar.path}" says raw.channels is ${layout.channels}; at most ${MAX_RAW_CHANNELS} channels are read`,
    );
  }
  const encoding = ENCODINGS[layout.encoding];
  const frameBytes = encoding.bytes * layout.channels;
  let size: number;
  try {
    size = (await stat(path)).size;
  } catch (err) {
    throw asFileError(path, err);
  }
  const dataBytes = size - layout.headerBytes;
  if (dataBytes <= 0) {
    throw new RecordingError(
      path,
      `is ${size} bytes long, which leaves no samples after the ${layout.headerBytes} header bytes the sidecar declares`,
    );
  }
  const leftOver = dataBytes % frameBytes;
  if (leftOver !== 0) {
    throw new RecordingError(
      path,
      `${dataBytes} bytes after the ${layout.headerBytes}-byte header are not a whole number of frames of ` +
        `${layout.channels} channels × ${encoding.bytes} bytes (${frameBytes} bytes a frame): ${leftOver} bytes are left over`,
      size - leftOver,
    );
  }
  const sampleCount = dataBytes / frameBytes;

  // Integer codes span −2^(b−1) .. 2^(b−1)−1, scaled to −1 .. 1 − step as PCM WAV is.
  const step = encoding.bits === undefined ? undefined : 2 ** -(encoding.bits - 1);
  const channels: ChannelInfo[] = Array.from({ length: layout.channels }, (_, index) => {
    const channel: ChannelInfo = { index, name: `ch${index + 1}` };
    if (step !== undefined) {
      channel.clipLow = -1;
      channel.clipHigh = 1 - step;
    }
    return channel;
  });

  const read: RawRead = {
    path,
    headerBytes: layout.headerBytes,
    channels: layout.channels,
    encoding,
    sampleCount,
    size,
    meter: options.meter,
  };
  const recording: Recording = {
    path,
    format: 'raw',
    sampleRate,
    sampleCount,
    sampleFormat: encoding.sampleFormat,
    channels,
    notes: [],
    blocks: (blockOptions?: BlockOptions) => rawBlocks(read, blockOptions),
  };
  if (step !== undefined && encoding.bits !== undefined) {
    recording.validBits = encoding.bits;
    recording.quantisationStep = step;
  }
  recordSampleRateOrigin(recording, { says, toleranceHz: 0 });
  return recording;
}

interface RawRead {
  path: string;
  headerBytes: number;
  channels: number;
  encoding: Encoding;
  sampleCount: number;
  size: number;
  meter: OpenOptions['meter'];
}

async function* rawBlocks(read: RawRead, options: BlockOptions = {}): AsyncGenerator<SampleBlock> {
  const frames = options.blockFrames ?? DEFAULT_BLOCK_FRAMES;
  if (!Number.isInteger(frames) || frames < 1) {
    throw new UsageError(`blockFrames must be a whole number of sample frames, at least 1, not ${frames}`);
  }
  const { channels: channelCount, encoding } = read;
  const frameBytes = encoding.bytes * channelCount;
  const bufferFrames = Math.max(1, Math.floor(READ_BYTES / frameBytes));
  const bufferBytes = bufferFrames * frameBytes;
  const decode = decoder(encoding);

  let handle: FileHandle;
  try {
    handle = await open(read.path, 'r');
  } catch (err) {
    throw asFileError(read.path, err);
  }
  // A buffer of its own (not a slice of Node's pool) so the DataView starts at offset 0.
  const buffer = Buffer.allocUnsafeSlow(bufferBytes);
  const view = new DataView(buffer.buffer, buffer.byteOffset, buffer.byteLength);
  read.meter?.acquire(bufferBytes);
  try {
    let frame = Math.max(0, Math.min(read.sampleCount, Math.floor(options.startFrame ?? 0)));
    const end = Math.max(frame, Math.min(read.sampleCount, Math.ceil(options.endFrame ?? read.sampleCount)));
    while (frame < end) {
      const length = Math.min(frames, end - frame);
      const block = Array.from({ length: channelCount }, () => new Float64Array(length));
      let filled = 0;
      while (filled < length) {
        const want = Math.min(bufferFrames, length - filled);
        const position = read.headerBytes + (frame + filled) * frameBytes;
        const got = await readFully(handle, buffer, want * frameBytes, position);
        if (got < want * frameBytes) {
          throw new RecordingError(
            read.path,
            `ends at byte ${position + got}, but was ${read.size} bytes when opened`,
            position + got,
          );
        }
        decode(view, want, channelCount, block, filled);
        filled += want;
      }
      yield { start: frame, length, channels: block };
      frame += length;
      options.onProgress?.(read.headerBytes + frame * frameBytes, read.size);
    }
  } finally {
    read.meter?.release(bufferBytes);
    await handle.close();
  }
}

async function readFully(handle: FileHandle, buffer: Buffer, bytes: number, position: number): Promise<number> {
  let got = 0;
  while (got < bytes) {
    const { bytesRead } = await handle.read(buffer, got, bytes - got, position + got);
    if (bytesRead === 0) break;
    got += bytesRead;
  }
  return got;
}

type Decode = (view: DataView, frames: number, channels: number, out: Float64Array[], at: number) => void;

/** One tight loop per encoding: de-interleave `frames` frames into `out[c][at..]`. */
function decoder(encoding: Encoding): Decode {
  switch (encoding.sampleFormat) {
    case 'float32':
      return (view, frames, channels, out, at) => {
        for (let f = 0, o = 0; f < frames; f++) {
          for (let c = 0; c < channels; c++, o += 4) out[c][at + f] = view.getFloat32(o, true);
        }
      };
    case 'float64':
      return (view, frames, channels, out, at) => {
        for (let f = 0, o = 0; f < frames; f++) {
          for (let c = 0; c < channels; c++, o += 8) out[c][at + f] = view.getFloat64(o, true);
        }
      };
    case 'int16':
      return (view, frames, channels, out, at) => {
        for (let f = 0, o = 0; f < frames; f++) {
          for (let c = 0; c < channels; c++, o += 2) out[c][at + f] = view.getInt16(o, true) / 32768;
        }
      };
    case 'int32':
      return (view, frames, channels, out, at) => {
        for (let f = 0, o = 0; f < frames; f++) {
          for (let c = 0; c < channels; c++, o += 4) out[c][at + f] = view.getInt32(o, true) / 2147483648;
        }
      };
    default:
      throw new Error(`no raw decoder for ${encoding.sampleFormat}`);
  }
}
