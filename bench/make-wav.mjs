// Writes a benchmark WAV: C channels of stationary random response (white noise through one
// resonance per channel, a cheap recursive filter) in float32, int24 or int16.
// Usage: node bench/make-wav.mjs FILE CHANNELS SECONDS RATE ENCODING
import { openSync, writeSync, closeSync } from 'node:fs';

export function makeWav(file, channels, seconds, rate, encoding) {
  const bytes = encoding === 'float32' ? 4 : encoding === 'int24' ? 3 : 2;
  const n = Math.round(seconds * rate);
  const dataBytes = n * channels * bytes;
  const h = Buffer.alloc(44);
  h.write('RIFF', 0, 'latin1');
  h.writeUInt32LE(Math.min(0xffffffff, 36 + dataBytes), 4);
  h.write('WAVEfmt ', 8, 'latin1');
  h.writeUInt32LE(16, 16);
  h.writeUInt16LE(encoding === 'float32' ? 3 : 1, 20);
  h.writeUInt16LE(channels, 22);
  h.writeUInt32LE(rate, 24);
  h.writeUInt32LE(rate * channels * bytes, 28);
  h.writeUInt16LE(channels * bytes, 32);
  h.writeUInt16LE(bytes * 8, 34);
  h.write('data', 36, 'latin1');
  h.writeUInt32LE(dataBytes, 40);
  const fd = openSync(file, 'w');
  writeSync(fd, h);
  const chunk = 8192;
  const buf = Buffer.alloc(chunk * channels * bytes);
  const y1 = new Float64Array(channels);
  const y2 = new Float64Array(channels);
  const a1 = new Float64Array(channels).map((_, c) => 2 * 0.995 * Math.cos((2 * Math.PI * (50 + 37 * c)) / rate));
  let s = 12345;
  for (let i = 0; i < n; i += chunk) {
    const m = Math.min(chunk, n - i);
    let o = 0;
    for (let k = 0; k < m; k++) {
      for (let c = 0; c < channels; c++) {
        s = (Math.imul(s, 1103515245) + 12345) >>> 0; // 32-bit LCG (a plain product would lose bits past 2^53 and cycle)
        const e = s / 4294967296 - 0.5;
        const y = a1[c] * y1[c] - 0.990025 * y2[c] + e;
        y2[c] = y1[c];
        y1[c] = y;
        const v = Math.max(-1, Math.min(1, 0.0015 * y)); // about 0.1 of full scale RMS: no clipping
        if (encoding === 'float32') { buf.writeFloatLE(v, o); o += 4; }
        else if (encoding === 'int24') { buf.writeIntLE(Math.max(-8388608, Math.min(8388607, Math.round(v * 8388608))), o, 3); o += 3; }
        else { buf.writeInt16LE(Math.max(-32768, Math.min(32767, Math.round(v * 32768))), o); o += 2; }
      }
    }
    writeSync(fd, buf.subarray(0, o));
  }
  closeSync(fd);
}

if (process.argv[1] && process.argv[1].endsWith('make-wav.mjs')) {
  const [file, channels, seconds, rate, encoding] = process.argv.slice(2);
  makeWav(file, Number(channels), Number(seconds), Number(rate), encoding ?? 'float32');
}
