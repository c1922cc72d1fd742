/**
 * A parsed YAML file that remembers where every key and value was written, so that a
 * problem found in the data (by ajv, or by the loader) can be reported as `line:column`
 * of the key path it concerns.
 */
import { isAlias, isMap, isScalar, isSeq, LineCounter, Parser, parseDocument } from 'yaml';
import type { CST, Document, Node as YamlNode, Pair } from 'yaml';

/**
 * Collections nested deeper than this are refused before the document is composed. The
 * yaml package composes nodes recursively, so 100 000 `[` (200 KB) would exhaust the call
 * stack, and an overflow that lands inside V8's regular-expression compiler aborts the
 * whole process instead of throwing. Honest rule files and sidecars nest 5 levels or so.
 */
export const MAX_YAML_DEPTH = 64;

/**
 * Offset of the first collection nested more than `MAX_YAML_DEPTH` deep in `text`, or
 * undefined. Walks the yaml package's concrete syntax tree, which its parser builds with
 * an explicit stack, using a stack of its own: nothing here recurses.
 */
export function tooDeeplyNested(text: string, lineCounter?: LineCounter): number | undefined {
  const stack: Array<{ token: CST.Token | undefined; depth: number }> = [];
  for (const token of new Parser(lineCounter?.addNewLine).parse(text)) stack.push({ token, depth: 0 });
  while (stack.length > 0) {
    const { token, depth } = stack.pop()!;
    if (token === undefined) continue;
    if (token.type === 'document') {
      stack.push({ token: token.value, depth });
    } else if (token.type === 'block-map' || token.type === 'block-seq' || token.type === 'flow-collection') {
      if (depth + 1 > MAX_YAML_DEPTH) return token.offset;
      for (const item of token.items) {
        if ('key' in item) stack.push({ token: item.key ?? undefined, depth: depth + 1 });
        stack.push({ token: item.value, depth: depth + 1 });
      }
    }
  }
  return undefined;
}

/** One step of a key path: a map key or a list index. */
export type Segment = string | number;

/** A problem before it is given a file and a line: a byte offset in the text. */
export interface PositionedProblem {
  offset: number;
  /** Key path the problem is about; empty for the file as a whole. */
  segments: Segment[];
  message: string;
}

export class YamlSource {
  readonly doc: Document.Parsed;
  /** Offset of a collection nested too deep to compose; the document is then empty. */
  readonly tooDeepAt: number | undefined;
  private readonly lineCounter: LineCounter;

  constructor(text: string) {
    this.lineCounter = new LineCounter();
    const deep = tooDeeplyNested(text, this.lineCounter);
    if (deep !== undefined) {
      // Not composed at all (see MAX_YAML_DEPTH); the line counter was filled by the check.
      this.tooDeepAt = deep;
      this.doc = parseDocument('', { logLevel: 'error' });
      return;
    }
    this.lineCounter = new LineCounter();
    // uniqueKeys: a key written twice is an error, not "the last one wins".
    // logLevel 'error': the yaml package must not print warnings from library code.
    this.doc = parseDocument(text, {
      lineCounter: this.lineCounter,
      prettyErrors: false,
      uniqueKeys: true,
      logLevel: 'error',
    });
  }

  /** 1-based line and column of a byte offset. */
  position(offset: number): { line: number; column: number } {
    const { line, col } = this.lineCounter.linePos(offset);
    return { line, column: col };
  }

  /**
   * Offset of the value at `segments`, or of its nearest ancestor that was written. An
   * empty value (`key:` and nothing) is placed at its key, where the reader's eye is.
   */
  valueOffset(segments: Segment[]): number {
    let node: unknown = this.doc.contents;
    let offset = rangeStart(node) ?? 0;
    for (const segment of segments) {
      const step = this.child(node, segment);
      if (step === undefined) break;
      node = step.value;
      const start =
        isEmptyScalar(step.value) && step.key !== undefined ? rangeStart(step.key) : rangeStart(step.value);
      if (start === undefined) break;
      offset = start;
    }
    return offset;
  }

