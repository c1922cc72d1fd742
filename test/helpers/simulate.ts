/**
 * Seeded simulation of clean vibration channels for each kind of test, and of the data
 * faults a lab meets (../../../shared/domain.md), for calibrating the bundled rule files.
 * Everything is invented data made by seeded code: the same seed gives the same samples.
 *
 * Signals are in physical units (g for accelerometers, N for force). Modal response is
 * white Gaussian noise (or a force signal) through band-pass resonators
 *   y[n] = 2 r cos θ · y[n−1] − r² · y[n−2] + x[n] − x[n−2],   r = e^(−ζ ω T), θ = ω_d T,
 * a digital second-order resonator with zeros at DC and Nyquist (acceleration response of
 * a mode carries no DC: common practice, no source).
 */
import { normalSource, uniformSource } from './random.js';

/** One structural mode: natural frequency, damping ratio ζ, and share of the response. */
export interface Mode {
  hz: number;
  damping: number;
  weight: number;
}

/** A simulated channel: its samples and what a sidecar would say about it. */
export interface SimChannel {
  name: string;
  unit: string;
  sensor: string;
  group?: string;
  x: Float64Array;
  /** Converter clip levels, as a sidecar `full-scale` would give them. */
  clipLow?: number;
  clipHigh?: number;
}

/** Seeded draws of a simulation's parameters: uniform, log-uniform and integer numbers. */
export class Draw {
  private readonly u: () => number;
  constructor(seed: number) {
    this.u = uniformSource(seed);
  }
  uniform(lo = 0, hi = 1): number {
    return lo + (hi - lo) * this.u();
  }
  logUniform(lo: number, hi: number): number {
    return Math.exp(this.uniform(Math.log(lo), Math.log(hi)));
  }
  int(lo: number, hi: number): number {
    return Math.floor(this.uniform(lo, hi + 1 - 1e-12));
  }
}

export function rmsOf(x: ArrayLike<number>): number {
  let s = 0;
  let n = 0;
  for (let i = 0; i < x.length; i++) {
    if (Number.isFinite(x[i])) {
      s += x[i] * x[i];
      n++;
    }
  }
  return n > 0 ? Math.sqrt(s / n) : NaN;
}

function scaleInPlace(x: Float64Array, k: number): Float64Array {
  for (let i = 0; i < x.length; i++) x[i] *= k;
  return x;
}

/** x passed through the band-pass resonator of one mode (see the file comment). */
export function resonate(x: Float64Array, fs: number, mode: Pick<Mode, 'hz' | 'damping'>): Float64Array {
  const w = 2 * Math.PI * mode.hz;
  const r = Math.exp(-mode.damping * w / fs);
  const wd = w * Math.sqrt(1 - mode.damping * mode.damping);
  const a1 = 2 * r * Math.cos(wd / fs);
  const a2 = -r * r;
  const y = new Float64Array(x.length);
  let y1 = 0;
  let y2 = 0;
  let x1 = 0;
  let x2 = 0;
  for (let i = 0; i < x.length; i++) {
    const v = a1 * y1 + a2 * y2 + x[i] - x2;
    y[i] = v;
    y2 = y1;
    y1 = v;
    x2 = x1;
    x1 = x[i];
  }
  return y;
}

/**
 * Stationary random response of `modes` to one white-noise excitation, unit RMS. Each mode's
 * response is scaled to its weight's share of the variance; the filters run for six decay
 * times of the slowest mode before the record starts, so it starts in steady state.
 */
export function modalNoise(n: number, fs: number, modes: readonly Mode[], seed: number): Float64Array {
  const slowest = Math.max(...modes.map((m) => 1 / (m.damping * 2 * Math.PI * m.hz)));
  const warm = Math.ceil(6 * slowest * fs);
  const g = normalSource(seed);
  const input = new Float64Array(n + warm);
  for (let i = 0; i < input.length; i++) input[i] = g();
  const out = new Float64Array(n);
  for (const mode of modes) {
    const y = resonate(input, fs, mode).subarray(warm);
    const k = Math.sqrt(mode.weight) / rmsOf(y);
    for (let i = 0; i < n; i++) out[i] += k * y[i];
  }
  return scaleInPlace(out, 1 / rmsOf(out));
}

