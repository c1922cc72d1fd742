import type { Finding, TimeSpan } from '../checks/types.js';
import type { ChannelVerdict, GateResult, RecordingVerdict, Verdict } from '../gate/types.js';
import type { ChannelDetail, ReportDetail } from './detail.js';
import {
  barChart,
  esc,
  legendSwatch,
  limitSwatch,
  patternDefs,
  spanSwatch,
  timeChart,
  type BarDatum,
  type MarkStatus,
  type ReferenceLine,
  type TimeSpanMark,
} from './svg.js';
import { NOT_A_SIGN_OFF, durationText, numberText, spanText } from './terminal.js';

/**
 * The HTML report of a gate run: one self-contained file a person reads at a glance and an
 * archive can keep for years. No network, scripts, fonts or images: inline CSS and inline
 * SVG only, so it opens the same from a file share in ten years. It prints on A4 landscape.
 *
 * - header: the overall verdict in words, when and with what it was made (tool version,
 *   rule file and every file of its extends chain with SHA-256), and the caution that
 *   screening is not a sign-off;
 * - per recording: its facts, its own findings, a verdict table of its channels, one bar
 *   chart per statistic across its channels, and for each channel that warns or fails its
 *   frame trends and waveform excerpt with the finding's time span shaded.
 *
 * Every text from the inputs (paths, channel names, messages) is escaped.
 *
 * Stable hooks for tests and tools: `svg.chart[data-stat][data-recording][data-bars]`,
 * `rect.bar[data-channel][data-status][data-value]` (status fail, warn, pass, skip, or off
 * when the check did not run), `line.limit[data-side][data-value][data-from][data-to]` (bar
 * positions), `svg.trend[data-stat][data-channel]`, `svg.excerpt[data-channel][data-check]`,
 * `g.span[data-status]`.
 */
export function htmlReport(result: GateResult, detail: ReportDetail, options: { title?: string } = {}): string {
  const title = options.title ?? `Screening report: ${result.rules.name}`;
  const body = [
    patternDefs(),
    header(result, title),
    overview(result),
    ...result.recordings.map((r, i) => recordingSection(r, i, detail.get(r.path) ?? null)),
    `<footer class="foot"><p class="caution">${cautionText()}</p>` +
      `<p>Made by ${esc(result.tool.name)} ${esc(result.tool.version)} at ${esc(result.createdAt)} from rule file ${esc(result.rules.path)}.</p></footer>`,
  ];
  return (
    `<!DOCTYPE html>\n<html lang="en">\n<head>\n<meta charset="utf-8">\n` +
    `<meta name="viewport" content="width=device-width, initial-scale=1">\n` +
    `<meta name="generator" content="${esc(`${result.tool.name} ${result.tool.version}`)}">\n` +
    `<title>${esc(title)}</title>\n<style>${CSS}</style>\n</head>\n<body>\n${body.join('\n')}\n</body>\n</html>\n`
  );
}

/**
 * The caution every report carries (design.md, "Screening data is not a safety sign-off"):
 * the terminal's sentence, and whose judgement and which rules the decision rests on.
 */
const CODES =
  'Whether a structure, machine or test article is sound is theirs to judge, under the applicable codes and standards; this report only says whether the recorded time data look fit to analyse.';

function cautionText(): string {
  return `<strong>Not a sign-off.</strong> ${esc(NOT_A_SIGN_OFF)} ${esc(CODES)}`;
}

// ---------------------------------------------------------------------------------------
// Words.

const WORD: Record<Verdict, string> = { pass: 'PASS', warn: 'WARN', fail: 'FAIL', error: 'ERROR', skip: 'NOT JUDGED' };

const SENTENCE: Record<Verdict, string> = {
  pass: 'The gate passed: every check on every recording passed.',
  warn: 'The gate passed with warnings: nothing failed, but some channels deserve a look.',
  fail: 'The gate failed: at least one check failed.',
  error: 'The gate failed: at least one recording could not be read, and what could not be read was not checked.',
  skip: 'Nothing was judged: no check could be applied, so nothing here has passed.',
};

const badge = (v: Verdict) => `<span class="verdict v-${v}">${WORD[v]}</span>`;

const STATUS_WORD: Record<Finding['status'], string> = { pass: 'pass', warn: 'warn', fail: 'fail', skip: 'not judged' };

const statusBadge = (s: Finding['status']) => `<span class="st st-${s}">${STATUS_WORD[s]}</span>`;

function tally<T extends string>(items: T[]): Map<T, number> {
  const n = new Map<T, number>();
  for (const v of items) n.set(v, (n.get(v) ?? 0) + 1);
  return n;
}

/** `2 failed, 1 warned, 1 passed`; the order is worst first. */
function countWords(verdicts: Verdict[]): string {
  const n = tally(verdicts);
  const words: Array<[Verdict, string]> = [
    ['error', 'unreadable'], ['fail', 'failed'], ['warn', 'warned'], ['pass', 'passed'], ['skip', 'not judged'],
  ];
  return words.filter(([v]) => n.has(v)).map(([v, w]) => `${n.get(v)} ${w}`).join(', ');
}

const plural = (n: number, one: string, many = `${one}s`) => `${n} ${n === 1 ? one : many}`;

/** `2024-03-05 14:07:09 UTC` from an ISO time; the text as given when it is not one. */
function timeText(iso: string): string {
  const t = Date.parse(iso);
  if (Number.isNaN(t)) return iso;
  return new Date(t).toISOString().replace('T', ' ').replace(/\.\d+Z$/, ' UTC').replace(/Z$/, ' UTC');
}

const channelName = (c: ChannelVerdict) => (c.name === '' ? `#${c.index}` : c.name);

// ---------------------------------------------------------------------------------------
// Header and overview.

