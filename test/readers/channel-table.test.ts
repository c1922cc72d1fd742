import { afterAll, describe, expect, it } from 'vitest';
import { execFileSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, rmSync, truncateSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, relative } from 'node:path';
import { loadChannelTable, sidecarForRecording, unmatchedPatterns } from '../../src/readers/channel-table.js';
import type { ChannelTable } from '../../src/readers/channel-table.js';
import { applySidecar } from '../../src/readers/sidecar.js';
import { openWav } from '../../src/readers/wav.js';
import { RecordingError } from '../../src/errors.js';
import { buildWav, FORMAT_FLOAT, interleave } from '../helpers/wav-writer.js';
import { uniformSource } from '../helpers/random.js';
import { skipWithout } from '../helpers/tools.js';

const dir = mkdtempSync(join(tmpdir(), 'vibgate-channel-table-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

let fileNumber = 0;
/** Writes a table into its own directory (so path patterns have a known root) and returns its path. */
function table(content: string | Buffer, name = 'channels.csv'): string {
  fileNumber += 1;
  const sub = join(dir, `t${fileNumber}`);
  mkdirSync(sub, { recursive: true });
  const path = join(sub, name);
  writeFileSync(path, content);
  return path;
}

async function errorOf(promise: Promise<unknown>): Promise<Error> {
  try {
    await promise;
  } catch (err) {
    return err as Error;
  }
  throw new Error('expected an error');
}

async function messageOf(content: string | Buffer): Promise<{ path: string; message: string }> {
  const path = table(content);
  const err = await errorOf(loadChannelTable(path));
  expect(err).toBeInstanceOf(RecordingError);
  return { path, message: err.message };
}

const HEADER = 'recording,index,name,unit,sensor,sensitivity,sensitivity-unit,full-scale,scale,group,sample-rate,note';

describe('loadChannelTable() reads a CSV table', () => {
  it('reads every column, in file order, skipping blank rows and comment rows', async () => {
    const path = table(
      [
        HEADER,
        '*.wav,0,acc-01,g,accelerometer,10.2,mV/g,50,,deck,,',
        ',,,,,,,,,,,first day only', // a comment row
        'bridge/day2/*.wav,1,acc-02,,,9.87,,,-2,,,replaced after day 1',
        ',,,,,,,,,,,', // what a spreadsheet writes for an empty row
        '',
        'ambient-*.csv,,,,,,,,,,2048,',
      ].join('\r\n'),
    );
    const loaded = await loadChannelTable(path);
    expect(loaded).toEqual({
      path,
      directory: join(dir, `t${fileNumber}`),
      rows: [
        {
          line: 2,
          pattern: '*.wav',
          channel: {
            index: 0,
            name: 'acc-01',
            unit: 'g',
            sensor: 'accelerometer',
            sensitivity: 10.2,
            sensitivityUnit: 'mV/g',
            fullScale: 50,
            group: 'deck',
          },
        },
        { line: 4, pattern: 'bridge/day2/*.wav', channel: { index: 1, name: 'acc-02', sensitivity: 9.87, scale: -2 } },
        { line: 7, pattern: 'ambient-*.csv', sampleRate: 2048 },
      ],
    } satisfies ChannelTable);
  });

  it('takes columns in any order and header names in any case, and drops spaces around values', async () => {
    const path = table('Name , Recording,INDEX\n  acc-01 ,run-*.wav, 3 \n');
    expect((await loadChannelTable(path)).rows).toEqual([
      { line: 2, pattern: 'run-*.wav', channel: { index: 3, name: 'acc-01' } },
    ]);
  });

  it('undoes RFC 4180 quoting: separators, doubled quotes and line breaks inside quotes', async () => {
    // RFC 4180 section 2, rules 5 to 7: a field may be enclosed in double quotes; fields
    // holding line breaks, double quotes or commas should be; a double quote inside is
    // written twice. The quoted line break makes the next row start on line 4.
    const path = table(
      'recording,index,name,group,note\r\n' +
        '"run-*.wav","0","acc ""A"", left","deck","two\r\nlines"\r\n' +
        'run-*.wav,1,acc-B,deck,\r\n',
    );
    expect((await loadChannelTable(path)).rows).toEqual([
      { line: 2, pattern: 'run-*.wav', channel: { index: 0, name: 'acc "A", left', group: 'deck' } },
      { line: 4, pattern: 'run-*.wav', channel: { index: 1, name: 'acc-B', group: 'deck' } },
    ]);
  });

  it('reads LF and lone CR line ends, a UTF-8 byte order mark, and no final line break', async () => {
    const bom = Buffer.from([0xef, 0xbb, 0xbf]);
    for (const text of ['recording,index,name\nr.wav,0,a\nr.wav,1,b', 'recording,index,name\rr.wav,0,a\rr.wav,1,b\r']) {
      const path = table(Buffer.concat([bom, Buffer.from(text)]));
      expect((await loadChannelTable(path)).rows.map((r) => [r.line, r.channel?.name])).toEqual([
        [2, 'a'],
        [3, 'b'],
      ]);
    }
  });

  it('reads a table separated by semicolons with decimal commas, as spreadsheets write it where the comma is the decimal separator', async () => {
    const path = table('recording;index;sensitivity;full-scale;scale\nrun-*.wav;0;10,2;50;-0,5\nrun-*.wav;1;9.87;1e2;2\n');
    expect((await loadChannelTable(path)).rows.map((r) => r.channel)).toEqual([
      { index: 0, sensitivity: 10.2, fullScale: 50, scale: -0.5 },
      { index: 1, sensitivity: 9.87, fullScale: 100, scale: 2 },
    ]);
  });

  it('reads tab-separated UTF-16 text with its byte order mark (spreadsheet "Unicode text")', async () => {
    const text = 'recording\tindex\tname\tunit\nrun-*.wav\t0\tMikrofon-1\tPa\n';
    const path = table(Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(text, 'utf16le')]), 'channels.txt');
    expect((await loadChannelTable(path)).rows).toEqual([
      { line: 2, pattern: 'run-*.wav', channel: { index: 0, name: 'Mikrofon-1', unit: 'Pa' } },
    ]);
  });

  it('reads a table that gives only sample rates', async () => {
    const path = table('recording,sample-rate\nambient-*.csv,2048\nshaker-*.csv,51200\n');
    expect((await loadChannelTable(path)).rows).toEqual([
      { line: 2, pattern: 'ambient-*.csv', sampleRate: 2048 },
      { line: 3, pattern: 'shaker-*.csv', sampleRate: 51200 },
    ]);
  });

  it('allows one name in different patterns and one sample rate repeated in a pattern', async () => {
    const path = table('recording,index,name,sample-rate\nday1/*.csv,0,acc-01,2048\nday2/*.csv,3,acc-01,\nday1/*.csv,1,acc-02,2048\n');
    expect((await loadChannelTable(path)).rows).toHaveLength(3);
  });

  it('splits quoted values as Python\'s csv module does (a reference RFC 4180 reader)', { skip: skipWithout('python3') }, async () => {
    // Seeded random names made of separators, quotes, line breaks and letters; both readers
    // must give back the same names. Python's csv module (excel dialect) is the reference.
    const random = uniformSource(20261202);
    const alphabet = ['a', 'B', '7', ',', ';', '"', '\n', '\r\n', '-', 'µ', ' '];
    const names: string[] = [];
    for (let i = 0; i < 200; i++) {
      let name = '';
      const length = 1 + Math.floor(random() * 12);
      for (let k = 0; k < length; k++) name += alphabet[Math.floor(random() * alphabet.length)];
      names.push(`${i}${name}x`); // unique, and no space at either end: values are trimmed
    }
    const quote = (s: string) => `"${s.replace(/"/g, '""')}"`;
    const text = `recording,index,name\r\n${names.map((n, i) => `r.wav,${i},${quote(n)}`).join('\r\n')}\r\n`;
    const path = table(text);
    const ours = (await loadChannelTable(path)).rows.map((r) => r.channel?.name);
    const script = 'import csv,json,sys\nwith open(sys.argv[1], newline="", encoding="utf-8") as f:\n  print(json.dumps([r[2] for r in list(csv.reader(f))[1:]]))';
    const python = JSON.parse(execFileSync('python3', ['-c', script, path], { encoding: 'utf8' })) as string[];
    expect(ours).toEqual(python);
    expect(ours).toEqual(names);
  });
});

