/**
 * The text of a learned rule file: YAML in the layout of the bundled rule files, every
 * limit with a comment giving its evidence (the values it came from, their range, median
 * and spread, the margin, and which of them decided the limit). Nothing in it depends on
 * when or by which version it was written, or on the order the recordings were given:
 * the same evidence gives the same bytes. Pure.
 */
import { show } from '../checks/util.js';
import type { Evidence } from './evidence.js';
import { LIMIT_DIGITS, MAD_TO_SIGMA, MIN_VALUES_PER_LIMIT, type LearnedBound } from './limits.js';
import { quoteList, type LearnedCheck, type LearnedGroup, type LearnedOption, type LearnPlan, type Member } from './plan.js';

/** Comment lines are wrapped to this many characters. */
const WIDTH = 92;

export interface WriteOptions {
  /** The evidence file's name as the comment names it (relative to the rule file). */
  evidenceFile: string;
  /** The rule file's name as the `--update` hint names it. */
  rulesFile: string;
}

/** The learned rule file's text. */
export function learnedRulesText(plan: LearnPlan, evidence: Evidence, options: WriteOptions): string {
  const { settings, recordings } = evidence;
  const ids = recordingIds(recordings.length);
  const out: string[] = [];
  const comment = (text: string, indent = '') => out.push(...wrap(text, indent));
  const by = { channel: 'per channel name', sensor: 'per sensor type', all: 'over all channels' }[settings.by];

  comment(
    `Learned by vibgate learn from ${recordings.length} recordings known to be good, ${by}, on top of ` +
      `${settings.extends} (docs/learning.md). The evidence (each recording's SHA-256 and the statistics ` +
      `of its channels) is in ${options.evidenceFile}. To learn from more recordings, run ` +
      `"vibgate learn --update -o ${options.rulesFile} RECORDING..." rather than editing the limits: ` +
      'learning again rewrites this file.',
  );
  out.push('#');
  comment(
    `Each limit: over the values of a group (one per channel and recording), centre = median, ` +
      `spread = ${MAD_TO_SIGMA} × MAD (consistent for normal data: Rousseeuw & Croux 1993), for up to 25 ` +
      'values at least range / d₂(n) (the normal-range constant of control charts), ' +
      `limit = median ± ${show(settings.margin)} × spread, but never inside the observed range widened by ` +
      `max(5 % of the range, 1 % of the extreme), rounded outward to ${LIMIT_DIGITS} significant digits; ` +
      'levels and level ratios on a log scale. Statistics that only go wrong one way (max / −min, crest ' +
      'factor, frame RMS over its median) get a one-sided limit; |mean| / std is learned from the signed ' +
      "mean / std. The spread of the whole-record kurtosis and skewness is at least the scatter a Gaussian " +
      "process with the channel's autocorrelation gives them, √(24·Σρ⁴/N) and √(6·Σρ³/N) (Lomnicki 1961): " +
      'a few recordings of narrow-band response show less of it than it has. ' +
      "Where the base's limit is tighter and every value passes it, the base's is kept. " +
      `With fewer than ${MIN_VALUES_PER_LIMIT} values the margin is doubled.`,
  );
  if (plan.excluded.length > 0) {
    out.push('#');
    const names = [...new Set(plan.excluded.map((e) => e.member.channel.name))];
    comment(`Not learned from (no sensor type): ${quoteList(names)}.`);
  }
  out.push('#', `# Recordings (${recordings.length}):`);
  const width = Math.max(...recordings.map((r) => commentSafe(r.path).length));
  recordings.forEach((r, i) => out.push(`#   ${ids[i]}  ${commentSafe(r.path).padEnd(width)}  sha256 ${r.sha256.slice(0, 16)}…`));

  out.push('format: 1', `name: ${JSON.stringify(settings.name)}`);
  out.push(
    `description: ${JSON.stringify(
      `Limits learned from ${recordings.length} recordings known to be good, ${by}, on top of ${settings.extends}.`,
    )}`,
  );
  out.push(`extends: [${JSON.stringify(settings.extends)}]`);

  if (settings.by === 'all') {
    const group = plan.groups[0];
    const body: string[] = [];
    const wrote = group !== undefined && groupBody(group, '  ', ids, body);
    if (wrote) out.push('checks:', ...body);
    else out.push(...body.map((l) => l.replace(/^ {2}/, '')), 'checks: {}');
  } else {
    const entries: string[] = [];
    for (const group of plan.groups) {
      const body: string[] = [];
      const wrote = groupBody(group, '      ', ids, body);
      entries.push(...wrap(`${group.label}: ${membersText(group.members, ids)}.`, '  '));
      if (wrote) {
        const match = 'name' in group.match! ? `name: ${JSON.stringify(group.match.name)}` : `sensor: ${JSON.stringify(group.match!.sensor)}`;
        entries.push(`  - match: { ${match} }`, '    checks:', ...body);
      } else {
        entries.push(...body.map((l) => l.replace(/^ {6}/, '  ')), '  # (nothing learned for it)');
      }
    }
    if (entries.some((l) => l.startsWith('  - match:'))) out.push('channels:', ...entries);
    else out.push(...entries, 'channels: []');
  }
  return out.join('\n') + '\n';
}