function header(result: GateResult, title: string): string {
  const channels = result.recordings.flatMap((r) => r.channels.map((c) => c.verdict));
  const counts =
    `${plural(result.recordings.length, 'recording')}${result.recordings.length ? ': ' + countWords(result.recordings.map((r) => r.verdict)) : ''}` +
    `; ${plural(channels.length, 'channel')}${channels.length ? ': ' + countWords(channels) : ''}.`;
  const files = result.rules.files
    .map((f, i) => `<li>${i === 0 ? '' : '<span class="muted">extends</span> '}<span class="path">${esc(f.path)}</span> <code class="hash">${esc(f.sha256)}</code></li>`)
    .join('');
  return (
    `<header class="head">` +
    `<div class="banner v-${result.verdict}" data-verdict="${result.verdict}">` +
    `<span class="banner-word">${WORD[result.verdict]}</span>` +
    `<div><p class="banner-line">${esc(SENTENCE[result.verdict])}</p><p class="banner-counts">${esc(counts)}</p></div></div>` +
    `<h1>${esc(title)}</h1>` +
    `<dl class="provenance">` +
    `<dt>Created</dt><dd><time datetime="${esc(result.createdAt)}">${esc(timeText(result.createdAt))}</time></dd>` +
    `<dt>Tool</dt><dd>${esc(result.tool.name)} ${esc(result.tool.version)}</dd>` +
    `<dt>Rule file</dt><dd><strong>${esc(result.rules.name)}</strong> · <span class="path">${esc(result.rules.path)}</span> <code class="hash">${esc(result.rules.sha256)}</code></dd>` +
    `<dt>Files read</dt><dd><ol class="chain">${files}</ol></dd>` +
    `</dl>` +
    `<p class="caution" role="note">${cautionText()}</p>` +
    `</header>`
  );
}

function overview(result: GateResult): string {
  if (result.recordings.length === 0) return `<p class="empty">No recordings were screened.</p>`;
  const rows = result.recordings.map((r, i) => {
    const facts = [
      r.durationS !== null ? durationText(r.durationS) : '',
      r.sampleRate !== null ? `${numberText(r.sampleRate, 6)} Hz` : '',
    ].filter(Boolean).join(' · ');
    const channels = r.channels.length ? `${plural(r.channels.length, 'channel')}: ${countWords(r.channels.map((c) => c.verdict))}` : r.verdict === 'error' ? 'not read' : 'no channels';
    return `<tr class="v-${r.verdict}"><td>${badge(r.verdict)}</td><td><a href="#r${i + 1}" class="path">${esc(r.path)}</a></td><td>${esc(channels)}</td><td class="nowrap">${esc(facts)}</td></tr>`;
  });
  return (
    `<nav class="overview" aria-label="Recordings"><h2>Recordings</h2><table class="table">` +
    `<thead><tr><th>verdict</th><th>recording</th><th>channels</th><th>duration · sample rate</th></tr></thead>` +
    `<tbody>${rows.join('')}</tbody></table></nav>`
  );
}

// ---------------------------------------------------------------------------------------
// One recording.

function recordingSection(r: RecordingVerdict, i: number, details: ChannelDetail[] | null): string {
  const id = `r${i + 1}`;
  const parts: string[] = [];
  parts.push(`<section class="recording" id="${id}" data-recording="${esc(r.path)}" data-verdict="${r.verdict}">`);
  parts.push(`<h2>${badge(r.verdict)} <span class="path">${esc(r.path)}</span></h2>`);
  const facts: Array<[string, string]> = [
    ['SHA-256', r.sha256 !== null ? `<code class="hash">${esc(r.sha256)}</code>` : 'not computed'],
    ['format', r.format !== null ? esc(r.format) : 'unknown'],
    ['sample rate', r.sampleRate !== null ? `${esc(numberText(r.sampleRate, 6))} Hz` : 'unknown'],
    ['duration', r.durationS !== null ? esc(durationText(r.durationS)) : 'unknown'],
    ['samples', r.samples !== null ? esc(String(r.samples)) + ' per channel' : 'unknown'],
    ['channels', String(r.channels.length)],
  ];
  parts.push(`<dl class="facts">${facts.map(([k, v]) => `<div><dt>${k}</dt><dd>${v}</dd></div>`).join('')}</dl>`);
  if (r.error !== null || r.verdict === 'error') {
    parts.push(
      `<p class="read-error" role="alert"><strong>Could not be read, so nothing in it was checked:</strong> ${esc(r.error ?? 'the recording could not be read')}</p>`,
    );
  }
  if (r.notes.length) parts.push(`<ul class="notes">${r.notes.map((n) => `<li>note: ${esc(n)}</li>`).join('')}</ul>`);
  if (r.findings.length) parts.push(`<h3>Checks on the recording</h3>${findingTable(r.findings)}`);

  // file order, as in the JSON record; the detail is indexed by position as the gate listed them
  const ordered = r.channels.map((c, position) => ({ c, d: details?.[position] ?? null })).sort((a, b) => a.c.index - b.c.index);
  if (ordered.length) {
    parts.push(`<h3>Channels</h3>${verdictTable(ordered.map((o) => o.c), id)}`);
    parts.push(statisticCharts(r, ordered.map((o) => o.c)));
    const flagged = ordered.filter((o) => o.c.verdict === 'fail' || o.c.verdict === 'warn');
    if (flagged.length) {
      parts.push(`<h3>Channels that fail or warn: what the statistics saw</h3>`);
      parts.push(`<p class="legend">${spanSwatch('fail')} span of a failing finding ${spanSwatch('warn')} span of a warning ${limitSwatch()} a limit of the rule file</p>`);
      for (const o of flagged) parts.push(channelDetail(r, o.c, o.d, id));
    }
  } else if (r.verdict !== 'error') {
    parts.push(`<p class="empty">The recording has no channels.</p>`);
  }
  parts.push(`</section>`);
  return parts.join('\n');
}

function findingTable(findings: Finding[]): string {
  const rows = findings.map(
    (f) =>
      `<tr class="f-${f.status}"><td>${statusBadge(f.status)}</td><td class="check">${esc(f.check)}</td>` +
      `<td class="num">${esc(valueText(f))}</td><td>${esc(f.limit)}</td><td>${esc(f.message)}</td></tr>`,
  );
  return `<table class="table"><thead><tr><th>status</th><th>check</th><th>value</th><th>limit</th><th>what was seen</th></tr></thead><tbody>${rows.join('')}</tbody></table>`;
}