  /** Offset of the key `key` in the map at `segments` (undefined when not written). */
  keyOffset(segments: Segment[], key: string): number | undefined {
    const node = this.nodeAt(segments);
    if (!isMap(node)) return undefined;
    const pair = node.items.find((p) => isScalar(p.key) && String(p.key.value) === key);
    return pair === undefined ? undefined : rangeStart(pair.key);
  }

  /** The key path of the map key written at `offset`, with the offset of its first occurrence. */
  keyAtOffset(offset: number): { segments: Segment[]; firstOffset: number } | undefined {
    const search = (node: unknown, path: Segment[]): { segments: Segment[]; firstOffset: number } | undefined => {
      if (isMap(node)) {
        for (const pair of node.items) {
          if (isScalar(pair.key)) {
            const key = String(pair.key.value);
            if (rangeStart(pair.key) === offset) {
              const first = node.items.find((p) => isScalar(p.key) && String(p.key.value) === key);
              return { segments: [...path, key], firstOffset: rangeStart(first?.key) ?? offset };
            }
            const inner = search(pair.value, [...path, key]);
            if (inner) return inner;
          }
        }
      } else if (isSeq(node)) {
        for (let i = 0; i < node.items.length; i++) {
          const inner = search(node.items[i], [...path, i]);
          if (inner) return inner;
        }
      }
      return undefined;
    };
    return search(this.doc.contents, []);
  }

  /** Offset of the first alias (`*name`) in the file, where an alias bomb starts to expand. */
  firstAliasOffset(): number | undefined {
    let best: number | undefined;
    const walk = (node: unknown): void => {
      if (isAlias(node)) {
        const start = rangeStart(node);
        if (start !== undefined && (best === undefined || start < best)) best = start;
      } else if (isMap(node)) {
        for (const pair of node.items) {
          walk(pair.key);
          walk(pair.value);
        }
      } else if (isSeq(node)) {
        for (const item of node.items) walk(item);
      }
    };
    walk(this.doc.contents);
    return best;
  }

  private nodeAt(segments: Segment[]): unknown {
    let node: unknown = this.doc.contents;
    for (const segment of segments) {
      const step = this.child(node, segment);
      if (step === undefined) return undefined;
      node = step.value;
    }
    return this.resolve(node);
  }

  private child(node: unknown, segment: Segment): { key?: unknown; value: unknown } | undefined {
    const here = this.resolve(node);
    if (isSeq(here) && typeof segment === 'number') {
      return segment < here.items.length ? { value: here.items[segment] } : undefined;
    }
    if (isMap(here)) {
      const pair = (here.items as Pair[]).find((p) => isScalar(p.key) && String(p.key.value) === String(segment));
      return pair === undefined ? undefined : { key: pair.key, value: pair.value };
    }
    return undefined;
  }

  /** Aliases point at their anchor: a problem in aliased data is shown where it was written. */
  private resolve(node: unknown): unknown {
    return isAlias(node) ? node.resolve(this.doc) : node;
  }
}

/** `/checks/kurtosis/whole` → `['checks', 'kurtosis', 'whole']` (RFC 6901 unescaping). */
export function pointerSegments(pointer: string): Segment[] {
  if (pointer === '') return [];
  return pointer
    .slice(1)
    .split('/')
    .map((s) => s.replace(/~1/g, '/').replace(/~0/g, '~'))
    .map((s) => (/^(0|[1-9][0-9]*)$/.test(s) ? Number(s) : s));
}

/**
 * `['channels', 0, 'checks', 'kurtosis']` → `channels[0].checks.kurtosis`. A key that is
 * not a plain word is quoted, so that the path stays unambiguous: `checks["a.b"]`.
 */
export function keyPath(segments: Segment[]): string {
  let out = '';
  for (const s of segments) {
    if (typeof s === 'number') out += `[${s}]`;
    else if (/^[A-Za-z0-9_$-]+$/.test(s)) out += out === '' ? s : `.${s}`;
    else out += `[${JSON.stringify(s)}]`;
  }
  return out;
}

function isEmptyScalar(node: unknown): boolean {
  return isScalar(node) && node.value === null && (node as { source?: string }).source === '';
}

function rangeStart(node: unknown): number | undefined {
  const range = (node as YamlNode | undefined)?.range;
  return Array.isArray(range) ? range[0] : undefined;
}
