/**
 * Canonical JSON: the one byte sequence a signature or a ledger hash is computed over, so
 * that re-indenting a record or reordering its keys does not change what was signed.
 *
 * It follows the key-sorting idea of RFC 8785 (JSON Canonicalization Scheme): object keys
 * sorted by their UTF-16 code units, recursively, and no whitespace. It does NOT implement
 * RFC 8785's full number serialisation rules and makes no claim of compliance: numbers are
 * written as ECMAScript's JSON.stringify writes them (shortest round-trip form), which is
 * what every JavaScript producer and verifier of vibgate records agrees on. Strings are
 * escaped as JSON.stringify escapes them.
 *
 * Only what JSON can hold is accepted: null, booleans, finite numbers, strings, arrays and
 * plain objects. NaN, ±Infinity, undefined, functions, bigints and class instances (Date,
 * Map, …) are refused with a TypeError naming where they are, rather than silently written
 * as null or dropped, because a signature over a silently changed value proves nothing.
 */
export function canonicalJson(value: unknown): string {
  return write(value, '$');
}

function write(value: unknown, where: string): string {
  if (value === null) return 'null';
  switch (typeof value) {
    case 'boolean':
      return value ? 'true' : 'false';
    case 'number':
      if (!Number.isFinite(value)) throw new TypeError(`Cannot write ${String(value)} at ${where} as canonical JSON: JSON has no NaN or infinities`);
      return JSON.stringify(value);
    case 'string':
      return JSON.stringify(value);
    case 'object':
      break;
    default:
      throw new TypeError(`Cannot write ${value === undefined ? 'undefined' : `a ${typeof value}`} at ${where} as canonical JSON`);
  }
  if (Array.isArray(value)) return `[${value.map((v, i) => write(v, `${where}[${i}]`)).join(',')}]`;
  const proto = Object.getPrototypeOf(value) as unknown;
  if (proto !== Object.prototype && proto !== null) {
    throw new TypeError(`Cannot write a ${(value as object).constructor?.name ?? 'non-plain object'} at ${where} as canonical JSON`);
  }
  // The default sort compares strings by UTF-16 code units, which is the order wanted.
  const keys = Object.keys(value).sort();
  const body = keys.map((k) => `${JSON.stringify(k)}:${write((value as Record<string, unknown>)[k], `${where}.${k}`)}`);
  return `{${body.join(',')}}`;
}

/**
 * The first key that occurs twice in one object of a JSON text, or null. JSON.parse keeps
 * the last of duplicate keys, so a record with an extra, earlier `"verdict": "pass"` would
 * still verify while a person reading it sees "pass": a verifier must refuse such text.
 * The text must already be valid JSON (this scanner does not validate).
 */
export function findDuplicateKey(text: string): { key: string; offset: number } | null {
  const stack: Array<Set<string> | null> = []; // a key set per open object, null per array
  for (let i = 0; i < text.length; i++) {
    const c = text[i];
    if (c === '{') stack.push(new Set());
    else if (c === '[') stack.push(null);
    else if (c === '}' || c === ']') stack.pop();
    else if (c === '"') {
      const start = i;
      for (i++; text[i] !== '"'; i++) if (text[i] === '\\') i++;
      const keys = stack[stack.length - 1];
      if (!keys) continue;
      let j = i + 1;
      while (text[j] === ' ' || text[j] === '\n' || text[j] === '\r' || text[j] === '\t') j++;
      if (text[j] !== ':') continue;
      const key = JSON.parse(text.slice(start, i + 1)) as string;
      if (keys.has(key)) return { key, offset: start };
      keys.add(key);
    }
  }
  return null;
}