const valueText = (f: Finding) => (f.value === null ? 'n/a' : `${numberText(f.value)}${f.unit ? ' ' + f.unit : ''}`);

const flaggedFindings = (c: ChannelVerdict) => c.findings.filter((f) => f.status === 'fail' || f.status === 'warn');

function findingItems(findings: Finding[]): string {
  return findings
    .map(
      (f) =>
        `<li data-check="${esc(f.check)}" data-status="${f.status}">${statusBadge(f.status)} <strong class="check">${esc(f.check)}</strong> ` +
        `${esc(f.message)} <span class="limit-text">(limit ${esc(f.limit)}${f.at ? `; at ${esc(spanText(f.at))}` : ''})</span></li>`,
    )
    .join('');
}

function verdictTable(channels: ChannelVerdict[], recordingId: string): string {
  const rows = channels.map((c) => {
    const flagged = flaggedFindings(c);
    let checks: string;
    if (flagged.length) {
      checks = `<ul class="findings">${findingItems(flagged)}</ul>`;
    } else {
      const n = tally(c.findings.map((f) => f.status));
      const skipped = c.findings.filter((f) => f.status === 'skip');
      const passed = n.get('pass') ?? 0;
      if (passed) {
        // a passing channel: its unjudged checks in one quiet line
        const notJudged = skipped.map((f) => `${f.check} (${f.message})`).join('; ');
        checks = `<span class="muted">${esc(`${plural(passed, 'check')} passed`)}${notJudged ? esc(`; not judged: ${notJudged}`) : ''}</span>`;
      } else {
        const lead = c.findings.length ? 'no check could be applied, so the channel was not screened' : 'no checks apply to this channel';
        checks =
          `<span class="muted">${esc(lead)}</span>` +
          (skipped.length ? `<ul class="findings">${skipped.map((f) => `<li>${statusBadge('skip')} <strong class="check">${esc(f.check)}</strong> ${esc(f.message)}</li>`).join('')}</ul>` : '');
      }
    }
    const name = esc(channelName(c));
    const link = flagged.length ? `<a href="#${recordingId}-c${c.index}">${name}</a>` : name;
    return (
      `<tr class="v-${c.verdict}" data-channel="${esc(c.name)}" data-verdict="${c.verdict}">` +
      `<td class="num">${c.index}</td><td class="ch-name">${link}</td><td>${esc(c.unit ?? '')}</td>` +
      `<td>${esc(c.sensor ?? '')}</td><td>${esc(c.group ?? '')}</td><td>${badge(c.verdict)}</td><td>${checks}</td></tr>`
    );
  });
  return (
    `<table class="table verdicts"><thead><tr><th class="num">index</th><th>channel</th><th>unit</th><th>sensor</th><th>group</th><th>verdict</th>` +
    `<th>checks that fail or warn, with what was seen</th></tr></thead><tbody>${rows.join('')}</tbody></table>`
  );
}

// ---------------------------------------------------------------------------------------
// Statistics across channels.

/** A limit in the units a chart plots. Either side may be open. */
interface Limit {
  low: number | null;
  high: number | null;
}

/**
 * How limits are drawn. A Finding carries its limit only as the text its check wrote
 * (`≤ 6.5`, `whole record 2.4 … 4, frames 1.6 … 8`, `≤ 0.01 %`). We draw a limit only where
 * that text matches, from start to end, the one form its check writes (the patterns below,
 * in step with src/checks/*.ts and tested against the real checks' output), and only when
 * it agrees with the finding: a passing finding whose value is the plotted quantity must lie
 * inside the parsed limit (4 significant digits: the checks round limits so), else the text
 * is not trusted and no line is drawn for that channel. Anything else — a limit in units on
 * a normalised axis (rms-level), a frame-wise limit on a whole-record chart — is not drawn.
 * The limit is drawn per channel, merged into one line where neighbours share it, because
 * channel rules may give channels different limits.
 *
 * A bar's marking is the status of its check's finding, never a comparison of the bar with
 * the line: a frame-wise failure marks the whole-record bar even when that bar lies inside
 * the whole-record limit, and the tooltip and the channel's detail say which frame failed.
 */
const NUM = String.raw`[−-]?(?:\d+(?:\.\d+)?(?:e[+−-]?\d+)?|∞)`;
const RANGE = `(?:≤ ${NUM}|≥ ${NUM}|${NUM} … ${NUM})`;

function parseNumber(text: string): number {
  if (text === '∞') return Infinity;
  if (text === '−∞' || text === '-∞') return -Infinity;
  return Number(text.replace(/−/g, '-'));
}

/** `≤ 4`, `≥ 1.2`, `2.4 … 4` (rangeText in src/checks/util.ts). */
function parseRange(text: string): Limit | null {
  let m = new RegExp(`^≤ (${NUM})$`).exec(text);
  if (m) return openSides({ low: null, high: parseNumber(m[1]) });
  m = new RegExp(`^≥ (${NUM})$`).exec(text);
  if (m) return openSides({ low: parseNumber(m[1]), high: null });
  m = new RegExp(`^(${NUM}) … (${NUM})$`).exec(text);
  if (m) return openSides({ low: parseNumber(m[1]), high: parseNumber(m[2]) });
  return null;
}

const openSides = (l: Limit): Limit | null => {
  const low = l.low !== null && Number.isFinite(l.low) ? l.low : null;
  const high = l.high !== null && Number.isFinite(l.high) ? l.high : null;
  return low === null && high === null ? null : { low, high };
};

/** judgeWholeAndFrames (skewness, kurtosis, crest factor): `whole record R[, frames R]`. */
function wholeRange(limit: string): Limit | null {
  const m = new RegExp(`^whole record (${RANGE})(?:, frames ${RANGE})?$`).exec(limit);
  return m ? parseRange(m[1]) : null;
}

