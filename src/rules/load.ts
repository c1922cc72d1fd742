/**
 * Loading a rule file (docs/rule-files.md): read it safely, validate it, follow `extends`
 * (depth first, base files first), and merge everything into ResolvedRules.
 *
 * Rule files come from other people's repositories, so they are treated as untrusted
 * input: a size limit, an alias limit (alias bombs), duplicate keys refused, `extends`
 * confined to allowed directories (after resolving symlinks), and no key from the file is
 * ever assigned onto an object unless the schema knows it.
 */
import { createHash } from 'node:crypto';
import { readFile, realpath, stat } from 'node:fs/promises';
import { dirname, isAbsolute, join, normalize, relative, resolve, sep } from 'node:path';
import { fileURLToPath } from 'node:url';
import { checks } from '../checks/registry.js';
import type { Severity } from '../checks/types.js';
import type {
  ChannelRule,
  ChannelSelector,
  CheckOverrides,
  CheckSetting,
  RecordingExpectations,
  ResolvedRules,
} from './types.js';
import { SELECTOR_FIELDS } from './schema.js';
import { knownSettings, settingFrom } from './settings.js';
import { isRecord, validateRuleData } from './validate.js';
import { keyPath, MAX_YAML_DEPTH, YamlSource, type PositionedProblem, type Segment } from './yaml-source.js';

/** A rule file larger than this is not an honest rule file (and parsing it wastes memory). */
export const MAX_RULE_FILE_BYTES = 256 * 1024;
/** Enough aliases for any honest rule file, far too few for an alias bomb. */
const MAX_ALIAS_COUNT = 100;

/** One thing wrong with a rule file, placed at the key it concerns. */
export interface RulesProblem {
  /** The file, as given or as reached through `extends` from the file given. */
  file: string;
  /** 1-based; 0 when the problem is the file itself (not found, unreadable). */
  line: number;
  column: number;
  /** Dotted key path with `[i]` for list items (`checks.kurtosis.whole`); '' for the whole file. */
  path: string;
  message: string;
}

/** A rule file (or one it extends) is not valid. The message lists every problem, one per line. */
export class RulesError extends Error {
  override readonly name = 'RulesError';
  readonly problems: RulesProblem[];

  constructor(problems: RulesProblem[]) {
    super(problems.map(formatProblem).join('\n'));
    this.problems = problems;
  }
}

/** `rules/lab.yaml:14:5 checks.kurtosis.whole: must be array, not 3` */
export function formatProblem(p: RulesProblem): string {
  const where = p.line > 0 ? `${p.file}:${p.line}:${p.column}` : `${p.file}:`;
  return p.path === '' ? `${where} ${p.message}` : `${where} ${p.path}: ${p.message}`;
}

export interface LoadRulesOptions {
  /**
   * More directories `extends` may reach (`--rules-root DIR`), in addition to the given
   * file's own directory tree and the bundled rules.
   */
  allowRoots?: string[];
  /** vibgate's bundled rule files (default: the package's `rules/` directory). */
  bundledRoot?: string;
  /** Directory relative paths are taken from (default: the process's working directory). */
  cwd?: string;
}

/** The package's `rules/`: src/rules and dist/rules are both two levels below the package root. */
/** Prefix of an `extends` entry that names a bundled rule file: `bundled:random-vibration`. */
export const BUNDLED_PREFIX = 'bundled:';

const defaultBundledRoot = (): string => fileURLToPath(new URL('../../rules/', import.meta.url));

/**
 * Reads a rule file and the files it extends and returns the merged rules. Throws a
 * RulesError listing every problem found (all of them, from every file read) as
 * `file:line:column key.path: what is wrong`.
 */
