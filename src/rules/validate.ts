/**
 * Validation of one rule file's data against the rule-file schema, with ajv's errors
 * turned into plain words placed at the YAML key they concern, plus what the schema cannot
 * say: that every `[low, high]` range has low ≤ high.
 */
import { Ajv2020 } from 'ajv/dist/2020.js';
import type { ErrorObject, ValidateFunction } from 'ajv';
import { checks, getCheck } from '../checks/registry.js';
import type { JsonSchema } from '../checks/types.js';
import { isRangeSchema, rulesSchema } from './schema.js';
import { pointerSegments, type PositionedProblem, type Segment, type YamlSource } from './yaml-source.js';

let validator: ValidateFunction | undefined;

function rulesValidator(): ValidateFunction {
  // strictNumbers: YAML `.inf` and `.nan` are numbers to JavaScript but never a valid limit.
  validator ??= new Ajv2020({ allErrors: true, strict: true, strictNumbers: true, verbose: true }).compile(rulesSchema());
  return validator;
}

/** Every problem of one file's data, in no particular order. */
export function validateRuleData(data: unknown, source: YamlSource): PositionedProblem[] {
  const validate = rulesValidator();
  const problems: PositionedProblem[] = [];
  if (!validate(data)) {
    for (const error of pickRelevant(validate.errors ?? [])) problems.push(describeError(error, source));
  }
  problems.push(...invertedRanges(data, source));
  return dedupe(problems);
}

// ---------------------------------------------------------------------------------------
// anyOf: ajv reports every branch's failure; a person wants the one that was meant.

type AjvError = ErrorObject & { composite?: string };

/**
 * For each failed `anyOf`, keeps the errors of the branch whose type fits the value (an
 * object given for a check is a settings map: its errors are what matter). When no branch
 * fits, the branch errors become one "must be A or B" message.
 */
function pickRelevant(errors: ErrorObject[]): AjvError[] {
  let list: AjvError[] = [...errors];
  const anyOfs = list
    .filter((e) => e.keyword === 'anyOf')
    .sort((a, b) => b.schemaPath.length - a.schemaPath.length);
  for (const anyOf of anyOfs) {
    const prefix = `${anyOf.schemaPath}/`;
    const within = (e: AjvError) =>
      e !== anyOf &&
      e.schemaPath.startsWith(prefix) &&
      (e.instancePath === anyOf.instancePath || e.instancePath.startsWith(`${anyOf.instancePath}/`));
    const branches = new Map<number, AjvError[]>();
    for (const e of list.filter(within)) {
      const k = Number(e.schemaPath.slice(prefix.length).split('/')[0]);
      branches.set(k, [...(branches.get(k) ?? []), e]);
    }
    const misfits = (errs: AjvError[]) =>
      errs.some(
        (e) => e.instancePath === anyOf.instancePath && (e.composite !== undefined || ['type', 'enum', 'const'].includes(e.keyword)),
      );
    const fitting = [...branches.entries()].sort((a, b) => a[0] - b[0]).find(([, errs]) => !misfits(errs));
    const keep = new Set(fitting?.[1] ?? []);
    list = list.filter((e) => e !== anyOf && (!within(e) || keep.has(e)));
    if (fitting === undefined) {
      const alternatives = (anyOf.schema as JsonSchema[]).map(describeSchema);
      list.push({ ...anyOf, composite: `must be ${orList(alternatives)}` });
    }
  }
  return list;
}

function describeSchema(schema: JsonSchema): string {
  if (Array.isArray(schema.enum)) return schema.enum.map((v) => String(v)).join(', ');
  if (schema.type === 'array') {
    if (isRangeSchema(schema)) return '[low, high]';
    const items = schema.items as JsonSchema | undefined;
    return typeof items?.type === 'string' ? `array of ${items.type}s` : 'array';
  }
  return typeof schema.type === 'string' ? schema.type : 'valid';
}

function orList(words: string[]): string {
  return words.length <= 1 ? words.join('') : `${words.slice(0, -1).join(', ')} or ${words[words.length - 1]}`;
}

// ---------------------------------------------------------------------------------------
// One ajv error in plain words.