/** The frame-wise range of the same text: `[whole record R, ]frames R`. */
function frameRange(limit: string): Limit | null {
  const m = new RegExp(`^(?:whole record ${RANGE}, )?frames (${RANGE})$`).exec(limit);
  return m ? parseRange(m[1]) : null;
}

function upperBound(pattern: string): (f: Finding) => Limit | null {
  const re = new RegExp(`^≤ (${NUM})${pattern}$`);
  return (f) => {
    const m = re.exec(f.limit);
    return m ? openSides({ low: null, high: parseNumber(m[1]) }) : null;
  };
}

/** Whether `value` lies inside `limit`, allowing for the checks' 4-digit rounding of limits. */
function inside(value: number, limit: Limit): boolean {
  const slack = (v: number) => Math.abs(v) * 1e-3 + 1e-12;
  if (limit.low !== null && value < limit.low - slack(limit.low)) return false;
  if (limit.high !== null && value > limit.high + slack(limit.high)) return false;
  return true;
}

interface StatChart {
  stat: string;
  title: string;
  /** What the bar is, in a sentence under the chart. */
  note: string;
  yLabel: string;
  /** The checks whose findings mark the bars (worst status wins). */
  checks: string[];
  scale: 'linear' | 'log';
  base: number;
  baseLabel?: string;
  /** The plotted value of a channel; null when it cannot be measured. */
  value: (c: ChannelVerdict, rmsRatio: number | null) => number | null;
  /** Unit of the plotted value in tooltips ('' for a ratio). */
  unit: (c: ChannelVerdict) => string;
  /** The limit in plotted units from a finding of one of `checks`. */
  limit?: (f: Finding) => Limit | null;
  /** A passing finding's value in plotted units, when it is the plotted quantity (cross-check). */
  passValue?: (f: Finding) => number | null;
  /** Drawn only when one of `checks` ran on some channel of the recording. */
  optional?: boolean;
}

/** The value a finding of `check` reports, as a channel's bar. */
const findingValue = (check: string, transform: (v: number) => number = (v) => v) => (c: ChannelVerdict): number | null => {
  const f = c.findings.find((x) => x.check === check && x.value !== null);
  return f && f.value !== null ? transform(f.value) : null;
};

/** `≥ N PATTERN…` as a lower bound. */
function lowerBound(pattern: string): (f: Finding) => Limit | null {
  const re = new RegExp(`^≥ (${NUM})${pattern}`);
  return (f) => {
    const m = re.exec(f.limit);
    return m ? openSides({ low: parseNumber(m[1]), high: null }) : null;
  };
}

const finiteOrNull = (v: number) => (Number.isFinite(v) ? v : null);