/** Appends a group's check lines (comments and settings) to `out`; false when no setting was written. */
function groupBody(group: LearnedGroup, indent: string, ids: string[], out: string[]): boolean {
  let wrote = false;
  const comment = (text: string) => out.push(...wrap(text, indent));
  if (group.match === null) comment(`${group.label}: ${membersText(group.members, ids)}.`);
  for (const check of group.checks) {
    if (check.notLearned !== undefined) {
      comment(`${check.id}: not learned: ${check.notLearned}.`);
      continue;
    }
    if (check.leftOut.length > 0) {
      comment(`${check.id}: learned without ${quoteList([...new Set(check.leftOut.map((m) => m.channel.name))])}: the base switches it off for them.`);
    }
    const written = check.options.filter((o) => o.value !== null);
    if (check.switchesOn && written.length > 0) comment(`${check.id}: the base does not run it here; the limits below switch it on.`);
    for (const option of check.options) comment(optionText(check, option));
    if (written.length === 0) continue;
    const settings = written.map((o) => `${o.spec.option}: ${valueText(o.value!)}`).join(', ');
    out.push(`${indent}${check.id}: { ${settings} }`);
    wrote = true;
  }
  return wrote;
}

function valueText(v: [number, number] | number): string {
  return Array.isArray(v) ? `[${String(v[0])}, ${String(v[1])}]` : String(v);
}

/** The comment of one option: its evidence and how the limit was found. */
function optionText(check: LearnedCheck, o: LearnedOption): string {
  const head = `${check.id} ${o.spec.option}`;
  if (o.outcome === 'no-values') return `${head}: not learned: no channel had a value (too few frames, or no variation).`;
  const parts = o.spec.parts.map((p, i) => ({ p, b: o.bounds[i], kept: o.baseKept[i] }));
  // the two sides of a whole-record range come from the same values: describe them once
  const same = parts.length === 2 && parts[0].p.statistic === parts[1].p.statistic;
  const described = same
    ? `${parts[0].p.what}: ${distribution(parts[0].b)}; ${boundText(parts[0].b, parts[0].kept)}, ${boundText(parts[1].b, parts[1].kept)}`
    : parts.map(({ p, b, kept }) => `${p.what}: ${distribution(b)}; ${boundText(b, kept)}`).join('. ');
  const widened = o.outcome === 'widened' ? ` (margin doubled: only ${o.n} values, fewer than ${MIN_VALUES_PER_LIMIT})` : '';
  const result =
    o.value === null
      ? `; so the base's ${valueText(o.baseValue as number | [number, number])} applies as it is`
      : o.spec.folded
        ? `; the limit on the magnitude is the larger end, ${show(o.value as number)}`
        : '';
  return `${head}${widened}. ${described}${result}.`;
}