export function whiteNoise(n: number, seed: number, sigma = 1): Float64Array {
  const g = normalSource(seed);
  const x = new Float64Array(n);
  for (let i = 0; i < n; i++) x[i] = sigma * g();
  return x;
}

/** x rounded to a converter's step: `bits` over ±fullScale (mid-tread). */
export function quantise(x: Float64Array, fullScale: number, bits: number): Float64Array {
  const step = fullScale / 2 ** (bits - 1);
  for (let i = 0; i < x.length; i++) x[i] = Math.round(x[i] / step) * step;
  return x;
}

const add = (a: Float64Array, b: ArrayLike<number>, k = 1) => {
  for (let i = 0; i < a.length; i++) a[i] += k * b[i];
  return a;
};

// ---------------------------------------------------------------------------------------
// Clean channels per kind of test.

export type RandomVariant = 'broadband' | 'multi-mode' | 'narrow-band' | 'int16';

/**
 * Random vibration response (shaker random, operational random): white noise through 1–4
 * lightly damped modes plus a small broadband floor, 0.5–5 g RMS.
 * - broadband: 3–4 modes 60–800 Hz, ζ 2–5 %;
 * - multi-mode: 2–3 modes 20–400 Hz, ζ 0.5–2 % (the lightly damped case of domain.md);
 * - narrow-band: one mode 30–120 Hz, ζ 1–2 % (half-power bandwidth 2ζf of 0.6–4.8 Hz);
 * - int16: broadband, through a 16-bit converter whose range is 8× the RMS (a usual range
 *   choice, common practice, no source).
 * A mode much narrower than 2ζf ≈ 0.6 Hz holds too few independent cycles in a minute for
 * the rule file's kurtosis limits: see rules/random-vibration.yaml.
 */
export function randomVibration(seed: number, variant: RandomVariant, o: { fs: number; durationS: number }): SimChannel {
  const d = new Draw(seed);
  const n = Math.round(o.fs * o.durationS);
  let modes: Mode[];
  if (variant === 'broadband' || variant === 'int16') {
    modes = Array.from({ length: d.int(3, 4) }, () => ({ hz: d.logUniform(60, 800), damping: d.uniform(0.02, 0.05), weight: d.uniform(0.4, 1) }));
  } else if (variant === 'multi-mode') {
    modes = Array.from({ length: d.int(2, 3) }, () => ({ hz: d.logUniform(20, 400), damping: d.uniform(0.005, 0.02), weight: d.uniform(0.4, 1) }));
  } else {
    modes = [{ hz: d.logUniform(30, 120), damping: d.uniform(0.01, 0.02), weight: 1 }];
  }
  const level = d.logUniform(0.5, 5);
  const x = modalNoise(n, o.fs, modes, seed + 101);
  add(x, whiteNoise(n, seed + 202), d.uniform(0.02, 0.1));
  scaleInPlace(x, level / rmsOf(x));
  if (variant === 'int16') quantise(x, 8 * level, 16);
  return { name: `acc-${variant}-${seed}`, unit: 'g', sensor: 'accelerometer', x };
}

export type AmbientVariant = 'deck' | 'tower' | 'quiet';

/**
 * Ambient response of a civil structure: 2–4 modes 0.8–10 Hz (ζ 1–3 %) under broadband
 * excitation whose level wanders slowly (wind: a log-normal envelope correlated over tens
 * of seconds; traffic: vehicles passing, each a bump of a few seconds), plus the sensor's
 * own white noise. 0.1–2 mg RMS.
 * - deck: traffic dominated; tower: wind dominated, first mode strong; quiet: low level,
 *   sensor noise 20–40 % of the response.
 */