export async function loadRules(path: string, options: LoadRulesOptions = {}): Promise<ResolvedRules> {
  const cwd = options.cwd ?? process.cwd();
  // `--rules bundled:NAME` names one of vibgate's own rule files, as in `extends`
  const bundledName = path.startsWith(BUNDLED_PREFIX) ? path.slice(BUNDLED_PREFIX.length) : undefined;
  if (bundledName !== undefined && !/^[a-z0-9][a-z0-9-]*(\.yaml)?$/.test(bundledName)) {
    throw new RulesError([{ file: path, line: 0, column: 0, path: '', message: 'does not name a bundled rule file (bundled:NAME, for example bundled:random-vibration)' }]);
  }
  const absolute =
    bundledName !== undefined
      ? join(options.bundledRoot === undefined ? defaultBundledRoot() : resolve(cwd, options.bundledRoot), bundledName.endsWith('.yaml') ? bundledName : `${bundledName}.yaml`)
      : resolve(cwd, path);
  const bundledRoot = options.bundledRoot === undefined ? defaultBundledRoot() : resolve(cwd, options.bundledRoot);
  const roots = await realRoots([dirname(absolute), bundledRoot, ...(options.allowRoots ?? []).map((r) => resolve(cwd, r))]);
  const loader = new Loader(roots, dirname(path), bundledRoot);
  let real: string;
  try {
    real = await realpath(absolute);
  } catch (err) {
    throw new RulesError([{ file: path, line: 0, column: 0, path: '', message: fileSystemProblem(err) }]);
  }
  await loader.visit({ display: path, absolute, real });
  if (loader.problems.length > 0) throw new RulesError(loader.sortedProblems());
  return merge(loader.mergeOrder, loader.files);
}

// ---------------------------------------------------------------------------------------
// Reading files and following `extends`.

/** The data of one valid rule file, keyed as written (only ever read, by known keys). */
type RuleFileData = Record<string, unknown>;

interface LoadedFile {
  display: string;
  sha256: string;
  data: RuleFileData;
  source: YamlSource;
}

interface Frame {
  display: string;
  real: string;
  /** The `extends` entry being followed out of this file, for a cycle message. */
  entry?: { source: YamlSource; offset: number; segments: Segment[] };
}

class Loader {
  readonly problems: Array<RulesProblem & { order: number }> = [];
  readonly files: Array<{ path: string; sha256: string }> = [];
  /** Valid files in merge order: each file's bases (in list order) before the file. */
  readonly mergeOrder: LoadedFile[] = [];
  private readonly visited = new Set<string>();
  private readonly stack: Frame[] = [];
  private readonly fileOrder = new Map<string, number>();

  constructor(
    private readonly roots: string[],
    private readonly givenDir: string,
    private readonly bundledRoot: string,
  ) {}

  async visit(file: { display: string; absolute: string; real: string }): Promise<void> {
    this.visited.add(file.real);
    this.fileOrder.set(file.display, this.fileOrder.size);
    const read = await this.read(file.display, file.absolute);
    if (read === undefined) return;
    const { bytes, text } = read;
    const sha256 = createHash('sha256').update(bytes).digest('hex');
    this.files.push({ path: file.display, sha256 });
    const source = new YamlSource(text);
    const parsed = this.parse(file.display, source);
    if (parsed === undefined) return;
    const problems = validateRuleData(parsed, source);
    for (const p of problems) this.add(file.display, source, p);
    if (!isRecord(parsed)) return;

    const frame: Frame = { display: file.display, real: file.real };
    this.stack.push(frame);
    try {
      for (const entry of extendsEntries(parsed)) {
        frame.entry = { source, offset: source.valueOffset(entry.segments), segments: entry.segments };
        await this.follow(file, entry.value, frame.entry);
      }
    } finally {
      this.stack.pop();
    }
    if (problems.length === 0) {
      this.mergeOrder.push({ display: file.display, sha256, data: parsed, source });
    }
  }

