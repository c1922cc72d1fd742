/**
 * Repeated runs of one shaker random test on one set-up, for the tests of `vibgate learn`:
 * the same structure every run, so each channel keeps its modes (drawn once from its own
 * seed); every run has a fresh random excitation and a level within −20 … +25 % of the
 * channel's nominal level (the test tolerance of a shaker controller is of that order:
 * common practice, no source). Everything is invented data made by seeded code
 * (test/helpers/simulate.ts); the same seed gives the same samples.
 */
import { Draw, modalNoise, quantise, rmsOf, whiteNoise, type Mode, type SimChannel } from '../helpers/simulate.js';

export const FS = 2048;

/**
 * 30 s: rules/random-vibration.yaml sizes its kurtosis limits for records whose length ×
 * the narrowest mode's half-power bandwidth 2ζf is about 40 or more; acc-3's mode (54.7 Hz,
 * ζ 1.53 %) gives 30 × 1.68 = 50.
 */
export const DURATION_S = 30;

/** The set-up: four accelerometers of different character and the exciter's force. */
export const SETUP = [
  // broadband response: 3–4 modes 60–800 Hz, ζ 2–5 %
  { name: 'acc-1', variant: 'broadband', level: 2 },
  // lightly damped: 2–3 modes 20–400 Hz, ζ 0.5–2 % (the hard case of domain.md)
  { name: 'acc-2', variant: 'multi-mode', level: 1 },
  // one mode 30–120 Hz, ζ 1–2 %: fewest independent samples
  { name: 'acc-3', variant: 'narrow-band', level: 3 },
  // broadband through a 16-bit converter whose range is 8 × the RMS
  { name: 'acc-4', variant: 'int16', level: 0.8 },
  // the exciter's drive force: broadband
  { name: 'force-1', variant: 'force', level: 50 },
] as const;

/** Modes of a channel of the set-up: the variants of simulate.ts's randomVibration. */
function modesOf(variant: string, seed: number): Mode[] {
  const d = new Draw(seed);
  if (variant === 'broadband' || variant === 'int16') {
    return Array.from({ length: d.int(3, 4) }, () => ({ hz: d.logUniform(60, 800), damping: d.uniform(0.02, 0.05), weight: d.uniform(0.4, 1) }));
  }
  if (variant === 'multi-mode') return Array.from({ length: d.int(2, 3) }, () => ({ hz: d.logUniform(20, 400), damping: d.uniform(0.005, 0.02), weight: d.uniform(0.4, 1) }));
  if (variant === 'force') return [{ hz: 300, damping: 0.4, weight: 1 }];
  return [{ hz: d.logUniform(30, 120), damping: d.uniform(0.01, 0.02), weight: 1 }];
}

/** One run of the test: every channel of the set-up, with this run's excitation and level. */
export function shakerRun(seed: number): SimChannel[] {
  const n = FS * DURATION_S;
  return SETUP.map((c, k) => {
    const d = new Draw(seed * 31 + k);
    const x = modalNoise(n, FS, modesOf(c.variant, 1000 + k), seed * 97 + k);
    // the sensor's and conditioning's broadband floor, 2–10 % of the response
    const floor = whiteNoise(n, seed * 89 + k + 5, d.uniform(0.02, 0.1));
    for (let i = 0; i < n; i++) x[i] += floor[i];
    const gain = (c.level * d.uniform(0.8, 1.25)) / rmsOf(x);
    for (let i = 0; i < n; i++) x[i] *= gain;
    if (c.variant === 'int16') quantise(x, 8 * c.level, 16);
    const force = c.variant === 'force';
    return { name: c.name, unit: force ? 'N' : 'g', sensor: force ? 'force' : 'accelerometer', x };
  });
}

/** Milder faults than simulate.ts's, of a size the bundled limits let pass (common practice, no source: what a lab calls mild). */
export const MILD_FAULTS: ReadonlyArray<[string, (x: Float64Array, sigma: number, d: Draw) => void]> = [
  // an amplifier offset of 3 % of the RMS
  ['offset-3%', (x, s) => x.forEach((v, i) => (x[i] = v + 0.03 * s))],
  // a passing disturbance: 5 decaying 25 Hz knocks 0.5 s apart, peak 4 × the RMS
  ['burst-4x', (x, s, d) => {
    const t0 = Math.floor(d.uniform(5, 15) * FS);
    for (let k = 0; k < 5; k++) {
      const i0 = t0 + Math.floor(k * 0.5 * FS);
      for (let i = i0; i < i0 + 0.8 * FS && i < x.length; i++) {
        x[i] += 4 * s * Math.exp(-(i - i0) / FS / 0.15) * Math.sin((2 * Math.PI * 25 * (i - i0)) / FS);
      }
    }
  }],
  // 10 one-sided spikes of 5 × the RMS: about the Gaussian extreme √(2 ln N) = 4.7 of the record
  ['spikes-5x', (x, s, d) => {
    for (let k = 0; k < 10; k++) x[d.int(0, x.length - 1)] += 5 * s;
  }],
];
