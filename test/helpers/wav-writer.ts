/**
 * A small RIFF/RF64/BW64 writer for test fixtures. It writes exactly what it is told,
 * including wrong things (lying sizes, missing chunks, truncation), so that a reader's
 * error paths can be exercised. Layout facts it follows:
 * - RIFF: "RIFF", u32 size of what follows, "WAVE", then chunks: 4-byte id, u32 LE size,
 *   body, one pad byte after an odd-sized body (not counted in the size).
 * - fmt: format tag, channels, sample rate, byte rate, block align, bits per sample
 *   (16 bytes); WAVE_FORMAT_EXTENSIBLE adds cbSize = 22, valid bits, channel mask and the
 *   sub-format GUID (40 bytes).
 * - RF64 (EBU Tech 3306) / BW64 (ITU-R BS.2088): RIFF size and data size fields are
 *   0xFFFFFFFF; a first "ds64" chunk holds u64 RIFF size, data size, sample count, a u32
 *   table length and table entries (id, u64 size).
 */
import { mkdtemp, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

export type Encoding = 'uint8' | 'int16' | 'int24' | 'int32' | 'float32' | 'float64';

export const FORMAT_PCM = 0x0001;
export const FORMAT_FLOAT = 0x0003;
export const FORMAT_EXTENSIBLE = 0xfffe;

export interface ChunkSpec {
  /** Four characters; shorter ids are padded with spaces. */
  id: string;
  body: Uint8Array;
  /** The size written in the chunk header; default `body.length`. */
  declaredSize?: number;
  /** Write the pad byte after an odd-sized body (default true). */
  pad?: boolean;
}

export interface FmtSpec {
  /** Default: 0xFFFE when `extensible` is given, else 1 (PCM). */
  formatTag?: number;
  channels: number;
  sampleRate?: number;
  bitsPerSample: number;
  /** Default channels × bitsPerSample / 8 (rounded up). */
  blockAlign?: number;
  /** Default sampleRate × blockAlign. */
  byteRate?: number;
  /** Write a WAVE_FORMAT_EXTENSIBLE tail. */
  extensible?: {
    /** Default bitsPerSample. */
    validBits?: number;
    channelMask?: number;
    /** Sub-format tag placed in the standard GUID (1 PCM, 3 float), or 16 raw GUID bytes. */
    subFormat: number | Uint8Array;
  };
  /** Cut the fmt body to this many bytes (to write a too-short chunk). */
  bodyLength?: number;
}

/** The standard sub-format GUID xxxxxxxx-0000-0010-8000-00aa00389b71 with a format tag. */
export function subFormatGuid(tag: number): Uint8Array {
  const guid = new Uint8Array([0, 0, 0, 0, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xaa, 0x00, 0x38, 0x9b, 0x71]);
  new DataView(guid.buffer).setUint32(0, tag, true);
  return guid;
}

export function chunk(id: string, body: Uint8Array, options: Omit<ChunkSpec, 'id' | 'body'> = {}): ChunkSpec {
  return { id, body, ...options };
}

export function fmtChunk(spec: FmtSpec): ChunkSpec {
  const sampleRate = spec.sampleRate ?? 8000;
  const blockAlign = spec.blockAlign ?? spec.channels * Math.ceil(spec.bitsPerSample / 8);
  const formatTag = spec.formatTag ?? (spec.extensible ? FORMAT_EXTENSIBLE : FORMAT_PCM);
  const body = new Uint8Array(spec.extensible ? 40 : 16);
  const view = new DataView(body.buffer);
  view.setUint16(0, formatTag, true);
  view.setUint16(2, spec.channels, true);
  view.setUint32(4, sampleRate, true);
  view.setUint32(8, spec.byteRate ?? sampleRate * blockAlign, true);
  view.setUint16(12, blockAlign, true);
  view.setUint16(14, spec.bitsPerSample, true);
  if (spec.extensible) {
    view.setUint16(16, 22, true);
    view.setUint16(18, spec.extensible.validBits ?? spec.bitsPerSample, true);
    view.setUint32(20, spec.extensible.channelMask ?? 0, true);
    const sub = spec.extensible.subFormat;
    body.set(typeof sub === 'number' ? subFormatGuid(sub) : sub, 24);
  }
  return chunk('fmt ', spec.bodyLength === undefined ? body : body.subarray(0, spec.bodyLength));
}

export interface Ds64Spec {
  riffSize: bigint;
  dataSize: bigint;
  sampleCount: bigint;
  table?: { id: string; size: bigint }[];
  /** Table length to write; default `table.length` (to write a lying count). */
  tableLength?: number;
}

export function ds64Chunk(spec: Ds64Spec): ChunkSpec {
  const table = spec.table ?? [];
  const body = new Uint8Array(28 + 12 * table.length);
  const view = new DataView(body.buffer);
  view.setBigUint64(0, spec.riffSize, true);
  view.setBigUint64(8, spec.dataSize, true);
  view.setBigUint64(16, spec.sampleCount, true);
  view.setUint32(24, spec.tableLength ?? table.length, true);
  table.forEach((entry, i) => {
    body.set(ascii4(entry.id), 28 + 12 * i);
    view.setBigUint64(32 + 12 * i, entry.size, true);
  });
  return chunk('ds64', body);
}

/** Assembles a RIFF-form file from chunks, in the order given. */
export function riffFile(
  container: string,
  chunks: ChunkSpec[],
  options: { riffSize?: number; form?: string } = {},
): Uint8Array {
  const parts: Uint8Array[] = [];
  for (const c of chunks) {
    const header = new Uint8Array(8);
    header.set(ascii4(c.id), 0);
    new DataView(header.buffer).setUint32(4, c.declaredSize ?? c.body.length, true);
    parts.push(header, c.body);
    if (c.body.length % 2 === 1 && c.pad !== false) parts.push(new Uint8Array(1));
  }
  const chunksLength = parts.reduce((n, p) => n + p.length, 0);
  const out = new Uint8Array(12 + chunksLength);
  out.set(ascii4(container), 0);
  new DataView(out.buffer).setUint32(4, options.riffSize ?? 4 + chunksLength, true);
  out.set(ascii4(options.form ?? 'WAVE'), 8);
  let at = 12;
  for (const p of parts) {
    out.set(p, at);
    at += p.length;
  }
  return out;
}

export interface WavSpec {
  container?: 'RIFF' | 'RF64' | 'BW64';
  fmt: FmtSpec;
  /** Interleaved sample bytes (see `interleave`). */
  data: Uint8Array;
  /** Chunks between fmt and data. */
  before?: ChunkSpec[];
  /** Chunks after data. */
  after?: ChunkSpec[];
  /** Put the fmt chunk after the data chunk instead of before it. */
  fmtAfterData?: boolean;
  omitFmt?: boolean;
  omitData?: boolean;
  /** RF64/BW64: omit the ds64 chunk. */
  omitDs64?: boolean;
  /** Size written in the data chunk header (RIFF default: data length; RF64: 0xFFFFFFFF). */
  dataDeclaredSize?: number;
  /** RF64/BW64: override ds64 fields (defaults are the true sizes). */
  ds64?: Partial<Ds64Spec>;
  riffSize?: number;
  /** Keep only the first `truncateTo` bytes of the file. */
  truncateTo?: number;
}

/** A whole WAV/RF64/BW64 file. */
export function buildWav(spec: WavSpec): Uint8Array {
  const container = spec.container ?? 'RIFF';
  const wide = container !== 'RIFF';
  const fmt = fmtChunk(spec.fmt);
  const data = chunk('data', spec.data, {
    declaredSize: spec.dataDeclaredSize ?? (wide ? 0xffffffff : spec.data.length),
  });
  const body: ChunkSpec[] = [];
  if (!spec.omitFmt && !spec.fmtAfterData) body.push(fmt);
  body.push(...(spec.before ?? []));
  if (!spec.omitData) body.push(data);
  if (!spec.omitFmt && spec.fmtAfterData) body.push(fmt);
  body.push(...(spec.after ?? []));

  let bytes: Uint8Array;
  if (wide && !spec.omitDs64) {
    const blockAlign = fmt.body.length >= 14 ? new DataView(fmt.body.buffer, fmt.body.byteOffset).getUint16(12, true) : 1;
    const ds64Of = (riffSize: bigint) =>
      ds64Chunk({
        riffSize,
        dataSize: BigInt(spec.data.length),
        sampleCount: BigInt(Math.floor(spec.data.length / Math.max(blockAlign, 1))),
        ...spec.ds64,
      });
    // The RIFF size depends on the ds64 chunk's own length, which does not depend on
    // the values in it: build once to measure, once to write.
    const probe = riffFile(container, [ds64Of(0n), ...body], { riffSize: 0xffffffff });
    bytes = riffFile(container, [ds64Of(BigInt(probe.length - 8)), ...body], {
      riffSize: spec.riffSize ?? 0xffffffff,
    });
  } else {
    bytes = riffFile(container, body, { riffSize: spec.riffSize ?? (wide ? 0xffffffff : undefined) });
  }
  return spec.truncateTo === undefined ? bytes : bytes.subarray(0, spec.truncateTo);
}

/** Interleaves per-channel sample codes (integers for PCM, values for float) as little-endian bytes. */
export function interleave(encoding: Encoding, channels: readonly (readonly number[])[]): Uint8Array {
  const width = { uint8: 1, int16: 2, int24: 3, int32: 4, float32: 4, float64: 8 }[encoding];
  const frames = channels[0]?.length ?? 0;
  const out = new Uint8Array(frames * channels.length * width);
  const view = new DataView(out.buffer);
  let o = 0;
  for (let i = 0; i < frames; i++) {
    for (const channel of channels) {
      const v = channel[i];
      switch (encoding) {
        case 'uint8':
          view.setUint8(o, v);
          break;
        case 'int16':
          view.setInt16(o, v, true);
          break;
        case 'int24':
          view.setUint8(o, v & 0xff);
          view.setUint8(o + 1, (v >> 8) & 0xff);
          view.setUint8(o + 2, (v >> 16) & 0xff);
          break;
        case 'int32':
          view.setInt32(o, v, true);
          break;
        case 'float32':
          view.setFloat32(o, v, true);
          break;
        case 'float64':
          view.setFloat64(o, v, true);
          break;
      }
      o += width;
    }
  }
  return out;
}

/** A fresh directory under the system temp directory for one test file's fixtures. */
export async function fixtureDir(prefix = 'vibgate-wav-'): Promise<string> {
  return mkdtemp(join(tmpdir(), prefix));
}

/** Writes `bytes` to `dir/name` and returns the path. */
export async function writeFixture(dir: string, name: string, bytes: Uint8Array): Promise<string> {
  const path = join(dir, name);
  await writeFile(path, bytes);
  return path;
}

function ascii4(id: string): Uint8Array {
  const out = new Uint8Array(4).fill(0x20);
  for (let i = 0; i < Math.min(4, id.length); i++) out[i] = id.charCodeAt(i);
  return out;
}
