#!/usr/bin/env node
// Renders an HTML report to a small PNG for the docs: the top of the page (header, verdict
// table and the first row of charts) at 1280 px wide, in Debian's chromium through
// playwright-core, offline, with a throw-away profile.
//
//   node scripts/screenshot.mjs [input.html] [output.png]
//
// Defaults: demo-output/report.html (made by `npm run demo`) → docs/report.png. The PNG
// Chromium writes is truecolour; it is re-encoded here with a palette of at most 256
// colours (median cut), which keeps text and charts sharp at a fraction of the bytes.
import { existsSync, mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, relative, resolve } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { crc32, deflateSync, inflateSync } from 'node:zlib';
import { chromium } from 'playwright-core';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const input = resolve(process.argv[2] ?? join(root, 'demo-output', 'report.html'));
const output = resolve(process.argv[3] ?? join(root, 'docs', 'report.png'));
const executablePath = process.env.CHROMIUM ?? '/usr/bin/chromium';
const WIDTH = 1280;
/** Never taller than this, whatever the verdict table holds. */
const MAX_HEIGHT = 2600;
const ARGS = [
  '--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run',
  '--disable-background-networking', '--disable-component-update', '--disable-sync',
];

if (!existsSync(input)) {
  process.stderr.write(`screenshot: Cannot read "${relative(process.cwd(), input)}": no such file (run \`npm run demo\` first?)\n`);
  process.exit(2);
}
if (!existsSync(executablePath)) {
  process.stderr.write(`screenshot: Cannot start the browser: "${executablePath}" does not exist (apt-get install chromium, or set CHROMIUM)\n`);
  process.exit(2);
}

const profile = mkdtempSync(join(tmpdir(), 'vibgate-shot-'));
let png;
try {
  const context = await chromium.launchPersistentContext(profile, {
    executablePath,
    headless: true,
    args: ARGS,
    viewport: { width: WIDTH, height: 900 },
    deviceScaleFactor: 1,
  });
  const page = await context.newPage();
  const fileUrl = pathToFileURL(input).href;
  const foreign = [];
  page.on('request', (r) => { if (r.url() !== fileUrl) foreign.push(r.url()); });
  await page.goto(fileUrl, { waitUntil: 'load' });
  // down to the end of the first row of charts, else the whole page
  const height = await page.evaluate((max) => {
    const page = document.documentElement.scrollHeight;
    const figures = [...document.querySelectorAll('.charts .chart-fig')];
    if (figures.length === 0) return Math.min(page, max);
    const top = figures[0].getBoundingClientRect().top;
    const row = figures.filter((f) => Math.abs(f.getBoundingClientRect().top - top) < 2);
    const bottom = Math.max(...row.map((f) => f.getBoundingClientRect().bottom)) + window.scrollY;
    return Math.min(page, max, Math.ceil(bottom + 16));
  }, MAX_HEIGHT);
  png = await page.screenshot({ type: 'png', fullPage: true, clip: { x: 0, y: 0, width: WIDTH, height } });
  await context.close();
  if (foreign.length) process.stderr.write(`screenshot: warning: the report asked for ${foreign.join(', ')}\n`);
} finally {
  rmSync(profile, { recursive: true, force: true });
}

const small = paletted(png);
const best = small && small.length < png.length ? small : png;
mkdirSync(dirname(output), { recursive: true });
writeFileSync(output, best);
process.stdout.write(
  `screenshot: ${relative(process.cwd(), output)}: ${WIDTH} px wide, ${Math.round(best.length / 1024)} KB` +
    (best === small ? ` (palette; truecolour was ${Math.round(png.length / 1024)} KB)` : '') + '\n',
);

// ---------------------------------------------------------------------------------------
// PNG: read 8-bit RGB(A), write 8-bit palette.

function chunks(buf) {
  const out = [];
  for (let at = 8; at < buf.length; ) {
    const length = buf.readUInt32BE(at);
    out.push({ type: buf.toString('latin1', at + 4, at + 8), data: buf.subarray(at + 8, at + 8 + length) });
    at += 12 + length;
  }
  return out;
}

/** Pixels as 0xRRGGBB, or null for a PNG this reader does not handle (then the original is kept). */
function decode(buf) {
  const all = chunks(buf);
  const ihdr = all.find((c) => c.type === 'IHDR')?.data;
  if (!ihdr) return null;
  const width = ihdr.readUInt32BE(0);
  const height = ihdr.readUInt32BE(4);
  const depth = ihdr[8];
  const colour = ihdr[9];
  const interlace = ihdr[12];
  if (depth !== 8 || (colour !== 2 && colour !== 6) || interlace !== 0) return null;
  const bpp = colour === 2 ? 3 : 4;
  const raw = inflateSync(Buffer.concat(all.filter((c) => c.type === 'IDAT').map((c) => c.data)));
  const stride = width * bpp;
  const pixels = new Uint32Array(width * height);
  let prev = new Uint8Array(stride);
  for (let y = 0; y < height; y++) {
    const filter = raw[y * (stride + 1)];
    const line = Uint8Array.from(raw.subarray(y * (stride + 1) + 1, (y + 1) * (stride + 1)));
    for (let i = 0; i < stride; i++) {
      const a = i >= bpp ? line[i - bpp] : 0;
      const b = prev[i];
      const c = i >= bpp ? prev[i - bpp] : 0;
      let add = 0;
      if (filter === 1) add = a;
      else if (filter === 2) add = b;
      else if (filter === 3) add = (a + b) >> 1;
      else if (filter === 4) {
        const p = a + b - c;
        const pa = Math.abs(p - a), pb = Math.abs(p - b), pc = Math.abs(p - c);
        add = pa <= pb && pa <= pc ? a : pb <= pc ? b : c;
      }
      line[i] = (line[i] + add) & 0xff;
    }
    for (let x = 0; x < width; x++) {
      const o = x * bpp;
      pixels[y * width + x] = (line[o] << 16) | (line[o + 1] << 8) | line[o + 2];
    }
    prev = line;
  }
  return { width, height, pixels };
}