export function ambientSurvey(seed: number, variant: AmbientVariant, o: { fs: number; durationS: number }): SimChannel {
  const d = new Draw(seed);
  const n = Math.round(o.fs * o.durationS);
  const f1 = d.uniform(0.8, 3);
  const modes: Mode[] = [{ hz: f1, damping: d.uniform(0.01, 0.03), weight: variant === 'tower' ? 1 : d.uniform(0.3, 1) }];
  let f = f1;
  for (let k = d.int(1, 3); k > 0; k--) {
    f *= d.uniform(1.5, 2.8);
    if (f > 10) break;
    modes.push({ hz: f, damping: d.uniform(0.01, 0.03), weight: d.uniform(0.2, variant === 'tower' ? 0.5 : 1) });
  }
  const x = modalNoise(n, o.fs, modes, seed + 303);
  // wind: log-normal envelope, AR(1) with a correlation time of 20–60 s
  const windSigma = variant === 'tower' ? d.uniform(0.15, 0.3) : d.uniform(0.05, 0.2);
  const a = Math.exp(-1 / (d.uniform(20, 60) * o.fs));
  const g = normalSource(seed + 404);
  const env = new Float64Array(n);
  let u = g();
  for (let i = 0; i < n; i++) {
    u = a * u + Math.sqrt(1 - a * a) * g();
    env[i] = Math.exp(windSigma * u);
  }
  // traffic: vehicles at random times, each adding a Gaussian bump (σ 1.5–4 s)
  const vehicles = variant === 'deck' ? d.int(4, 10) : d.int(0, 3);
  for (let v = 0; v < vehicles; v++) {
    const t0 = d.uniform(0, o.durationS);
    const w = d.uniform(1.5, 4);
    const h = d.uniform(0.3, 1.2);
    const from = Math.max(0, Math.floor((t0 - 3 * w) * o.fs));
    const to = Math.min(n, Math.ceil((t0 + 3 * w) * o.fs));
    for (let i = from; i < to; i++) env[i] += h * Math.exp(-0.5 * ((i / o.fs - t0) / w) ** 2);
  }
  for (let i = 0; i < n; i++) x[i] *= env[i];
  scaleInPlace(x, 1 / rmsOf(x));
  add(x, whiteNoise(n, seed + 505), variant === 'quiet' ? d.uniform(0.2, 0.4) : d.uniform(0.05, 0.15));
  scaleInPlace(x, (variant === 'quiet' ? d.logUniform(1e-4, 3e-4) : d.logUniform(3e-4, 2e-3)) / rmsOf(x));
  return { name: `amb-${variant}-${seed}`, unit: 'g', sensor: 'accelerometer', x };
}

/** One impact test set-up: the hammer's force channel and the response channels, same hits. */
export interface ImpactSetup {
  force: SimChannel;
  responses: SimChannel[];
  /** Hit times, in seconds. */
  hitsS: number[];
  /** Peak of the hardest hit, N. */
  peakForce: number;
}

/**
 * Impact (hammer) test: hits 7–10 s apart (6–7 in a minute) so responses decay, the first
 * after 2–4 s of pre-trigger quiet, the last at least 6 s before the end. Each hit is a half-sine force pulse of 3–8 ms (soft to
 * medium tip), 100–800 N peak, hits within ±30 % of each other; the force channel's noise
 * floor is 0.05–0.2 N. Responses are the force through 2–4 modes 20–600 Hz, ζ 0.5–3 %,
 * peaking at 2–50 g, over the sensor's noise floor of 0.1–0.5 mg (a general-purpose
 * IEPE accelerometer over a 1 kHz band: common practice, no source).
 */
export function impactSetup(seed: number, o: { fs: number; durationS: number; responses: number }): ImpactSetup {
  const d = new Draw(seed);
  const n = Math.round(o.fs * o.durationS);
  const pulseS = d.uniform(0.003, 0.008);
  const nominal = d.uniform(100, 800);
  const hitsS: number[] = [];
  for (let t = d.uniform(2, 4); t < o.durationS - 6; t += d.uniform(7, 10)) hitsS.push(t);
  const pulse = new Float64Array(n);
  let peakForce = 0;
  for (const t of hitsS) {
    const amp = nominal * d.uniform(0.7, 1.3);
    peakForce = Math.max(peakForce, amp);
    const i0 = Math.round(t * o.fs);
    const m = Math.round(pulseS * o.fs);
    for (let j = 0; j <= m; j++) pulse[i0 + j] += amp * Math.sin((Math.PI * j) / m);
  }
  const force = Float64Array.from(pulse);
  add(force, whiteNoise(n, seed + 11), d.uniform(0.05, 0.2));
  const responses: SimChannel[] = [];
  for (let r = 0; r < o.responses; r++) {
    const modes: Mode[] = Array.from({ length: d.int(2, 4) }, () => ({ hz: d.logUniform(20, 600), damping: d.uniform(0.005, 0.03), weight: d.uniform(0.2, 1) }));
    const y = new Float64Array(n);
    for (const mode of modes) {
      const m = resonate(pulse, o.fs, mode);
      let peak = 0;
      for (let i = 0; i < n; i++) peak = Math.max(peak, Math.abs(m[i]));
      add(y, m, mode.weight / peak);
    }
    let peak = 0;
    for (let i = 0; i < n; i++) peak = Math.max(peak, Math.abs(y[i]));
    scaleInPlace(y, d.logUniform(2, 50) / peak);
    add(y, whiteNoise(n, seed + 100 + r), d.uniform(1e-4, 5e-4));
    responses.push({ name: `resp-${seed}-${r + 1}`, unit: 'g', sensor: 'accelerometer', x: y });
  }
  return { force: { name: `force-${seed}`, unit: 'N', sensor: 'force', x: force }, responses, hitsS, peakForce };
}