describe('loadChannelTable() refuses bad tables with the line, column and what is wrong', () => {
  const cases: Array<[string, string, string]> = [
    ['an unknown column', 'recording,index,gain\nr.wav,0,3\n', '1:17 unknown column "gain" (known columns: recording, index, name, unit, sensor, sensitivity, sensitivity-unit, full-scale, scale, group, sample-rate, note)'],
    ['a column named channel, whose counting cannot be told', 'recording,channel,name\nr.wav,1,a\n', '1:11 unknown column "channel" (the channel position is the column "index", counted from 0)'],
    ['a column given twice', 'recording,index,name,Name\nr.wav,0,a,b\n', '1:22 column "name" is already column 3'],
    ['no recording column', 'index,name\n0,a\n', '1:1 missing column "recording" (the recordings a row is for)'],
    ['channel columns without index', 'recording,name\nr.wav,a\n', '1:1 missing column "index" (the channel position, counted from 0, that a row describes)'],
    ['a header that describes nothing', 'recording,note\nr.wav,x\n', '1:1 the header names no column that describes a recording (known columns: recording, index, name, unit, sensor, sensitivity, sensitivity-unit, full-scale, scale, group, sample-rate, note)'],
    ['a bad number', 'recording,index,sensitivity\nr.wav,0,high\n', '2:9 sensitivity: "high" is not a number'],
    ['NaN', 'recording,index,full-scale\nr.wav,0,NaN\n', '2:9 full-scale: "NaN" is not a number'],
    ['a quoted decimal comma in a comma-separated table', 'recording,index,sensitivity\nr.wav,0,"10,2"\n', '2:9 sensitivity: "10,2" is not a number (write the decimal separator as a point, or separate the columns with ";")'],
    ['a negative index', 'recording,index,name\nr.wav,-1,a\n', '2:7 index: must not be negative, not -1 (channels are counted from 0)'],
    ['a non-integer index', 'recording,index,name\nr.wav,2.5,a\n', '2:7 index: must be a whole number, not 2.5'],
    ['an index no recording can have', 'recording,index,name\nr.wav,65535,a\n', '2:7 index: 65535 is beyond the 65535 channels a recording can have'],
    ['a sensitivity of 0', 'recording,index,sensitivity\nr.wav,0,0\n', '2:9 sensitivity: must be greater than 0, not 0'],
    ['a negative sample rate', 'recording,sample-rate\nr.csv,-2048\n', '2:7 sample-rate: must be greater than 0, not -2048'],
    ['a scale of 0', 'recording,index,scale\nr.wav,0,0.0\n', '2:9 scale: must not be 0'],
    ['a row without a recording', 'recording,index,name\n,0,a\n', '2:1 recording: missing (a file name or path pattern such as run-*.wav)'],
    ['channel values without an index', 'recording,index,name,unit\nr.wav,,a,g\n', '2:7 index: missing; the row gives name, unit but not which channel (counted from 0)'],
    ['a row of only a pattern', 'recording,index,name\nr.wav,,\n', '2:7 index: missing; the row gives neither a channel index nor a sample rate'],
    ['a pattern of only a sample rate column left empty', 'recording,sample-rate\nr.csv,\n', '2:7 sample-rate: missing; the row gives neither a channel index nor a sample rate'],
    ['an absolute pattern', 'recording,index,name\n/data/*.wav,0,a\n', '2:1 recording: "/data/*.wav" is an absolute path; write a file name pattern or a path relative to the table\'s directory'],
    ['a Windows absolute pattern', 'recording,index,name\nC:\\data\\*.wav,0,a\n', '2:1 recording: "C:\\data\\*.wav" is an absolute path; write a file name pattern or a path relative to the table\'s directory'],
    ['a directory pattern', 'recording,index,name\nbridge/day2/,0,a\n', '2:1 recording: "bridge/day2/" names a directory; add a file name pattern such as bridge/day2/*.wav'],
    ['a row that lost a separator', 'recording,index,name,unit\nr.wav,0,a\n', '2:1 the row has 3 values but the header row has 4 columns (a separator lost?)'],
    ['a value beyond the header', 'recording,index,name\nr.wav,0,a,g\n', '2:11 a value beyond the 3 columns of the header row'],
    ['a value under an unnamed column', 'recording,index,,name\nr.wav,0,x,a\n', '2:9 a value in column 3, which has no name in the header row'],
    ['a quote that is not closed', 'recording,index,name\nr.wav,0,"acc-01\nr.wav,1,b\n', '2:9 the quoted value that starts here has no closing quote'],
    ['a quote inside an unquoted value', 'recording,index,name\nr.wav,0,acc"01\n', '2:12 a quote inside an unquoted value; quote the whole value and double the quote ("")'],
    ['text after a closing quote', 'recording,index,name\nr.wav,0,"acc"01\n', '2:14 "0" after a closing quote; a quoted value must end at a separator or the end of the line'],
  ];
  it.each(cases)('refuses %s', async (_, content, detail) => {
    const { path, message } = await messageOf(content);
    expect(message).toBe(`Cannot read "${path}": ${detail}`);
  });

  it('refuses a channel described twice for one pattern, also when written differently', async () => {
    const { path, message } = await messageOf('recording,index,name\nrun-*.wav,3,a\n.\\run-*.wav,3,b\n');
    expect(message).toBe(`Cannot read "${path}": 3:13 index: channel 3 of ".\\\\run-*.wav" is already described on line 2`);
  });

  it('refuses one name for two channels of one pattern', async () => {
    const { path, message } = await messageOf('recording,index,name\nrun-*.wav,0,acc-01\nrun-*.wav,1,acc-01\n');
    expect(message).toBe(`Cannot read "${path}": 3:13 name: "acc-01" is already the name of channel 0 of "run-*.wav" (line 2)`);
  });

  it('refuses two sample rates for one pattern', async () => {
    const { path, message } = await messageOf('recording,index,sample-rate\nrun-*.csv,0,2048\nrun-*.csv,1,4096\n');
    expect(message).toBe(`Cannot read "${path}": 3:13 sample-rate: 4096 differs from the 2048 given for "run-*.csv" on line 2`);
  });

  it('lists every problem in file order', async () => {
    const { path, message } = await messageOf(
      [
        'recording,index,name,unit,scale', // line 1
        'r.wav,x,a,g,', //                    2:7 index
        'r.wav,1,b,g,0', //                   3:13 scale
        'r.wav,2,a,g,', //                    fine: "a" on line 2 had a bad index and was not taken
        'r.wav,3,c,g', //                     5:1 lost separator
      ].join('\n'),
    );
    expect(message).toBe(
      `Cannot read "${path}": 3 problems:\n` +
        '  2:7 index: "x" is not a number\n' +
        '  3:13 scale: must not be 0\n' +
        '  5:1 the row has 4 values but the header row has 5 columns (a separator lost?)',
    );
  });

  it('lists at most 100 problems and counts the rest', async () => {
    const rows = Array.from({ length: 150 }, (_, i) => `r.wav,${i},a,zero`);
    const { message } = await messageOf(`recording,index,name,scale\n${rows.join('\n')}\n`);
    const lines = message.split('\n');
    expect(lines[0]).toMatch(/: 150 problems:$/);
    expect(lines).toHaveLength(1 + 100 + 1);
    expect(lines[1]).toBe('  2:11 scale: "zero" is not a number');
    expect(lines[100]).toBe('  101:12 scale: "zero" is not a number');
    expect(lines[101]).toBe('  (and 50 more)');
  });

  it('refuses an empty file, a file of only separators, and a header without rows', async () => {
    for (const [content, detail] of [
      ['', 'the file is empty'],
      ['\n  \n', 'the file is empty'],
      [',,,\n,,,\n', 'the file holds no values, only separators'],
      [`${HEADER}\n,,,,,,,,,,,\n`, 'has a header row but no rows'],
    ]) {
      const { path, message } = await messageOf(content);
      expect(message).toBe(`Cannot read "${path}": ${detail}`);
    }
  });

  it('refuses binary and non-UTF-8 files', async () => {
    const zero = await messageOf(Buffer.from('recording,index\n\0\0'));
    expect(zero.message).toBe(`Cannot read "${zero.path}": has a zero byte at byte 16; a channel table is text (CSV)`);
    const latin1 = await messageOf(Buffer.from('recording,index,unit\nr.wav,0,\xb5m/s\n', 'latin1'));
    expect(latin1.message).toBe(`Cannot read "${latin1.path}": is not UTF-8 text; save the table as CSV in UTF-8`);
  });

  it('refuses a missing file, a directory and a table over 16 MiB', async () => {
    const missing = join(dir, 'no-such-table.csv');
    expect((await errorOf(loadChannelTable(missing))).message).toBe(`Cannot read "${missing}": file not found`);
    expect((await errorOf(loadChannelTable(dir))).message).toBe(`Cannot read "${dir}": is not a file`);
    const big = table('');
    truncateSync(big, 16 * 1024 * 1024 + 200 * 1024); // sparse: nothing is written
    expect((await errorOf(loadChannelTable(big))).message).toBe(
      `Cannot read "${big}": is 16.2 MiB; a channel table may be at most 16 MiB`,
    );
  });
});

