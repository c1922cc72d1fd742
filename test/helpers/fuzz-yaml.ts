/**
 * Generators of YAML-ish text for fuzzing the sidecar and rule-file loaders: random token
 * soup with the loaders' own keys in it, well-formed documents with wrong values,
 * `__proto__` and `constructor` keys, alias bombs and deep nesting.
 */
import fc from 'fast-check';
import { stringify } from 'yaml';

const PUNCTUATION = ['?', '-', '- ', ':', ': ', '[', ']', '{', '}', ',', '"', "'", '#', '|', '>', '|-', '>+', '---', '...', '%YAML 1.2', '%TAG ! tag:x,', '\t', '\\', '@', '`', '&', '*', '!'];
const SCALARS = ['null', '~', 'true', 'off', 'on', 'yes', '.inf', '-.inf', '.nan', '1e999', '0x1F', '0o7', '2048', '-1', '0', '0.5', '1_000', '""', "''", '2026-12-02', '!!binary AAAA', '!!js/function "f"', '!!str 1', '!!map {}', '!!set {a}', '!!omap [a: 1]'];
const PROTO_KEYS = ['__proto__', 'constructor', 'prototype', 'polluted', 'toString', 'hasOwnProperty'];

/** Random text made of YAML punctuation, scalars, anchors, and the given keys. */
export function yamlSoup(keys: readonly string[]): fc.Arbitrary<string> {
  const token = fc.oneof(
    { weight: 4, arbitrary: fc.constantFrom(...keys, ...PROTO_KEYS) },
    { weight: 3, arbitrary: fc.constantFrom(...PUNCTUATION) },
    { weight: 3, arbitrary: fc.constantFrom(...SCALARS) },
    { weight: 1, arbitrary: fc.constantFrom('&a', '*a', '&b', '*b', '<<: *a', '*missing') },
    { weight: 1, arbitrary: fc.string({ maxLength: 5 }) },
    { weight: 1, arbitrary: fc.integer().map(String) },
  );
  const line = fc.record({
    indent: fc.integer({ min: 0, max: 8 }),
    tokens: fc.array(token, { maxLength: 6 }),
    glue: fc.constantFrom(' ', '', ': ', ', '),
  }).map((l) => ' '.repeat(l.indent) + l.tokens.join(l.glue));
  return fc.array(line, { maxLength: 24 }).map((lines) => lines.join('\n'));
}

/** Well-formed YAML of a map whose keys are mostly known and whose values are anything. */
export function yamlOfMaps(keys: readonly string[], nested: Record<string, readonly string[]>): fc.Arbitrary<string> {
  const value = fc.oneof(
    { weight: 3, arbitrary: fc.jsonValue({ maxDepth: 2 }) },
    { weight: 2, arbitrary: fc.constantFrom(0, -1, 1, 2048, 1e308, 0.5, 'on', 'off', true, false, null, '', 'int16le', 'float32le', [1, 2], [2.5, 3.6]) },
  );
  const map = (known: readonly string[]): fc.Arbitrary<Record<string, unknown>> =>
    fc.dictionary(fc.oneof({ weight: 6, arbitrary: fc.constantFrom(...known) }, { weight: 1, arbitrary: fc.constantFrom(...PROTO_KEYS) }, { weight: 1, arbitrary: fc.string({ maxLength: 6 }) }), value, { maxKeys: 6 });
  const top = fc.tuple(map(keys), ...Object.entries(nested).map(([key, inner]) =>
    fc.option(fc.oneof(map(inner), fc.array(map(inner), { maxLength: 3 })), { freq: 2 }).map((v) => [key, v] as const),
  )).map(([base, ...sections]) => {
    const out: Record<string, unknown> = { ...base };
    for (const [key, v] of sections) if (v !== null) Object.defineProperty(out, key, { value: v, enumerable: true, writable: true, configurable: true });
    return out;
  });
  return top.map((data) => stringify(data));
}

/** A billion-laughs document: `levels` anchors, each aliasing the previous `fanout` times. */
export const aliasBomb = fc.record({ levels: fc.integer({ min: 2, max: 9 }), fanout: fc.integer({ min: 2, max: 10 }), key: fc.constantFrom('description', 'channels', 'name', 'x') }).map(({ levels, fanout, key }) => {
  const lines = ['l0: &l0 [lol, lol]'];
  for (let i = 1; i < levels; i++) lines.push(`l${i}: &l${i} [${Array.from({ length: fanout }, () => `*l${i - 1}`).join(', ')}]`);
  lines.push(`${key}: *l${levels - 1}`);
  return lines.join('\n') + '\n';
});

/** Collections nested `depth` deep, in the four ways YAML nests. */
export const deepNesting = fc.record({
  depth: fc.oneof(fc.constantFrom(10, 63, 64, 65, 100, 1000, 10_000, 100_000), fc.integer({ min: 1, max: 3000 })),
  style: fc.constantFrom('flow-seq', 'flow-map', 'block-seq', 'block-map'),
}).map(({ depth, style }) => {
  switch (style) {
    case 'flow-seq':
      return '['.repeat(depth) + ']'.repeat(depth);
    case 'flow-map':
      return '{a: '.repeat(depth) + '1' + '}'.repeat(depth);
    case 'block-seq':
      return '- '.repeat(depth) + 'x\n';
    default:
      // block maps need an indent a level; keep the file below the loaders' size limits
      return Array.from({ length: Math.min(depth, 600) }, (_, i) => `${' '.repeat(i)}k${i}:`).join('\n') + ' 1\n';
  }
});