export type RotatingVariant = 'steady' | 'run-up' | 'gear';

/**
 * Rotating machinery: harmonics of the shaft speed plus random noise, 0.2–5 g RMS.
 * - steady: shaft at 10–60 Hz, harmonics 1×–4× falling off, random part 30–60 % of the RMS;
 * - run-up: the shaft goes from 5–10 Hz to 40–60 Hz over the record, the 1× amplitude
 *   grows with speed squared (unbalance);
 * - gear: steady shaft with a gear-mesh tone (15–40 teeth) and its sidebands.
 * The random part is white noise through one structural mode 200–800 Hz (ζ 3–6 %) plus a
 * white floor.
 */
export function rotatingMachine(seed: number, variant: RotatingVariant, o: { fs: number; durationS: number }): SimChannel {
  const d = new Draw(seed);
  const n = Math.round(o.fs * o.durationS);
  const x = new Float64Array(n);
  const f0 = d.uniform(10, 60);
  const fEnd = d.uniform(40, 60);
  const fStart = d.uniform(5, 10);
  const speed = (t: number) => (variant === 'run-up' ? fStart + ((fEnd - fStart) * t) / o.durationS : f0);
  const harmonics = d.int(2, 4);
  const amps = Array.from({ length: harmonics }, (_, k) => (k === 0 ? 1 : d.uniform(0.1, 0.6) / k));
  const phases = Array.from({ length: harmonics }, () => d.uniform(0, 2 * Math.PI));
  const teeth = d.int(15, 40);
  const meshAmp = d.uniform(0.3, 0.8);
  let phase = 0;
  for (let i = 0; i < n; i++) {
    const t = i / o.fs;
    const f = speed(t);
    phase += (2 * Math.PI * f) / o.fs;
    const grow = variant === 'run-up' ? (f / fEnd) ** 2 : 1;
    let v = 0;
    for (let k = 0; k < harmonics; k++) {
      if ((k + 1) * f < 0.45 * o.fs) v += amps[k] * grow * Math.sin((k + 1) * phase + phases[k]);
    }
    if (variant === 'gear' && teeth * f < 0.45 * o.fs) {
      v += meshAmp * (1 + 0.3 * Math.sin(phase)) * Math.sin(teeth * phase);
    }
    x[i] = v;
  }
  scaleInPlace(x, 1 / rmsOf(x));
  const noise = modalNoise(n, o.fs, [{ hz: d.uniform(200, 800), damping: d.uniform(0.03, 0.06), weight: 1 }], seed + 606);
  add(noise, whiteNoise(n, seed + 707), 0.3);
  scaleInPlace(noise, 1 / rmsOf(noise));
  const share = d.uniform(0.3, 0.6);
  for (let i = 0; i < n; i++) x[i] = Math.sqrt(1 - share * share) * x[i] + share * noise[i];
  scaleInPlace(x, d.logUniform(0.2, 5) / rmsOf(x));
  return { name: `mach-${variant}-${seed}`, unit: 'g', sensor: 'accelerometer', x };
}

/** One shock test: channels on the item, the same event at the same time. */
export interface ShockSetup {
  channels: SimChannel[];
  /** Time of the event, seconds. */
  eventS: number;
  /** Peak of each channel, g. */
  peaks: number[];
}

/**
 * Shock (drop, shock machine): after 0.3–0.6 s of quiet, a decaying oscillatory transient of
 * 2–4 modes 100–3000 Hz (ζ 2–8 %: decay times of a few ms to about 100 ms), 100–1000 g
 * peak; on odd channels it starts with a half-sine pulse of 6–11 ms (the programmer of a
 * drop table) on which the item rings. A quiet floor of 0.02–0.1 g (a high-range sensor of
 * ~0.5 mV/g: common practice, no source).
 */
