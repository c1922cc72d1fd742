import FFT from 'fft.js';
import { normalQuantile } from './normal-quantile.js';

/**
 * Lag products of sampled segments of one channel, kept so that two parts of a record merge
 * exactly (by adding). Plain data: it goes into partial summary files as JSON.
 *
 * For segment s with its own mean removed (d_i = x_i − x̄_s, i = 0 … M−1):
 *   lagSums[k] = Σ_s Σ_{i=0}^{M−1−k} d_i d_{i+k},   k = 0 … M/2,
 * so segment s contributes M − k pairs at lag k and `segments · (M − k)` pairs in all.
 */
export interface AutocorrelationSums {
  /** M, the length of every segment, a power of two. */
  segmentSamples: number;
  /** Number of segments summed (segments holding a non-finite sample are not used). */
  segments: number;
  /** Σ over segments of Σ_i d_i d_{i+k}, for k = 0 … M/2 (M/2 + 1 numbers). */
  lagSums: number[];
}

/** Lag products of no segment at all: the neutral element of `mergeAutocorrelation`. */
export function emptyAutocorrelation(segmentSamples: number): AutocorrelationSums {
  assertSegmentSamples(segmentSamples);
  return { segmentSamples, segments: 0, lagSums: new Array<number>(segmentSamples / 2 + 1).fill(0) };
}

/** Lag products of the segments of `a` and of `b` together: exact, since it only adds sums. */
export function mergeAutocorrelation(a: AutocorrelationSums, b: AutocorrelationSums): AutocorrelationSums {
  if (a.segmentSamples !== b.segmentSamples || a.lagSums.length !== b.lagSums.length) {
    throw new RangeError(
      `Cannot merge autocorrelation sums of ${a.segmentSamples}-sample segments with those of ${b.segmentSamples}-sample segments`,
    );
  }
  return {
    segmentSamples: a.segmentSamples,
    segments: a.segments + b.segments,
    lagSums: a.lagSums.map((v, k) => v + b.lagSums[k]),
  };
}

/** FFT and scratch buffers for one transform length, shared by every accumulator using it. */
interface Workspace {
  fft: FFT;
  /** 2M reals: the zero-padded segment, then the (symmetric) power spectrum. */
  real: Float64Array;
  /** 2 × 2M numbers: fft.js's interleaved complex output. */
  complex: Float64Array;
}

const workspaces = new Map<number, Workspace>();

function workspaceFor(transformSamples: number): Workspace {
  let w = workspaces.get(transformSamples);
  if (w === undefined) {
    w = {
      fft: new FFT(transformSamples),
      real: new Float64Array(transformSamples),
      complex: new Float64Array(2 * transformSamples),
    };
    workspaces.set(transformSamples, w);
  }
  return w;
}

function assertSegmentSamples(m: number): void {
  if (!Number.isInteger(m) || m < 4 || (m & (m - 1)) !== 0) {
    throw new RangeError(`segmentSamples must be a power of two of at least 4, not ${m}`);
  }
}

/**
 * Accumulates the lag products of sampled segments of one channel (see AutocorrelationSums).
 *
 * Each segment is zero-padded to 2M before its transform, so the circular correlation of the
 * padded sequence equals the linear one for lags 0 … M−1 (no wrap-around); the lag products
 * are the inverse transform of the power spectrum |X_j|² (Wiener–Khinchin; the usual
 * fast-correlation method, e.g. Bendat & Piersol, Random Data, chapter on digital
 * correlation estimates). Because |X_j|² is real and even, its forward real transform is the
 * inverse up to the factor 2M, so one fft.js object serves both directions.
 *
 * Only lags up to M/2 are kept, for three reasons: (1) at lag k a segment gives M − k pairs,
 * so beyond M/2 the estimate rests on fewer than half the pairs and its scatter grows fast;
 * (2) the skewness and kurtosis bands need ρ only until its envelope has decayed into that
 * scatter, and a correlation that is still alive at M/2 (at least one second of lag with the
 * engine's M ≥ 2 × sample rate) marks a channel whose one-second frames are far too short
 * anyway — `correlationShape` then reports `settled: false`; (3) M/2 + 1 lag sums are half
 * the size of the M + 1 power-spectrum bins in a JSON partial file, and they add just as
 * exactly.
 *
 * Each segment has its own mean removed, as frame statistics remove each frame's own mean.
 * That biases the lag products of a process with power near 0 Hz by about −Var(x̄) per pair
 * (Var(x̄) ≈ σ²·Σρ/M); the vibration response of a structure carries no DC, and for such
 * processes the bias is negligible.
 *
 * Memory: the FFT tables and scratch buffers are shared by all accumulators of one segment
 * length (the engine is single-threaded per worker); each accumulator holds M/2 + 1 sums.
 */
