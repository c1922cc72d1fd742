/**
 * Inline SVG charts for the HTML report: bar charts across channels, and time charts (frame
 * trends, waveform excerpts). Pure string builders, no DOM: every text that comes from the
 * inputs passes through `esc`. Coordinates are viewBox units (CSS pixels at full width),
 * written with one decimal to keep the file small.
 *
 * Status is never told by colour alone: failing bars carry a diagonal hatch and a cross
 * above them, warning bars a dot pattern and an open diamond, passing bars are solid, bars
 * not judged are an outline. The patterns live once in `patternDefs()`, referenced by id.
 */
import { numberText } from './terminal.js';

/** How a bar or span is marked: a check's status, or `off` when the check did not run. */
export type MarkStatus = 'fail' | 'warn' | 'pass' | 'skip' | 'off';

const ENTITIES: Record<string, string> = { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' };

/** Text made safe for HTML/SVG content and quoted attributes. */
export function esc(text: string): string {
  return text.replace(/[&<>"']/g, (ch) => ENTITIES[ch]);
}

/** A coordinate with one decimal (sub-pixel precision is invisible and costs bytes). */
const px = (v: number): string => String(Math.round(v * 10) / 10);

/** Our palette. Kept here so the bars, spans, legend swatches and CSS agree. */
const PALETTE = {
  ink: '#1f2933',
  muted: '#52606d',
  grid: '#e1e5ea',
  axis: '#7b8794',
  pass: '#6b8299',
  fail: '#a4262c',
  failTint: '#f8d7d4',
  warn: '#9a5b00',
  warnTint: '#fbe9c6',
  offStroke: '#9aa5b1',
  line: '#28507a',
  limit: '#1f2933',
} as const;

/** Ids of the shared patterns; `url(#…)` works across the inline SVGs of one document. */
const PATTERN = {
  fail: 'vg-fill-fail',
  warn: 'vg-fill-warn',
  spanFail: 'vg-span-fail',
  spanWarn: 'vg-span-warn',
} as const;

/** The shared pattern definitions, in a zero-size SVG placed once at the top of the body. */
export function patternDefs(): string {
  const p = PALETTE;
  return (
    `<svg class="defs" width="0" height="0" aria-hidden="true" focusable="false"><defs>` +
    // failing: dense diagonal stripes, dark on a pale tint (reads as dark grey in greyscale)
    `<pattern id="${PATTERN.fail}" patternUnits="userSpaceOnUse" width="5" height="5" patternTransform="rotate(45)">` +
    `<rect width="5" height="5" fill="${p.failTint}"/><rect width="2.4" height="5" fill="${p.fail}"/></pattern>` +
    // warning: dots on a pale tint (reads as light grey with texture)
    `<pattern id="${PATTERN.warn}" patternUnits="userSpaceOnUse" width="4" height="4">` +
    `<rect width="4" height="4" fill="${p.warnTint}"/><circle cx="2" cy="2" r="1.1" fill="${p.warn}"/></pattern>` +
    // spans in time charts: the same two textures, lighter, so the line stays readable
    `<pattern id="${PATTERN.spanFail}" patternUnits="userSpaceOnUse" width="8" height="8" patternTransform="rotate(45)">` +
    `<rect width="8" height="8" fill="${p.failTint}" fill-opacity="0.55"/><rect width="1.6" height="8" fill="${p.fail}" fill-opacity="0.35"/></pattern>` +
    `<pattern id="${PATTERN.spanWarn}" patternUnits="userSpaceOnUse" width="6" height="6">` +
    `<rect width="6" height="6" fill="${p.warnTint}" fill-opacity="0.6"/><circle cx="3" cy="3" r="1" fill="${p.warn}" fill-opacity="0.45"/></pattern>` +
    `</defs></svg>`
  );
}

/** Fill and stroke attributes of a bar of the given status. */
function barPaint(status: MarkStatus): string {
  switch (status) {
    case 'fail': return `fill="url(#${PATTERN.fail})" stroke="${PALETTE.fail}" stroke-width="1"`;
    case 'warn': return `fill="url(#${PATTERN.warn})" stroke="${PALETTE.warn}" stroke-width="1"`;
    case 'pass': return `fill="${PALETTE.pass}"`;
    default: return `fill="#ffffff" stroke="${PALETTE.offStroke}" stroke-width="1" stroke-dasharray="2 2"`;
  }
}

/** The shape drawn beside a failing (cross) or warning (open diamond) bar, centred on x, y. */
function markShape(status: MarkStatus, x: number, y: number, r: number): string {
  if (status === 'fail') {
    return `<path class="mark" data-mark="fail" d="M${px(x - r)} ${px(y - r)}L${px(x + r)} ${px(y + r)}M${px(x - r)} ${px(y + r)}L${px(x + r)} ${px(y - r)}" stroke="${PALETTE.fail}" stroke-width="${px(Math.max(1.2, r * 0.55))}" fill="none"/>`;
  }
  if (status === 'warn') {
    return `<path class="mark" data-mark="warn" d="M${px(x)} ${px(y - r)}L${px(x + r)} ${px(y)}L${px(x)} ${px(y + r)}L${px(x - r)} ${px(y)}Z" stroke="${PALETTE.warn}" stroke-width="${px(Math.max(1, r * 0.4))}" fill="#ffffff"/>`;
  }
  return '';
}

/** A small legend swatch (bar of a status with its mark), for the HTML legend. */
export function legendSwatch(status: MarkStatus): string {
  const mark = markShape(status, 20, 7, 3.5);
  return `<svg class="swatch" width="28" height="16" viewBox="0 0 28 16" aria-hidden="true"><rect x="2" y="2" width="10" height="12" ${barPaint(status)}/>${mark}</svg>`;
}

/** A legend swatch of a limit line. */
export function limitSwatch(): string {
  return `<svg class="swatch" width="28" height="16" viewBox="0 0 28 16" aria-hidden="true"><line x1="1" x2="27" y1="8" y2="8" stroke="${PALETTE.limit}" stroke-width="1.4" stroke-dasharray="5 3"/></svg>`;
}

/** A legend swatch of a shaded time span. */
export function spanSwatch(status: 'fail' | 'warn'): string {
  return `<svg class="swatch" width="28" height="16" viewBox="0 0 28 16" aria-hidden="true"><rect x="2" y="1" width="24" height="14" fill="url(#${status === 'fail' ? PATTERN.spanFail : PATTERN.spanWarn})" stroke="${status === 'fail' ? PALETTE.fail : PALETTE.warn}" stroke-width="0.8"/></svg>`;
}

// ---------------------------------------------------------------------------------------
// Scales and ticks.

/** A step of 1, 2 or 5 × 10^k near `raw` (the usual "nice numbers" for axis ticks). */
function niceStep(raw: number): number {
  if (!(raw > 0) || !Number.isFinite(raw)) return 1;
  const k = Math.floor(Math.log10(raw));
  const f = raw / 10 ** k;
  const m = f <= 1 ? 1 : f <= 2 ? 2 : f <= 5 ? 5 : 10;
  return m * 10 ** k;
}

/** Ticks covering [lo, hi] with about `count` intervals; the domain grows to the outer ticks. */
function linearTicks(lo: number, hi: number, count: number): { lo: number; hi: number; ticks: number[] } {
  if (!(hi > lo)) {
    const pad = lo === 0 ? 1 : Math.abs(lo) * 0.1;
    lo -= pad;
    hi += pad;
  }
  const step = niceStep((hi - lo) / count);
  const first = Math.floor(lo / step + 1e-9) * step;
  const last = Math.ceil(hi / step - 1e-9) * step;
  const ticks: number[] = [];
  for (let i = 0; first + i * step <= last + step * 1e-9; i++) ticks.push(clean(first + i * step));
  return { lo: first, hi: last, ticks };
}

/** 0.30000000000000004 → 0.3: tick values are sums of steps. */
const clean = (v: number) => Number(v.toPrecision(12));

function finite(values: Iterable<number | null | undefined>): number[] {
  const out: number[] = [];
  for (const v of values) if (v !== null && v !== undefined && Number.isFinite(v)) out.push(v);
  return out;
}

const minOf = (xs: number[]) => xs.reduce((a, b) => (b < a ? b : a), Infinity);
const maxOf = (xs: number[]) => xs.reduce((a, b) => (b > a ? b : a), -Infinity);

// ---------------------------------------------------------------------------------------
// Bar chart across channels.

export interface BarDatum {
  /** Full channel name: `data-channel` and the tooltip. */
  channel: string;
  /** Plotted value; null when it could not be measured (drawn as `n/a`). */
  value: number | null;
  status: MarkStatus;
  /** The whole tooltip text (channel, value, status). */
  tooltip: string;
  /** This channel's limit in plotted units, when one could be derived; null otherwise. */
  limit: { low: number | null; high: number | null } | null;
}

export interface BarChartOptions {
  /** `data-stat` of the chart. */
  stat: string;
  /** `data-recording` of the chart (the recording's path as given). */
  recording: string;
  /** Accessible name of the chart. */
  label: string;
  /** Y axis title, with its unit. */
  yLabel: string;
  /** `log`: log10 axis, for ratios spanning decades (RMS relative to the group). */
  scale: 'linear' | 'log';
  /**
   * On a linear axis the value bars grow from (0). On a log axis bars grow from the bottom
   * of the axis, and `base` is drawn as a dotted reference line (1: the group's median).
   */
  base: number;
  /** Label of the reference line on a log axis. */
  baseLabel?: string;
  /** Width in viewBox units; the SVG scales to its container. */
  width: number;
}

// the right margin holds the labels of limit lines that run to the last channel
const BAR = { top: 22, plot: 150, left: 58, right: 46 } as const;
/** Longest channel label on the axis, in characters (longer names end in `…`). */
const LABEL_CHARS = 14;

/** One bar per channel, in the given order, with limit lines and status marks. */
export function barChart(bars: BarDatum[], o: BarChartOptions): string {
  const W = o.width;
  const pw = W - BAR.left - BAR.right;
  const top = BAR.top;
  const bottom = BAR.top + BAR.plot;
  const slot = pw / Math.max(1, bars.length);
  const horizontalLabels = slot >= 72;
  const labelChars = horizontalLabels ? Math.floor(slot / 6.5) : LABEL_CHARS;
  const longest = Math.max(1, ...bars.map((b) => Math.min(labelChars, [...b.channel].length)));
  // room for the channel labels: one line, or the labels' length at 55° (about 5.4 px a character)
  const H = bottom + (horizontalLabels ? 24 : 18 + Math.ceil(longest * 5.4 * Math.sin((55 * Math.PI) / 180)));
  const limitValues = bars.flatMap((b) => (b.limit ? [b.limit.low, b.limit.high] : []));

  // y scale
  let y: (v: number) => number;
  let ticks: Array<{ v: number; text: string }>;
  let floor: number;
  let ceiling: number;
  if (o.scale === 'log') {
    const logs = finite([...bars.map((b) => b.value), ...limitValues, o.base].map((v) => (v !== null && v > 0 ? Math.log10(v) : null)));
    // at least one decade either side of the base, at most eight below it (0 is off the axis)
    const lo = Math.max(-8, Math.min(-1, Math.floor(minOf(logs) + 1e-9)));
    const hi = Math.min(8, Math.max(1, Math.ceil(maxOf(logs) - 1e-9)));
    const every = hi - lo > 8 ? 2 : 1;
    ticks = [];
    for (let k = lo; k <= hi; k += every) ticks.push({ v: 10 ** k, text: numberText(10 ** k) });
    floor = 10 ** lo;
    ceiling = 10 ** hi;
    y = (v) => {
      const l = v > 0 ? Math.min(hi, Math.max(lo, Math.log10(v))) : lo;
      return bottom - ((l - lo) / (hi - lo)) * BAR.plot;
    };
  } else {
    const all = finite([...bars.map((b) => b.value), ...limitValues, o.base]);
    const t = linearTicks(minOf(all), maxOf(all), 4);
    ticks = t.ticks.map((v) => ({ v, text: numberText(v) }));
    floor = t.lo;
    ceiling = t.hi;
    y = (v) => bottom - ((Math.min(t.hi, Math.max(t.lo, v)) - t.lo) / (t.hi - t.lo)) * BAR.plot;
  }

  const parts: string[] = [];
  parts.push(
    `<svg class="chart" data-stat="${esc(o.stat)}" data-recording="${esc(o.recording)}" data-bars="${bars.length}" ` +
      `viewBox="0 0 ${W} ${H}" width="${W}" height="${H}" role="img" aria-label="${esc(o.label)}" xmlns="http://www.w3.org/2000/svg">`,
  );
  // grid and tick labels
  for (const t of ticks) {
    const ty = px(y(t.v));
    parts.push(`<line class="grid" x1="${BAR.left}" x2="${W - BAR.right}" y1="${ty}" y2="${ty}"/>`);
    parts.push(`<text class="tick" x="${BAR.left - 5}" y="${ty}" dy="0.32em" text-anchor="end">${esc(t.text)}</text>`);
  }
  parts.push(
    `<text class="axis-title" transform="translate(13 ${px((top + bottom) / 2)}) rotate(-90)" text-anchor="middle">${esc(o.yLabel)}</text>`,
  );

  // bars
  const barW = Math.max(1, Math.min(30, slot * 0.72));
  const markR = Math.max(1.6, Math.min(4.5, slot * 0.3));
  const y0 = o.scale === 'log' ? bottom : y(o.base);
  const labelEvery = Math.max(1, Math.ceil(11 / slot));
  bars.forEach((b, i) => {
    const cx = BAR.left + slot * (i + 0.5);
    const x = cx - barW / 2;
    let rect: string;
    let extra = '';
    const valueAttr = b.value === null ? 'n/a' : String(b.value);
    if (b.value === null) {
      rect = `<rect class="bar" data-channel="${esc(b.channel)}" data-status="${b.status}" data-value="n/a" x="${px(x)}" y="${px(y0)}" width="${px(barW)}" height="0" ${barPaint(b.status)}/>`;
      extra = `<text class="na" transform="translate(${px(cx)} ${px(y0 - 3)}) rotate(-90)" dy="0.32em">n/a</text>`;
    } else {
      const yv = y(b.value);
      const y1 = Math.min(yv, y0);
      const h = Math.abs(yv - y0);
      rect = `<rect class="bar" data-channel="${esc(b.channel)}" data-status="${b.status}" data-value="${esc(valueAttr)}" x="${px(x)}" y="${px(y1)}" width="${px(barW)}" height="${px(h)}" ${barPaint(b.status)}/>`;
      const off = (o.scale === 'log' && !(b.value >= floor)) || b.value > ceiling || b.value < floor;
      if (off) {
        // beyond the axis (0 on a log axis): a chevron at the end the bar runs off
        const down = yv >= y0;
        const ey = down ? bottom + 1 : top - 1;
        extra = `<path class="offscale" d="M${px(cx - 3)} ${px(ey + (down ? -5 : 5))}L${px(cx)} ${px(ey)}L${px(cx + 3)} ${px(ey + (down ? -5 : 5))}" fill="none" stroke="${PALETTE.ink}" stroke-width="1.2"/>`;
      }
    }
    const mark = markShape(b.status, cx, top - 10, markR);
    parts.push(
      `<g class="slot"><title>${esc(b.tooltip)}</title>` +
        `<rect class="hit" x="${px(cx - slot / 2)}" y="${top}" width="${px(slot)}" height="${BAR.plot}" fill="transparent"/>` +
        rect + extra + mark + `</g>`,
    );
    if (i % labelEvery === 0) {
      const text = esc(shorten(b.channel, labelChars));
      parts.push(
        horizontalLabels
          ? `<text class="ch" x="${px(cx)}" y="${bottom + 14}" text-anchor="middle">${text}</text>`
          : `<text class="ch" transform="translate(${px(cx + 3)} ${bottom + 8}) rotate(-55)" text-anchor="end">${text}</text>`,
      );
    }
  });

  // baseline over the bars, then the limit lines over everything
  parts.push(`<line class="baseline" x1="${BAR.left}" x2="${W - BAR.right}" y1="${px(y0)}" y2="${px(y0)}"/>`);
  if (o.scale === 'log') {
    const ry = y(o.base);
    parts.push(`<line class="reference" x1="${BAR.left}" x2="${W - BAR.right}" y1="${px(ry)}" y2="${px(ry)}" stroke="${PALETTE.ink}" stroke-width="1" stroke-dasharray="1.5 2.5"/>`);
    if (o.baseLabel) parts.push(`<text class="ref-label" x="${BAR.left + 4}" y="${px(ry)}" dy="-0.35em">${esc(o.baseLabel)}</text>`);
  }
  for (const side of ['low', 'high'] as const) {
    const segments = limitSegments(bars, side);
    // one label per limit value: beside the plot when a line runs to the last channel, else over its longest line
    const labelled = new Set<(typeof segments)[number]>();
    for (const value of new Set(segments.map((g) => g.value))) {
      const same = segments.filter((g) => g.value === value);
      const last = same.find((g) => g.to === bars.length - 1);
      const longestRun = same.reduce((a, b) => (b.to - b.from > a.to - a.from ? b : a));
      if (last) labelled.add(last);
      else if ((longestRun.to - longestRun.from + 1) * slot >= 40) labelled.add(longestRun);
    }
    for (const seg of segments) {
      if (o.scale === 'log' && !(seg.value > 0)) continue;
      const ly = px(y(seg.value));
      const x1 = BAR.left + slot * seg.from;
      const x2 = BAR.left + slot * (seg.to + 1);
      parts.push(
        `<line class="limit" data-side="${side}" data-value="${seg.value}" data-from="${seg.from}" data-to="${seg.to}" x1="${px(x1)}" x2="${px(x2)}" y1="${ly}" y2="${ly}" ` +
          `stroke="${PALETTE.limit}" stroke-width="1.4" stroke-dasharray="5 3"/>`,
      );
      const text = esc(`${side === 'high' ? '≤' : '≥'} ${numberText(seg.value)}`);
      if (!labelled.has(seg)) continue;
      if (seg.to === bars.length - 1) {
        // beside the plot, clear of the bars
        parts.push(`<text class="limit-label" x="${px(x2 + 4)}" y="${ly}" dy="0.32em">${text}</text>`);
      } else {
        parts.push(`<text class="limit-label" x="${px(x2 - 3)}" y="${ly}" dy="${labelDy(y(seg.value) - top)}" text-anchor="end">${text}</text>`);
      }
    }
  }
  parts.push(`<line class="axis" x1="${BAR.left}" x2="${BAR.left}" y1="${top}" y2="${bottom}"/>`);
  parts.push('</svg>');
  return parts.join('');
}

/** A line's label sits just above it, or just below where the line runs along the top. */
const labelDy = (fromTop: number) => (fromTop < 12 ? '1.05em' : '-0.35em');

/** Runs of consecutive bars sharing one limit value on one side. */
function limitSegments(bars: BarDatum[], side: 'low' | 'high'): Array<{ from: number; to: number; value: number }> {
  const out: Array<{ from: number; to: number; value: number }> = [];
  bars.forEach((b, i) => {
    const v = b.limit?.[side];
    if (v === null || v === undefined || !Number.isFinite(v)) return;
    const last = out.at(-1);
    if (last && last.to === i - 1 && last.value === v) last.to = i;
    else out.push({ from: i, to: i, value: v });
  });
  return out;
}

function shorten(text: string, max: number): string {
  const chars = [...text];
  if (chars.length <= max) return text;
  return chars.slice(0, Math.max(1, max - 1)).join('') + '…';
}

// ---------------------------------------------------------------------------------------
// Time charts: frame trends (steps) and waveform excerpts (lines).

export interface TimeSpanMark {
  startS: number;
  endS: number;
  status: 'fail' | 'warn';
  /** Tooltip: which check, what it found. */
  label: string;
}

export interface ReferenceLine {
  value: number;
  label: string;
  /** `limit`: a rule's limit (dashed, dark); `reference`: a value for orientation (dotted, light). */
  kind: 'limit' | 'reference';
}

export interface TimeChartOptions {
  /** Class of the SVG (`trend`, `excerpt`) and its data attributes, unescaped. */
  className: string;
  data: Record<string, string>;
  label: string;
  width: number;
  height: number;
  xLabel: string;
  yLabel: string;
  /** Time axis domain, seconds. */
  fromS: number;
  toS: number;
  spans: TimeSpanMark[];
  lines?: ReferenceLine[];
}

/** A series of values at times: `timeS[i]` and `value[i]`; non-finite values break the line. */
export interface TimeSeries {
  count: number;
  timeS: (i: number) => number;
  value: (i: number) => number;
  /** For a step series: how long each value holds (a frame's hop), seconds. */
  holdS?: number;
}

const TIME = { top: 10, bottom: 34, left: 58, right: 12 } as const;

/**
 * A time chart. A step series is drawn as steps while there are few enough values to see
 * them; beyond two values per pixel column any series becomes a min/max envelope per column
 * (so a 100 000-sample excerpt costs about 2 × the plot width in points, and no peak is lost).
 */
export function timeChart(series: TimeSeries, o: TimeChartOptions): string {
  const W = o.width;
  const H = o.height;
  const pw = W - TIME.left - TIME.right;
  const top = TIME.top;
  const bottom = H - TIME.bottom;
  const ph = bottom - top;

  const xt = linearTicks(o.fromS, o.toS, Math.max(2, Math.round(pw / 90)));
  // the time axis is the data's, not rounded out to ticks: a record of 30 s ends at 30 s
  const x0 = o.fromS;
  const x1 = o.toS > o.fromS ? o.toS : o.fromS + 1;
  const x = (t: number) => TIME.left + ((t - x0) / (x1 - x0)) * pw;

  const values: number[] = [];
  for (let i = 0; i < series.count; i++) {
    const v = series.value(i);
    if (Number.isFinite(v)) values.push(v);
  }
  const refs = o.lines ?? [];
  const ys = [...values, ...refs.map((r) => r.value)];
  // a little room above and below, so a value at the extreme is not hidden under the frame
  const pad = ys.length > 0 ? (maxOf(ys) - minOf(ys)) * 0.03 : 0;
  const yt = ys.length > 0 ? linearTicks(minOf(ys) - pad, maxOf(ys) + pad, Math.max(2, Math.round(ph / 34))) : linearTicks(0, 1, 2);
  const y = (v: number) => bottom - ((v - yt.lo) / (yt.hi - yt.lo)) * ph;

  const parts: string[] = [];
  const data = Object.entries(o.data).map(([k, v]) => ` data-${k}="${esc(v)}"`).join('');
  parts.push(
    `<svg class="${esc(o.className)}"${data} viewBox="0 0 ${W} ${H}" width="${W}" height="${H}" role="img" aria-label="${esc(o.label)}" xmlns="http://www.w3.org/2000/svg">`,
  );
  for (const t of yt.ticks) {
    const ty = px(y(t));
    parts.push(`<line class="grid" x1="${TIME.left}" x2="${W - TIME.right}" y1="${ty}" y2="${ty}"/>`);
    parts.push(`<text class="tick" x="${TIME.left - 5}" y="${ty}" dy="0.32em" text-anchor="end">${esc(numberText(t))}</text>`);
  }
  for (const t of xt.ticks) {
    if (t < x0 - 1e-9 || t > x1 + 1e-9) continue;
    const tx = px(x(t));
    parts.push(`<line class="grid" x1="${tx}" x2="${tx}" y1="${top}" y2="${bottom}"/>`);
    parts.push(`<text class="tick" x="${tx}" y="${bottom + 13}" text-anchor="middle">${esc(numberText(t))}</text>`);
  }
  parts.push(`<text class="axis-title" x="${px(TIME.left + pw / 2)}" y="${H - 4}" text-anchor="middle">${esc(o.xLabel)}</text>`);
  parts.push(`<text class="axis-title" transform="translate(13 ${px((top + bottom) / 2)}) rotate(-90)" text-anchor="middle">${esc(o.yLabel)}</text>`);

  // spans under the line, with a triangle on top so a span one sample wide is still seen;
  // warnings first so a failure drawn over the same stretch stays visible. A span over the
  // whole axis (a finding about the whole record) would only tint the plot: it is left to the text.
  const ordered = [...o.spans.filter((s) => s.status === 'warn'), ...o.spans.filter((s) => s.status === 'fail')];
  for (const s of ordered) {
    const a = Math.max(x0, Math.min(s.startS, s.endS));
    const b = Math.min(x1, Math.max(s.startS, s.endS));
    if (b < x0 || a > x1) continue;
    if (a <= x0 && b >= x1 - (x1 - x0) * 1e-3) continue;
    let sx = x(a);
    let sw = x(b) - sx;
    if (sw < 3) {
      sx -= (3 - sw) / 2;
      sw = 3;
    }
    const colour = s.status === 'fail' ? PALETTE.fail : PALETTE.warn;
    const cx = sx + sw / 2;
    const tri =
      `<path d="M${px(cx - 4.5)} ${top}L${px(cx + 4.5)} ${top}L${px(cx)} ${top + 7}Z" ` +
      (s.status === 'fail' ? `fill="${colour}"` : `fill="#ffffff" stroke="${colour}" stroke-width="1.2"`) + `/>`;
    parts.push(
      `<g class="span" data-status="${s.status}"><title>${esc(s.label)}</title>` +
        `<rect x="${px(sx)}" y="${top}" width="${px(sw)}" height="${px(ph)}" fill="url(#${s.status === 'fail' ? PATTERN.spanFail : PATTERN.spanWarn})" stroke="${colour}" stroke-width="0.8"/>` +
        tri + `</g>`,
    );
  }

  parts.push(`<path class="series" d="${seriesPath(series, x, y, x0, x1, pw)}" fill="none" stroke="${PALETTE.line}" stroke-width="1.1" stroke-linejoin="round"/>`);

  for (const r of refs) {
    const ry = px(y(r.value));
    if (r.kind === 'limit') {
      parts.push(`<line class="limit" data-value="${r.value}" x1="${TIME.left}" x2="${W - TIME.right}" y1="${ry}" y2="${ry}" stroke="${PALETTE.limit}" stroke-width="1.2" stroke-dasharray="5 3"/>`);
      parts.push(`<text class="limit-label" x="${W - TIME.right - 3}" y="${ry}" dy="${labelDy(y(r.value) - top)}" text-anchor="end">${esc(r.label)}</text>`);
    } else {
      // a value for orientation (0, or 3 for kurtosis): a faint dotted line, its value on the axis
      parts.push(`<line class="reference" data-value="${r.value}" x1="${TIME.left}" x2="${W - TIME.right}" y1="${ry}" y2="${ry}" stroke="${PALETTE.axis}" stroke-width="1" stroke-dasharray="1.5 2.5"><title>${esc(r.label)}</title></line>`);
    }
  }
  parts.push(`<rect class="frame" x="${TIME.left}" y="${top}" width="${px(pw)}" height="${px(ph)}" fill="none"/>`);
  parts.push('</svg>');
  return parts.join('');
}

/** Path data of a series: steps or a line, or a per-column min/max envelope when dense. */
function seriesPath(
  s: TimeSeries,
  x: (t: number) => number,
  y: (v: number) => number,
  x0: number,
  x1: number,
  pw: number,
): string {
  const columns = Math.max(1, Math.floor(pw));
  const out: string[] = [];
  let pen = false; // whether the next point continues a line
  const point = (xx: number, yy: number) => {
    out.push(`${pen ? 'L' : 'M'}${px(xx)} ${px(yy)}`);
    pen = true;
  };
  const hold = s.holdS ?? 0;
  const visible = (t: number) => t + hold >= x0 && t <= x1;

  if (s.count <= columns * 2) {
    for (let i = 0; i < s.count; i++) {
      const t = s.timeS(i);
      const v = s.value(i);
      if (!Number.isFinite(v) || !visible(t)) {
        pen = false;
        continue;
      }
      const yy = y(v);
      if (hold > 0) {
        point(x(Math.max(x0, t)), yy);
        point(x(Math.min(x1, t + hold)), yy);
      } else {
        point(x(t), yy);
      }
    }
    return compact(out);
  }

  // envelope: per pixel column the first, min and max in time order
  type Col = { min: number; max: number; minAt: number; maxAt: number };
  const cols: Array<Col | null> = new Array(columns).fill(null);
  for (let i = 0; i < s.count; i++) {
    const t = s.timeS(i);
    const v = s.value(i);
    if (!Number.isFinite(v) || !visible(t)) continue;
    const c = Math.min(columns - 1, Math.max(0, Math.floor(((t - x0) / (x1 - x0)) * columns)));
    const col = cols[c];
    if (col === null) cols[c] = { min: v, max: v, minAt: i, maxAt: i };
    else {
      if (v < col.min) { col.min = v; col.minAt = i; }
      if (v > col.max) { col.max = v; col.maxAt = i; }
    }
  }
  const colX = (c: number) => x(x0) + ((c + 0.5) / columns) * pw;
  cols.forEach((col, c) => {
    if (col === null) {
      pen = false;
      return;
    }
    const xx = colX(c);
    const [first, second] = col.minAt <= col.maxAt ? [col.min, col.max] : [col.max, col.min];
    point(xx, y(first));
    if (second !== first) point(xx, y(second));
  });
  return compact(out);
}

/** `M1 2L3 4L5 6` → `M1 2L3 4 5 6`: SVG repeats the last command for further pairs. */
function compact(commands: string[]): string {
  let d = '';
  let lastWasLine = false;
  for (const c of commands) {
    if (c.startsWith('M')) {
      d += c;
      lastWasLine = false;
    } else {
      d += lastWasLine ? ' ' + c.slice(1) : c;
      lastWasLine = true;
    }
  }
  return d;
}
