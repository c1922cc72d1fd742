/**
 * `vibgate rules validate FILE` (show a rule file as vibgate resolves it, or every problem
 * in it) and `vibgate rules checks` (the check catalogue: ids, options, defaults).
 */
import { checks } from '../checks/registry.js';
import type { JsonSchema } from '../checks/types.js';
import { loadRules, RulesError, formatProblem } from '../rules/load.js';
import { isRangeSchema } from '../rules/schema.js';
import type { ChannelRule, ResolvedRules } from '../rules/types.js';
import { tool } from '../version.js';
import { num, table } from './format.js';
import { ExitCode, type CliIo } from './io.js';

export interface RulesValidateOptions {
  format: 'text' | 'json';
  /** More directories `extends` may reach (`--rules-root DIR`). */
  rulesRoots?: string[];
}

/**
 * Loads a rule file with everything it extends and prints the result: for people (text)
 * or tools (json). Exit 0 when valid, 2 when not (every problem on stderr).
 */
export async function runRulesValidate(path: string, io: CliIo, options: RulesValidateOptions): Promise<number> {
  let rules: ResolvedRules;
  try {
    rules = await loadRules(path, { cwd: io.cwd, allowRoots: options.rulesRoots });
  } catch (err) {
    if (!(err instanceof RulesError)) throw err;
    for (const problem of err.problems) io.stderr.write(`vibgate: ${formatProblem(problem)}\n`);
    if (options.format === 'json') {
      io.stdout.write(JSON.stringify({ tool, path, valid: false, problems: err.problems }, null, 2) + '\n');
    }
    return ExitCode.usage;
  }
  if (options.format === 'json') {
    io.stdout.write(JSON.stringify({ tool, path, valid: true, rules }, null, 2) + '\n');
  } else {
    io.stdout.write(renderRules(path, rules));
  }
  return ExitCode.ok;
}

function renderRules(path: string, rules: ResolvedRules): string {
  const out: string[] = [`${path}: valid rule file "${rules.name}"`];
  if (rules.description !== undefined) out.push(`  ${rules.description.trim().replace(/\s*\n\s*/g, ' ')}`);
  if (rules.testKind !== undefined) out.push(`  test kind: ${rules.testKind}`);
  if (rules.owner !== undefined) out.push(`  owner: ${rules.owner}`);

  out.push('', rules.files.length === 1 ? 'File:' : 'Files (the given file, then the files it extends, depth first):');
  const width = Math.max(...rules.files.map((f) => f.path.length));
  for (const f of rules.files) out.push(`  ${f.path.padEnd(width)}  sha256 ${f.sha256}`);

  out.push('', `Analysis: frames of ${num(rules.analysis.frameSeconds)} s, overlap ${num(rules.analysis.overlap)}`);

  const enabled = Object.entries(rules.checks);
  out.push('', `Checks (${enabled.length} on; error fails the gate, warning only reports):`);
  if (enabled.length === 0) out.push('  none: this file runs no checks');
  else {
    const rows = enabled.map(([id, s]) => [id, s.severity, optionsText(s.options)]);
    out.push(indent(table(['check', 'severity', 'options'], rows, [false, false, false])));
  }

  out.push('', `Channel rules (${rules.channels.length}, applied in order):`);
  if (rules.channels.length === 0) out.push('  none');
  for (const rule of rules.channels) out.push(`  ${rule.source}  ${selectorText(rule)}: ${overridesText(rule)}`);

  out.push('', `Expectations on each recording (${rules.expect.severity}):`);
  const e = rules.expect;
  const expectations: string[] = [];
  if (e.minDurationS !== undefined) expectations.push(`duration ≥ ${num(e.minDurationS)} s`);
  if (e.sampleRate !== undefined) {
    const [lo, hi] = e.sampleRate;
    expectations.push(lo === hi ? `sample rate ${num(lo, 9)} Hz` : `sample rate ${num(lo, 9)} … ${num(hi, 9)} Hz`);
  }
  if (e.channelCount !== undefined) expectations.push(`${e.channelCount} channels`);
  if (e.channelNames !== undefined) expectations.push(`channels named ${e.channelNames.join(', ')}`);
  out.push(expectations.length === 0 ? '  none' : expectations.map((x) => `  ${x}`).join('\n'));
  return out.join('\n') + '\n';
}

function optionsText(options: Record<string, unknown>): string {
  const parts = Object.entries(options).map(([k, v]) => `${k}: ${valueText(v)}`);
  return parts.length === 0 ? '–' : parts.join(', ');
}

function valueText(value: unknown): string {
  return Array.isArray(value) ? `[${value.map(valueText).join(', ')}]` : String(value);
}

function selectorText(rule: ChannelRule): string {
  return Object.entries(rule.match)
    .map(([field, v]) => `${field} ${Array.isArray(v) ? v.join(' | ') : v}`)
    .join(', ');
}

function overridesText(rule: ChannelRule): string {
  const parts = Object.entries(rule.checks).map(([id, o]) => {
    if (o === false) return `${id} off`;
    const text = optionsText(o);
    return text === '–' ? `${id} on` : `${id} {${text}}`;
  });
  return parts.length === 0 ? 'no change' : parts.join('; ');
}

const indent = (text: string) =>
  text
    .trimEnd()
    .split('\n')
    .map((l) => `  ${l}`)
    .join('\n');

/** The check catalogue: every check, its options with descriptions, types and defaults. */
export function runRulesChecks(io: CliIo): number {
  const out: string[] = [
    `${checks.length} checks, in the order findings are reported. Every check also takes`,
    'severity: error | warning (error fails the gate, warning only reports).',
  ];
  for (const check of checks) {
    out.push('', `${check.id}: ${check.description}`, `  default severity: ${check.defaultSeverity}`);
    const options = Object.entries(check.options);
    if (options.length === 0) out.push('  no options');
    const defaults = check.defaults as Record<string, unknown>;
    const rows = options.map(([key, schema]) => [
      key,
      typeText(schema),
      defaults[key] === undefined ? 'not set' : valueText(defaults[key]),
      typeof schema.description === 'string' ? schema.description : '',
    ]);
    if (rows.length > 0) out.push(indent(table(['option', 'value', 'default', 'meaning'], rows, [false, false, false, false])));
  }
  io.stdout.write(out.join('\n') + '\n');
  return ExitCode.ok;
}

/** An option's schema in a few words: `number > 0`, `[low, high]`, `list of rms, mean`. */
function typeText(schema: JsonSchema): string {
  if (isRangeSchema(schema)) return '[low, high]';
  if (schema.type === 'array') {
    const items = (schema.items ?? {}) as JsonSchema;
    return Array.isArray(items.enum) ? `list of ${items.enum.join(', ')}` : 'list';
  }
  if (Array.isArray(schema.enum)) return schema.enum.join(' | ');
  const bounds: string[] = [];
  if (typeof schema.minimum === 'number') bounds.push(`≥ ${schema.minimum}`);
  if (typeof schema.exclusiveMinimum === 'number') bounds.push(`> ${schema.exclusiveMinimum}`);
  if (typeof schema.maximum === 'number') bounds.push(`≤ ${schema.maximum}`);
  if (typeof schema.exclusiveMaximum === 'number') bounds.push(`< ${schema.exclusiveMaximum}`);
  return [String(schema.type ?? 'value'), ...bounds].join(' ');
}