export class AutocorrelationAccumulator {
  readonly segmentSamples: number;
  private readonly lagSums: Float64Array;
  private segments = 0;

  constructor(segmentSamples: number) {
    assertSegmentSamples(segmentSamples);
    this.segmentSamples = segmentSamples;
    this.lagSums = new Float64Array(segmentSamples / 2 + 1);
  }

  /**
   * Adds one segment of exactly `segmentSamples` consecutive samples. A segment holding a
   * NaN or ±Inf is not used (its lag products are undefined); `sums().segments` counts the
   * segments that were.
   */
  addSegment(x: Float64Array): void {
    const m = this.segmentSamples;
    if (x.length !== m) throw new RangeError(`A segment must hold ${m} samples, not ${x.length}`);
    let sum = 0;
    for (let i = 0; i < m; i++) sum += x[i];
    if (!Number.isFinite(sum)) return;
    let mean = sum / m;
    // corrected two-pass mean (Chan, Golub & LeVeque 1979): removes the rounding of sum/m
    let r = 0;
    for (let i = 0; i < m; i++) r += x[i] - mean;
    mean += r / m;

    const n2 = 2 * m;
    const { fft, real, complex } = workspaceFor(n2);
    for (let i = 0; i < m; i++) real[i] = x[i] - mean;
    real.fill(0, m);
    fft.realTransform(complex, real);
    // power spectrum |X_j|², j = 0 … M, mirrored to the full even sequence of 2M reals
    for (let j = 0; j <= m; j++) {
      const re = complex[2 * j];
      const im = complex[2 * j + 1];
      real[j] = re * re + im * im;
    }
    for (let j = 1; j < m; j++) real[n2 - j] = real[j];
    fft.realTransform(complex, real);
    const half = m / 2;
    for (let k = 0; k <= half; k++) this.lagSums[k] += complex[2 * k] / n2;
    this.segments++;
  }

  sums(): AutocorrelationSums {
    return { segmentSamples: this.segmentSamples, segments: this.segments, lagSums: Array.from(this.lagSums) };
  }
}

/** What the autocorrelation says about how much the frame statistics scatter. */
export interface CorrelationShape {
  /** ρ(k) for k = 0 … maxLag (ρ(0) = 1), corrected for the removal of each segment's mean. */
  rho: Float64Array;
  /**
   * Two-sided sums 1 + 2 Σ_{k≥1} (w(k)ρ(k))^p with the lag window w: 1 up to the truncation
   * lag K, then a cosine taper over ⌈K/2⌉ lags (`lagWindow`).
   */
  sumRho2: number;
  sumRho3: number;
  sumRho4: number;
  /** Highest lag estimated: M/2. */
  maxLag: number;
  /** K: the last lag at which ρ stands out of its estimation noise; the sums stop there. */
  truncationLag: number;
  /**
   * True when ρ has decayed into its noise and stays there for a run of max(32, K/2) lags
   * before maxLag, and the last quarter of the lags looks like noise too. When false,
   * correlation reaches beyond the estimated lags (or never decays: a sine), the sums are
   * too small and bands built on them too narrow: warn, do not judge.
   */
  settled: boolean;
  /**
   * Decay length of the correlation, in samples: the first lag from which |ρ| stays below
   * 1/e up to K. For a mode of natural frequency f and damping ratio ζ sampled at fs it is
   * about the envelope's time constant fs/(2πζf); for AR(1) with coefficient φ, about
   * −1/ln φ; 1 for white noise.
   */
  correlationSamples: number;
}