/** `10 values 2.91 … 3.12, median 3.01, spread 0.052` (a log-scale spread is a factor). */
function distribution(b: LearnedBound): string {
  const spread =
    b.scale === 'log'
      ? `spread ×${show(b.spread)} (on a log scale)`
      : b.spreadBy === 'gaussian'
        ? `spread ${show(b.spread)} (the Gaussian scatter of the channel's autocorrelation, larger than the values' own)`
        : `spread ${show(b.spread)}`;
  return `${b.n} values ${show(b.min)} … ${show(b.max)}, median ${show(b.median)}, ${spread}`;
}

/** `high 3.22 = median + 4 × spread`, or where the observed range or the base decided it. */
function boundText(b: LearnedBound, kept: number | undefined): string {
  const word = b.side === 'high' ? 'high' : 'low';
  if (kept !== undefined) return `${word} ${show(kept)}, the base's, kept (tighter than the learned ${show(b.value)}, and every value passes it)`;
  const k = show(b.margin);
  const v = show(b.value);
  if (b.basis === 'observed') {
    const extreme = b.side === 'high' ? `the highest value` : `the lowest value`;
    const allowance = b.scale === 'log' ? `${b.side === 'high' ? '×' : '÷'} ${show(b.allowance)}` : `${b.side === 'high' ? '+' : '−'} ${show(b.allowance)}`;
    return `${word} ${v} = ${extreme} ${allowance} (beyond median ${b.side === 'high' ? '+' : '−'} ${k} × spread)`;
  }
  if (b.scale === 'log') return `${word} ${v} = median ${b.side === 'high' ? '×' : '÷'} spread^${k}`;
  return `${word} ${v} = median ${b.side === 'high' ? '+' : '−'} ${k} × spread`;
}

/** `in 10 recordings, r01–r10`, or `40 channel recordings: channels "a", "b" … of r01–r10` */
function membersText(members: readonly Member[], ids: string[]): string {
  const names = [...new Set(members.map((m) => m.channel.name))];
  const recs = [...new Set(members.map((m) => m.recording))].sort((a, b) => a - b);
  const plural = (n: number, word: string) => `${n} ${word}${n === 1 ? '' : 's'}`;
  if (names.length === 1 && recs.length === members.length) return `in ${plural(recs.length, 'recording')}, ${idRanges(recs, ids)}`;
  const shown = names.length <= 8 ? quoteList(names) : `${quoteList(names.slice(0, 8))} and ${names.length - 8} more`;
  return `${plural(members.length, 'channel recording')}: ${names.length === 1 ? 'channel' : 'channels'} ${shown} of ${idRanges(recs, ids)}`;
}

/** A path as a comment can hold it: quoted (JSON) when it has control characters such as a newline. */
function commentSafe(path: string): string {
  return /[\u0000-\u001f\u007f]/.test(path) ? JSON.stringify(path) : path;
}

/** `r01`, `r02` …, as wide as the count needs (at least two digits). */
function recordingIds(count: number): string[] {
  const digits = Math.max(2, String(count).length);
  return Array.from({ length: count }, (_, i) => `r${String(i + 1).padStart(digits, '0')}`);
}

/** `r01–r04, r06` */
function idRanges(indices: readonly number[], ids: string[]): string {
  const parts: string[] = [];
  for (let i = 0; i < indices.length; ) {
    let j = i;
    while (j + 1 < indices.length && indices[j + 1] === indices[j] + 1) j++;
    parts.push(j === i ? ids[indices[i]] : `${ids[indices[i]]}–${ids[indices[j]]}`);
    i = j + 1;
  }
  return parts.join(', ');
}

/** `text` as comment lines of at most WIDTH characters: `# ` first, `#   ` after. */
function wrap(text: string, indent: string): string[] {
  const words = text.split(/\s+/).filter(Boolean);
  const lines: string[] = [];
  let line = `${indent}#`;
  let first = true;
  for (const word of words) {
    const lead = first ? ' ' : '   ';
    if (line === `${indent}#`) line += lead + word;
    else if (line.length + 1 + word.length <= WIDTH) line += ' ' + word;
    else {
      lines.push(line);
      first = false;
      line = `${indent}#   ${word}`;
    }
  }
  lines.push(line);
  return lines;
}
