import { describe, expect, it } from 'vitest';
import { canonicalJson, findDuplicateKey } from '../../src/audit/canonical.js';

describe('canonicalJson()', () => {
  it('sorts keys recursively, inside arrays too, and writes no whitespace', () => {
    const value = { b: 1, a: { d: [{ z: 1, y: 2 }], c: null }, e: 'x y' };
    expect(canonicalJson(value)).toBe('{"a":{"c":null,"d":[{"y":2,"z":1}]},"b":1,"e":"x y"}');
  });

  it('orders keys by UTF-16 code units, not by code points', () => {
    // U+1F600 is the surrogate pair D83D DE00 in UTF-16 (Unicode standard, §3.9), so it sorts
    // before U+FB01 by code units although its code point is larger.
    const value = { '\ufb01': 4, '\u{1f600}': 3, '\u20ac': 2, a: 1 };
    expect(canonicalJson(value)).toBe('{"a":1,"\u20ac":2,"\u{1f600}":3,"\ufb01":4}');
  });

  it('writes numbers as JSON.stringify does (ECMAScript Number::toString)', () => {
    const numbers = [1e21, 0.1, 5e-7, 123456789012345680000, -0, 2 ** 53, 1 / 3];
    expect(canonicalJson(numbers)).toBe(`[${numbers.map((n) => JSON.stringify(n)).join(',')}]`);
    // from memory, ECMA-262 Number::toString: exponent form from 1e21 and below 1e-6
    expect(canonicalJson([1e21, 5e-7, -0])).toBe('[1e+21,5e-7,0]');
  });

  it('escapes strings as JSON.stringify does', () => {
    const s = 'quote " backslash \\ newline \n tab \t nul \u0000 é';
    expect(canonicalJson({ s })).toBe(`{"s":${JSON.stringify(s)}}`);
  });

  it.each([
    ['Cannot write NaN at $.a[1] as canonical JSON: JSON has no NaN or infinities', { a: [1, Number.NaN] }],
    ['Cannot write Infinity at $.x.y as canonical JSON: JSON has no NaN or infinities', { x: { y: Number.POSITIVE_INFINITY } }],
    ['Cannot write undefined at $.u as canonical JSON', { u: undefined }],
    ['Cannot write a bigint at $.n as canonical JSON', { n: 1n }],
    ['Cannot write a Date at $.d as canonical JSON', { d: new Date(0) }],
  ])('refuses what JSON cannot hold: %s', (message, value) => {
    expect(() => canonicalJson(value)).toThrow(new TypeError(message));
  });

  it('parses back to the same value', () => {
    const value = { tool: { version: '1.0.0', name: 'vibgate' }, n: [0, -1.5, 1e-300], ok: true, none: null, nested: [[{}], []] };
    expect(JSON.parse(canonicalJson(value))).toEqual(value);
  });
});

describe('findDuplicateKey()', () => {
  it('finds a key written twice in one object, at its second place', () => {
    const text = '{"verdict":"pass","a":{"verdict":1},"verdict":"fail"}';
    expect(findDuplicateKey(text)).toEqual({ key: 'verdict', offset: text.lastIndexOf('"verdict"') });
  });

  it.each([
    ['the same key in sibling objects', '[{"a":1},{"a":2}]'],
    ['a key-like text inside a string value', '{"x":"\\"a\\":1","a":2}'],
    ['a string in an array followed by a colon-free value', '{"a":["a","a"]}'],
    ['pretty-printed JSON', JSON.stringify({ a: { b: 1 }, b: [1, { a: 2 }] }, null, 2)],
  ])('finds none for %s', (_, text) => {
    expect(findDuplicateKey(text)).toBeNull();
  });

  it('compares keys after unescaping them', () => {
    expect(findDuplicateKey('{"a":1,"\\u0061":2}')?.key).toBe('a');
  });
});