  /** One `extends` entry of `from`: resolve it, confine it, detect cycles, then visit it. */
  private async follow(
    from: { display: string; absolute: string },
    value: string,
    entry: { source: YamlSource; offset: number; segments: Segment[] },
  ): Promise<void> {
    const problem = (message: string) => this.add(from.display, entry.source, { offset: entry.offset, segments: entry.segments, message });
    // `bundled:NAME` names one of vibgate's own rule files, wherever vibgate is installed
    const bundled = value.startsWith(BUNDLED_PREFIX) ? value.slice(BUNDLED_PREFIX.length) : undefined;
    if (bundled !== undefined && !/^[a-z0-9][a-z0-9-]*(\.yaml)?$/.test(bundled)) {
      problem(`${JSON.stringify(value)} does not name a bundled rule file (bundled:NAME, for example bundled:random-vibration)`);
      return;
    }
    const absolute =
      bundled !== undefined
        ? join(this.bundledRoot, bundled.endsWith('.yaml') ? bundled : `${bundled}.yaml`)
        : resolve(dirname(from.absolute), value);
    const display =
      bundled !== undefined
        ? value
        : from.display.startsWith(BUNDLED_PREFIX) && !isAbsolute(value)
          ? `${BUNDLED_PREFIX}${normalize(value)}`
          : isAbsolute(value)
            ? value
            : normalize(join(dirname(from.display), value));
    let real: string;
    try {
      real = await realpath(absolute);
    } catch (err) {
      problem(fileSystemProblem(err, value));
      return;
    }
    if (!this.roots.some((root) => real === root || real.startsWith(root.endsWith(sep) ? root : root + sep))) {
      problem(
        `file ${JSON.stringify(value)} resolves to ${JSON.stringify(real)}, outside the directories rule files may come from ` +
          `(the given file's directory tree and vibgate's bundled rules; allow more with --rules-root DIR)`,
      );
      return;
    }
    const onStack = this.stack.findIndex((f) => f.real === real);
    if (onStack >= 0) {
      const start = this.stack[onStack];
      const names = [...this.stack.slice(onStack).map((f) => f.display), start.display].map((d) => this.shortName(d));
      const at = start.entry!;
      this.add(start.display, at.source, { offset: at.offset, segments: at.segments, message: `cycle ${names.join(' → ')}` });
      return;
    }
    // A base shared by two bases (a diamond) is read and merged once, where first reached.
    if (this.visited.has(real)) return;
    try {
      if (!(await stat(real)).isFile()) {
        problem(`${JSON.stringify(value)} is not a file`);
        return;
      }
    } catch (err) {
      problem(fileSystemProblem(err, value));
      return;
    }
    await this.visit({ display, absolute, real });
  }

  /** The file's bytes and text, or undefined after recording why it cannot be read. */
  private async read(display: string, absolute: string): Promise<{ bytes: Buffer; text: string } | undefined> {
    const whole = (message: string, line = 1) => {
      this.problems.push({ file: display, line, column: line, path: '', message, order: this.orderOf(display) });
      return undefined;
    };
    try {
      const info = await stat(absolute);
      if (!info.isFile()) return whole('is not a file', 0);
      if (info.size > MAX_RULE_FILE_BYTES) return whole(tooLarge(info.size));
      const bytes = await readFile(absolute);
      // The file may have grown between stat and read.
      if (bytes.length > MAX_RULE_FILE_BYTES) return whole(tooLarge(bytes.length));
      let text: string;
      try {
        text = new TextDecoder('utf-8', { fatal: true }).decode(bytes);
      } catch {
        return whole('is not UTF-8 text');
      }
      return { bytes, text };
    } catch (err) {
      this.problems.push({ file: display, line: 0, column: 0, path: '', message: fileSystemProblem(err), order: this.orderOf(display) });
      return undefined;
    }
  }

