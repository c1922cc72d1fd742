#!/usr/bin/env node
// `npm run demo`: makes the demo recordings if missing, then shows what vibgate sees in them.
import { existsSync, mkdirSync, writeFileSync } from 'node:fs';
import { dirname, join, relative } from 'node:path';
import { fileURLToPath } from 'node:url';
import { execFileSync } from 'node:child_process';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const data = join(root, 'examples', 'demo-data');
const recording = join(data, 'kx40-random-run3.wav');
if (!existsSync(recording)) execFileSync(process.execPath, [join(root, 'scripts', 'make-demo-data.mjs')], { stdio: 'inherit' });

const { main } = await import(join(root, 'dist', 'cli', 'main.js'));
const rel = relative(process.cwd(), recording) || recording;
const io = { stdout: process.stdout, stderr: process.stderr, env: process.env, cwd: process.cwd() };
process.stdout.write(`\n$ vibgate inspect ${rel}\n\n`);
const code = await main(['inspect', rel], io);

const outDir = join(root, 'demo-output');
mkdirSync(outDir, { recursive: true });
let json = '';
const capture = { ...io, stdout: { write: (s) => { json += s; return true; } } };
await main(['inspect', rel, '--format', 'json'], capture);
writeFileSync(join(outDir, 'inspect.json'), json);
process.stdout.write(
  `Statistics for tools: ${relative(process.cwd(), join(outDir, 'inspect.json'))}\n` +
    'Look at connector-bkt (one-sided spikes: crest factor, skewness and frame kurtosis high),\n' +
    'pcb-corner (clipped at its ±10 g range: kurtosis low, samples at full scale),\n' +
    'box-lid-z (a 0.6 s run of zeros at 41.2 s) and fixture-mon (mean 0.9 g: an offset).\n',
);
process.exitCode = code;