describe('sidecarForRecording() gives what the table says about one recording', () => {
  it('matches a pattern without / by the file name, wherever the recording lies', async () => {
    const path = table('recording,index,name\nrun-??.wav,0,acc-01\n');
    const loaded = await loadChannelTable(path);
    for (const recording of ['run-01.wav', join(dir, 'elsewhere', 'deep', 'run-02.wav'), relative(process.cwd(), join(dir, 'run-03.wav'))]) {
      expect(sidecarForRecording(loaded, recording)).toEqual({ path: `${path} line 2`, channels: [{ index: 0, name: 'acc-01' }] });
    }
    expect(sidecarForRecording(loaded, 'run-100.wav')).toBeUndefined();
    expect(sidecarForRecording(loaded, 'run-01.wav.bak')).toBeUndefined();
  });

  it('matches a pattern with / against the path relative to the table\'s directory, segment by segment', async () => {
    const path = table(
      [
        'recording,index,name',
        'bridge/day2/*.wav,0,day2', // line 2
        'bridge\\day3\\*.wav,0,day3', // line 3, written on Windows
        'bridge/**/pier-?.wav,1,pier', // line 4
      ].join('\n'),
    );
    const root = join(dir, `t${fileNumber}`);
    const loaded = await loadChannelTable(path);
    const names = (recording: string) => sidecarForRecording(loaded, recording)?.channels.map((c) => c.name);
    // Given relative to the current directory, as a command line gives it, or absolute.
    expect(names(relative(process.cwd(), join(root, 'bridge', 'day2', 'r.wav')))).toEqual(['day2']);
    expect(names(join(root, 'bridge', 'day2', 'r.wav'))).toEqual(['day2']);
    expect(names(join(root, 'bridge', 'day3', 'r.wav'))).toEqual(['day3']);
    // `*` does not cross a `/`, and the path is taken from the table's directory, not the file name.
    expect(names(join(root, 'bridge', 'day2', 'extra', 'r.wav'))).toBeUndefined();
    expect(names(join(dir, 'bridge', 'day2', 'r.wav'))).toBeUndefined();
    expect(names('r.wav')).toBeUndefined();
    // `**` stands for no segment or any number of them.
    expect(names(join(root, 'bridge', 'pier-1.wav'))).toEqual(['pier']);
    expect(names(join(root, 'bridge', 'day2', 'pier-2.wav'))).toEqual(['day2', 'pier']);
    expect(names(join(root, 'bridge', 'a', 'b', 'c', 'pier-3.wav'))).toEqual(['pier']);
    expect(names(join(root, 'pier-4.wav'))).toBeUndefined();
  });

  it('applies rows in file order, a later row replacing only the cells it gives', async () => {
    const path = table(
      [
        'recording,index,name,unit,sensor,sensitivity,sample-rate',
        '*.csv,0,acc-01,g,accelerometer,10.2,2048', // line 2
        '*.csv,1,acc-02,g,accelerometer,10.4,2048', // line 3
        'other-*.csv,0,x,,,,', //                      line 4: does not match
        'run-7.csv,1,,,,9.87,4096', //                 line 5: the sensor replaced before run 7
      ].join('\n'),
    );
    const loaded = await loadChannelTable(path);
    expect(sidecarForRecording(loaded, 'run-7.csv')).toEqual({
      path: `${path} lines 2–3, 5`,
      sampleRate: 4096,
      channels: [
        { index: 0, name: 'acc-01', unit: 'g', sensor: 'accelerometer', sensitivity: 10.2 },
        { index: 1, name: 'acc-02', unit: 'g', sensor: 'accelerometer', sensitivity: 9.87 },
      ],
    });
    expect(sidecarForRecording(loaded, 'run-8.csv')?.channels[1].sensitivity).toBe(10.4);
    expect(sidecarForRecording(loaded, 'run-8.csv')?.sampleRate).toBe(2048);
    // Entries come out in channel order, whatever the row order.
    const reversed = await loadChannelTable(table('recording,index,name\nr.wav,5,f\nr.wav,2,c\n'));
    expect(sidecarForRecording(reversed, 'r.wav')?.channels.map((c) => c.index)).toEqual([2, 5]);
  });

  it('describes a 200-recording campaign and names the patterns that matched nothing', async () => {
    // A campaign of runs run-000..run-199 with 8 channels; the sensor on channel 3 was
    // replaced from run 100 on. Two patterns are for recordings that are not there.
    const rows = ['recording,index,name,unit,sensor,sensitivity,sensitivity-unit,group'];
    for (let c = 0; c < 8; c++) rows.push(`run-*.wav,${c},acc-0${c + 1},g,accelerometer,10.${c},mV/g,deck`);
    rows.push('run-1??.wav,3,,,,9.5,,'); //      line 10
    rows.push('run-2??.wav,0,,,,11,,'); //       line 11: no run 200 and over
    rows.push('pier/day3/*.wav,0,,,,11,,'); //   line 12: no pier directory
    const path = table(rows.join('\n'));
    const root = join(dir, `t${fileNumber}`);
    const loaded = await loadChannelTable(path);
    const recordings = Array.from({ length: 200 }, (_, i) => join(root, 'deck', `run-${String(i).padStart(3, '0')}.wav`));
    const sidecars = recordings.map((r) => sidecarForRecording(loaded, r));
    expect(sidecars.every((s) => s?.channels.length === 8)).toBe(true);
    const channel3 = sidecars.map((s) => s?.channels[3].sensitivity);
    expect(channel3.filter((v) => v === 10.3)).toHaveLength(100);
    expect(channel3.slice(100).every((v) => v === 9.5)).toBe(true);
    expect(sidecars[0]?.path).toBe(`${path} lines 2–9`);
    expect(sidecars[150]?.path).toBe(`${path} lines 2–10`);
    expect(sidecars[150]?.channels[3]).toEqual({
      index: 3, name: 'acc-04', unit: 'g', sensor: 'accelerometer', sensitivity: 9.5, sensitivityUnit: 'mV/g', group: 'deck',
    });
    expect(unmatchedPatterns(loaded, recordings)).toEqual([
      { pattern: 'run-2??.wav', line: 11 },
      { pattern: 'pier/day3/*.wav', line: 12 },
    ]);
    expect(unmatchedPatterns(loaded, [])).toHaveLength(4);
  });
});

