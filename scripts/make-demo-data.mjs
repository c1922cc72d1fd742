#!/usr/bin/env node
// Generates the demo recordings (deterministic, seeded) under examples/demo-data/.
// Scenario (invented for the demo): shaker qualification of the "KX-40" control-box
// enclosure, random vibration run 3: eight accelerometers on the box and fixture and the
// shaker's drive force, 60 s at 2048 Hz, 24-bit PCM with a ±50 g (force: ±2 kN) range.
// A few faults a lab meets are placed in it on purpose; the demo shows them.
import { mkdirSync, writeFileSync, openSync, writeSync, closeSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const outDir = join(root, 'examples', 'demo-data');
const fs = 2048;
const seconds = 60;
const n = fs * seconds;

function rng(seed) {
  let a = seed >>> 0;
  const u = () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  let spare = null;
  const normal = () => {
    if (spare !== null) { const s = spare; spare = null; return s; }
    const r = Math.sqrt(-2 * Math.log(u() || 1e-300));
    const th = 2 * Math.PI * u();
    spare = r * Math.sin(th);
    return r * Math.cos(th);
  };
  return { u, normal };
}

/** Response of a few lightly damped modes to white-noise base excitation (2nd-order resonators). */
function modalResponse(seed, modes, rmsTarget) {
  const { normal } = rng(seed);
  const x = new Float64Array(n);
  const state = modes.map(() => [0, 0]);
  const coef = modes.map(({ f, zeta }) => {
    const w = 2 * Math.PI * f / fs;
    const r = Math.exp(-zeta * w);
    return { a1: 2 * r * Math.cos(w * Math.sqrt(1 - zeta * zeta)), a2: -r * r };
  });
  for (let i = 0; i < n; i++) {
    const e = normal();
    let y = 0.05 * normal(); // sensor and amplifier noise floor
    modes.forEach((m, k) => {
      const s = state[k];
      const v = coef[k].a1 * s[0] + coef[k].a2 * s[1] + e;
      s[1] = s[0];
      s[0] = v;
      y += m.gain * v;
    });
    x[i] = y;
  }
  let ss = 0;
  for (let i = 0; i < n; i++) ss += x[i] * x[i];
  const k = rmsTarget / Math.sqrt(ss / n);
  for (let i = 0; i < n; i++) x[i] *= k;
  return x;
}

const modes = [
  { f: 87, zeta: 0.02, gain: 1 },
  { f: 213, zeta: 0.015, gain: 0.6 },
  { f: 461, zeta: 0.01, gain: 0.35 },
];
const channels = [
  { name: 'fixture-ctrl', unit: 'g', sensor: 'accelerometer', group: 'fixture', rms: 2.0, fullScale: 50 },
  { name: 'box-lid-x', unit: 'g', sensor: 'accelerometer', group: 'box', rms: 3.1, fullScale: 50 },
  { name: 'box-lid-y', unit: 'g', sensor: 'accelerometer', group: 'box', rms: 2.7, fullScale: 50 },
  { name: 'box-lid-z', unit: 'g', sensor: 'accelerometer', group: 'box', rms: 4.4, fullScale: 50 },
  { name: 'pcb-corner', unit: 'g', sensor: 'accelerometer', group: 'box', rms: 6.0, fullScale: 10 },
  { name: 'pcb-centre', unit: 'g', sensor: 'accelerometer', group: 'box', rms: 7.5, fullScale: 50 },
  { name: 'connector-bkt', unit: 'g', sensor: 'accelerometer', group: 'box', rms: 3.6, fullScale: 50 },
  { name: 'fixture-mon', unit: 'g', sensor: 'accelerometer', group: 'fixture', rms: 2.1, fullScale: 50 },
  { name: 'drive-force', unit: 'N', sensor: 'force', group: 'drive', rms: 310, fullScale: 2000 },
];

const data = channels.map((c, i) =>
  modalResponse(1000 + i, modes.map((m) => ({ ...m, gain: m.gain * (1 + 0.3 * Math.sin(i + m.f)) })), c.rms),
);

// Faults placed on purpose (each is something a lab meets):
// connector-bkt: loose connector, one-sided spikes of 25 to 40 g every few seconds
{
  const { u } = rng(77);
  for (let k = 0; k < 14; k++) {
    const at = Math.floor((2 + u() * 55) * fs);
    data[6][at] += 25 + 15 * u();
    data[6][at + 1] += 8 * u();
  }
}
// pcb-corner: the ±10 g range chosen for it is too small for 6 g RMS: hard clipping
// (applied by the converter below)
// box-lid-z: cable break, the channel reads exact zeros for 0.6 s from 41.2 s
for (let i = Math.floor(41.2 * fs); i < Math.floor(41.8 * fs); i++) data[3][i] = 0;
// fixture-mon: amplifier offset of 0.9 g
for (let i = 0; i < n; i++) data[7][i] += 0.9;

// 24-bit PCM: code = round(value / fullScale · 2^23), clipped at the converter's codes
mkdirSync(outDir, { recursive: true });
const file = join(outDir, 'kx40-random-run3.wav');
const C = channels.length;
const dataBytes = n * C * 3;
const header = Buffer.alloc(44);
header.write('RIFF', 0, 'latin1');
header.writeUInt32LE(36 + dataBytes, 4);
header.write('WAVEfmt ', 8, 'latin1');
header.writeUInt32LE(16, 16);
header.writeUInt16LE(1, 20);
header.writeUInt16LE(C, 22);
header.writeUInt32LE(fs, 24);
header.writeUInt32LE(fs * C * 3, 28);
header.writeUInt16LE(C * 3, 32);
header.writeUInt16LE(24, 34);
header.write('data', 36, 'latin1');
header.writeUInt32LE(dataBytes, 40);
const fd = openSync(file, 'w');
writeSync(fd, header);
const chunk = Buffer.alloc(4096 * C * 3);
for (let start = 0; start < n; start += 4096) {
  const m = Math.min(4096, n - start);
  let o = 0;
  for (let i = 0; i < m; i++) {
    for (let c = 0; c < C; c++) {
      let code = Math.round((data[c][start + i] / channels[c].fullScale) * 8388608);
      if (code > 8388607) code = 8388607;
      if (code < -8388608) code = -8388608;
      chunk.writeIntLE(code, o, 3);
      o += 3;
    }
  }
  writeSync(fd, chunk.subarray(0, o));
}
closeSync(fd);

const yaml = [
  '# Channel table for kx40-random-run3.wav (demo scenario, invented).',
  '# full-scale: the converter range in the channel unit; 24-bit codes are scaled to it.',
  'channels:',
  ...channels.flatMap((c) => [
    `  - name: ${c.name}`,
    `    unit: ${c.unit}`,
    `    sensor: ${c.sensor}`,
    `    group: ${c.group}`,
    `    full-scale: ${c.fullScale}`,
  ]),
  '',
].join('\n');
writeFileSync(`${file}.channels.yaml`, yaml);
process.stdout.write(`wrote ${file} (${C} channels, ${seconds} s at ${fs} Hz) and its channel sidecar\n`);
