/**
 * A writer of Universal File Format files for test fixtures: dataset 58 time histories in
 * ASCII or binary (58b), and other datasets to stand beside them. Written from the public
 * description (University of Cincinnati SDRL, "Universal Dataset Number 58", and its note
 * on the binary variant); it writes exactly what it is told, including wrong things
 * (counts that lie, truncated data, missing delimiters, unknown byte orders).
 *
 * Layout it follows:
 * - each dataset between two lines `    -1` (I6); the line after the opening one holds the
 *   dataset number (I6): `    58`, or for binary
 *   `    58b` + byte order, floating-point format, ASCII lines (11), bytes, 4 unused
 *   fields, (I6,1A1,I6,I6,I12,I12,I6,I6,I12,I12);
 * - records 1–5: ID lines 1–4 and a date line (80A1);
 * - record 6: (I5,I10,I5,I10,1X,A10,I10,I4,1X,A10,I10,I4) function type, function ID,
 *   version, load case, response entity, node, direction, reference entity, node, direction;
 * - record 7: (3I10,3E13.5) ordinate data type, number of values, abscissa spacing,
 *   abscissa minimum, increment, z-axis value;
 * - records 8–11: (I10,3I5,2(1X,A20)) specific data type, length/force/temperature
 *   exponents, axis label, units label (abscissa, ordinate, denominator, z axis);
 * - data: real single 6E13.5, real double 4E20.12; uneven spacing interleaves abscissa
 *   values (single: 6E13.5 as x, y, x, y ...; double: 2(E13.5,E20.12)); 58b: the raw
 *   IEEE 754 values in the declared byte order, right after record 11, with the closing
 *   `    -1` right after them.
 * Numbers are printed as C's %E does (`-1.23456E+00`), the common form in files written
 * by programs other than Fortran.
 */
