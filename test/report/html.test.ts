import { describe, expect, it } from 'vitest';
import { clipping } from '../../src/checks/clipping.js';
import { crestFactor } from '../../src/checks/crest-factor.js';
import { deadChannel } from '../../src/checks/dead-channel.js';
import { dropout } from '../../src/checks/dropout.js';
import { kurtosis } from '../../src/checks/kurtosis.js';
import { meanOffset } from '../../src/checks/mean-offset.js';
import { skewness } from '../../src/checks/skewness.js';
import type { Finding } from '../../src/checks/types.js';
import type { ChannelVerdict, GateResult, Verdict } from '../../src/gate/types.js';
import type { ReportDetail } from '../../src/report/detail.js';
import { htmlReport } from '../../src/report/html.js';
import { NOT_A_SIGN_OFF } from '../../src/report/terminal.js';
import { finding, readError } from '../helpers/gate-fixtures.js';
import { HOSTILE, LAB_FAULTS, hostileReport, labReport, labRules, mixedReport } from '../helpers/report-fixtures.js';

// ---------------------------------------------------------------------------------------
// Reading our own markup back: the report writes every attribute double-quoted and escaped,
// and chart SVGs hold no nested SVG, so these patterns are exact for it (the browser test
// reads the same report through a real DOM).

