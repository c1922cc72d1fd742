/**
 * Mains lines: the level of the mains frequency and its harmonics in sampled segments of one
 * channel, each against the broadband floor beside it, by the Goertzel algorithm (Goertzel,
 * "An algorithm for the evaluation of finite trigonometric series", Amer. Math. Monthly 65,
 * 1958; Lyons, Understanding Digital Signal Processing, section on the Goertzel algorithm).
 *
 * Per segment of M samples (d_n = x_n − x̄, the segment's own mean removed, so that an offset
 * does not leak into low lines), windowed by the periodic ("DFT-even") Hann window
 * w_n = ½ − ½·cos(2πn/M), the accumulator adds the power
 *   P(f) = |Σ_{n=0}^{M−1} w_n d_n e^{−i2πfn/fs}|²
 * at a set of frequencies f that need not be FFT bins. Powers, not complex values, are
 * summed over segments: the mains phase is not locked to the segment positions, so complex
 * sums would cancel.
 *
 * Calibration (Harris, "On the use of windows for harmonic analysis with the discrete Fourier
 * transform", Proc. IEEE 66, 1978, Table 1: Hann coherent gain 0.5, equivalent noise
 * bandwidth ENBW 1.5 bins). A sinusoid of amplitude A at f gives |X(f)| = A/2 · Σw, so
 *   rms = A/√2 = √(2·P̄) / Σw,   Σw = M · 0.5 (coherent gain).
 * The same conversion applied to broadband noise of one-sided density G (units²/Hz) gives
 * E[2P/(Σw)²] = G · ENBW · fs/M: the noise power inside the line's equivalent noise
 * bandwidth, ENBW · fs/M Hz. So the floor, measured at frequencies beside the line and
 * converted the same way, is directly comparable with the line, and
 *   prominence = 10·log10(P̄_line / P̄_floor)
 * is about 0 dB for white noise and large for a line. A structural resonance near the mains
 * frequency has a broad peak that also lifts the floor points beside it, so its prominence
 * stays low: that is what tells a ground loop from a mode at 50 Hz.
 *
 * Drift. Mains frequency wanders (±0.2 Hz is the usual band: common practice, no source),
 * and harmonic h wanders h times as far. The engine's segments hold 2–4 s of data (less above
 * 32 kHz, where M stops at 65 536), so a bin fs/M is 0.25–0.5 Hz wide and 0.2 Hz is 0.4–0.8
 * bins: Hann loses 0.9 dB at 0.4 bins and 3.7 dB at 0.8 bins (scalloping loss from the kernel
 * |sin(πδ)/(πδ(1 − δ²))|, Harris 1978), too much for one Goertzel at h·f0 exactly. So each
 * line is searched on a grid h·f0 + j·(bin/2) that covers ±h·drift and one step beyond, and
 * `lineLevels` takes the grid point with the largest mean power, refined by a parabola
 * through the logarithms of it and its two neighbours (log-parabolic peak interpolation of a
 * windowed spectrum: Smith & Serra, "PARSHL", Proc. ICMC 1987). Half-bin spacing loses at
 * most 0.35 dB before interpolation and about 0.014 dB after (computed from the same
 * kernel). A line that wanders by more than about a bin during the record is spread over
 * several grid points and reads low.
 *
 * The floor is the mean power at three frequencies either side, 3, 4 and 5 bins beyond the
 * drift band: clear of the main lobe (±2 bins) of a line anywhere in the band, where a pure
 * tone's leakage is below about −40 dB. A pure tone's prominence therefore tops out at about
 * 45–55 dB, ample for telling lines (which stand 10 dB and more above the floor: common
 * practice, no source) from broadband response. Lines whose floor points would reach 0 Hz
 * or the Nyquist frequency are left out.
 *
 * Cost per segment and channel: one Goertzel pass over M samples per frequency, about
 * 3.2·h + 9 frequencies for harmonic h (bins of 0.25 Hz, the narrowest segments give).
 */