function describeError(error: AjvError, source: YamlSource): PositionedProblem {
  const segments = pointerSegments(error.instancePath);
  const params = error.params as Record<string, unknown>;
  const parent = (error.parentSchema ?? {}) as JsonSchema;
  const at = (message: string, where: Segment[] = segments): PositionedProblem => ({
    offset: source.valueOffset(segments),
    segments: where,
    message,
  });
  const seen = notValue(error.data);

  if (error.composite !== undefined) return at(`${error.composite}${seen}`);
  switch (error.keyword) {
    case 'additionalProperties': {
      const key = String(params.additionalProperty);
      const known = Object.keys((parent.properties ?? {}) as object);
      const isChecks = segments[segments.length - 1] === 'checks';
      const suggestion = nearest(key, known);
      const what = isChecks ? 'check' : 'key';
      return {
        offset: source.keyOffset(segments, key) ?? source.valueOffset(segments),
        segments: [...segments, key],
        message:
          `unknown ${what} ${JSON.stringify(key)}` +
          (suggestion === undefined ? '' : `; did you mean ${JSON.stringify(suggestion)}?`) +
          ` (known: ${known.join(', ')})`,
      };
    }
    case 'required':
      return at('is required but missing', [...segments, String(params.missingProperty)]);
    case 'type':
      if (segments.length === 0) {
        return at(`a rule file must be a map of keys (format, name, checks, ...)${seen}`);
      }
      if (typeof error.data === 'number' && !Number.isFinite(error.data)) return at(`must be a finite number${seen}`);
      return at(`must be ${String(params.type)}${seen}`);
    case 'enum':
      return at(`must be one of ${(params.allowedValues as unknown[]).map(quote).join(', ')}${seen}`);
    case 'const':
      return at(`must be ${quote(params.allowedValue)}${seen}`);
    case 'minLength':
      if (params.limit === 1) return at('must not be empty');
      break;
    case 'minItems':
    case 'maxItems':
    case 'items':
    case 'prefixItems':
      if (isRangeSchema(parent)) {
        const n = Array.isArray(error.data) ? error.data.length : 0;
        return at(`must be [low, high], not a list of ${n}`);
      }
      if (error.keyword === 'minItems' && params.limit === 1) return at('must not be empty');
      break;
    case 'uniqueItems': {
      const list = error.data as unknown[];
      const [i, j] = [Number(params.i), Number(params.j)];
      return at(`must not list ${quote(list[i])} twice (items [${Math.min(i, j)}] and [${Math.max(i, j)}])`);
    }
    case 'minimum':
    case 'maximum':
    case 'exclusiveMinimum':
    case 'exclusiveMaximum': {
      const sign = ({ '>=': '≥', '<=': '≤', '>': '>', '<': '<' } as Record<string, string>)[String(params.comparison)];
      return at(`must be ${sign} ${String(params.limit)}${seen}`);
    }
    case 'minProperties':
      return at(`must give at least one of ${Object.keys((parent.properties ?? {}) as object).join(', ')}`);
  }
  return at(error.message ?? 'is not valid');
}

/** `, not 3`, `, not "fast"`, `, not array` — what was written instead. */
function notValue(value: unknown): string {
  if (value === null || value === undefined) return ', not an empty value';
  if (Array.isArray(value)) return ', not array';
  if (typeof value === 'object') return ', not object';
  if (typeof value === 'number') {
    if (Number.isNaN(value)) return ', not .nan';
    if (!Number.isFinite(value)) return value > 0 ? ', not .inf' : ', not -.inf';
  }
  return `, not ${quote(value)}`;
}

function quote(value: unknown): string {
  return typeof value === 'string' ? JSON.stringify(value) : String(value);
}

/** The known word a misspelt one was most likely meant to be, if any is close enough. */
export function nearest(word: string, known: readonly string[]): string | undefined {
  let best: string | undefined;
  let bestDistance = Infinity;
  for (const candidate of known) {
    const d = editDistance(word.toLowerCase(), candidate.toLowerCase());
    if (d < bestDistance) {
      best = candidate;
      bestDistance = d;
    }
  }
  // A third of the word may be wrong (at least 2 letters), or it may be a clipped prefix.
  if (best !== undefined && bestDistance <= Math.max(2, Math.floor(word.length / 3))) return best;
  if (word.length >= 3) return known.find((k) => k.toLowerCase().startsWith(word.toLowerCase()));
  return undefined;
}

/** Levenshtein distance (insert, delete, substitute, each 1). */
function editDistance(a: string, b: string): number {
  let previous = Array.from({ length: b.length + 1 }, (_, j) => j);
  for (let i = 1; i <= a.length; i++) {
    const current = [i];
    for (let j = 1; j <= b.length; j++) {
      current[j] = Math.min(previous[j] + 1, current[j - 1] + 1, previous[j - 1] + (a[i - 1] === b[j - 1] ? 0 : 1));
    }
    previous = current;
  }
  return previous[b.length];
}

// ---------------------------------------------------------------------------------------
// Ranges.

/** `[low, high]` options and `expect.sample-rate` written high first. */
function invertedRanges(data: unknown, source: YamlSource): PositionedProblem[] {
  const problems: PositionedProblem[] = [];
  const check = (value: unknown, segments: Segment[]) => {
    if (Array.isArray(value) && value.length === 2 && typeof value[0] === 'number' && typeof value[1] === 'number' && value[0] > value[1]) {
      problems.push({
        offset: source.valueOffset(segments),
        segments,
        message: `limit range inverted: low ${value[0]} is above high ${value[1]}`,
      });
    }
  };
  const inChecks = (map: unknown, base: Segment[]) => {
    if (!isRecord(map)) return;
    for (const c of checks) {
      const settings = Object.hasOwn(map, c.id) ? map[c.id] : undefined;
      if (!isRecord(settings)) continue;
      for (const [option, schema] of Object.entries(getCheck(c.id)?.options ?? {})) {
        if (isRangeSchema(schema) && Object.hasOwn(settings, option)) check(settings[option], [...base, c.id, option]);
      }
    }
  };
  if (!isRecord(data)) return problems;
  if (Object.hasOwn(data, 'checks')) inChecks(data.checks, ['checks']);
  if (Object.hasOwn(data, 'channels') && Array.isArray(data.channels)) {
    data.channels.forEach((entry: unknown, i: number) => {
      if (isRecord(entry) && Object.hasOwn(entry, 'checks')) inChecks(entry.checks, ['channels', i, 'checks']);
    });
  }
  if (Object.hasOwn(data, 'expect') && isRecord(data.expect) && Object.hasOwn(data.expect, 'sample-rate')) {
    check(data.expect['sample-rate'], ['expect', 'sample-rate']);
  }
  return problems;
}

export function isRecord(value: unknown): value is Record<string, unknown> {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}

function dedupe(problems: PositionedProblem[]): PositionedProblem[] {
  const seen = new Set<string>();
  return problems.filter((p) => {
    const key = `${p.offset}\u0000${p.segments.join('\u0000')}\u0000${p.message}`;
    if (seen.has(key)) return false;
    seen.add(key);
    return true;
  });
}