const STAT_CHARTS: StatChart[] = [
  {
    stat: 'rms',
    title: 'RMS relative to its group',
    note:
      "Each channel's RMS over the median RMS of its group (the sidecar's group, else the channels of the same unit): levels differ from point to point, so a channel is compared with its peers. 1 is the group's typical level; a log axis.",
    yLabel: 'RMS ÷ group median',
    checks: ['dead-channel', 'rms-level', 'flat-channel'],
    scale: 'log',
    base: 1,
    baseLabel: 'group median',
    value: (_c, ratio) => ratio,
    unit: () => '',
    // dead-channel writes `≥ 0.01 × group median[ and ≥ 0.001 g]`: the ratio side is drawable
    limit: (f) => {
      if (f.check !== 'dead-channel') return null;
      const m = new RegExp(`^≥ (${NUM}) × group median(?: and ≥ .+)?$`).exec(f.limit);
      return m ? openSides({ low: parseNumber(m[1]), high: null }) : null;
    },
    passValue: (f) => (f.check === 'dead-channel' && f.unit === '' ? f.value : null),
  },
  {
    stat: 'mean-offset',
    title: 'Mean offset',
    note: '|mean| over the standard deviation: vibration signals are near zero-mean, so a large ratio points at an offset or drift.',
    yLabel: '|mean| ÷ std',
    checks: ['mean-offset'],
    scale: 'linear',
    base: 0,
    value: (c) => (c.stats.std > 0 && Number.isFinite(c.stats.mean) ? Math.abs(c.stats.mean) / c.stats.std : null),
    unit: () => '',
    limit: upperBound(String.raw` × std(?: and \|mean\| ≤ .+)?`),
    passValue: (f) => f.value,
  },
  {
    stat: 'skewness',
    title: 'Skewness',
    note: 'Skewness of the whole record (population g1; 0 for a symmetric signal). One-sided spikes or clipping move it.',
    yLabel: 'skewness',
    checks: ['skewness'],
    scale: 'linear',
    base: 0,
    value: (c) => finiteOrNull(c.stats.skewness),
    unit: () => '',
    limit: (f) => wholeRange(f.limit),
    passValue: (f) => f.value,
  },
  {
    stat: 'kurtosis',
    title: 'Kurtosis',
    note: 'Kurtosis of the whole record (non-excess: 3 for Gaussian data, 1.5 for a sine). Spikes raise it; clipping and hum lower it.',
    yLabel: 'kurtosis',
    checks: ['kurtosis'],
    scale: 'linear',
    base: 0,
    value: (c) => finiteOrNull(c.stats.kurtosis),
    unit: () => '',
    limit: (f) => wholeRange(f.limit),
    passValue: (f) => f.value,
  },
  {
    stat: 'crest-factor',
    title: 'Crest factor',
    note: 'Peak over RMS of the whole record. Random data rarely exceed about 5; far above that is a spike, far below can be compression.',
    yLabel: 'peak ÷ RMS',
    checks: ['crest-factor'],
    scale: 'linear',
    base: 0,
    value: (c) => finiteOrNull(c.stats.crestFactor),
    unit: () => '',
    limit: (f) => wholeRange(f.limit),
    passValue: (f) => f.value,
  },
  {
    stat: 'clipping',
    title: 'Clipped samples',
    note:
      "Share of samples at converter full scale where the range is known, else in flat runs at the channel's own extremes (as the clipping check counted them).",
    yLabel: '% of samples',
    checks: ['clipping'],
    scale: 'linear',
    base: 0,
    // the clipping check's own fraction, so the bar and its limit measure the same thing
    value: (c) => {
      const f = c.findings.find((x) => x.check === 'clipping' && x.value !== null);
      if (f && f.value !== null) return 100 * f.value;
      return 100 * (c.stats.fullScale?.fraction ?? c.stats.extremes.flatFraction);
    },
    unit: () => '%',
    limit: upperBound(' %'),
    passValue: (f) => (f.value === null ? null : 100 * f.value),
  },
  {
    stat: 'dropout',
    title: 'Longest dropout',
    note: 'Longest run of identical consecutive samples (exact zeros or a frozen value), in seconds.',
    yLabel: 'seconds',
    checks: ['dropout'],
    scale: 'linear',
    base: 0,
    value: (c) => finiteOrNull(c.stats.longestRun.seconds),
    unit: () => 's',
    limit: upperBound(String.raw` s(?:, zeros ≤ ${NUM} s)?`),
    // a failing dropout may be judged on the zero run; a passing one is the longest run
    passValue: (f) => f.value,
  },
  {
    stat: 'group-outlier',
    title: 'Standing out from the group',
    note:
      "How far the channel's RMS (log scale), crest factor or kurtosis — whichever is farthest — lies from the median of its group, in robust z-scores (0.6745 × deviation / MAD; Iglewicz & Hoaglin). 0 is the group's typical channel.",
    yLabel: '|z| from group median',
    checks: ['group-outlier'],
    scale: 'linear',
    base: 0,
    value: findingValue('group-outlier', Math.abs),
    unit: () => '',
    limit: (f) => {
      const m = new RegExp(`^\\|z\\| ≤ (${NUM})`).exec(f.limit);
      return m ? openSides({ low: null, high: parseNumber(m[1]) }) : null;
    },
    passValue: (f) => (f.value === null ? null : Math.abs(f.value)),
    optional: true,
  },
  {
    stat: 'duplicate-channel',
    title: 'Most alike other channel',
    note: 'The largest |correlation| with any other channel of the recording over the sampled segments (shown where it exceeds 0.9). 1: the same signal twice, a patching error.',
    yLabel: '|r|',
    checks: ['duplicate-channel'],
    scale: 'linear',
    base: 0,
    value: findingValue('duplicate-channel', Math.abs),
    unit: () => '',
    limit: (f) => {
      const m = new RegExp(`^\\|r\\| < (${NUM})`).exec(f.limit);
      return m ? openSides({ low: null, high: parseNumber(m[1]) }) : null;
    },
    optional: true,
  },
  {
    stat: 'mains-hum',
    title: 'Mains lines',
    note: 'RMS of the lines at the mains frequency and its harmonics (those standing out of the spectrum beside them) over the broadband RMS, measured by Goertzel filters on sampled segments.',
    yLabel: 'lines ÷ broadband RMS',
    checks: ['mains-hum'],
    scale: 'linear',
    base: 0,
    value: findingValue('mains-hum'),
    unit: () => '',
    limit: upperBound(' × broadband RMS'),
    passValue: (f) => f.value,
    optional: true,
  },
  {
    stat: 'range-utilisation',
    title: 'Distinct levels',
    note: 'Distinct sample values in the sampled segments (counted up to 4096): a channel whose input range is far wider than its signal uses few converter codes and loses resolution. A log axis.',
    yLabel: 'distinct levels',
    checks: ['range-utilisation'],
    scale: 'log',
    base: 1,
    value: (c) => c.content?.levels?.count ?? null,
    unit: () => '',
    limit: lowerBound(' levels'),
    optional: true,
  },
  {
    stat: 'frame-length',
    title: 'Independent samples per frame',
    note:
      'Samples per frame over Σρ⁴, the sum of the autocorrelation to the fourth power: how many independent samples the frame kurtosis rests on (Lomnicki 1961). Narrow-band response holds far fewer than its sample count. A log axis.',
    yLabel: 'independent samples',
    checks: ['frame-length'],
    scale: 'log',
    base: 1,
    value: (c) => c.content?.correlation?.effectiveSamplesPerFrame ?? null,
    unit: () => '',
    limit: lowerBound(' independent samples'),
    optional: true,
  },
];

const RANK: Record<Finding['status'], number> = { skip: 1, pass: 2, warn: 3, fail: 4 };

/** RMS over the median RMS of the channel's group (sidecar group, else same unit), as dead-channel compares. */
function rmsRatios(channels: ChannelVerdict[]): { ratios: Map<ChannelVerdict, number | null>; groups: Array<{ name: string; count: number; median: number; unit: string }> } {
  const key = (c: ChannelVerdict) => (c.group !== null ? `group ${c.group}` : `unit ${c.unit ?? ''}`);
  const members = new Map<string, ChannelVerdict[]>();
  for (const c of channels) members.set(key(c), [...(members.get(key(c)) ?? []), c]);
  const ratios = new Map<ChannelVerdict, number | null>();
  const groups: Array<{ name: string; count: number; median: number; unit: string }> = [];
  for (const [k, list] of members) {
    const levels = list.map((c) => c.stats.rms).filter((v) => Number.isFinite(v)).sort((a, b) => a - b);
    const m = levels.length === 0 ? NaN : levels.length % 2 ? levels[(levels.length - 1) / 2] : (levels[levels.length / 2 - 1] + levels[levels.length / 2]) / 2;
    const first = list[0];
    groups.push({
      name: first.group !== null ? first.group : first.unit ? `unit ${first.unit}` : 'no unit',
      count: list.length,
      median: m,
      unit: k.startsWith('group ') ? [...new Set(list.map((c) => c.unit ?? ''))].join('/') : first.unit ?? '',
    });
    for (const c of list) ratios.set(c, m > 0 && Number.isFinite(c.stats.rms) ? c.stats.rms / m : null);
  }
  return { ratios, groups };
}