/** Hann coherent gain Σw/M (Harris 1978, Table 1). */
export const HANN_COHERENT_GAIN = 0.5;
/** Hann equivalent noise bandwidth M·Σw²/(Σw)², in bins (Harris 1978, Table 1). */
export const HANN_ENBW_BINS = 1.5;
/** Default largest deviation of the mains fundamental from its nominal value, Hz. */
export const DEFAULT_MAINS_DRIFT_HZ = 0.2;
/** Floor points, in bins beyond the edge of the searched band, on each side. */
const FLOOR_OFFSETS_BINS = [3, 4, 5];

export interface LineAccumulatorOptions {
  /** Samples per second. */
  sampleRate: number;
  /** M, samples in every segment (at least 16). */
  segmentSamples: number;
  /** Nominal mains frequency, Hz (50 or 60; 16.7 for some railways). */
  fundamentalHz: number;
  /** Harmonics to measure, 1 = the fundamental only. */
  harmonics: number;
  /**
   * Largest deviation of the fundamental from `fundamentalHz`, Hz (default 0.2). 0 measures
   * at h·fundamentalHz exactly (a source locked to the sampling clock).
   */
  driftHz?: number;
}

/** Power sums at the frequencies searched for one harmonic and at its floor points. */
export interface HarmonicSums {
  /** h: the line sits near h · fundamentalHz. */
  harmonic: number;
  /** Frequencies searched for the line, Hz, ascending, spaced half a bin. */
  gridHz: number[];
  /** Σ over segments of P(f) at each of `gridHz`. */
  power: number[];
  /** Frequencies of the floor points, Hz. */
  floorHz: number[];
  /** Σ over segments of P(f) at each of `floorHz`. */
  floorPower: number[];
}

/**
 * Everything kept about the mains lines of one channel: plain numbers and arrays,
 * JSON-serialisable, merged exactly by adding (`mergeLineSums`).
 */
export interface LineSums {
  sampleRate: number;
  segmentSamples: number;
  fundamentalHz: number;
  harmonics: number;
  driftHz: number;
  /** Segments summed. */
  segments: number;
  /** Segments not used because they held a non-finite sample. */
  skippedSegments: number;
  /** Σ over segments of Σ_n (x_n − x̄)², for the broadband RMS. */
  sumSquares: number;
  /** The harmonics that fit below the Nyquist frequency, in order of h. */
  lines: HarmonicSums[];
}

/** The level of one mains line, from `lineLevels`. */
export interface LineLevel {
  harmonic: number;
  /** h · fundamentalHz. */
  nominalHz: number;
  /** Where the line was found in the searched band, Hz (meaningless when prominence is low). */
  hz: number;
  /**
   * RMS of a sinusoid at `hz` that gives the measured power, in the channel's unit. It
   * includes the broadband floor in the line's bandwidth (floorRms), which matters only for
   * a line near the floor.
   */
  rms: number;
  /** RMS of the broadband floor beside the line within the line's bandwidth (bandwidthHz). */
  floorRms: number;
  /** Equivalent noise bandwidth of the measurement, ENBW · fs/M, Hz. */
  bandwidthHz: number;
  /** 10·log10(line power / floor power), dB: about 0 for broadband noise. */
  prominenceDb: number;
}