/**
 * At most `size` colours: the flat colours of the page (backgrounds, text, bars: the most
 * frequent ones) exactly, and the rest (antialiasing shades) by median cut, each box split at
 * the weighted median of its widest channel.
 */
function palette(counts, size) {
  const colours = [...counts].map(([rgb, n]) => [(rgb >> 16) & 255, (rgb >> 8) & 255, rgb & 255, n]);
  if (colours.length <= size) return colours.map(([r, g, b]) => [r, g, b]);
  colours.sort((a, b) => b[3] - a[3]);
  const exact = colours.slice(0, size / 2).map(([r, g, b]) => [r, g, b]);
  return [...exact, ...medianCut(colours.slice(size / 2), size - exact.length)];
}

function medianCut(colours, size) {
  let boxes = [colours];
  const spread = (box) => {
    let best = { channel: 0, range: -1 };
    for (let ch = 0; ch < 3; ch++) {
      let lo = 255, hi = 0;
      for (const c of box) { if (c[ch] < lo) lo = c[ch]; if (c[ch] > hi) hi = c[ch]; }
      if (hi - lo > best.range) best = { channel: ch, range: hi - lo };
    }
    return best;
  };
  while (boxes.length < size) {
    // split the box with the most pixels times spread: big, varied areas get more colours
    let pick = -1, score = 0;
    boxes.forEach((box, i) => {
      if (box.length < 2) return;
      const weight = box.reduce((s, c) => s + c[3], 0);
      const s = spread(box).range * Math.sqrt(weight);
      if (s > score) { score = s; pick = i; }
    });
    if (pick < 0) break;
    const box = boxes[pick];
    const { channel } = spread(box);
    box.sort((a, b) => a[channel] - b[channel]);
    const total = box.reduce((s, c) => s + c[3], 0);
    let run = 0, cut = 1;
    for (let i = 0; i < box.length - 1; i++) {
      run += box[i][3];
      if (run >= total / 2) { cut = i + 1; break; }
    }
    boxes = [...boxes.slice(0, pick), box.slice(0, cut), box.slice(cut), ...boxes.slice(pick + 1)];
  }
  return boxes.map((box) => {
    const n = box.reduce((s, c) => s + c[3], 0);
    return [0, 1, 2].map((ch) => Math.round(box.reduce((s, c) => s + c[ch] * c[3], 0) / n));
  });
}

function chunk(type, data) {
  const head = Buffer.alloc(8);
  head.writeUInt32BE(data.length, 0);
  head.write(type, 4, 'latin1');
  const crc = Buffer.alloc(4);
  crc.writeUInt32BE(crc32(Buffer.concat([head.subarray(4), data])) >>> 0, 0);
  return Buffer.concat([head, data, crc]);
}

function paletted(buf) {
  const image = decode(buf);
  if (!image) return null;
  const counts = new Map();
  for (const p of image.pixels) counts.set(p, (counts.get(p) ?? 0) + 1);
  const colours = palette(counts, 256);
  // nearest palette colour of each distinct colour, once
  const index = new Map();
  for (const rgb of counts.keys()) {
    const r = (rgb >> 16) & 255, g = (rgb >> 8) & 255, b = rgb & 255;
    let best = 0, dist = Infinity;
    colours.forEach(([pr, pg, pb], i) => {
      const d = 2 * (r - pr) ** 2 + 4 * (g - pg) ** 2 + 3 * (b - pb) ** 2;
      if (d < dist) { dist = d; best = i; }
    });
    index.set(rgb, best);
  }
  const { width, height, pixels } = image;
  const raw = Buffer.alloc(height * (width + 1));
  for (let y = 0; y < height; y++) {
    raw[y * (width + 1)] = 0; // filter none: the usual best for palette images
    for (let x = 0; x < width; x++) raw[y * (width + 1) + 1 + x] = index.get(pixels[y * width + x]);
  }
  const ihdr = Buffer.alloc(13);
  ihdr.writeUInt32BE(width, 0);
  ihdr.writeUInt32BE(height, 4);
  ihdr[8] = 8; // bit depth
  ihdr[9] = 3; // palette
  const plte = Buffer.from(colours.flat());
  return Buffer.concat([
    Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]),
    chunk('IHDR', ihdr),
    chunk('PLTE', plte),
    chunk('IDAT', deflateSync(raw, { level: 9 })),
    chunk('IEND', Buffer.alloc(0)),
  ]);
}
