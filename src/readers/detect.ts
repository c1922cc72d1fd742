/**
 * Which reader a file needs, decided by its content first (the bytes a format puts at its
 * start), then by its extension. Content wins: a WAV file named `.dat` is read as WAV, and
 * a text file named `.wav` is refused as not RIFF rather than read as garbage.
 */

import { looksLikeHdf5 } from './hdf5.js';
import { looksLikeUff } from './uff58.js';

/** Bytes of a file's start that detection looks at. */
export const DETECT_BYTES = 1024;

export type FormatName = 'wav' | 'hdf5' | 'uff58' | 'csv' | 'raw';

export interface FormatInfo {
  name: FormatName;
  description: string;
  extensions: string[];
  /** How the format is recognised, in words (for `vibgate formats`). */
  recognisedBy: string;
}

/** The formats vibgate reads, for `vibgate formats`, `--help` and error messages. */
export const formats: readonly FormatInfo[] = [
  {
    name: 'wav',
    description: 'WAV (RIFF), RF64 and BW64: PCM 8/16/24/32-bit, IEEE float 32/64, WAVE_FORMAT_EXTENSIBLE',
    extensions: ['.wav', '.rf64', '.bw64'],
    recognisedBy: 'content: "RIFF", "RF64" or "BW64" at byte 0',
  },
  {
    name: 'uff58',
    description: 'Universal File Format dataset 58 time histories, ASCII and binary (58b), real single/double',
    extensions: ['.uff', '.unv', '.uf'],
    recognisedBy: 'content: a "-1" delimiter line followed by a dataset number line',
  },
  {
    name: 'hdf5',
    description: 'HDF5: a 2-D dataset or a group of 1-D datasets, located by the sidecar\'s hdf5: section',
    extensions: ['.h5', '.hdf5', '.hdf'],
    recognisedBy: 'content: the HDF5 signature \\x89HDF\\r\\n\\x1a\\n at byte 0 or 512 (after a user block)',
  },
  {
    name: 'csv',
    description: 'CSV/TSV text with a header row; sample rate from a time column, --sample-rate or a sidecar',
    extensions: ['.csv', '.tsv', '.txt'],
    recognisedBy: 'extension',
  },
  {
    name: 'raw',
    description: 'raw little-endian float32/float64/int16/int32 samples described by a sidecar',
    extensions: [],
    recognisedBy: 'a sidecar with a raw: section',
  },
];

/** What a file's start and extension say about its format; undefined when neither says. */
export function detectFormat(head: Uint8Array, extension: string, hasRawSidecar: boolean): FormatName | undefined {
  const magic = Buffer.from(head.buffer, head.byteOffset, Math.min(4, head.byteLength)).toString('latin1');
  if (magic === 'RIFF' || magic === 'RF64' || magic === 'BW64') return 'wav';
  if (looksLikeHdf5(head)) return 'hdf5';
  if (looksLikeUff(Buffer.from(head.buffer, head.byteOffset, head.byteLength).toString('latin1'))) return 'uff58';
  if (hasRawSidecar) return 'raw';
  const ext = extension.toLowerCase();
  return formats.find((f) => f.recognisedBy === 'extension' && f.extensions.includes(ext))?.name
    ?? (['.wav', '.rf64', '.bw64'].includes(ext) ? 'wav' : undefined);
}
