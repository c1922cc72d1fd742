import { describe, expect, it } from 'vitest';
import { summariseBlocks, type RecordingSummary } from '../../src/stats/summarise.js';
import {
  formatPartialFile,
  parsePartialFile,
  PartialFileError,
  PARTIAL_FORMAT,
  PARTIAL_KIND,
  type PartialFile,
} from '../../src/stats/summary-file.js';
import { gaussian } from '../helpers/random.js';

async function summaryOf(channels: Float64Array[], start = 0, length = channels[0]?.length ?? 0): Promise<RecordingSummary> {
  async function* blocks() {
    for (let at = 0; at < length; at += 700) {
      const n = Math.min(700, length - at);
      yield { start: start + at, length: n, channels: channels.map((c) => c.slice(at, at + n)) };
    }
  }
  return summariseBlocks(blocks(), { sampleRate: 1000, channels: channels.map(() => ({ clipLow: -4, clipHigh: 4 })) }, { frameSeconds: 0.25, overlap: 0.5, start });
}

function partialOf(summaries: RecordingSummary[]): PartialFile {
  return {
    kind: PARTIAL_KIND, format: PARTIAL_FORMAT, tool: { name: 'vibgate', version: '0.1.0' }, createdAt: '2026-01-02T03:04:05.000Z',
    rules: { path: 'rules/lab.yaml', sha256: 'a'.repeat(64), files: [{ path: 'rules/lab.yaml', sha256: 'a'.repeat(64) }] },
    analysis: { frameSeconds: 0.25, overlap: 0.5 },
    job: { shard: null, section: { index: 1, count: 2 } },
    selection: { recordings: 1, sha256: 'b'.repeat(64) },
    parts: summaries.map((summary, k) => ({
      order: k,
      recording: {
        path: 'data/NaN.wav', sha256: 'c'.repeat(64), bytes: 1234, format: 'wav', sampleRate: 1000, sampleCount: 5000,
        channels: [{ index: 0, name: 'NaN', unit: 'Infinity', clipLow: -4, clipHigh: 4 }, { index: 1, name: '-0' }, { index: 2, name: 'acc' }],
        notes: [],
      },
      section: { index: 1, count: 2, startFrame: summary.start, endFrame: summary.start + summary.samples },
      error: null,
      summary,
    })),
  };
}

/** Deep equality with Object.is on numbers: NaN equals NaN, −0 differs from +0. */
function identical(a: unknown, b: unknown, where = '$'): string | null {
  if (typeof a === 'number' || typeof b === 'number') return Object.is(a, b) ? null : `${where}: ${String(a)} vs ${String(b)}`;
  if (Array.isArray(a) && Array.isArray(b)) {
    if (a.length !== b.length) return `${where}: length ${a.length} vs ${b.length}`;
    for (let i = 0; i < a.length; i++) {
      const d = identical(a[i], b[i], `${where}[${i}]`);
      if (d) return d;
    }
    return null;
  }
  if (a !== null && b !== null && typeof a === 'object' && typeof b === 'object') {
    const ka = Object.keys(a).sort();
    const kb = Object.keys(b).sort();
    if (ka.join() !== kb.join()) return `${where}: keys ${ka.join()} vs ${kb.join()}`;
    for (const k of ka) {
      const d = identical((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], `${where}.${k}`);
      if (d) return d;
    }
    return null;
  }
  return a === b ? null : `${where}: ${String(a)} vs ${String(b)}`;
}

describe('partial-summary files', () => {
  it('round-trip summaries bit for bit, NaN, ±Infinity and −0 included', async () => {
    const x = gaussian(2500, 3);
    x[0] = NaN; // the part starts on a NaN: firstValue is NaN
    x[10] = Infinity;
    x[11] = -Infinity;
    const withData = await summaryOf([x, gaussian(2500, 5), gaussian(2500, 4).map((v) => v * 1e-300)]);
    withData.channels[1].moments.mean = -0; // a mean that rounded to −0
    const empty = await summaryOf([new Float64Array(0), new Float64Array(0), new Float64Array(0)], 2500, 0);
    // what makes the encoding necessary: values JSON cannot hold
    expect(empty.channels[0].runs.low.value).toBe(Infinity);
    expect(empty.channels[0].runs.high.value).toBe(-Infinity);
    expect(withData.channels[0].runs.firstValue).toBeNaN();
    const partial = partialOf([withData, empty]);
    // plain JSON loses them: the round trip below is not trivially true
    expect(identical(JSON.parse(JSON.stringify(partial)), partial)).not.toBeNull();

    const text = formatPartialFile(partial);
    expect(text).toContain('"firstValue":"NaN"');
    expect(text).toContain('"value":"Infinity"');
    expect(text).toContain('"value":"-Infinity"');
    expect(text).toContain('"-0"');
    const back = parsePartialFile(text, 'parts/1.json');
    expect(identical(back, partial)).toBeNull();
    // and strings that look like numbers stay strings outside the summaries
    expect(back.parts[0].recording.channels.map((c) => c.name)).toEqual(['NaN', '-0', 'acc']);
    expect(back.parts[0].recording.channels[0].unit).toBe('Infinity');
    expect(formatPartialFile(back)).toBe(text);
  });

  it.each<[string, (data: any) => void, string]>([
    ['a wrong format version', (d) => { d.format = 2; }, 'Cannot read "parts/1.json": it is a partial-summary file of format 2, but this vibgate reads format 1; merge with the vibgate version that wrote it'],
    ['no kind', (d) => { delete d.kind; }, 'Cannot read "parts/1.json": not a vibgate partial-summary file (it has no "kind": "vibgate partial summary")'],
    ['a word where a number belongs', (d) => { d.parts[0].summary.channels[1].runs.firstValue = 'nan'; }, 'Cannot read "parts/1.json": parts[0].summary.channels[1].runs.firstValue must be a number, not "nan"'],
    ['a missing field', (d) => { delete d.parts[0].summary.channels[0].moments.m4; }, 'Cannot read "parts/1.json": parts[0].summary.channels[0].moments.m4 is missing'],
    ['a frame table that is not an array', (d) => { d.parts[0].summary.channels[2].frames.max = 3; }, 'Cannot read "parts/1.json": parts[0].summary.channels[2].frames.max must be an array of numbers, not 3'],
    ['a part with neither summary nor error', (d) => { d.parts[0].summary = null; }, 'Cannot read "parts/1.json": parts[0] has neither a summary and section nor an error'],
    ['no rule file hash', (d) => { d.rules.sha256 = null; }, 'Cannot read "parts/1.json": rules.sha256 must be a string, not null'],
  ])('are refused, naming the file, with %s', async (_, spoil, message) => {
    const data = JSON.parse(formatPartialFile(partialOf([await summaryOf([gaussian(900, 1), gaussian(900, 2), gaussian(900, 3)])])));
    spoil(data);
    const read = () => parsePartialFile(JSON.stringify(data), 'parts/1.json');
    expect(read).toThrow(PartialFileError);
    expect(read).toThrow(new PartialFileError('parts/1.json', message));
  });

  it('are refused when not JSON at all', () => {
    expect(() => parsePartialFile('{"kind": ', 'parts/cut.json')).toThrow(/^Cannot read "parts\/cut\.json": not JSON \(/);
  });
});