  /** The file's data, or undefined after recording its YAML problems. */
  private parse(display: string, source: YamlSource): unknown {
    const { doc } = source;
    if (source.tooDeepAt !== undefined) {
      this.add(display, source, {
        offset: source.tooDeepAt,
        segments: [],
        message: `YAML: collections nested more than ${MAX_YAML_DEPTH} levels deep; a rule file needs a handful`,
      });
      return undefined;
    }
    if (doc.errors.length > 0) {
      for (const error of doc.errors) {
        const offset = error.pos[0];
        if (error.code === 'DUPLICATE_KEY') {
          const key = source.keyAtOffset(offset);
          if (key !== undefined) {
            const first = source.position(key.firstOffset);
            this.add(display, source, {
              offset,
              segments: key.segments,
              message: `duplicate key ${JSON.stringify(String(key.segments[key.segments.length - 1]))} (first written at line ${first.line})`,
            });
            continue;
          }
        }
        const message =
          error.code === 'MULTIPLE_DOCS'
            ? 'YAML: a rule file is one YAML document, but a second one starts here'
            : `YAML: ${error.message.split('\n')[0]}`;
        this.add(display, source, { offset, segments: [], message });
      }
      return undefined;
    }
    if (doc.contents === null) {
      this.add(display, source, { offset: 0, segments: [], message: 'the file is empty; a rule file needs at least "format: 1" and a name' });
      return undefined;
    }
    try {
      // The yaml package defines keys such as __proto__ as own properties (never as the
      // prototype); the schema then rejects them as unknown keys.
      return doc.toJS({ maxAliasCount: MAX_ALIAS_COUNT });
    } catch (err) {
      if (err instanceof ReferenceError) {
        this.add(display, source, {
          offset: source.firstAliasOffset() ?? 0,
          segments: [],
          message: `YAML aliases expand to too much data (more than ${MAX_ALIAS_COUNT} alias expansions); an alias bomb?`,
        });
        return undefined;
      }
      throw err;
    }
  }

  private add(file: string, source: YamlSource, p: PositionedProblem): void {
    const { line, column } = source.position(p.offset);
    this.problems.push({ file, line, column, path: keyPath(p.segments), message: p.message, order: this.orderOf(file) });
  }

  private orderOf(file: string): number {
    return this.fileOrder.get(file) ?? this.fileOrder.size;
  }

  /** A path for cycle messages: relative to the given file's directory. */
  private shortName(display: string): string {
    return relative(this.givenDir, display) || display;
  }

  /** Problems in reading order: by file (the given one first), then by position. */
  sortedProblems(): RulesProblem[] {
    return [...this.problems]
      .sort((a, b) => a.order - b.order || a.line - b.line || a.column - b.column)
      .map(({ order: _order, ...p }) => p);
  }
}

/** The `extends` entries that are well-formed strings (the others are reported by the schema). */
function extendsEntries(data: Record<string, unknown>): Array<{ value: string; segments: Segment[] }> {
  if (!Object.hasOwn(data, 'extends')) return [];
  const value = data.extends;
  if (typeof value === 'string') return value === '' ? [] : [{ value, segments: ['extends'] }];
  if (!Array.isArray(value)) return [];
  return value.flatMap((v, i) => (typeof v === 'string' && v !== '' ? [{ value: v, segments: ['extends', i] }] : []));
}

async function realRoots(roots: string[]): Promise<string[]> {
  const out: string[] = [];
  for (const root of roots) {
    try {
      out.push(await realpath(root));
    } catch {
      // A root that does not exist holds no file: nothing to allow.
    }
  }
  return out;
}

function tooLarge(bytes: number): string {
  return `the file is ${bytes} bytes; a rule file may be at most ${MAX_RULE_FILE_BYTES} bytes (256 KiB)`;
}

/** A file-system error in words; `named` is how the file was written in `extends`. */
function fileSystemProblem(err: unknown, named?: string): string {
  const code = typeof err === 'object' && err !== null && 'code' in err ? String(err.code) : undefined;
  const file = named === undefined ? 'file' : `file ${JSON.stringify(named)}`;
  switch (code) {
    case 'ENOENT':
    case 'ENOTDIR':
      return `${file} not found`;
    case 'EACCES':
    case 'EPERM':
      return `${file} cannot be read: permission denied`;
    case 'EISDIR':
      return `${file} is a directory`;
    case 'ELOOP':
      return `${file} is a symbolic link that loops`;
    default:
      if (code === undefined) throw err;
      return `${file} cannot be read: the file system reports ${code}`;
  }
}

// ---------------------------------------------------------------------------------------
// Merging (docs/rule-files.md, "Merging with extends").

type SwitchOrSettings = 'on' | 'off' | boolean | Record<string, unknown>;