import { mkdtemp, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

export type Precision = 'single' | 'double';

export interface Uff58Spec {
  /** Ordinate values, one per point. */
  values: ArrayLike<number>;
  /** Real single (ordinate data type 2, default) or real double (4). */
  precision?: Precision;
  /** ID line 1 (default `NONE`). */
  name?: string;
  /** ID lines 2–4 and the date line (records 2–5); default `NONE` and a fixed date. */
  idLines?: string[];
  /** Record 6 function type (default 1, time response). */
  functionType?: number;
  /** Record 6 response entity name (default `NONE`), node (default 0) and direction (default 0). */
  entity?: string;
  node?: number;
  direction?: number;
  /** Sampling interval in seconds (default 0.001, exact in E13.5), printed E13.5 unless `incrementText`. */
  increment?: number;
  /** Record 7's increment field exactly as it is to appear (any width). */
  incrementText?: string;
  /** Abscissa minimum, the start time in seconds (default 0). */
  abscissaMin?: number;
  /** Abscissa values for uneven spacing: written as spacing 0, interleaved with the ordinates. */
  abscissa?: ArrayLike<number>;
  /** Overrides of record 7: ordinate data type, number of values, abscissa spacing. */
  ordinateType?: number;
  count?: number;
  spacing?: number;
  /** Record 8 specific data type (default 17, time). */
  abscissaType?: number;
  /** Record 8 units label (default `s`). */
  abscissaUnit?: string;
  /** Record 9 specific data type (default 12, acceleration), axis label and units label. */
  ordinateDataType?: number;
  axisLabel?: string;
  unit?: string;
}

export interface Uff58Encoding {
  /** Write dataset 58b; the fields default to the truth (little-endian IEEE, 11 lines, the byte count). */
  binary?: {
    byteOrder?: number;
    floatFormat?: number;
    asciiLines?: number;
    bytes?: number;
    /** Write a line break between the binary data and the closing `-1` (some writers do). */
    lineBreakAfterData?: boolean;
    /** Uneven real double: bytes of each abscissa value (default 8). */
    abscissaBytes?: 4 | 8;
  };
  /** Line break (default LF). */
  lineEnd?: '\n' | '\r\n';
  /** Exponent letter of ASCII numbers (default E; D as Fortran double precision writes). */
  exponentLetter?: 'E' | 'D';
  /** Pad every text line with blanks to 80 columns. */
  padTo80?: boolean;
  /** Write only the first this many points (the header still declares them all). */
  writePoints?: number;
  /** Write these ordinates after the declared ones (ASCII only, on lines of their own). */
  extraValues?: number[];
  /** Write the opening / closing `    -1` (default true). */
  opening?: boolean;
  closing?: boolean;
}

/** Number of values a data line holds, and field widths, per the Fortran formats. */
const SINGLE = { width: 13, digits: 5, perLine: 6 };
const DOUBLE = { width: 20, digits: 12, perLine: 4 };

/** A number as C's %W.DE prints it (`-1.23456E+00`), with E or D; NaN and Inf as words. */
export function formatE(value: number, width: number, digits: number, letter: 'E' | 'D' = 'E'): string {
  let text: string;
  if (Number.isNaN(value)) text = 'NaN';
  else if (!Number.isFinite(value)) text = value > 0 ? 'Inf' : '-Inf';
  else {
    const [mantissa, exponent] = value.toExponential(digits).split('e');
    const e = Number(exponent);
    text = `${mantissa}${letter}${e < 0 ? '-' : '+'}${String(Math.abs(e)).padStart(2, '0')}`;
  }
  return text.padStart(width);
}

/** The values as an ASCII dataset 58 prints them and a reader parses them back. */
export function printedValues(values: ArrayLike<number>, precision: Precision = 'single'): Float64Array {
  const f = precision === 'single' ? SINGLE : DOUBLE;
  return Float64Array.from(values, (v) => Number(formatE(v, f.width, f.digits)));
}

const int = (v: number, width: number): string => String(v).padStart(width);
const text = (t: string, width: number): string => t.slice(0, width).padEnd(width);

/** One whole dataset 58 or 58b, delimiters included. */
export function dataset58(spec: Uff58Spec, encoding: Uff58Encoding = {}): Buffer {
  const eol = encoding.lineEnd ?? '\n';
  const letter = encoding.exponentLetter ?? 'E';
  const line = (t: string): string => (encoding.padTo80 ? t.padEnd(80) : t) + eol;
  const precision = spec.precision ?? 'single';
  const n = spec.values.length;
  const uneven = spec.abscissa !== undefined;
  const written = Math.min(n, encoding.writePoints ?? n);

  const valueBytes = precision === 'single' ? 4 : 8;
  const xBytes = !uneven ? 0 : precision === 'single' ? 4 : (encoding.binary?.abscissaBytes ?? 8);
  const trueBytes = n * (valueBytes + xBytes);

  let head = '';
  if (encoding.opening !== false) head += line('    -1');
  if (encoding.binary) {
    const b = encoding.binary;
    head += line(
      `${int(58, 6)}b${int(b.byteOrder ?? 1, 6)}${int(b.floatFormat ?? 2, 6)}${int(b.asciiLines ?? 11, 12)}` +
        `${int(b.bytes ?? trueBytes, 12)}${int(0, 6)}${int(0, 6)}${int(0, 12)}${int(0, 12)}`,
    );
  } else {
    head += line(int(58, 6));
  }
  const ids = [spec.name ?? 'NONE', ...(spec.idLines ?? ['NONE', 'NONE', 'NONE', '01-JAN-25 12:00:00'])];
  for (let k = 0; k < 5; k++) head += line(ids[k] ?? 'NONE');
  head += line(
    `${int(spec.functionType ?? 1, 5)}${int(0, 10)}${int(0, 5)}${int(0, 10)} ${text(spec.entity ?? 'NONE', 10)}` +
      `${int(spec.node ?? 0, 10)}${int(spec.direction ?? 0, 4)} ${text('NONE', 10)}${int(0, 10)}${int(0, 4)}`,
  );
  const ordinateType = spec.ordinateType ?? (precision === 'single' ? 2 : 4);
  head += line(
    `${int(ordinateType, 10)}${int(spec.count ?? n, 10)}${int(spec.spacing ?? (uneven ? 0 : 1), 10)}` +
      `${formatE(spec.abscissaMin ?? 0, 13, 5, letter)}` +
      `${spec.incrementText ?? formatE(spec.increment ?? 0.001, 13, 5, letter)}${formatE(0, 13, 5, letter)}`,
  );
  const axis = (type: number, label: string, unit: string): string =>
    line(`${int(type, 10)}${int(0, 5)}${int(0, 5)}${int(0, 5)} ${text(label, 20)} ${text(unit, 20)}`);
  head += axis(spec.abscissaType ?? 17, 'Time', spec.abscissaUnit ?? 's');
  head += axis(spec.ordinateDataType ?? 12, spec.axisLabel ?? 'Acceleration', spec.unit ?? 'NONE');
  head += axis(0, 'NONE', 'NONE');
  head += axis(0, 'NONE', 'NONE');

  let tail = encoding.closing === false ? '' : line('    -1');
  if (encoding.binary) {
    const data = Buffer.alloc(written * (valueBytes + xBytes));
    const view = new DataView(data.buffer, data.byteOffset, data.byteLength);
    const little = (encoding.binary.byteOrder ?? 1) !== 2;
    let o = 0;
    for (let i = 0; i < written; i++) {
      if (xBytes === 4) view.setFloat32(o, spec.abscissa![i], little);
      if (xBytes === 8) view.setFloat64(o, spec.abscissa![i], little);
      o += xBytes;
      if (valueBytes === 4) view.setFloat32(o, spec.values[i], little);
      else view.setFloat64(o, spec.values[i], little);
      o += valueBytes;
    }
    if (encoding.binary.lineBreakAfterData) tail = eol + tail;
    return Buffer.concat([Buffer.from(head, 'utf8'), data, Buffer.from(tail, 'latin1')]);
  }

  // ASCII data: the fields of a line, in order, then cut into lines
  const fields: string[] = [];
  const f = precision === 'single' ? SINGLE : DOUBLE;
  for (let i = 0; i < written; i++) {
    if (uneven) fields.push(formatE(spec.abscissa![i], 13, 5, letter));
    fields.push(formatE(spec.values[i], f.width, f.digits, letter));
  }
  const perLine = uneven && precision === 'double' ? 4 : f.perLine;
  let data = '';
  for (let k = 0; k < fields.length; k += perLine) data += line(fields.slice(k, k + perLine).join(''));
  for (const v of encoding.extraValues ?? []) data += line(formatE(v, f.width, f.digits, letter));
  return Buffer.from(head + data + tail, 'utf8');
}

/** Any dataset written as text lines between its delimiters, e.g. `textDataset('151', [...])`. */
export function textDataset(number: string, lines: string[], lineEnd: '\n' | '\r\n' = '\n'): Buffer {
  return Buffer.from(['    -1', number.padStart(6), ...lines, '    -1'].map((l) => l + lineEnd).join(''), 'utf8');
}

/** A dataset 151 (header: model file, description, program, dates) as writers put first. */
export function dataset151(lineEnd: '\n' | '\r\n' = '\n'): Buffer {
  return textDataset(
    '151',
    ['vibgate-fixture.unv', 'NONE', 'vibgate test writer', '01-JAN-25 12:00:00', '', '01-JAN-25 12:00:00', 'vibgate'],
    lineEnd,
  );
}

/** A dataset 164 (units: code, description, temperature mode, conversion factors), D exponents. */
export function dataset164(lineEnd: '\n' | '\r\n' = '\n'): Buffer {
  return textDataset(
    '164',
    [
      '         1SI - mks (Newton)           2',
      '    1.00000000000000000D+00    1.00000000000000000D+00    1.00000000000000000D+00',
      '    1.00000000000000000D+00    2.73150000000000000D+02',
    ],
    lineEnd,
  );
}

/** Datasets one after the other. */
export function uffFile(...datasets: Uint8Array[]): Buffer {
  return Buffer.concat(datasets);
}

/** A fresh directory under the system temp directory for one test file's fixtures. */
export async function fixtureDir(prefix = 'vibgate-uff-'): Promise<string> {
  return mkdtemp(join(tmpdir(), prefix));
}

/** Writes `bytes` (or text) to `dir/name` and returns the path. */
export async function writeFixture(dir: string, name: string, bytes: Uint8Array | string): Promise<string> {
  const path = join(dir, name);
  await writeFile(path, bytes);
  return path;
}
