/**
 * The HTML report in a real browser (Debian's chromium through playwright-core): the charts
 * are there with one bar per channel, nothing is fetched from anywhere, nothing logs an
 * error, the page fits the width, and it prints on A4 landscape. Leaves a full-page
 * screenshot in test-output/report.png (and the report and a PDF beside it) for a person
 * to look at.
 */
import { existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium, type BrowserContext } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { GateResult } from '../../src/gate/types.js';
import { htmlReport } from '../../src/report/html.js';
import { mixedResult } from '../helpers/gate-fixtures.js';
import { LAB_FAULTS, labReport } from '../helpers/report-fixtures.js';

// The functions given to page.evaluate run in the browser; the project compiles without the
// DOM library, so the little they use is declared here (module scope, nothing leaks).
declare const document: { documentElement: { scrollWidth: number }; body: object };
declare const window: { innerWidth: number };
declare function getComputedStyle(element: object): { fill: string; backgroundColor: string };

const CHROMIUM = '/usr/bin/chromium';
// as test/helpers/tools.ts skipWithout: skip on a machine without it, never in CI
const skip = !existsSync(CHROMIUM) && !process.env.CI;

/** Flags for a quiet, offline, throw-away browser. */
const ARGS = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-quic',
  '--no-first-run',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
];

const OUT = resolve('test-output');

/** Two lab recordings (one with every fault, one small) and an unreadable one. */
function scenario(): { result: GateResult; html: string } {
  const { result, detail } = labReport({ faults: LAB_FAULTS, force: true }, { accelerometers: 5, faults: { 2: 'spikes' } });
  const broken = mixedResult().recordings[2];
  const full: GateResult = { ...result, verdict: 'error', recordings: [...result.recordings, broken] };
  return { result: full, html: htmlReport(full, detail, { title: 'Shaker random, runs 1–2' }) };
}

describe.skipIf(skip)('html report in a browser', () => {
  let context: BrowserContext;
  let profile: string;
  const { result, html } = scenario();
  const file = join(OUT, 'report.html');
  const url = pathToFileURL(file).href;
  const requests: string[] = [];
  const consoleErrors: string[] = [];
  const pageErrors: string[] = [];

  beforeAll(async () => {
    mkdirSync(OUT, { recursive: true });
    writeFileSync(file, html);
    profile = mkdtempSync(join(tmpdir(), 'vibgate-chromium-'));
    context = await chromium.launchPersistentContext(profile, {
      executablePath: CHROMIUM,
      headless: true,
      args: ARGS,
      viewport: { width: 1280, height: 900 },
    });
    context.on('request', (r) => requests.push(r.url()));
  });

  afterAll(async () => {
    await context?.close();
    if (profile) rmSync(profile, { recursive: true, force: true });
  });

  it('shows every chart with one bar per channel, fetches nothing and logs no error', async () => {
    const page = await context.newPage();
    page.on('console', (m) => {
      if (m.type() === 'error') consoleErrors.push(m.text());
    });
    page.on('pageerror', (e) => pageErrors.push(e.message));
    await page.goto(url, { waitUntil: 'load' });

    const charts = await page.$$eval('svg.chart', (svgs) =>
      svgs.map((svg) => {
        const box = svg.getBoundingClientRect();
        return {
          recording: svg.getAttribute('data-recording'),
          stat: svg.getAttribute('data-stat'),
          bars: svg.querySelectorAll('rect.bar[data-channel][data-status]').length,
          titled: svg.querySelectorAll('g.slot > title').length,
          width: box.width,
          height: box.height,
        };
      }),
    );
    const readable = result.recordings.filter((r) => r.channels.length > 0);
    // seven charts always, and one more for each check the rule file ran that has its own
    // chart (group-outlier, duplicate-channel, mains-hum, range-utilisation, frame-length)
    const optional = ['group-outlier', 'duplicate-channel', 'mains-hum', 'range-utilisation', 'frame-length'];
    const chartsOf = (r: (typeof readable)[number]) => 7 + optional.filter((id) => r.channels.some((c) => c.findings.some((f) => f.check === id))).length;
    expect(charts).toHaveLength(readable.reduce((n, r) => n + chartsOf(r), 0));
    for (const r of readable) {
      const mine = charts.filter((c) => c.recording === r.path);
      expect(mine, r.path).toHaveLength(chartsOf(r));
      for (const c of mine) {
        expect(c.bars, `${r.path} ${c.stat}`).toBe(r.channels.length);
        expect(c.titled, `${r.path} ${c.stat}`).toBe(r.channels.length);
        expect(c.width).toBeGreaterThan(300);
        expect(c.height).toBeGreaterThan(100);
      }
    }

    // the failing and warning bars are painted with the shared patterns, which exist
    const fills = await page.$$eval('rect.bar[data-status="fail"], rect.bar[data-status="warn"]', (rects) =>
      rects.map((r) => ({ status: r.getAttribute('data-status'), fill: getComputedStyle(r).fill })),
    );
    expect(fills.length).toBeGreaterThan(0);
    for (const f of fills) expect(f.fill).toBe(`url("#vg-fill-${f.status}")`);
    expect(await page.$$eval('pattern#vg-fill-fail, pattern#vg-fill-warn', (p) => p.length)).toBe(2);

    // trends and excerpts of the flagged channels are drawn
    const flagged = result.recordings.flatMap((r) => r.channels.filter((c) => c.verdict === 'fail' || c.verdict === 'warn'));
    expect(await page.$$eval('svg.trend', (s) => s.length)).toBe(4 * flagged.length);
    expect(await page.$$eval('svg.excerpt path.series', (p) => p.filter((x) => (x.getAttribute('d') ?? '').length > 100).length)).toBeGreaterThan(0);

    // nothing wider than the window at 1280 px
    const widths = await page.evaluate(() => ({ scroll: document.documentElement.scrollWidth, inner: window.innerWidth }));
    expect(widths.scroll).toBeLessThanOrEqual(widths.inner);

    await page.screenshot({ path: join(OUT, 'report.png'), fullPage: true });
    expect(readFileSync(join(OUT, 'report.png')).subarray(1, 4).toString()).toBe('PNG');

    expect(pageErrors).toEqual([]);
    expect(consoleErrors).toEqual([]);
    expect(new Set(requests)).toEqual(new Set([url]));
    await page.close();
  });

  it('prints on A4 landscape pages', async () => {
    const page = await context.newPage();
    await page.goto(url, { waitUntil: 'load' });
    await page.emulateMedia({ media: 'print' });
    const background = await page.evaluate(() => getComputedStyle(document.body).backgroundColor);
    expect(background).toBe('rgb(255, 255, 255)');
    const pdf = await page.pdf({ path: join(OUT, 'report.pdf'), preferCSSPageSize: true, printBackground: true });
    const boxes = [...pdf.toString('latin1').matchAll(/\/MediaBox\s*\[\s*0 0 ([\d.]+) ([\d.]+)\s*\]/g)].map((m) => [Number(m[1]), Number(m[2])]);
    expect(boxes.length).toBeGreaterThan(1);
    for (const [w, h] of boxes) {
      // A4 is 297 × 210 mm = 841.9 × 595.3 pt
      expect(w).toBeCloseTo(841.9, 0);
      expect(h).toBeCloseTo(595.3, 0);
    }
    expect(new Set(requests)).toEqual(new Set([url]));
    await page.close();
  });
});