export function shockSetup(seed: number, o: { fs: number; durationS: number; channels: number }): ShockSetup {
  const d = new Draw(seed);
  const n = Math.round(o.fs * o.durationS);
  const eventS = d.uniform(0.3, 0.6);
  const i0 = Math.round(eventS * o.fs);
  const channels: SimChannel[] = [];
  const peaks: number[] = [];
  for (let c = 0; c < o.channels; c++) {
    const x = new Float64Array(n);
    const modes = d.int(2, 4);
    for (let m = 0; m < modes; m++) {
      const hz = d.logUniform(100, 3000);
      const zeta = d.uniform(0.02, 0.08);
      const a = d.uniform(0.3, 1);
      const ph = d.uniform(0, 2 * Math.PI);
      const w = 2 * Math.PI * hz;
      for (let i = i0; i < n; i++) {
        const t = (i - i0) / o.fs;
        const e = Math.exp(-zeta * w * t);
        if (e < 1e-6) break;
        x[i] += a * e * Math.sin(w * t + ph) * (1 - Math.exp(-t / 0.0005));
      }
    }
    if (c % 2 === 1) {
      const m = Math.round(d.uniform(0.006, 0.011) * o.fs);
      let peak = 0;
      for (let i = 0; i < n; i++) peak = Math.max(peak, Math.abs(x[i]));
      for (let j = 0; j <= m; j++) x[i0 + j] += 1.5 * peak * Math.sin((Math.PI * j) / m);
    }
    let peak = 0;
    for (let i = 0; i < n; i++) peak = Math.max(peak, Math.abs(x[i]));
    const target = d.logUniform(100, 1000);
    scaleInPlace(x, target / peak);
    add(x, whiteNoise(n, seed + 31 * (c + 1)), d.uniform(0.02, 0.1));
    channels.push({ name: `shock-${seed}-${c + 1}`, unit: 'g', sensor: 'accelerometer', x });
    peaks.push(target);
  }
  return { channels, eventS, peaks };
}

// ---------------------------------------------------------------------------------------
// Faults. Each takes a clean channel and returns a faulty copy; sizes are those a lab
// meets, with the reason beside each.

export type FaultKind =
  | 'spikes-one-sided'
  | 'spikes-two-sided'
  | 'loose-connector'
  | 'clipping-both-full-scale'
  | 'clipping-one-side'
  | 'clipping-both-unknown-range'
  | 'dropout-zeros'
  | 'stuck-converter'
  | 'dead-channel'
  | 'flat-channel'
  | 'dc-offset'
  | 'drift-ramp'
  | 'drift-thermal'
  | 'rattle'
  | 'burst'
  | 'mains-hum'
  | 'mains-hum-mild'
  | 'under-ranged'
  | 'sensitivity-error'
  | 'non-finite'
  | 'zero-shift';

export const ALL_FAULTS: readonly FaultKind[] = [
  'spikes-one-sided', 'spikes-two-sided', 'loose-connector',
  'clipping-both-full-scale', 'clipping-one-side', 'clipping-both-unknown-range',
  'dropout-zeros', 'stuck-converter', 'dead-channel', 'flat-channel',
  'dc-offset', 'drift-ramp', 'drift-thermal', 'rattle', 'burst', 'mains-hum', 'non-finite',
  'mains-hum-mild', 'under-ranged', 'sensitivity-error',
];

export interface FaultOptions {
  fs: number;
  seed: number;
  /**
   * Time of the event in a transient test (impact, shock), seconds; undefined for
   * stationary data. When set, clipping is sized on the transient's peak and a zero shift
   * starts there.
   */
  eventS?: number;
  /** Mains frequency, Hz (default 50). */
  mainsHz?: number;
  /** Hum RMS over the response RMS, [low, high] (default [1.5, 2.5]). */
  humRatio?: [number, number];
  /** Peak of each impact of a burst over the channel's RMS, [low, high] (default [8, 15]). */
  burstPeak?: [number, number];
  /** RMS a dead channel shows, in its unit (default: 2e-4–2e-3 of the channel's RMS). */
  deadRms?: number;
}