/**
 * Autocorrelation ρ(k) of the segments summed in `s` and the two-sided sums of its powers
 * that set the scatter of skewness (Σρ³), kurtosis (Σρ⁴) and of the variance (Σρ²) of a
 * stationary Gaussian process (Lomnicki, Metrika 4, 1961 — from memory; see
 * gaussian-bands.ts).
 *
 * Normalisation: ĉ(k) = lagSums[k] / (segments·(M − k)), the unbiased-per-lag estimate (each
 * lag divided by its own number of pairs), and ρ̂(k) = ĉ(k)/ĉ(0).
 *
 * Mean removal: with each segment's own mean removed, E[ĉ(k)] ≈ γ(k) − Var(x̄) for lags short
 * of M, Var(x̄) ≈ σ²·S1/M with S1 = Σ_k ρ(k) over all lags, so ρ̂ = (ρ − β)/(1 − β), β = S1/M
 * (the usual first-order bias of mean-corrected autocovariances, e.g. Priestley, Spectral
 * Analysis and Time Series, section on the sample autocovariance — from memory). S1 is
 * solved from the measured Σ_{|k|≤K} ρ̂ and ρ is corrected when the process has power near
 * 0 Hz (that sum at least 1); for vibration response (no DC) β ≈ 0 and it is left alone, for
 * AR(1) with φ = 0.98 and M = 4096 it is 0.024.
 *
 * Truncation: summing ρ̂^p over lags where the true ρ is 0 adds only estimation noise (for
 * p = 2 a bias of about 2/(segments·M) per lag). The standard error of ρ̂(k) is taken from
 * Bartlett's large-lag formula, se(k)² = (1 + 2Σ_{j<k} ρ̂(j)²) / n_k with n_k =
 * segments·(M − k) pairs (Box, Jenkins & Reinsel, Time Series Analysis, section on the
 * standard error of autocorrelation estimates — from memory). A lag stands out when
 * |ρ̂(k)| > c·se(k), c = Φ⁻¹(1 − 0.005/maxLag) (white noise has a 1 % chance that any lag does,
 * Bonferroni over maxLag lags). K is the last lag that stands out before the first quiet run
 * of max(32, K/2) lags: a narrow-band ρ oscillates through zero, and a run that long holds
 * several of its periods, while a lone noise excursion far out does not extend K. The sums
 * run through the lag window (1 to K, then a cosine taper over ⌈K/2⌉ lags), the same one
 * gaussian-bands.ts uses for its spectrum, so that the two agree. The noise bias of Σρ̂² is
 * removed (Σ w²se²); for p = 3 and 4 it is negligible.
 */