function statisticCharts(r: RecordingVerdict, channels: ChannelVerdict[]): string {
  const { ratios, groups } = rmsRatios(channels);
  const wide = channels.length > 16;
  const width = wide ? 1100 : 540;
  const ran = new Set(channels.flatMap((c) => c.findings.map((f) => f.check)));
  const figures = STAT_CHARTS.filter((chart) => !chart.optional || chart.checks.some((id) => ran.has(id))).map((chart) => {
    const bars: BarDatum[] = channels.map((c) => {
      const own = c.findings.filter((f) => chart.checks.includes(f.check));
      const worst = own.reduce<Finding | null>((w, f) => (w === null || RANK[f.status] > RANK[w.status] ? f : w), null);
      const status: MarkStatus = worst === null ? 'off' : worst.status;
      const value = chart.value(c, ratios.get(c) ?? null);
      let limit: Limit | null = null;
      for (const f of own) {
        const l = chart.limit?.(f) ?? null;
        if (l === null) continue;
        const v = f.status === 'pass' ? chart.passValue?.(f) ?? null : null;
        if (v !== null && !inside(v, l)) continue; // the text disagrees with its own verdict: do not draw it
        limit = l;
        break;
      }
      const unit = chart.unit(c);
      const shown = value === null ? 'n/a' : `${numberText(value)}${unit ? ' ' + unit : ''}`;
      const judged = worst === null ? 'check off for this channel' : worst.status === 'skip' ? `${worst.check} not judged` : `${worst.check} ${worst.status}, limit ${worst.limit}`;
      const extra = worst && (worst.status === 'fail' || worst.status === 'warn') ? `\n${worst.message}` : '';
      return {
        channel: channelName(c),
        value,
        status,
        tooltip: `${channelName(c)}: ${chart.title.toLowerCase()} ${shown} (${judged})${extra}`,
        limit,
      };
    });
    const svg = barChart(bars, {
      stat: chart.stat,
      recording: r.path,
      label: `${chart.title} of each channel of ${r.path}`,
      yLabel: chart.yLabel,
      scale: chart.scale,
      base: chart.base,
      baseLabel: chart.baseLabel,
      width,
    });
    let note = chart.note;
    if (chart.stat === 'rms') {
      note +=
        ' Groups: ' +
        groups.map((g) => `${g.name} (${plural(g.count, 'channel')}, median ${numberText(g.median)}${g.unit ? ' ' + g.unit : ''})`).join('; ') +
        '.';
    }
    return (
      `<figure class="chart-fig${wide ? ' wide' : ''}" data-stat="${chart.stat}"><figcaption><strong>${esc(chart.title)}</strong> ` +
      `<span class="muted">${esc(note)}</span></figcaption>${svg}</figure>`
    );
  });
  const legend =
    `<p class="legend">${legendSwatch('fail')} check failed (hatched, cross) ${legendSwatch('warn')} warning (dotted, diamond) ` +
    `${legendSwatch('pass')} passed ${legendSwatch('off')} not judged, or check off ${limitSwatch()} limit of the rule file, where it applies to the plotted value</p>`;
  return `<h3>Statistics across channels</h3>${legend}<div class="charts">${figures.join('')}</div>`;
}

// ---------------------------------------------------------------------------------------
// One channel that warns or fails.

const TREND_W = 300;
const TREND_H = 160;
const EXCERPT_W = 1100;
const EXCERPT_H = 230;

/** The time spans of a channel's failing and warning findings; one span per stretch and status, naming every check. */
function spansOf(c: ChannelVerdict): TimeSpanMark[] {
  const spans = new Map<string, { at: TimeSpan; status: 'fail' | 'warn'; checks: string[] }>();
  for (const f of flaggedFindings(c)) {
    if (f.at === null) continue;
    const status = f.status === 'fail' ? 'fail' : 'warn';
    const key = `${f.at.startS} ${f.at.endS} ${status}`;
    const seen = spans.get(key);
    if (seen) seen.checks.push(f.check);
    else spans.set(key, { at: f.at, status, checks: [f.check] });
  }
  return [...spans.values()].map((s) => ({
    startS: s.at.startS,
    endS: s.at.endS,
    status: s.status,
    label: `${s.checks.join(', ')} ${s.status} at ${spanText(s.at)}`,
  }));
}