/** The frequencies measured for each harmonic (shared by the accumulator and the empty sums). */
function lineLayout(o: Required<LineAccumulatorOptions>): Array<{ harmonic: number; gridHz: number[]; floorHz: number[] }> {
  const binHz = o.sampleRate / o.segmentSamples;
  const step = binHz / 2;
  const nyquist = o.sampleRate / 2;
  const layout: Array<{ harmonic: number; gridHz: number[]; floorHz: number[] }> = [];
  for (let h = 1; h <= o.harmonics; h++) {
    const centre = h * o.fundamentalHz;
    // the band ±h·drift rounded up to whole steps (the small allowance keeps a drift that is
    // an exact multiple of the step from adding one), plus one point each side so that a line
    // at the band's edge still has a neighbour beyond it for the interpolation; no drift: one
    // Goertzel at h·f0 exactly
    const edgeSteps = Math.ceil((h * o.driftHz) / step - 1e-9);
    const edge = edgeSteps * step;
    const half = edgeSteps > 0 ? edgeSteps + 1 : 0;
    const floorHz: number[] = [];
    for (const k of FLOOR_OFFSETS_BINS) floorHz.push(centre - edge - k * binHz);
    for (const k of FLOOR_OFFSETS_BINS) floorHz.push(centre + edge + k * binHz);
    if (Math.min(...floorHz) <= 0 || Math.max(...floorHz) >= nyquist) continue;
    const gridHz: number[] = [];
    for (let j = -half; j <= half; j++) gridHz.push(centre + j * step);
    layout.push({ harmonic: h, gridHz, floorHz });
  }
  return layout;
}

/**
 * Mains lines lie far below the Nyquist frequency of most vibration data (250 Hz against
 * 12.8 kHz at 25.6 kHz), so each segment is first cut down by summing runs of D samples,
 * and the Goertzel filters run on M/D samples: D times less work. Summing D samples passes a
 * sinusoid at f with the gain G(f) = sin(πfD/fs) / (D·sin(πf/fs)) (the Dirichlet kernel; a
 * closed form), which is undone exactly for each frequency measured, line and floor alike.
 * Broadband power from near multiples of fs/D folds onto the measured band, attenuated by
 * that kernel's nulls: D is the largest power of two that keeps fs/D at least 16 times the
 * highest frequency measured (white noise at 25.6 kHz: the floor within a few % of its
 * level without decimation, test/stats/mains-lines.test.ts), and the floor beside each line
 * is measured on the same samples, so a line's prominence is unchanged.
 */
function decimationFor(sampleRate: number, segmentSamples: number, hz: number[]): number {
  const top = Math.max(...hz);
  let d = 1;
  while (segmentSamples % (2 * d) === 0 && sampleRate / (2 * d) >= 16 * top && segmentSamples / (2 * d) >= 64) d *= 2;
  return d;
}

function resolveOptions(o: LineAccumulatorOptions): Required<LineAccumulatorOptions> {
  const driftHz = o.driftHz ?? DEFAULT_MAINS_DRIFT_HZ;
  if (!(o.sampleRate > 0) || !Number.isFinite(o.sampleRate)) {
    throw new RangeError(`Sample rate must be a positive number of hertz, not ${JSON.stringify(o.sampleRate)}`);
  }
  if (!Number.isInteger(o.segmentSamples) || o.segmentSamples < 16) {
    throw new RangeError(`Segment length must be a whole number of at least 16 samples, not ${JSON.stringify(o.segmentSamples)}`);
  }
  if (!(o.fundamentalHz > 0) || !Number.isFinite(o.fundamentalHz)) {
    throw new RangeError(`Mains frequency must be a positive number of hertz, not ${JSON.stringify(o.fundamentalHz)}`);
  }
  if (!Number.isInteger(o.harmonics) || o.harmonics < 1) {
    throw new RangeError(`Number of mains harmonics must be a whole number of at least 1, not ${JSON.stringify(o.harmonics)}`);
  }
  if (!(driftHz >= 0) || !Number.isFinite(driftHz)) {
    throw new RangeError(`Mains drift must be a number of hertz of at least 0, not ${JSON.stringify(o.driftHz)}`);
  }
  return { sampleRate: o.sampleRate, segmentSamples: o.segmentSamples, fundamentalHz: o.fundamentalHz, harmonics: o.harmonics, driftHz };
}

