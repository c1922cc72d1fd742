#!/usr/bin/env node
// `npm run demo`: makes the demo recording if missing, screens it with the bundled rule file
// for random vibration, and writes the reports to demo-output/.
import { existsSync, mkdirSync } from 'node:fs';
import { dirname, join, relative } from 'node:path';
import { fileURLToPath } from 'node:url';
import { execFileSync } from 'node:child_process';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const data = join(root, 'examples', 'demo-data');
const recording = join(data, 'kx40-random-run3.wav');
if (!existsSync(recording)) execFileSync(process.execPath, [join(root, 'scripts', 'make-demo-data.mjs')], { stdio: 'inherit' });

const { main } = await import(join(root, 'dist', 'cli', 'main.js'));
const here = (p) => relative(process.cwd(), p) || p;
const outDir = join(root, 'demo-output');
mkdirSync(outDir, { recursive: true });
const io = { stdout: process.stdout, stderr: process.stderr, env: process.env, cwd: process.cwd() };

const args = [
  'screen', here(recording),
  '--rules', here(join(root, 'rules', 'random-vibration.yaml')),
  '--junit', here(join(outDir, 'junit.xml')),
  '--json', here(join(outDir, 'record.json')),
  '--html', here(join(outDir, 'report.html')),
];
process.stdout.write(`\n$ vibgate ${args.join(' ')}\n\n`);
const code = await main(args, io);

process.stdout.write(
  `\nvibgate exited with ${code} (${code === 0 ? 'the gate passed' : code === 1 ? 'the gate failed: exactly what a CI job would stop on' : 'a usage or rule-file error'}).\n` +
    `Open ${here(join(outDir, 'report.html'))} in a browser to see the odd channels at a glance.\n` +
    `For the CI server: ${here(join(outDir, 'junit.xml'))} (JUnit XML); the audit record: ${here(join(outDir, 'record.json'))}.\n` +
    `All statistics of every channel: vibgate inspect ${here(recording)}\n`,
);
// The demo itself succeeded when the gate did its job (pass or fail); only an error is an error.
process.exitCode = code === 2 ? 2 : 0;