function channelDetail(r: RecordingVerdict, c: ChannelVerdict, d: ChannelDetail | null, recordingId: string): string {
  const name = channelName(c);
  const unit = c.unit ?? '';
  const facts = [c.unit ? `unit ${c.unit}` : 'no unit', c.sensor ?? '', c.group ? `group ${c.group}` : ''].filter(Boolean).join(' · ');
  const parts: string[] = [];
  parts.push(`<article class="channel-detail" id="${recordingId}-c${c.index}" data-channel="${esc(c.name)}" data-verdict="${c.verdict}">`);
  parts.push(`<h4>${badge(c.verdict)} ${esc(name)} <span class="muted">${esc(facts)}</span></h4>`);
  parts.push(`<ul class="findings">${findingItems(flaggedFindings(c))}</ul>`);

  const spans = spansOf(c);
  if (d && d.frames.timeS.length > 0) {
    const times = d.frames.timeS;
    const hop = c.stats.frames?.hopS ?? (times.length > 1 ? times[1] - times[0] : 0);
    const frameS = c.stats.frames?.frameS ?? hop;
    const toS = r.durationS ?? times[times.length - 1] + frameS;
    const limitOf = (check: string) => {
      const f = c.findings.find((x) => x.check === check);
      const l = f ? frameRange(f.limit) : null;
      const lines: ReferenceLine[] = [];
      if (l?.low !== null && l?.low !== undefined) lines.push({ value: l.low, label: `≥ ${numberText(l.low)}`, kind: 'limit' });
      if (l?.high !== null && l?.high !== undefined) lines.push({ value: l.high, label: `≤ ${numberText(l.high)}`, kind: 'limit' });
      return lines;
    };
    const trend = (stat: string, title: string, yLabel: string, values: number[], lines: ReferenceLine[]) =>
      `<figure class="trend-fig"><figcaption>${esc(title)}</figcaption>` +
      timeChart(
        { count: Math.min(times.length, values.length), timeS: (i) => times[i], value: (i) => values[i], holdS: hop },
        {
          className: 'trend',
          data: { stat, channel: c.name, recording: r.path },
          label: `${title} of ${name}`,
          width: TREND_W,
          height: TREND_H,
          xLabel: 'time (s)',
          yLabel,
          fromS: 0,
          toS,
          spans,
          lines,
        },
      ) +
      `</figure>`;
    parts.push(
      `<div class="trends">` +
        trend('frame-rms', 'Frame RMS', unit ? `RMS (${unit})` : 'RMS', d.frames.rms, []) +
        trend('frame-mean', 'Frame mean', unit ? `mean (${unit})` : 'mean', d.frames.mean, [{ value: 0, label: '0', kind: 'reference' }]) +
        trend('frame-kurtosis', 'Frame kurtosis', 'kurtosis', d.frames.kurtosis, [{ value: 3, label: '3 (Gaussian)', kind: 'reference' }, ...limitOf('kurtosis')]) +
        trend('frame-skewness', 'Frame skewness', 'skewness', d.frames.skewness, [{ value: 0, label: '0', kind: 'reference' }, ...limitOf('skewness')]) +
        `</div>`,
    );
    parts.push(
      `<p class="muted small">Frames of ${esc(numberText(frameS))} s every ${esc(numberText(hop))} s, each drawn over its hop; partial frames at the end are left out. ` +
        `Dashed: the rule file's frame limits; dotted: 0, and 3 for kurtosis (Gaussian data).</p>`,
    );
  } else {
    parts.push(`<p class="muted">No frame trends were given for this channel.</p>`);
  }

  const e = d?.excerpt ?? null;
  if (e && e.values.length > 0 && e.sampleRate > 0) {
    const endS = e.startS + e.values.length / e.sampleRate;
    const own = c.findings.find((f) => f.check === e.check && f.at !== null && (f.status === 'fail' || f.status === 'warn'));
    const lines: ReferenceLine[] = [{ value: 0, label: '0', kind: 'reference' }];
    let peak = 0;
    for (const v of e.values) if (Number.isFinite(v)) peak = Math.max(peak, Math.abs(v));
    // full scale only where the excerpt comes near it: a far-off line would flatten the wave
    for (const level of [c.stats.fullScale?.low ?? null, c.stats.fullScale?.high ?? null]) {
      if (level !== null && Number.isFinite(level) && Math.abs(level) <= 1.25 * peak) lines.push({ value: level, label: `full scale ${numberText(level)}`, kind: 'limit' });
    }
    // the span of the finding the excerpt was cut around (with any other check that found the same stretch)
    const excerptSpans = own ? spans.filter((s) => s.startS === own.at!.startS && s.endS === own.at!.endS) : spans;
    const dense = e.values.length > 2 * (EXCERPT_W - 70);
    parts.push(
      `<figure class="excerpt-fig"><figcaption><strong>Waveform excerpt</strong> ${esc(`${spanText({ startS: e.startS, endS })}, ${plural(e.values.length, 'sample')} at ${numberText(e.sampleRate, 6)} Hz, around the ${e.check} finding`)}` +
        `${own?.at ? esc(` (shaded: ${spanText(own.at)})`) : ''}${dense ? '<span class="muted"> — drawn as the min/max of each pixel column, so no peak is lost</span>' : ''}</figcaption>` +
        timeChart(
          { count: e.values.length, timeS: (i) => e.startS + i / e.sampleRate, value: (i) => e.values[i] },
          {
            className: 'excerpt',
            data: { channel: c.name, recording: r.path, check: e.check },
            label: `Waveform of ${name} from ${spanText({ startS: e.startS, endS })}`,
            width: EXCERPT_W,
            height: EXCERPT_H,
            xLabel: 'time (s)',
            yLabel: unit || 'value',
            fromS: e.startS,
            toS: endS,
            spans: excerptSpans,
            lines,
          },
        ) +
        `</figure>`,
    );
  } else {
    parts.push(`<p class="muted">No waveform excerpt: the finding is not located in time, or no samples were given.</p>`);
  }
  parts.push(`</article>`);
  return parts.join('\n');
}

// ---------------------------------------------------------------------------------------
// Style. Our own: ink on white, one accent per status, and every status also told by a
// word, a border style and (in charts) a pattern and a shape.