/** Mains-line sums of no segment at all: the neutral element of `mergeLineSums`. */
export function emptyLineSums(o: LineAccumulatorOptions): LineSums {
  const r = resolveOptions(o);
  return {
    ...r,
    segments: 0,
    skippedSegments: 0,
    sumSquares: 0,
    lines: lineLayout(r).map((l) => ({
      harmonic: l.harmonic,
      gridHz: l.gridHz,
      power: l.gridHz.map(() => 0),
      floorHz: l.floorHz,
      floorPower: l.floorHz.map(() => 0),
    })),
  };
}

/**
 * Goertzel powers of y[0..n) at the frequencies whose coefficients 2·cos(ω) are in `coef`,
 * added into `out`. The recursion s_k = y_k + 2cos(ω)·s_{k−1} − s_{k−2} ends with
 * |X(ω)|² = s₁² + s₂² − 2cos(ω)·s₁s₂ (Lyons), valid for any ω, not only FFT bins. Four
 * frequencies share one loop: each recursion is a chain of dependent operations, and four
 * independent chains keep the floating-point units busy.
 */
function addGoertzelPowers(y: Float64Array, n: number, coef: Float64Array, out: Float64Array): void {
  const count = coef.length;
  let f = 0;
  for (; f + 3 < count; f += 4) {
    const c0 = coef[f];
    const c1 = coef[f + 1];
    const c2 = coef[f + 2];
    const c3 = coef[f + 3];
    let a1 = 0, a2 = 0, b1 = 0, b2 = 0, d1 = 0, d2 = 0, e1 = 0, e2 = 0;
    for (let i = 0; i < n; i++) {
      const v = y[i];
      const a0 = v + c0 * a1 - a2;
      const b0 = v + c1 * b1 - b2;
      const d0 = v + c2 * d1 - d2;
      const e0 = v + c3 * e1 - e2;
      a2 = a1; a1 = a0;
      b2 = b1; b1 = b0;
      d2 = d1; d1 = d0;
      e2 = e1; e1 = e0;
    }
    out[f] += a1 * a1 + a2 * a2 - c0 * a1 * a2;
    out[f + 1] += b1 * b1 + b2 * b2 - c1 * b1 * b2;
    out[f + 2] += d1 * d1 + d2 * d2 - c2 * d1 * d2;
    out[f + 3] += e1 * e1 + e2 * e2 - c3 * e1 * e2;
  }
  for (; f < count; f++) {
    const c = coef[f];
    let s1 = 0;
    let s2 = 0;
    for (let i = 0; i < n; i++) {
      const s0 = y[i] + c * s1 - s2;
      s2 = s1;
      s1 = s0;
    }
    out[f] += s1 * s1 + s2 * s2 - c * s1 * s2;
  }
}

const buffers = new Map<number, { window: Float64Array; scratch: Float64Array }>();

/** The Hann window of M samples and a scratch segment, made once per M (addSegment is not re-entrant). */
function sharedBuffers(m: number): { window: Float64Array; scratch: Float64Array } {
  let b = buffers.get(m);
  if (!b) {
    const window = new Float64Array(m);
    for (let n = 0; n < m; n++) window[n] = 0.5 - 0.5 * Math.cos((2 * Math.PI * n) / m);
    b = { window, scratch: new Float64Array(m) };
    buffers.set(m, b);
  }
  return b;
}

/**
 * Mains-line sums of one channel, fed one sampled segment at a time (see the file comment).
 * Segments must all have `segmentSamples` samples; their order does not matter.
 */
export class LineAccumulator {
  private readonly options: Required<LineAccumulatorOptions>;
  private readonly layout: Array<{ harmonic: number; gridHz: number[]; floorHz: number[] }>;
  private readonly window: Float64Array;
  private readonly windowed: Float64Array;
  /** 2·cos(2πf/fs) of every frequency measured, grid and floor points of all harmonics. */
  private readonly coef: Float64Array;
  /** 1/G(f)² of every frequency measured: undoes the decimation's gain (see `decimationFor`). */
  private readonly gainCorrection: Float64Array;
  /** D: samples summed into one before the Goertzel filters run (a power of two, 1: none). */
  private readonly decimation: number;
  private readonly power: Float64Array;
  private readonly scratch: Float64Array;
  private segments = 0;
  private skippedSegments = 0;
  private sumSquares = 0;