function merge(files: LoadedFile[], hashes: Array<{ path: string; sha256: string }>): ResolvedRules {
  const given = files[files.length - 1].data;
  const switchedOn = new Map<string, Map<string, unknown>>();
  const analysis = { frameSeconds: 1, overlap: 0 };
  const expect: RecordingExpectations = { severity: 'error' };
  const channels: ChannelRule[] = [];

  for (const file of files) {
    const data = file.data;
    const fileChecks = section(data, 'checks');
    for (const check of checks) {
      if (!Object.hasOwn(fileChecks, check.id)) continue;
      const value = fileChecks[check.id] as SwitchOrSettings;
      if (value === 'off' || value === false) {
        switchedOn.delete(check.id);
        continue;
      }
      const current = switchedOn.get(check.id) ?? new Map<string, unknown>();
      if (isRecord(value)) for (const [key, v] of knownSettings(check, value)) current.set(key, v);
      switchedOn.set(check.id, current);
    }

    const a = section(data, 'analysis');
    if (Object.hasOwn(a, 'frame-seconds')) analysis.frameSeconds = a['frame-seconds'] as number;
    if (Object.hasOwn(a, 'overlap')) analysis.overlap = a.overlap as number;

    const e = section(data, 'expect');
    if (Object.hasOwn(e, 'min-duration-seconds')) expect.minDurationS = e['min-duration-seconds'] as number;
    if (Object.hasOwn(e, 'sample-rate')) {
      const rate = e['sample-rate'] as number | [number, number];
      expect.sampleRate = typeof rate === 'number' ? [rate, rate] : [rate[0], rate[1]];
    }
    if (Object.hasOwn(e, 'channels')) expect.channelCount = e.channels as number;
    if (Object.hasOwn(e, 'channel-names')) expect.channelNames = [...(e['channel-names'] as string[])];
    if (Object.hasOwn(e, 'severity')) expect.severity = e.severity as Severity;

    const entries = Object.hasOwn(data, 'channels') ? (data.channels as Array<Record<string, unknown>>) : [];
    entries.forEach((entry, i) => {
      const { line, column } = file.source.position(file.source.valueOffset(['channels', i]));
      channels.push({
        match: selector(entry.match as Record<string, unknown>),
        checks: overrides(entry.checks as Record<string, unknown>),
        source: `${file.display}:${line}:${column}`,
      });
    });
  }

  const resolvedChecks: Record<string, CheckSetting> = {};
  for (const check of checks) {
    const set = switchedOn.get(check.id);
    if (set !== undefined) resolvedChecks[check.id] = settingFrom(check, set);
  }

  const rules: ResolvedRules = {
    name: given.name as string,
    files: hashes,
    analysis,
    checks: resolvedChecks,
    channels,
    expect,
  };
  if (Object.hasOwn(given, 'description')) rules.description = given.description as string;
  if (Object.hasOwn(given, 'test-kind')) rules.testKind = given['test-kind'] as string;
  if (Object.hasOwn(given, 'owner')) rules.owner = given.owner as string;
  return rules;
}

function section(data: Record<string, unknown>, key: string): Record<string, unknown> {
  const value = Object.hasOwn(data, key) ? data[key] : undefined;
  return isRecord(value) ? value : {};
}

function selector(match: Record<string, unknown>): ChannelSelector {
  const out: ChannelSelector = {};
  for (const field of SELECTOR_FIELDS) {
    if (!Object.hasOwn(match, field)) continue;
    const value = match[field] as string | string[];
    out[field] = Array.isArray(value) ? [...value] : value;
  }
  return out;
}

function overrides(map: Record<string, unknown>): CheckOverrides {
  const out: CheckOverrides = {};
  for (const check of checks) {
    if (!Object.hasOwn(map, check.id)) continue;
    const value = map[check.id] as SwitchOrSettings;
    if (value === 'off' || value === false) out[check.id] = false;
    else if (isRecord(value)) out[check.id] = Object.fromEntries(knownSettings(check, value));
    else out[check.id] = {};
  }
  return out;
}