const CSS = `
:root{--ink:#1f2933;--muted:#52606d;--line:#d5dae0;--soft:#f4f6f8;--pass:#1e6b4f;--pass-bg:#e2f1ea;--warn:#7a4a00;--warn-bg:#fcefd4;--fail:#8f1d22;--fail-bg:#f9e0de;--error:#5b2270;--error-bg:#efe2f4;--skip:#4a5560;--skip-bg:#eceff1}
*{box-sizing:border-box}
html{-webkit-text-size-adjust:100%}
body{margin:0 auto;max-width:1180px;padding:20px 24px 40px;color:var(--ink);background:#fff;font:14px/1.45 system-ui,-apple-system,"Segoe UI",Roboto,"Helvetica Neue",Arial,sans-serif}
h1{font-size:22px;margin:14px 0 8px}
h2 .path{font-size:16px}
h2{font-size:18px;margin:28px 0 8px;display:flex;gap:10px;align-items:center;flex-wrap:wrap}
h3{font-size:15px;margin:22px 0 6px;padding-bottom:3px;border-bottom:1px solid var(--line)}
h4{font-size:14px;margin:0 0 6px;display:flex;gap:8px;align-items:center;flex-wrap:wrap}
code,.hash,.path{font-family:ui-monospace,SFMono-Regular,Menlo,Consolas,"Liberation Mono",monospace;font-size:12.5px}
.hash{word-break:break-all;color:var(--muted)}
.path{word-break:break-all}
.muted{color:var(--muted)}
.small{font-size:12px}
.nowrap{white-space:nowrap}
svg.defs{position:absolute;width:0;height:0;overflow:hidden}
.banner{display:flex;align-items:center;gap:18px;padding:12px 18px;border-radius:4px;border:2px solid currentColor}
.banner-word{font-size:30px;font-weight:800;letter-spacing:.06em;white-space:nowrap}
.banner p{margin:0}
.banner-line{font-weight:600;font-size:15px}
.banner.v-pass{color:var(--pass);background:var(--pass-bg);border-style:solid}
.banner.v-warn{color:var(--warn);background:var(--warn-bg);border-style:dashed}
.banner.v-fail{color:var(--fail);background:var(--fail-bg);border-style:double;border-width:5px}
.banner.v-error{color:var(--error);background:var(--error-bg);border-style:double;border-width:5px}
.banner.v-skip{color:var(--skip);background:var(--skip-bg);border-style:dotted}
.provenance{display:grid;grid-template-columns:max-content 1fr;gap:3px 14px;margin:8px 0}
.provenance dt{color:var(--muted)}
.provenance dd{margin:0}
.chain{margin:0;padding-left:20px}
.caution{border-left:4px solid var(--ink);background:var(--soft);padding:8px 12px;margin:12px 0}
.verdict{display:inline-block;min-width:54px;text-align:center;font-weight:700;font-size:12px;letter-spacing:.04em;padding:1px 6px;border-radius:3px;border:1.5px solid currentColor;white-space:nowrap}
.verdict.v-pass{color:var(--pass);background:var(--pass-bg)}
.verdict.v-warn{color:var(--warn);background:var(--warn-bg);border-style:dashed}
.verdict.v-fail{color:var(--fail);background:var(--fail-bg);border-style:double;border-width:3px}
.verdict.v-error{color:var(--error);background:var(--error-bg);border-style:double;border-width:3px}
.verdict.v-skip{color:var(--skip);background:var(--skip-bg);border-style:dotted}
.st{display:inline-block;font-size:11px;font-weight:700;padding:0 4px;border-radius:2px;text-transform:uppercase;letter-spacing:.03em}
.st-fail{color:#fff;background:var(--fail)}
.st-warn{color:var(--warn);background:var(--warn-bg);outline:1px dashed var(--warn)}
.st-pass{color:var(--pass);background:var(--pass-bg)}
.st-skip{color:var(--skip);background:var(--skip-bg)}
.table{border-collapse:collapse;width:100%;margin:4px 0 8px}
.table th,.table td{border-bottom:1px solid var(--line);padding:4px 8px;text-align:left;vertical-align:top}
.table th{font-size:12px;color:var(--muted);font-weight:600;background:var(--soft)}
.table td.num,.table th.num{text-align:right;font-variant-numeric:tabular-nums}
.verdicts tr.v-fail td:first-child{box-shadow:inset 4px 0 var(--fail)}
.verdicts tr.v-warn td:first-child{box-shadow:inset 4px 0 var(--warn)}
.verdicts .ch-name{font-weight:600;white-space:nowrap}
.findings{margin:0;padding:0;list-style:none}
.findings li{margin:1px 0}
.limit-text{color:var(--muted);font-size:12.5px}
.facts{display:flex;flex-wrap:wrap;gap:4px 22px;margin:4px 0}
.facts div{display:flex;gap:6px}
.facts dt{color:var(--muted)}
.facts dd{margin:0}
.read-error{border:2px solid var(--error);background:var(--error-bg);padding:8px 12px}
.notes{color:var(--muted);margin:4px 0;padding-left:18px}
.legend{display:flex;flex-wrap:wrap;align-items:center;gap:4px 10px;font-size:12.5px;color:var(--muted);margin:6px 0}
.swatch{vertical-align:middle}
.charts{display:grid;grid-template-columns:repeat(auto-fill,minmax(460px,1fr));gap:14px 18px}
.chart-fig{margin:0;break-inside:avoid;page-break-inside:avoid}
.chart-fig.wide{grid-column:1/-1}
figcaption{font-size:12.5px;margin-bottom:2px}
figure svg{display:block;width:100%;height:auto;max-width:100%}
svg text{font-family:system-ui,-apple-system,"Segoe UI",Roboto,Arial,sans-serif;fill:var(--ink)}
svg .tick{font-size:10px;fill:var(--muted)}
svg .ch{font-size:10px}
svg .axis-title{font-size:11px;fill:var(--muted)}
svg .na{font-size:8px;fill:var(--muted)}
svg .ref-label{font-size:10px;fill:var(--muted);paint-order:stroke;stroke:#fff;stroke-width:3px}
svg .limit-label{font-size:10px;font-weight:600;paint-order:stroke;stroke:#fff;stroke-width:3px;stroke-linejoin:round}
svg .grid{stroke:#e6e9ed;stroke-width:1}
svg .baseline{stroke:var(--ink);stroke-width:1}
svg .axis,svg .frame{stroke:#9aa5b1;stroke-width:1}
svg .slot:hover .hit{fill:#eef2f6}
.channel-detail{border:1px solid var(--line);border-radius:4px;padding:10px 12px;margin:12px 0;break-inside:avoid;page-break-inside:avoid}
.trends{display:grid;grid-template-columns:repeat(4,minmax(0,1fr));gap:10px;margin-top:8px}
.trend-fig,.excerpt-fig{margin:4px 0 0;break-inside:avoid;page-break-inside:avoid}
.excerpt-fig{margin-top:10px}
.foot{margin-top:36px;border-top:1px solid var(--line);font-size:12.5px;color:var(--muted)}
a{color:#1f4e79}
@media (max-width:900px){.trends{grid-template-columns:repeat(2,minmax(0,1fr))}.charts{grid-template-columns:1fr}}
@page{size:A4 landscape;margin:11mm}
@media print{
body{max-width:none;padding:0;font-size:10pt;background:#fff;color:#000}
*{-webkit-print-color-adjust:exact;print-color-adjust:exact}
.banner,.caution,.read-error{break-inside:avoid}
.recording{break-before:page}
.charts{grid-template-columns:repeat(2,minmax(0,1fr))}
.chart-fig.wide{grid-column:1/-1}
.table tr{break-inside:avoid}
h2,h3,h4{break-after:avoid}
a{color:inherit;text-decoration:none}
svg .slot:hover .hit{fill:transparent}
}
`.trim();