  constructor(o: LineAccumulatorOptions) {
    this.options = resolveOptions(o);
    this.layout = lineLayout(this.options);
    const m = this.options.segmentSamples;
    // one Hann window and one scratch segment per segment length, shared by every channel's
    // accumulator of this thread (each is M doubles: 64 channels × 2 × 0.5 MiB otherwise)
    const shared = sharedBuffers(m);
    this.window = shared.window;
    this.windowed = shared.scratch;
    const hz = this.layout.flatMap((l) => [...l.gridHz, ...l.floorHz]);
    const fs = this.options.sampleRate;
    const d = decimationFor(fs, m, hz);
    this.decimation = d;
    this.coef = Float64Array.from(hz, (f) => 2 * Math.cos((2 * Math.PI * f * d) / fs));
    this.gainCorrection = Float64Array.from(hz, (f) => {
      if (d === 1) return 1;
      const g = Math.sin((Math.PI * f * d) / fs) / (d * Math.sin((Math.PI * f) / fs));
      return 1 / (g * g);
    });
    this.power = new Float64Array(hz.length);
    this.scratch = new Float64Array(hz.length);
  }

  /** Adds one segment. A segment holding NaN or ±Infinity is counted and not used. */
  addSegment(x: Float64Array): void {
    const m = this.options.segmentSamples;
    if (x.length !== m) {
      throw new RangeError(`Mains-line segment has ${x.length} samples, expected ${m}`);
    }
    let sum = 0;
    for (let i = 0; i < m; i++) sum += x[i];
    // NaN or ±Infinity anywhere makes the sum non-finite: one test covers every sample
    if (!Number.isFinite(sum)) {
      this.skippedSegments++;
      return;
    }
    // corrected two-pass mean (Chan, Golub & LeVeque 1979): removes the rounding of sum/m
    let mean = sum / m;
    let r = 0;
    for (let i = 0; i < m; i++) r += x[i] - mean;
    mean += r / m;
    const y = this.windowed;
    const w = this.window;
    let ss = 0;
    for (let i = 0; i < m; i++) {
      const d = x[i] - mean;
      ss += d * d;
      y[i] = w[i] * d;
    }
    let n = m;
    const d = this.decimation;
    if (d > 1) {
      // sum each run of D windowed samples in place: far below fs/D a line passes with the
      // gain G(f) of that sum, undone below; the Goertzel filters then run on M/D samples
      n = m / d;
      for (let j = 0; j < n; j++) {
        let acc = 0;
        for (let k = j * d, end = k + d; k < end; k++) acc += y[k];
        y[j] = acc;
      }
    }
    const p = this.scratch.fill(0);
    addGoertzelPowers(y, n, this.coef, p);
    for (let f = 0; f < p.length; f++) this.power[f] += p[f] * this.gainCorrection[f];
    this.sumSquares += ss;
    this.segments++;
  }

  /** A copy of the sums so far. */
  sums(): LineSums {
    let k = 0;
    const lines = this.layout.map((l) => {
      const power = Array.from(this.power.subarray(k, k + l.gridHz.length));
      k += l.gridHz.length;
      const floorPower = Array.from(this.power.subarray(k, k + l.floorHz.length));
      k += l.floorHz.length;
      return { harmonic: l.harmonic, gridHz: [...l.gridHz], power, floorHz: [...l.floorHz], floorPower };
    });
    return {
      ...this.options,
      segments: this.segments,
      skippedSegments: this.skippedSegments,
      sumSquares: this.sumSquares,
      lines,
    };
  }
}