function sortedAbs(x: Float64Array): Float64Array {
  return Float64Array.from(x, Math.abs).sort();
}

/** The level exceeded by a fraction `p` of |x| (a robust "how high does it go"). */
function absQuantile(x: Float64Array, p: number): number {
  const s = sortedAbs(x);
  return s[Math.min(s.length - 1, Math.floor((1 - p) * s.length))];
}

/** The level exceeded by a fraction `p` of the samples x (signed: the positive side). */
function upperQuantile(x: Float64Array, p: number): number {
  const s = Float64Array.from(x).sort();
  return s[Math.min(s.length - 1, Math.floor((1 - p) * s.length))];
}

function maxOf(x: Float64Array): number {
  let m = -Infinity;
  for (let i = 0; i < x.length; i++) if (x[i] > m) m = x[i];
  return m;
}

function peakOf(x: Float64Array): number {
  let p = 0;
  for (let i = 0; i < x.length; i++) if (Number.isFinite(x[i])) p = Math.max(p, Math.abs(x[i]));
  return p;
}

/** A faulty copy of `ch`. */
export function injectFault(ch: SimChannel, fault: FaultKind, o: FaultOptions): SimChannel {
  const d = new Draw(o.seed);
  const x = Float64Array.from(ch.x);
  const n = x.length;
  const fs = o.fs;
  const durationS = n / fs;
  const sigma = rmsOf(ch.x);
  const out: SimChannel = { ...ch, name: `${ch.name}~${fault}`, x };
  const at = (s: number) => Math.max(0, Math.min(n - 1, Math.round(s * fs)));
  switch (fault) {
    case 'spikes-one-sided':
    case 'spikes-two-sided': {
      // Static discharge or switching noise: 20–40 isolated samples 6–12 × the RMS off
      // the signal. Such spikes often reach the converter's range; 6–12 × RMS is of that
      // order (a usual range is 8–10 × RMS), not beyond it.
      const count = d.int(20, 40);
      for (let k = 0; k < count; k++) {
        const i = d.int(0, n - 1);
        const sign = fault === 'spikes-one-sided' ? 1 : d.uniform() < 0.5 ? -1 : 1;
        x[i] += sign * d.uniform(6, 12) * sigma;
      }
      break;
    }
    case 'loose-connector': {
      // An intermittent contact: 3–6 episodes of 20–100 ms, each with 5–15 one-sided
      // steps of 4–10× the RMS lasting 1–3 samples (contact bounce).
      for (let e = d.int(3, 6); e > 0; e--) {
        const t0 = d.uniform(0.05, 0.95) * durationS;
        const len = d.uniform(0.02, 0.1);
        for (let k = d.int(5, 15); k > 0; k--) {
          const i = at(t0 + d.uniform(0, len));
          const size = d.uniform(4, 10) * sigma;
          for (let j = 0, w = d.int(1, 3); j < w && i + j < n; j++) x[i + j] += size;
        }
      }
      break;
    }
    case 'clipping-both-full-scale': {
      // The range was set for a lower level than the test ran at: 0.1 % of samples lie
      // beyond full scale. For Gaussian data that is a full scale at 3.3 σ (standard
      // normal table: 2·Φ(−3.29) = 1e-3), e.g. a range of 4.7× the expected RMS with the
      // test running 3 dB high; for periodic data a full scale just under the peaks. For
      // transients the range is 70 % of the peak. Samples are clamped; the sidecar gives
      // ± full scale.
      const fsLevel = o.eventS !== undefined ? 0.7 * peakOf(x) : absQuantile(x, 1e-3);
      clamp(x, -fsLevel, fsLevel);
      out.clipLow = -fsLevel;
      out.clipHigh = fsLevel;
      break;
    }
    case 'clipping-both-unknown-range': {
      // The same overload in a file that does not say its range (float data, no sidecar
      // full-scale): only the values at the channel's own extremes show it.
      const fsLevel = o.eventS !== undefined ? 0.7 * peakOf(x) : absQuantile(x, 1e-3);
      clamp(x, -fsLevel, fsLevel);
      break;
    }
    case 'clipping-one-side': {
      // A conditioning amplifier whose output saturates on one side (an offset output
      // stage): the positive side is clipped at the level exceeded by 0.1 % of samples, or
      // at 70 % of the positive peak of a transient; the converter's range is not known.
      const level = o.eventS !== undefined ? 0.7 * maxOf(x) : upperQuantile(x, 1e-3);
      clamp(x, -Infinity, level);
      break;
    }
    case 'dropout-zeros': {
      // Cable break or lost buffers: 2–4 stretches of exact zeros, 50–300 ms each.
      for (let k = d.int(2, 4); k > 0; k--) {
        const i = at(d.uniform(0.05, 0.9) * durationS);
        x.fill(0, i, Math.min(n, i + Math.round(d.uniform(0.05, 0.3) * fs)));
      }
      break;
    }
    case 'stuck-converter': {
      // The converter holds its last value for 0.2–1 s, once.
      const i = at(d.uniform(0.1, 0.8) * durationS);
      x.fill(x[i], i, Math.min(n, i + Math.round(d.uniform(0.2, 1) * fs)));
      break;
    }
    case 'dead-channel': {
      // Sensor open or unpowered: only the input's noise floor remains, 2e-4–2e-3 of
      // the channel's level (e.g. 5–50 µV of amplifier noise against a sensor output of
      // tens of mV), or `deadRms` where the channel's RMS says little of its sensor's
      // output (transients: the input noise in the channel's unit).
      const floor = o.deadRms ?? d.logUniform(2e-4, 2e-3) * sigma;
      const noise = whiteNoise(n, o.seed + 1, floor);
      x.set(noise);
      break;
    }
    case 'flat-channel': {
      // A constant: the input sits at a small DC value (an open input after the
      // AC-coupling has settled reads a steady offset of the amplifier).
      x.fill(d.uniform(-0.01, 0.01) * sigma);
      break;
    }
    case 'dc-offset': {
      // A bias of 0.25–0.5 × the RMS: an amplifier offset of a few mV against a signal
      // of a few tens of mV, or an IEPE input not yet settled.
      const offset = (d.uniform() < 0.5 ? -1 : 1) * d.uniform(0.25, 0.5) * sigma;
      for (let i = 0; i < n; i++) x[i] += offset;
      break;
    }
    case 'drift-ramp': {
      // Amplifier drift: the mean wanders linearly from 0 to 0.5–0.8 × the RMS.
      const end = (d.uniform() < 0.5 ? -1 : 1) * d.uniform(0.5, 0.8) * sigma;
      for (let i = 0; i < n; i++) x[i] += (end * i) / n;
      break;
    }
    case 'drift-thermal': {
      // A thermal transient on a piezoelectric sensor (moved from a cold store, or a
      // machine warming): the mean starts at 1–2 × the RMS and relaxes with a time
      // constant of a quarter to a half of the record.
      const a = (d.uniform() < 0.5 ? -1 : 1) * d.uniform(1, 2) * sigma;
      const tau = d.uniform(0.25, 0.5) * durationS;
      for (let i = 0; i < n; i++) x[i] += a * Math.exp(-i / fs / tau);
      break;
    }
    case 'rattle': {
      // A loose sensor (failed glue or magnet mount) lifts off when the acceleration
      // exceeds what holds it and hits back 2–5 ms later: a one-sided impact of 3–6× the
      // RMS, 1–2 samples long, after each upward crossing of the level exceeded by 0.5 %
      // of samples (2.6 σ for Gaussian data, standard normal table; just under the crests
      // of periodic data). Under mg-level ambient response nothing lifts off; there the
      // same pattern is a sensor rocking on an uneven base and knocking back.
      const lift = upperQuantile(ch.x, 5e-3);
      for (let i = 1; i < n; i++) {
        if (ch.x[i - 1] < lift && ch.x[i] >= lift) {
          const j = i + Math.round(d.uniform(0.002, 0.005) * fs);
          const size = d.uniform(3, 6) * sigma;
          for (let k = 0, w = d.int(1, 2); k < w && j + k < n; k++) x[j + k] += size;
        }
      }
      break;
    }
    case 'burst': {
      // A passing disturbance for 2–3 s: someone walking past the sensor, a tool set
      // down on the fixture: impacts every 0.4–0.6 s, each ringing at 10–40 Hz (floor,
      // deck or fixture) with a decay time of 0.1–0.2 s and a peak of 8–15 × the RMS
      // (`burstPeak`; against mg-level ambient response a footstep next to the sensor is
      // far larger, 20–40 ×).
      const start = d.uniform(0.2, 0.7) * durationS;
      const len = d.uniform(2, 3);
      const ringHz = d.uniform(10, 40);
      const tau = d.uniform(0.1, 0.2);
      for (let t = start; t < start + len; t += d.uniform(0.4, 0.6)) {
        const i0 = at(t);
        const a = d.uniform(...(o.burstPeak ?? [8, 15])) * sigma;
        for (let i = i0; i < n && i < i0 + 8 * tau * fs; i++) {
          const s = (i - i0) / fs;
          x[i] += a * Math.exp(-s / tau) * Math.sin(2 * Math.PI * ringHz * s);
        }
      }
      break;
    }
    case 'mains-hum-mild': {
      // Hum that does not distort the distribution much (kurtosis barely moves) but stands
      // out of every spectrum: the fundamental at 0.2–0.4 × the response's RMS, a third
      // harmonic of 20 % of that.
      const mains = o.mainsHz ?? 50;
      const rmsHum = d.uniform(0.2, 0.4) * sigma;
      const ph = d.uniform(0, 2 * Math.PI);
      for (let i = 0; i < n; i++) {
        const t = i / fs;
        let v = Math.SQRT2 * rmsHum * Math.sin(2 * Math.PI * mains * t + ph);
        if (3 * mains < 0.45 * fs) v += 0.2 * Math.SQRT2 * rmsHum * Math.sin(2 * Math.PI * 3 * mains * t + 3 * ph);
        x[i] += v;
      }
      break;
    }
    case 'under-ranged': {
      // A shock-test range left on a vibration channel: a 16-bit converter whose full scale
      // is 2000–4000 × the signal's RMS, so the signal spans a few dozen codes.
      const fullScale = d.uniform(2000, 4000) * sigma;
      quantise(x, fullScale, 16);
      out.clipLow = -fullScale;
      out.clipHigh = fullScale * (1 - 2 ** -15);
      break;
    }
    case 'sensitivity-error': {
      // A sensitivity entered in the wrong unit in the channel table (mV/g taken as
      // mV/(m/s²), or V for mV): the channel reads 20–50 × its true level.
      const k = d.uniform(20, 50);
      for (let i = 0; i < n; i++) x[i] *= k;
      break;
    }
    case 'mains-hum': {
      // A ground loop: the mains frequency at 1.5–2.5 × the response's RMS (`humRatio`),
      // with a third harmonic of 20 % where the sample rate allows it. Low-level channels on
      // long cables easily pick up more hum than signal: for mg-level ambient response a
      // few mV of hum is 2–3 × the signal of a 1 V/g sensor.
      const mains = o.mainsHz ?? 50;
      const rmsHum = d.uniform(...(o.humRatio ?? [1.5, 2.5])) * sigma;
      const ph = d.uniform(0, 2 * Math.PI);
      for (let i = 0; i < n; i++) {
        const t = i / fs;
        let v = Math.SQRT2 * rmsHum * Math.sin(2 * Math.PI * mains * t + ph);
        if (3 * mains < 0.45 * fs) v += 0.2 * Math.SQRT2 * rmsHum * Math.sin(2 * Math.PI * 3 * mains * t + 3 * ph);
        x[i] += v;
      }
      break;
    }
    case 'non-finite': {
      // A faulty writing process: 2–6 samples NaN, one +Inf.
      for (let k = d.int(2, 6); k > 0; k--) x[d.int(0, n - 1)] = NaN;
      x[d.int(0, n - 1)] = Infinity;
      break;
    }
    case 'zero-shift': {
      // A piezoelectric element overstressed by the shock: after the event the output
      // sits 2–4 % of the peak off zero and relaxes only slowly (time constant 5–20 s,
      // longer than the rest of the record).
      const t0 = o.eventS ?? durationS / 2;
      const shift = (d.uniform() < 0.5 ? -1 : 1) * d.uniform(0.02, 0.04) * peakOf(ch.x);
      const tau = d.uniform(5, 20);
      for (let i = at(t0 + 0.005); i < n; i++) x[i] += shift * Math.exp(-(i / fs - t0) / tau);
      break;
    }
  }
  return out;
}

function clamp(x: Float64Array, lo: number, hi: number): void {
  for (let i = 0; i < x.length; i++) {
    if (x[i] > hi) x[i] = hi;
    else if (x[i] < lo) x[i] = lo;
  }
}