const unescape = (s: string) =>
  s.replace(/&lt;/g, '<').replace(/&gt;/g, '>').replace(/&quot;/g, '"').replace(/&#39;/g, "'").replace(/&amp;/g, '&');

function attrs(tag: string): Record<string, string> {
  const out: Record<string, string> = {};
  for (const m of tag.matchAll(/([\w:-]+)="([^"]*)"/g)) out[m[1]] = unescape(m[2]);
  return out;
}

interface Block {
  attrs: Record<string, string>;
  body: string;
}

const svgs = (html: string, cls: string): Block[] =>
  [...html.matchAll(new RegExp(`<svg class="${cls}"([^>]*)>([\\s\\S]*?)</svg>`, 'g'))].map((m) => ({ attrs: attrs(m[1]), body: m[2] }));

const elements = (body: string, tag: string, cls: string) =>
  [...body.matchAll(new RegExp(`<${tag} class="${cls}"([^>]*?)/?>`, 'g'))].map((m) => attrs(m[1]));

/** The bar slots of a chart: tooltip, bar attributes, and the mark drawn with it. */
const slots = (chart: Block) =>
  [...chart.body.matchAll(/<g class="slot"><title>([^<]*)<\/title>([\s\S]*?)<\/g>/g)].map((m) => ({
    title: unescape(m[1]),
    bar: attrs(/<rect class="bar"([^>]*)\/>/.exec(m[2])![1]),
    mark: /data-mark="(\w+)"/.exec(m[2])?.[1] ?? null,
  }));

/** The markup with every quoted attribute value emptied (values hold no `"`: it is escaped). */
const withoutValues = (html: string) => html.replace(/="[^"]*"/g, '=""');

const inOrder = (channels: ChannelVerdict[]) => [...channels].sort((a, b) => a.index - b.index);

/** What each chart plots and which checks mark its bars: the report's contract, restated. */
const CHART_CHECKS: Record<string, string[]> = {
  rms: ['dead-channel', 'rms-level', 'flat-channel'],
  'mean-offset': ['mean-offset'],
  skewness: ['skewness'],
  kurtosis: ['kurtosis'],
  'crest-factor': ['crest-factor'],
  clipping: ['clipping'],
  dropout: ['dropout'],
  // drawn only where the rule file runs the check on some channel of the recording
  'group-outlier': ['group-outlier'],
  'duplicate-channel': ['duplicate-channel'],
  'mains-hum': ['mains-hum'],
  'range-utilisation': ['range-utilisation'],
  'frame-length': ['frame-length'],
};
const OPTIONAL = new Set(['group-outlier', 'duplicate-channel', 'mains-hum', 'range-utilisation', 'frame-length']);
const STATS = Object.keys(CHART_CHECKS);
/** The charts a recording's report has: every fixed one, and the optional ones whose check ran. */
const statsOf = (r: { channels: ChannelVerdict[] }) =>
  STATS.filter((s) => !OPTIONAL.has(s) || r.channels.some((c) => c.findings.some((f) => CHART_CHECKS[s].includes(f.check))));

const RANK: Record<Finding['status'], number> = { skip: 1, pass: 2, warn: 3, fail: 4 };

function expectedStatus(c: ChannelVerdict, stat: string): string {
  const own = c.findings.filter((f) => CHART_CHECKS[stat].includes(f.check));
  if (own.length === 0) return 'off';
  return own.reduce((w, f) => (RANK[f.status] > RANK[w.status] ? f : w)).status;
}

const median = (xs: number[]) => {
  const s = xs.slice().sort((a, b) => a - b);
  return s.length % 2 ? s[(s.length - 1) / 2] : (s[s.length / 2 - 1] + s[s.length / 2]) / 2;
};

const lab = labReport({ faults: LAB_FAULTS, force: true }, { accelerometers: 5, faults: { 2: 'spikes' } });
const labHtml = htmlReport(lab.result, lab.detail);
const mixed = mixedReport();
const mixedHtml = htmlReport(mixed.result, mixed.detail);

describe('html report: fixtures', () => {
  it('the lab fixture has failing, warning, passing and switched-off bars to look at', () => {
    const statuses = new Set(lab.result.recordings.flatMap((r) => r.channels.flatMap((c) => STATS.map((s) => expectedStatus(c, s)))));
    expect([...statuses].sort()).toEqual(['fail', 'off', 'pass', 'skip', 'warn']);
  });
});

describe('html report: charts across channels', () => {
  it('has one chart per statistic per readable recording, with one bar per channel in file order', () => {
    for (const r of [...lab.result.recordings, ...mixed.result.recordings]) {
      const html = lab.result.recordings.includes(r) ? labHtml : mixedHtml;
      const charts = svgs(html, 'chart').filter((c) => c.attrs['data-recording'] === r.path);
      if (r.channels.length === 0) {
        expect(charts, r.path).toHaveLength(0);
        continue;
      }
      expect(charts.map((c) => c.attrs['data-stat']), r.path).toEqual(statsOf(r));
      for (const chart of charts) {
        const bars = elements(chart.body, 'rect', 'bar');
        expect(bars.map((b) => b['data-channel']), `${r.path} ${chart.attrs['data-stat']}`).toEqual(inOrder(r.channels).map((c) => c.name));
        expect(Number(chart.attrs['data-bars'])).toBe(r.channels.length);
      }
    }
  });

  it("marks each bar with its check's status: failing hatched with a cross, warning dotted with a diamond", () => {
    const defined = (id: string) => labHtml.includes(`<pattern id="${id}"`);
    for (const r of lab.result.recordings) {
      for (const chart of svgs(labHtml, 'chart').filter((c) => c.attrs['data-recording'] === r.path)) {
        const stat = chart.attrs['data-stat'];
        const got = slots(chart);
        inOrder(r.channels).forEach((c, i) => {
          const { bar, mark, title } = got[i];
          const status = expectedStatus(c, stat);
          const where = `${r.path} ${stat} ${c.name}`;
          expect(bar['data-status'], where).toBe(status);
          expect(title, where).toContain(c.name);
          if (status === 'fail' || status === 'warn') {
            const pattern = /^url\(#([\w-]+)\)$/.exec(bar.fill);
            expect(pattern, where).not.toBeNull();
            expect(defined(pattern![1]), where).toBe(true);
            expect(mark, where).toBe(status);
          } else {
            expect(bar.fill, where).not.toMatch(/^url\(/);
            expect(mark, where).toBeNull();
          }
        });
      }
    }
    // the two patterns differ, or greyscale could not tell them apart
    const fills = new Set(svgs(labHtml, 'chart').flatMap((c) => elements(c.body, 'rect', 'bar').filter((b) => b['data-status'] === 'fail' || b['data-status'] === 'warn').map((b) => `${b['data-status']} ${b.fill}`)));
    expect([...fills].sort()).toEqual(['fail url(#vg-fill-fail)', 'warn url(#vg-fill-warn)']);
  });

  it("gives each bar a tooltip with the channel's name and value", () => {
    const r = lab.result.recordings[0];
    const chart = svgs(labHtml, 'chart').find((c) => c.attrs['data-recording'] === r.path && c.attrs['data-stat'] === 'kurtosis')!;
    inOrder(r.channels).forEach((c, i) => {
      const { title, bar } = slots(chart)[i];
      if (Number.isNaN(c.stats.kurtosis)) {
        expect(bar['data-value']).toBe('n/a');
        expect(title).toMatch(new RegExp(`^${c.name}: kurtosis n/a \\(kurtosis not judged\\)`));
        return;
      }
      expect(Number(bar['data-value'])).toBeCloseTo(c.stats.kurtosis, 12);
      expect(title).toMatch(new RegExp(`^${c.name}: kurtosis ${Number(c.stats.kurtosis.toPrecision(4))} `));
    });
    expect(r.channels.some((c) => Number.isNaN(c.stats.kurtosis))).toBe(true);
  });

  it('plots RMS over the median RMS of the channel’s group (sidecar group, else same unit)', () => {
    for (const { result, html } of [{ result: lab.result, html: labHtml }, { result: mixed.result, html: mixedHtml }]) {
      for (const r of result.recordings.filter((x) => x.channels.length)) {
        const chart = svgs(html, 'chart').find((c) => c.attrs['data-recording'] === r.path && c.attrs['data-stat'] === 'rms')!;
        const bars = elements(chart.body, 'rect', 'bar');
        inOrder(r.channels).forEach((c, i) => {
          const peers = r.channels.filter((p) => (c.group !== null ? p.group === c.group : p.group === null && p.unit === c.unit));
          expect(Number(bars[i]['data-value']), `${r.path} ${c.name}`).toBeCloseTo(c.stats.rms / median(peers.map((p) => p.stats.rms)), 12);
        });
      }
    }
    // mic-01 is alone in its group `room`: its own median
    const chart = svgs(mixedHtml, 'chart').find((c) => c.attrs['data-stat'] === 'rms')!;
    expect(elements(chart.body, 'rect', 'bar').find((b) => b['data-channel'] === 'mic-01')!['data-value']).toBe('1');
  });

  it('draws the limits the checks wrote, as lines over the channels they apply to', () => {
    const r = lab.result.recordings[0];
    const names = inOrder(r.channels).map((c) => c.name);
    const force = names.indexOf('force-01');
    const chartOf = (stat: string) => svgs(labHtml, 'chart').find((c) => c.attrs['data-recording'] === r.path && c.attrs['data-stat'] === stat)!;
    const lines = (stat: string) =>
      elements(chartOf(stat).body, 'line', 'limit').map((l) => ({ side: l['data-side'], value: Number(l['data-value']), from: Number(l['data-from']), to: Number(l['data-to']) }));
    const all = { from: 0, to: names.length - 1 };
    const rules = labRules();
    const option = (id: string, key: string) => rules.checks[id].options[key] as number;

    expect(lines('kurtosis')).toEqual([
      // kurtosis is switched off for force-01 (the last channel): the lines stop before it
      { side: 'low', value: kurtosis.defaults.whole![0], from: 0, to: force - 1 },
      { side: 'high', value: kurtosis.defaults.whole![1], from: 0, to: force - 1 },
    ]);
    expect(force).toBe(names.length - 1);
    expect(lines('skewness')).toEqual([
      { side: 'low', value: skewness.defaults.whole![0], ...all, to: force - 1 },
      { side: 'high', value: skewness.defaults.whole![1], ...all, to: force - 1 },
    ]);
    expect(lines('crest-factor')).toEqual([{ side: 'high', value: option('crest-factor', 'max'), ...all }]);
    expect(option('crest-factor', 'max')).not.toBe(crestFactor.defaults.max);
    // acc-12 is constant: mean-offset cannot judge it and writes its limit without `× std`: no line there
    const flat = names.indexOf('acc-12');
    expect(r.channels[flat].findings.find((f) => f.check === 'mean-offset')!.status).toBe('skip');
    expect(lines('mean-offset')).toEqual([
      { side: 'high', value: meanOffset.defaults['max-ratio-to-std'], from: 0, to: flat - 1 },
      { side: 'high', value: meanOffset.defaults['max-ratio-to-std'], from: flat + 1, to: names.length - 1 },
    ]);
    expect(lines('clipping')).toEqual([{ side: 'high', value: 100 * clipping.defaults['max-fraction'], ...all }]);
    expect(lines('dropout')).toEqual([{ side: 'high', value: dropout.defaults['max-seconds'], ...all }]);
    // dead-channel is not judged on force-01 (alone in its unit): no line there
    expect(lines('rms')).toEqual([{ side: 'low', value: deadChannel.defaults['min-ratio-to-median'], from: 0, to: force - 1 }]);
  });

  it('draws no limit from a text that contradicts its own verdict or does not parse', () => {
    // mixedResult: acc-01 passes kurtosis with value 3.06 against the text `≤ 2`; acc-02's text is the check's
    const kurt = svgs(mixedHtml, 'chart').find((c) => c.attrs['data-stat'] === 'kurtosis')!;
    const lines = elements(kurt.body, 'line', 'limit');
    expect(lines.map((l) => [l['data-side'], l['data-value'], l['data-from'], l['data-to']])).toEqual([
      ['low', '2.4', '1', '1'],
      ['high', '4', '1', '1'],
    ]);

    const { result, detail } = mixedReport();
    const acc02 = result.recordings[0].channels[1];
    acc02.findings = acc02.findings.map((f) => (f.check === 'kurtosis' ? { ...f, limit: 'about 3, give or take' } : f));
    const html = htmlReport(result, detail);
    const chart = svgs(html, 'chart').find((c) => c.attrs['data-stat'] === 'kurtosis')!;
    expect(elements(chart.body, 'line', 'limit')).toEqual([]);
    // the bar is still marked: the marking is the finding's status, not the line's
    expect(elements(chart.body, 'rect', 'bar')[1]['data-status']).toBe('fail');
  });

  it('draws a value that cannot be measured as n/a, not as zero', () => {
    // acc-04 of mixedResult is constant: its kurtosis is NaN
    const chart = svgs(mixedHtml, 'chart').find((c) => c.attrs['data-stat'] === 'kurtosis')!;
    const bar = elements(chart.body, 'rect', 'bar').find((b) => b['data-channel'] === 'acc-04')!;
    expect(bar['data-value']).toBe('n/a');
    expect(bar.height).toBe('0');
    expect(chart.body).toMatch(/<text class="na"[^>]*>n\/a<\/text>/);
  });
});

describe('html report: channels that warn or fail', () => {
  it('shows frame trends and the waveform excerpt only for channels that warn or fail', () => {
    for (const { result, detail, html } of [
      { ...lab, html: labHtml },
      { ...mixed, html: mixedHtml },
    ]) {
      for (const r of result.recordings) {
        const d = detail.get(r.path);
        r.channels.forEach((c, position) => {
          const flagged = c.verdict === 'fail' || c.verdict === 'warn';
          const mine = (b: Block) => b.attrs['data-recording'] === r.path && b.attrs['data-channel'] === c.name;
          const trends = svgs(html, 'trend').filter(mine);
          const excerpts = svgs(html, 'excerpt').filter(mine);
          const where = `${r.path} ${c.name} ${c.verdict}`;
          expect(trends.map((t) => t.attrs['data-stat']), where).toEqual(flagged ? ['frame-rms', 'frame-mean', 'frame-kurtosis', 'frame-skewness'] : []);
          expect(excerpts.length, where).toBe(flagged && d?.[position].excerpt ? 1 : 0);
        });
      }
    }
    // not vacuous: some channels have an excerpt, some flagged ones do not (no time span)
    expect(svgs(labHtml, 'excerpt').length).toBeGreaterThan(2);
    expect(labHtml).toContain('No waveform excerpt');
  });

  it("shades the finding's time span in the trends and the excerpt", () => {
    const r = lab.result.recordings[0];
    const spiky = r.channels.find((c) => c.name === 'acc-02')!;
    const kurt = spiky.findings.find((f) => f.check === 'kurtosis')!;
    expect(kurt.status).toBe('fail');
    expect(kurt.at).toEqual({ startS: 12, endS: 13 });
    const mine = (b: Block) => b.attrs['data-recording'] === r.path && b.attrs['data-channel'] === 'acc-02';
    const excerpt = svgs(labHtml, 'excerpt').find(mine)!;
    const spansOf = (b: Block) => [...b.body.matchAll(/<g class="span" data-status="(\w+)"><title>([^<]*)<\/title>/g)].map((m) => ({ status: m[1], title: unescape(m[2]) }));
    // skewness and kurtosis both failed on the frame at 12–13 s: one span names both
    const both = 'skewness, kurtosis fail at 12–13 s';
    expect(spansOf(excerpt)).toEqual([{ status: 'fail', title: both }]);
    expect(both).toContain(excerpt.attrs['data-check']);
    const trends = svgs(labHtml, 'trend').filter(mine);
    expect(trends).toHaveLength(4);
    for (const trend of trends) {
      // the symmetry warning, at the largest peak, is another span
      expect(spansOf(trend).map((s) => s.title)).toEqual(expect.arrayContaining([both, expect.stringMatching(/^symmetry warn at 12\.7/)]));
    }
  });

  it('draws the frame limits of kurtosis and skewness on their trends', () => {
    const r = lab.result.recordings[0];
    const trend = svgs(labHtml, 'trend').find((t) => t.attrs['data-recording'] === r.path && t.attrs['data-channel'] === 'acc-02' && t.attrs['data-stat'] === 'frame-kurtosis')!;
    expect(elements(trend.body, 'line', 'limit').map((l) => Number(l['data-value']))).toEqual(kurtosis.defaults.frames);
  });

  it('keeps every peak of a long excerpt while drawing at most two points per pixel column', () => {
    const { result, detail } = mixedReport();
    const path = result.recordings[0].path;
    const values = new Array<number>(200_000).fill(0).map((_, i) => 0.5 * Math.sin(i / 7));
    values[123_457] = 10; // one sample: decimating by picking every k-th sample would lose it
    values[7] = -10;
    detail.get(path)![1].excerpt = { startS: 11, sampleRate: 100_000, values, check: 'kurtosis' };
    const html = htmlReport(result, detail);
    const excerpt = svgs(html, 'excerpt').find((e) => e.attrs['data-channel'] === 'acc-02')!;
    const d = /<path class="series" d="([^"]*)"/.exec(excerpt.body)![1];
    const numbers = d.replace(/[ML]/g, ' ').trim().split(/\s+/).map(Number);
    const ys = numbers.filter((_, i) => i % 2 === 1);
    const width = Number(excerpt.attrs.width);
    expect(ys.length).toBeLessThanOrEqual(2 * width);
    expect(ys.length).toBeGreaterThan(width); // an envelope: a min and a max in most columns
    // the value → y map, from the y axis' tick labels; both one-sample spikes must be drawn
    const ticks = [...excerpt.body.matchAll(/<text class="tick" x="[\d.]+" y="([\d.]+)" dy="0.32em" text-anchor="end">([^<]+)<\/text>/g)].map((m) => ({ y: Number(m[1]), v: Number(m[2]) }));
    expect(ticks.length).toBeGreaterThanOrEqual(2);
    const [a, b] = [ticks[0], ticks.at(-1)!];
    const yOf = (v: number) => a.y + ((v - a.v) / (b.v - a.v)) * (b.y - a.y);
    expect(Math.min(...ys)).toBeCloseTo(yOf(10), 0);
    expect(Math.max(...ys)).toBeCloseTo(yOf(-10), 0);
  });

  it('says so when a flagged channel has no detail', () => {
    const html = htmlReport(mixed.result, new Map());
    expect(svgs(html, 'trend')).toHaveLength(0);
    expect(html).toContain('No frame trends were given for this channel.');
  });
});

describe('html report: header, recordings, verdict table', () => {
  it('opens with the overall verdict in words, when and with what it was made, and the rule files with their hashes', () => {
    const r = mixed.result;
    const head = mixedHtml.slice(mixedHtml.indexOf('<header'), mixedHtml.indexOf('</header>'));
    expect(head).toMatch(/<span class="banner-word">ERROR<\/span>/);
    expect(head).toContain('at least one recording could not be read');
    expect(head).toContain('3 recordings: 1 unreadable, 2 failed; 5 channels: 1 failed, 1 warned, 2 passed, 1 not judged.');
    expect(head).toContain(`<time datetime="${r.createdAt}">2024-03-05 14:07:09 UTC</time>`);
    expect(head).toContain(`${r.tool.name} ${r.tool.version}`);
    expect(head).toContain(r.rules.name);
    for (const f of r.rules.files) expect(head).toMatch(new RegExp(`${f.path}</span> <code class="hash">${f.sha256}</code>`));
    expect(r.rules.files).toHaveLength(2);
  });

  it.each<[Verdict, RegExp]>([
    ['pass', /The gate passed: every check/],
    ['warn', /passed with warnings/],
    ['fail', /The gate failed: at least one check failed/],
    ['error', /could not be read/],
    ['skip', /Nothing was judged/],
  ])('words the overall verdict %s', (verdict, sentence) => {
    const html = htmlReport({ ...mixed.result, verdict }, mixed.detail);
    const banner = /<div class="banner v-(\w+)"[^>]*><span class="banner-word">([^<]+)<\/span><div><p class="banner-line">([^<]+)</.exec(html)!;
    expect(banner[1]).toBe(verdict);
    expect(banner[2]).toBe({ pass: 'PASS', warn: 'WARN', fail: 'FAIL', error: 'ERROR', skip: 'NOT JUDGED' }[verdict]);
    expect(banner[3]).toMatch(sentence);
  });

  it('carries the caution that screening is not a sign-off, at the top and at the end', () => {
    const caution = [...mixedHtml.matchAll(/<p class="caution"[^>]*>([\s\S]*?)<\/p>/g)].map((m) => unescape(m[1].replace(/<[^>]+>/g, '')));
    expect(caution).toHaveLength(2);
    for (const text of caution) {
      expect(text).toContain(NOT_A_SIGN_OFF);
      expect(text).toContain('qualified engineers');
      expect(text).toContain('applicable codes and standards');
    }
    expect(mixedHtml.indexOf('class="caution"')).toBeLessThan(mixedHtml.indexOf('<section class="recording"'));
  });

  it("gives each recording's facts, notes, own findings, and the read error of an unreadable one", () => {
    const [shaker, short, broken] = mixed.result.recordings;
    const section = (path: string) => {
      const m = new RegExp(`<section class="recording" id="r\\d+" data-recording="${path}"[\\s\\S]*?</section>`).exec(mixedHtml);
      expect(m, path).not.toBeNull();
      return m![0];
    };
    const s = section(shaker.path);
    for (const fact of [shaker.sha256!, 'wav', '1024 Hz', '30 s', `${shaker.samples} per channel`, shaker.notes[0]]) expect(s).toContain(fact);
    expect(section(short.path)).toContain(short.findings[0].message);
    expect(section(short.path)).toMatch(/<tr class="f-fail"><td><span class="st st-fail">fail<\/span><\/td><td class="check">min-duration<\/td><td class="num">12\.5 s<\/td><td>≥ 30 s<\/td>/);
    const b = section(broken.path);
    expect(b).toContain(`<p class="read-error" role="alert"><strong>Could not be read, so nothing in it was checked:</strong> ${readError.replace(/"/g, '&quot;')}</p>`);
    expect(b).not.toContain('<svg class="chart"');
    expect(b).toContain('format</dt><dd>unknown');
  });

  it('lists every channel in the verdict table with unit, verdict and the failing or warning checks with their messages', () => {
    const [shaker] = mixed.result.recordings;
    const table = /<table class="table verdicts">([\s\S]*?)<\/table>/.exec(mixedHtml)![1];
    const rows = [...table.matchAll(/<tr class="v-(\w+)" data-channel="([^"]*)" data-verdict="(\w+)">([\s\S]*?)<\/tr>/g)];
    expect(rows.map((m) => [m[2], m[3]])).toEqual(inOrder(shaker.channels).map((c) => [c.name, c.verdict]));
    for (const [row, c] of rows.map((m, i) => [m[4], inOrder(shaker.channels)[i]] as const)) {
      expect(row).toContain(`<td>${c.unit}</td>`);
      for (const f of c.findings) {
        const shown = row.includes(`<strong class="check">${f.check}</strong> ${f.message}`);
        // failing and warning findings always; skipped ones where nothing passed; passing ones never
        expect(shown, `${c.name} ${f.check}`).toBe(f.status === 'fail' || f.status === 'warn' || (f.status === 'skip' && c.verdict === 'skip'));
      }
    }
    // a failing channel links to its detail
    expect(rows[1][4]).toMatch(/<a href="#r1-c1">acc-02<\/a>/);
    expect(mixedHtml).toContain('id="r1-c1"');
  });

  it('takes a title', () => {
    const html = htmlReport(mixed.result, mixed.detail, { title: 'Run 3 <KX-40>' });
    expect(html).toContain('<title>Run 3 &lt;KX-40&gt;</title>');
    expect(html).toContain('<h1>Run 3 &lt;KX-40&gt;</h1>');
  });
});

describe('html report: self-contained, safe, small', () => {
  it('references nothing outside the file: no URLs but the SVG namespace, no scripts, links, fonts or images', () => {
    for (const html of [labHtml, mixedHtml]) {
      const urls = [...html.matchAll(/[a-z][a-z0-9+.-]*:\/\/[^\s"'<>)]*/gi)].map((m) => m[0]);
      expect(new Set(urls)).toEqual(new Set(['http://www.w3.org/2000/svg']));
      const refs = [...html.matchAll(/\s(?:src|href|xlink:href|action|srcset|poster|data)\s*=\s*"([^"]*)"/gi)].map((m) => m[1]);
      expect(refs.length).toBeGreaterThan(0);
      for (const ref of refs) expect(ref).toMatch(/^#[\w-]+$/);
      for (const m of html.matchAll(/url\(([^)]*)\)/g)) expect(m[1]).toMatch(/^#[\w-]+$/);
      expect(html).not.toMatch(/<(script|link|img|iframe|object|embed|base)\b/i);
      expect(html).not.toMatch(/@import|@font-face/i);
      expect(withoutValues(html)).not.toMatch(/<[a-z][^>]*\son\w+\s*=/i);
    }
  });

  it('escapes every text from the inputs: channel names, paths, messages, notes, rule paths, units', () => {
    const { result, detail } = hostileReport();
    const html = htmlReport(result, detail);
    expect(html).not.toMatch(/<(script|img|iframe|svg onload)\b/i);
    // no tag got an event handler: the hostile text shows only, escaped, in text and quoted values
    expect(withoutValues(html)).not.toMatch(/<[a-z][^>]*\son\w+\s*=/i);
    for (const text of Object.values(HOSTILE)) {
      expect(html, text).not.toContain(text);
    }
    expect(html).toContain('&lt;script&gt;alert(1)&lt;/script&gt;');
    expect(html).toContain('data-channel="&lt;script&gt;alert(1)&lt;/script&gt;"');
    expect(html).toContain('data-recording="runs/&quot;&gt;&lt;img src=x onerror=alert(2)&gt;.wav"');
    expect(html).toContain('spikes &lt;b&gt;here&lt;/b&gt; &amp; &quot;there&quot; &#39;too&#39;');
    // the hostile channel still has its bars, trends and excerpt
    const bars = svgs(html, 'chart').flatMap((c) => elements(c.body, 'rect', 'bar')).filter((b) => b['data-channel'] === HOSTILE.channel);
    expect(bars).toHaveLength(statsOf(result.recordings.find((r) => r.channels.some((c) => c.name === HOSTILE.channel))!).length);
    expect(svgs(html, 'trend').filter((t) => t.attrs['data-channel'] === HOSTILE.channel)).toHaveLength(4);
  });

  it('stays well under 2 MB for 64 channels of an hour with a few failing, with long excerpts', () => {
    const faults = { 3: 'spikes', 17: 'clipping', 30: 'dropout', 41: 'dead', 52: 'offset', 60: 'lopsided' } as const;
    const { result, detail } = labReport({ accelerometers: 64, faults, durationS: 30 });
    const r = result.recordings[0];
    // an hour of one-second frames and two seconds at 51.2 kHz per flagged channel
    const frames = 3600;
    const long: ReportDetail = new Map([
      [
        r.path,
        detail.get(r.path)!.map((d, i) => ({
          frames: {
            timeS: Array.from({ length: frames }, (_, k) => k),
            rms: Array.from({ length: frames }, (_, k) => 1 + 0.1 * Math.sin(k)),
            mean: Array.from({ length: frames }, (_, k) => 0.01 * Math.cos(k)),
            kurtosis: Array.from({ length: frames }, (_, k) => 3 + 0.2 * Math.sin(k / 3)),
            skewness: Array.from({ length: frames }, (_, k) => 0.1 * Math.sin(k / 5)),
          },
          excerpt: d.excerpt && { ...d.excerpt, sampleRate: 51_200, values: Array.from({ length: 102_400 }, (_, k) => Math.sin(k / 3) + (k % 997 === 0 ? 8 : 0)) },
        })),
      ],
    ]);
    const html = htmlReport({ ...result, recordings: [{ ...r, durationS: 3600 }] }, long);
    const flagged = r.channels.filter((c) => c.verdict === 'fail' || c.verdict === 'warn');
    expect(flagged.length).toBeGreaterThanOrEqual(Object.keys(faults).length);
    expect(svgs(html, 'chart')).toHaveLength(statsOf(r).length);
    expect(Buffer.byteLength(html)).toBeLessThan(1_000_000);
  });

  it('prints on A4 landscape without splitting charts and without dark backgrounds', () => {
    const css = /<style>([\s\S]*?)<\/style>/.exec(mixedHtml)![1];
    expect(css).toMatch(/@page\s*\{[^}]*size:\s*A4 landscape/);
    const print = css.slice(css.indexOf('@media print'));
    expect(print).toMatch(/background:#fff/);
    expect(css).toMatch(/\.chart-fig\{[^}]*break-inside:avoid/);
    expect(css).toMatch(/\.channel-detail\{[^}]*break-inside:avoid/);
    // every background colour used is light (each channel over 200 of 255)
    for (const m of css.matchAll(/background:(#[0-9a-f]{3,6}|var\(--[\w-]+\))/gi)) {
      const value = m[1].startsWith('var(') ? new RegExp(`${m[1].slice(4, -1)}:(#[0-9a-f]{6})`).exec(css)?.[1] : m[1];
      if (m[0].includes('--fail)')) continue; // the small FAIL status tag is dark on screen and in print, white text
      expect(value, m[0]).toBeDefined();
      const hex = value!.length === 4 ? value!.slice(1).split('').map((h) => h + h).join('') : value!.slice(1);
      const channels = [0, 2, 4].map((k) => parseInt(hex.slice(k, k + 2), 16));
      expect(Math.min(...channels), m[0]).toBeGreaterThan(200);
    }
  });

  it('is deterministic: the same result gives the same bytes', () => {
    const again = mixedReport();
    expect(htmlReport(again.result, again.detail)).toBe(mixedHtml);
  });

  it('handles a result without recordings, and a recording without channels', () => {
    const empty: GateResult = { ...mixed.result, verdict: 'skip', recordings: [] };
    expect(htmlReport(empty, new Map())).toContain('No recordings were screened.');
    const noChannels: GateResult = { ...mixed.result, recordings: [{ ...mixed.result.recordings[1], channels: [], findings: [finding('channel-count', 'fail', { message: 'no channels' })] }] };
    const html = htmlReport(noChannels, new Map());
    expect(html).toContain('The recording has no channels.');
    expect(svgs(html, 'chart')).toHaveLength(0);
  });
});