describe('a table row reaches the recording through applySidecar()', () => {
  /** A 2-channel float32 WAV at 8000 Hz: channel 0 ramps, channel 1 is −value. */
  async function floatWav(root: string, name: string): Promise<string> {
    const samples = [0, 0.25, 0.5, -0.75];
    const bytes = buildWav({
      fmt: { formatTag: FORMAT_FLOAT, channels: 2, bitsPerSample: 32, sampleRate: 8000 },
      data: interleave('float32', [samples, samples.map((v) => -v)]),
    });
    mkdirSync(root, { recursive: true });
    const path = join(root, name);
    writeFileSync(path, bytes);
    return path;
  }

  it('names, units, full scale and scale from the table are applied to a WAV file', async () => {
    const path = table(
      [
        'recording,index,name,unit,sensor,full-scale,scale,group,sample-rate',
        'shaker-*.wav,0,acc-01,g,accelerometer,50,,deck,8000',
        'shaker-*.wav,1,force,N,force,,4,,',
      ].join('\n'),
    );
    const root = join(dir, `t${fileNumber}`);
    const wavPath = await floatWav(join(root, 'day1'), 'shaker-01.wav');
    const recording = applySidecar(await openWav(wavPath), sidecarForRecording(await loadChannelTable(path), wavPath)!);
    expect(recording.sampleRate).toBe(8000);
    expect(recording.channels).toEqual([
      { index: 0, name: 'acc-01', unit: 'g', sensor: 'accelerometer', group: 'deck', clipLow: -50, clipHigh: 50 },
      { index: 1, name: 'force', unit: 'N', sensor: 'force' },
    ]);
    const values: number[][] = [[], []];
    for await (const block of recording.blocks()) block.channels.forEach((v, c) => values[c].push(...v));
    // Float WAV is not rescaled by full-scale (sidecar.ts); scale 4 multiplies channel 1.
    // The samples are exact in float32 (multiples of 1/4).
    expect(values).toEqual([
      [0, 0.25, 0.5, -0.75],
      [-0, -1, -2, 3],
    ]);
  });

  it('applySidecar names the table and its lines when a row does not fit the recording', async () => {
    const path = table('recording,index,name\nshaker-*.wav,0,acc-01\nshaker-*.wav,5,acc-06\n');
    const root = join(dir, `t${fileNumber}`);
    const wavPath = await floatWav(root, 'shaker-02.wav');
    const loaded = await loadChannelTable(path);
    const recording = await openWav(wavPath);
    expect(() => applySidecar(recording, sidecarForRecording(loaded, wavPath)!)).toThrow(
      new RecordingError(
        `${path} lines 2–3`,
        `channels[1] is for channel index 5 but "${wavPath}" has 2 channels (index 0 to 1)`,
      ),
    );
    const rate = await loadChannelTable(table('recording,sample-rate\nshaker-*.wav,4096\n'));
    expect(() => applySidecar(recording, sidecarForRecording(rate, wavPath)!)).toThrow(
      `Cannot read "${rate.path} line 2": sample-rate is 4096 Hz but the WAV header of "${wavPath}" says 8000 Hz`,
    );
  });
});
