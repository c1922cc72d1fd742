import { open, stat } from 'node:fs/promises';
import { extname } from 'node:path';
import { RecordingError } from '../errors.js';
import type { OpenOptions, Recording } from './types.js';
import { openWav } from './wav.js';
import { openCsv } from './csv.js';
import { openRaw } from './raw.js';
import { applySidecar, findSidecar } from './sidecar.js';

/** The formats vibgate reads, for `--help` and error messages. */
export const supportedFormats = [
  { name: 'wav', description: 'WAV (RIFF), RF64 and BW64: PCM 8/16/24/32-bit, IEEE float 32/64, WAVE_FORMAT_EXTENSIBLE' },
  { name: 'csv', description: 'CSV/TSV text with a header row; sample rate from a time column, --sample-rate or a sidecar' },
  { name: 'raw', description: 'raw little-endian float32/float64/int16/int32 samples described by a sidecar' },
] as const;

/**
 * Opens a recording of any supported format: picks the reader by content (the RIFF/RF64/BW64
 * magic) and then by extension, and applies the channel sidecar (`<file>.channels.yaml`, or
 * `options.sidecar`) when there is one.
 */
export async function openRecording(path: string, options: OpenOptions = {}): Promise<Recording> {
  const info = await stat(path).catch((err: NodeJS.ErrnoException) => {
    throw new RecordingError(path, describeFsError(err));
  });
  if (info.isDirectory()) throw new RecordingError(path, 'is a directory, not a recording');
  const sidecar = await findSidecar(path, options.sidecar);
  const magic = await readMagic(path);
  const ext = extname(path).toLowerCase();
  let recording: Recording;
  if (magic === 'RIFF' || magic === 'RF64' || magic === 'BW64' || ext === '.wav') {
    recording = await openWav(path, options);
  } else if (sidecar?.raw) {
    recording = await openRaw(path, sidecar, options);
  } else if (ext === '.csv' || ext === '.tsv' || ext === '.txt') {
    recording = await openCsv(path, { ...options, sampleRate: options.sampleRate ?? sidecar?.sampleRate });
  } else {
    const shown = JSON.stringify(magic.replace(/[^\x20-\x7e]/g, '.'));
    throw new RecordingError(
      path,
      `unknown format (content starts with ${shown}, extension "${ext || 'none'}"); ` +
        'vibgate reads WAV/RF64/BW64, CSV/TSV, and raw samples described by a sidecar with a "raw" section',
      0,
    );
  }
  return sidecar ? applySidecar(recording, sidecar) : recording;
}

async function readMagic(path: string): Promise<string> {
  const handle = await open(path, 'r').catch((err: NodeJS.ErrnoException) => {
    throw new RecordingError(path, describeFsError(err));
  });
  try {
    const buf = Buffer.alloc(4);
    const { bytesRead } = await handle.read(buf, 0, 4, 0);
    return buf.subarray(0, bytesRead).toString('latin1');
  } finally {
    await handle.close();
  }
}

/** Plain words for the file-system errors a user meets. */
export function describeFsError(err: NodeJS.ErrnoException): string {
  switch (err.code) {
    case 'ENOENT': return 'no such file';
    case 'EACCES':
    case 'EPERM': return 'permission denied';
    case 'EISDIR': return 'is a directory, not a recording';
    default: return err.message;
  }
}

export type { Recording, OpenOptions, SampleBlock, ChannelInfo, BlockOptions } from './types.js';
