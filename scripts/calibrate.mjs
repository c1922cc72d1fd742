#!/usr/bin/env node
// Screens fresh calibration sets through the bundled rule files and prints the totals:
// faults caught / injected and clean channels failed / screened, per kind of test.
//
//   node scripts/calibrate.mjs            seed sets 0–9
//   node scripts/calibrate.mjs 20 40      seed sets 20–39
//
// Each seed set is one run of test/calibration/detection.test.ts with
// VIBGATE_CALIBRATION_SEED set (the test prints its table; this sums them). A run that
// fails its assertions is reported, and the exit code is 1.
import { spawnSync } from 'node:child_process';

const from = Number(process.argv[2] ?? 0);
const to = Number(process.argv[3] ?? from + 10);
const totals = new Map();
const failedSets = [];
for (let seed = from; seed < to; seed++) {
  const run = spawnSync('npx', ['vitest', 'run', 'test/calibration/detection.test.ts'], {
    env: { ...process.env, VIBGATE_CALIBRATION_SEED: String(seed), NO_COLOR: '1', FORCE_COLOR: '0' },
    encoding: 'utf8',
  });
  const out = `${run.stdout}\n${run.stderr}`;
  if (run.status !== 0) failedSets.push(seed);
  for (const line of out.split('\n')) {
    const m = /^(\S+)\s+(\d+)\/(\d+)\s+(\d+)\/(\d+)\s+(\d+)\s*$/.exec(line.trim());
    if (!m) continue;
    const t = totals.get(m[1]) ?? { caught: 0, injected: 0, cleanFailed: 0, clean: 0, warned: 0 };
    t.caught += +m[2];
    t.injected += +m[3];
    t.cleanFailed += +m[4];
    t.clean += +m[5];
    t.warned += +m[6];
    totals.set(m[1], t);
  }
  process.stderr.write(`seed set ${seed}: ${run.status === 0 ? 'ok' : 'FAILED'}\n`);
}
console.log(`Seed sets ${from}–${to - 1}`);
console.log(`${'kind'.padEnd(20)} ${'caught/injected'.padStart(16)} ${'clean failed/clean'.padStart(20)} ${'clean warned'.padStart(13)}`);
for (const [kind, t] of totals) {
  console.log(`${kind.padEnd(20)} ${`${t.caught}/${t.injected}`.padStart(16)} ${`${t.cleanFailed}/${t.clean}`.padStart(20)} ${String(t.warned).padStart(13)}`);
}
if (failedSets.length > 0) {
  console.log(`Seed sets with failed assertions: ${failedSets.join(', ')}`);
  process.exitCode = 1;
}
