import { open, stat } from 'node:fs/promises';
import { extname } from 'node:path';
import { RecordingError } from '../errors.js';
import type { OpenOptions, Recording } from './types.js';
import { openWav } from './wav.js';
import { openCsv } from './csv.js';
import { openRaw } from './raw.js';
import { applySidecar, findSidecar } from './sidecar.js';
import { loadChannelTable, sidecarForRecording, type ChannelTable } from './channel-table.js';
import { DETECT_BYTES, detectFormat, formats } from './detect.js';

/** The formats vibgate reads, for `vibgate formats`, `--help` and error messages. */
export const supportedFormats = formats;

/**
 * Opens a recording of any supported format: picks the reader by content (detect.ts: the
 * bytes each format starts with), then by extension, and applies the channel sidecar
 * (`<file>.channels.yaml`, `options.sidecar`, or the recording's rows of
 * `options.channelTable`) when there is one.
 */
export async function openRecording(path: string, options: OpenOptions = {}): Promise<Recording> {
  const info = await stat(path).catch((err: NodeJS.ErrnoException) => {
    throw new RecordingError(path, describeFsError(err));
  });
  if (info.isDirectory()) throw new RecordingError(path, 'is a directory, not a recording');
  let sidecar = await findSidecar(path, options.sidecar);
  const tableNote: string[] = [];
  if (options.channelTable !== undefined) {
    const table = await channelTableOnce(options.channelTable);
    const fromTable = sidecarForRecording(table, path);
    if (sidecar === undefined) sidecar = fromTable;
    else if (fromTable !== undefined) {
      tableNote.push(`the sidecar "${sidecar.path}" describes this recording; the channel table's ${fromTable.path.slice(table.path.length + 1)} were not used`);
    }
  }
  const head = await readHead(path);
  const ext = extname(path).toLowerCase();
  let recording: Recording;
  switch (detectFormat(head, ext, sidecar?.raw !== undefined)) {
    case 'wav':
      recording = await openWav(path, options);
      break;
    case 'hdf5':
      recording = await (await import('./hdf5.js')).openHdf5(path, sidecar, options);
      break;
    case 'uff58':
      recording = await (await import('./uff58.js')).openUff58(path, options);
      break;
    case 'raw':
      recording = await openRaw(path, sidecar, options);
      break;
    case 'csv':
      recording = await openCsv(path, { ...options, sampleRate: options.sampleRate ?? sidecar?.sampleRate });
      break;
    default: {
      const magic = Buffer.from(head.subarray(0, 4)).toString('latin1');
      const shown = JSON.stringify(magic.replace(/[^\x20-\x7e]/g, '.'));
      throw new RecordingError(
        path,
        `unknown format (content starts with ${shown}, extension "${ext || 'none'}"); ` +
          'vibgate reads WAV/RF64/BW64, UFF dataset 58, HDF5, CSV/TSV, and raw samples described by a sidecar with a "raw" section (`vibgate formats` lists them)',
        0,
      );
    }
  }
  const opened = sidecar ? applySidecar(recording, sidecar) : recording;
  opened.notes.push(...tableNote);
  return opened;
}

const tables = new Map<string, Promise<ChannelTable>>();
/**
 * A channel table is read once for all the recordings of a run (and again when the file
 * changes: the key holds its size and modification time).
 */
export async function channelTableOnce(path: string): Promise<ChannelTable> {
  const info = await stat(path).catch(() => null);
  const key = `${path}\0${info?.size ?? ''}\0${info?.mtimeMs ?? ''}`;
  let table = tables.get(key);
  if (table === undefined) {
    table = loadChannelTable(path);
    tables.set(key, table);
    table.catch(() => tables.delete(key));
  }
  return table;
}

/** The first DETECT_BYTES bytes of a file (fewer when it is shorter). */
async function readHead(path: string): Promise<Uint8Array> {
  const handle = await open(path, 'r').catch((err: NodeJS.ErrnoException) => {
    throw new RecordingError(path, describeFsError(err));
  });
  try {
    const buf = Buffer.alloc(DETECT_BYTES);
    const { bytesRead } = await handle.read(buf, 0, DETECT_BYTES, 0);
    return buf.subarray(0, bytesRead);
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