export function correlationShape(s: AutocorrelationSums): CorrelationShape {
  const m = s.segmentSamples;
  const maxLag = s.lagSums.length - 1;
  const rho = new Float64Array(maxLag + 1);
  const c0 = s.segments > 0 ? s.lagSums[0] / (s.segments * m) : NaN;
  if (!(c0 > 0)) {
    rho.fill(NaN);
    return { rho, sumRho2: NaN, sumRho3: NaN, sumRho4: NaN, maxLag, truncationLag: 0, settled: false, correlationSamples: NaN };
  }
  for (let k = 0; k <= maxLag; k++) rho[k] = s.lagSums[k] / (s.segments * (m - k)) / c0;

  const c = normalQuantile(1 - 0.005 / maxLag);
  let truncationLag = 0;
  let settled = false;
  let running = 1; // 1 + 2 Σ_{j<k} ρ̂(j)²
  for (let k = 1; k <= maxLag; k++) {
    const se = Math.sqrt(running / (s.segments * (m - k)));
    if (Math.abs(rho[k]) > c * se) truncationLag = k;
    else if (k - truncationLag >= Math.max(32, truncationLag / 2)) {
      settled = true;
      break;
    }
    running += 2 * rho[k] * rho[k];
  }

  // first-order correction of the segment-mean bias: ρ = β + (1 − β)ρ̂ with β = S1/M, where
  // Σ_{|k|≤K} ρ̂ = (S1 − (2K+1)β)/(1 − β) gives S1 = A/(1 + (A − 2K − 1)/M). Only for
  // processes with power near 0 Hz (A ≥ 1, as much as white noise has): for response without
  // DC, A is noise, and shifting every ρ by a β of noise moves Σρ³ by 3βΣρ², enough to halve
  // the near-cancelling Σρ³ of a narrow-band mode (seen in a simulation here: 80 Hz, ζ 1 %).
  let a = 1;
  for (let k = 1; k <= truncationLag; k++) a += 2 * rho[k];
  if (a >= 1) {
    const beta = a / (1 + (a - 2 * truncationLag - 1) / m) / m;
    if (beta < 0.5) for (let k = 1; k <= maxLag; k++) rho[k] = beta + (1 - beta) * rho[k];
  }

  // A quiet run is not enough when ρ does not decay at all (a sine: Bartlett's se grows with
  // Σρ̂² until nothing stands out): the last quarter of the lags must also look like noise,
  // mean ρ̂² at most 4× the se² that the correlation up to K implies there. Checked after the
  // mean correction, which would otherwise leave −β in every far lag.
  if (settled) {
    let noise = 1;
    for (let k = 1; k <= truncationLag; k++) noise += 2 * rho[k] * rho[k];
    noise /= s.segments * (m - maxLag);
    let tail = 0;
    const from = Math.floor((3 * maxLag) / 4) + 1;
    for (let k = from; k <= maxLag; k++) tail += rho[k] * rho[k];
    tail /= maxLag - from + 1;
    if (tail > 4 * noise) settled = false;
  }

  // the sums run to K and on through a cosine taper over the next ⌈K/2⌉ lags (the lag window
  // gaussian-bands.ts uses for its spectrum)
  const taper = lagTaper(truncationLag, maxLag);
  let sum2 = 0;
  let sum3 = 0;
  let sum4 = 0;
  let noise2 = 0;
  running = 1;
  let correlationSamples = 0;
  for (let k = 1; k <= truncationLag + taper; k++) {
    const w = lagWindow(k, truncationLag, taper);
    const r = w * rho[k];
    const r2 = r * r;
    noise2 += (w * w * running) / (s.segments * (m - k));
    running += 2 * rho[k] * rho[k];
    sum2 += r2;
    sum3 += r2 * r;
    sum4 += r2 * r2;
    if (k <= truncationLag && Math.abs(r) >= 1 / Math.E) correlationSamples = k;
  }
  return {
    rho,
    sumRho2: Math.max(1, 1 + 2 * (sum2 - noise2)),
    sumRho3: 1 + 2 * sum3,
    sumRho4: 1 + 2 * sum4,
    maxLag,
    truncationLag,
    settled,
    correlationSamples: correlationSamples + 1,
  };
}

/** Length of the cosine taper after the truncation lag K: ⌈K/2⌉ lags (at least 4), within maxLag. */
export function lagTaper(truncationLag: number, maxLag: number): number {
  return Math.max(0, Math.min(maxLag - truncationLag, Math.max(4, Math.ceil(truncationLag / 2))));
}

/** Weight of lag k: 1 up to K, then a cosine taper to 0 over `taper` lags. */
export function lagWindow(k: number, truncationLag: number, taper: number): number {
  if (k <= truncationLag) return 1;
  if (k > truncationLag + taper) return 0;
  return 0.5 * (1 + Math.cos((Math.PI * (k - truncationLag)) / taper));
}