/** Sums of the segments of `a` and of `b` together: exact, since it only adds. */
export function mergeLineSums(a: LineSums, b: LineSums): LineSums {
  const same =
    a.sampleRate === b.sampleRate && a.segmentSamples === b.segmentSamples && a.fundamentalHz === b.fundamentalHz &&
    a.harmonics === b.harmonics && a.driftHz === b.driftHz && a.lines.length === b.lines.length;
  if (!same) {
    throw new RangeError(
      `Cannot merge mains-line sums of ${a.fundamentalHz} Hz × ${a.harmonics} at ${a.sampleRate} Hz in ${a.segmentSamples}-sample segments ` +
        `with those of ${b.fundamentalHz} Hz × ${b.harmonics} at ${b.sampleRate} Hz in ${b.segmentSamples}-sample segments`,
    );
  }
  return {
    sampleRate: a.sampleRate,
    segmentSamples: a.segmentSamples,
    fundamentalHz: a.fundamentalHz,
    harmonics: a.harmonics,
    driftHz: a.driftHz,
    segments: a.segments + b.segments,
    skippedSegments: a.skippedSegments + b.skippedSegments,
    sumSquares: a.sumSquares + b.sumSquares,
    lines: a.lines.map((la, i) => {
      const lb = b.lines[i];
      return {
        harmonic: la.harmonic,
        gridHz: [...la.gridHz],
        power: la.power.map((v, j) => v + lb.power[j]),
        floorHz: [...la.floorHz],
        floorPower: la.floorPower.map((v, j) => v + lb.floorPower[j]),
      };
    }),
  };
}

/**
 * Level, floor and prominence of each mains line (see the file comment for the conversion and
 * the peak search). With no segment summed every figure is NaN.
 */
export function lineLevels(s: LineSums): LineLevel[] {
  const sumW = s.segmentSamples * HANN_COHERENT_GAIN;
  const toRms = (meanPower: number) => Math.sqrt((2 * meanPower) / (sumW * sumW));
  const bandwidthHz = (HANN_ENBW_BINS * s.sampleRate) / s.segmentSamples;
  return s.lines.map((l) => {
    const nominalHz = l.harmonic * s.fundamentalHz;
    if (s.segments === 0) {
      return { harmonic: l.harmonic, nominalHz, hz: NaN, rms: NaN, floorRms: NaN, bandwidthHz, prominenceDb: NaN };
    }
    const p = l.power.map((v) => v / s.segments);
    let best = 0;
    for (let j = 1; j < p.length; j++) if (p[j] > p[best]) best = j;
    let peak = p[best];
    let hz = l.gridHz[best];
    if (best > 0 && best < p.length - 1 && p[best - 1] > 0 && p[best + 1] > 0 && peak > 0) {
      const a = Math.log(p[best - 1]);
      const b = Math.log(peak);
      const c = Math.log(p[best + 1]);
      const curvature = a - 2 * b + c;
      if (curvature < 0) {
        const offset = (0.5 * (a - c)) / curvature; // in grid steps, within ±½ for a maximum
        peak = Math.exp(b - 0.25 * (a - c) * offset);
        hz += offset * (l.gridHz[best + 1] - l.gridHz[best]);
      }
    }
    let floor = 0;
    for (const v of l.floorPower) floor += v / s.segments;
    floor /= l.floorPower.length;
    return {
      harmonic: l.harmonic,
      nominalHz,
      hz,
      rms: toRms(peak),
      floorRms: toRms(floor),
      bandwidthHz,
      prominenceDb: 10 * Math.log10(peak / floor),
    };
  });
}

/** RMS of the segments about their own means (AC RMS, all frequencies), NaN with none. */
export function broadbandRms(s: LineSums): number {
  return s.segments > 0 ? Math.sqrt(s.sumSquares / (s.segments * s.segmentSamples)) : NaN;
}
