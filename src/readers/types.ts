/**
 * What every reader produces: metadata about a recording, and its samples as a stream of
 * blocks. Readers never load a whole file; a block holds a bounded number of sample frames.
 */

/** How the samples are stored in the file. */
export type SampleFormat = 'uint8' | 'int16' | 'int24' | 'int32' | 'float32' | 'float64' | 'text';

/** What is known about one channel (from the file, a sidecar, or defaults). */
export interface ChannelInfo {
  /** Position in the file, 0-based. */
  index: number;
  /** Channel name; `ch1`..`chN` when neither the file nor a sidecar names it. */
  name: string;
  /** Physical unit of the sample values (for example `g`, `m/s^2`, `Pa`, `N`), if known. */
  unit?: string;
  /** Kind of sensor (for example `accelerometer`, `microphone`, `force`), if known. */
  sensor?: string;
  /** Sensor sensitivity as stated in the sidecar, kept as metadata (for example 10.2). */
  sensitivity?: number;
  /** Unit of `sensitivity` (for example `mV/g`). */
  sensitivityUnit?: string;
  /** Channel group for cross-channel comparisons (for example `deck`, `pier-2`). */
  group?: string;
  /**
   * Converter clip levels in the channel's units: samples at or beyond these are at full
   * scale. Known for integer PCM (scaled), or given by a sidecar `full-scale`.
   */
  clipLow?: number;
  clipHigh?: number;
}

/** A recording opened by a reader. */
export interface Recording {
  /** The path as the user gave it. */
  path: string;
  /** Short format name: `wav`, `rf64`, `bw64`, `csv`, `raw`. */
  format: string;
  /** Sample frames per second. */
  sampleRate: number;
  /** Sample frames in the file, when the header says (text formats learn it only at the end). */
  sampleCount: number | undefined;
  /** How the samples are stored. */
  sampleFormat: SampleFormat;
  /** Bits per sample that carry information (WAVE_FORMAT_EXTENSIBLE valid bits), for PCM. */
  validBits?: number;
  /**
   * Smallest step between two sample values in the channel units before any sidecar
   * scaling, for integer PCM (1 / 2^(bits−1) with samples scaled to ±1).
   */
  quantisationStep?: number;
  /** Channels in file order. */
  channels: ChannelInfo[];
  /** Notes the reader has for the user (irregular time column, sidecar not found ...). */
  notes: string[];
  /**
   * The samples, block by block, in order. Each block's channel arrays are freshly
   * allocated and may be kept by the consumer. Iterate once; a second iteration re-reads.
   */
  blocks(options?: BlockOptions): AsyncIterable<SampleBlock>;
}

export interface BlockOptions {
  /** Sample frames per block (the reader may deliver fewer at the end). Default 65536. */
  blockFrames?: number;
  /**
   * Start at this sample frame and stop before `endFrame`, for reading a short excerpt.
   * Seekable formats (WAV, raw) honour it; others may deliver from the start, so callers
   * use `readWindow`, which trims by each block's `start`.
   */
  startFrame?: number;
  endFrame?: number;
  /**
   * The consumer is done with a block's channel arrays when it asks for the next block, so
   * the reader may decode every block into the same arrays (no allocation, no garbage).
   * Off by default: blocks may then be kept.
   */
  reuse?: boolean;
  /** Called after each block with the bytes consumed so far, for progress display. */
  onProgress?: (bytesRead: number, bytesTotal: number) => void;
}

/** A run of consecutive sample frames, one Float64Array per channel. */
export interface SampleBlock {
  /** Index of the first sample frame of the block in the recording. */
  start: number;
  /** Number of sample frames in the block. */
  length: number;
  /** `channels[c][i]` is sample `start + i` of channel `c`, in the channel's units. */
  channels: Float64Array[];
}

/** Options common to opening any recording. */
export interface OpenOptions {
  /** Sidecar metadata file; default `<recording>.channels.yaml` when it exists. */
  sidecar?: string;
  /** Sample rate for formats that lack one (CSV without time column, raw). */
  sampleRate?: number;
  /** CSV: name of the time column (default: a first column named t, time or time_s ...). */
  timeColumn?: string;
  /** CSV: accept decimal commas (`1,25`), with `;` or tab as field separator. */
  decimalComma?: boolean;
  /**
   * A campaign channel table file (see channel-table.ts): its rows for a recording act as
   * that recording's sidecar when it has none of its own. Read once per process.
   */
  channelTable?: string;
  /** Instrumentation for tests: counts bytes held in read buffers. */
  meter?: ReadMeter;
}

/**
 * A counter of read buffers, used to prove that readers stream: it records the most bytes
 * of file data held in memory at once by the reader.
 */
export class ReadMeter {
  held = 0;
  peakHeld = 0;
  reads = 0;
  acquire(bytes: number): void {
    this.held += bytes;
    this.reads += 1;
    if (this.held > this.peakHeld) this.peakHeld = this.held;
  }
  release(bytes: number): void {
    this.held -= bytes;
  }
}
