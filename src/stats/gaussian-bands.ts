import FFT from 'fft.js';
import { lagTaper, lagWindow, type CorrelationShape } from './autocorrelation.js';
import { normalQuantile } from './normal-quantile.js';

/**
 * Confidence bands for the sample skewness √b1 = m3/m2^1.5 and kurtosis b2 = m4/m2² (population,
 * non-excess, each frame with its own mean and variance, as skewness.ts and kurtosis.ts define
 * them) of N samples of a stationary Gaussian process with a known autocorrelation ρ.
 *
 * Two methods:
 *
 * 1. `kurtosisBand` / `skewnessBand`: the textbook transformations for independent normal
 *    samples — Anscombe & Glynn (Biometrika 70:227–234, 1983) for b2 and D'Agostino
 *    (Biometrika 57:679–681, 1970) for √b1, formulas from memory — evaluated at an
 *    effective sample count n = N/Σρ⁴ (resp. N/Σρ³). The sums come from Lomnicki's asymptotic variances
 *    (24/N)Σρ⁴ and (6/N)Σρ³ (Metrika 4, 1961 — from memory). These are right when the frame
 *    is long compared with the correlation (whole records); for lightly damped response in
 *    one-second frames the kurtosis band is far too wide and the skewness band too narrow
 *    (the simulation in test/stats/gaussian-bands.test.ts shows both). Instant to compute.
 *
 * 2. `gaussianBands`: the first four moments of b2 and the second and fourth of √b1 computed
 *    for the frame length and this autocorrelation (not asymptotically), then a Johnson S_U
 *    curve with those moments (Johnson, Biometrika 36:149–176, 1949; from memory) gives the
 *    quantiles. For independent samples the moments are exactly those of Pearson (1930) that
 *    the Anscombe–Glynn and D'Agostino transformations are built on (tests check this), and
 *    the symmetric S_U used for √b1 is D'Agostino's transformation itself.
 *
 * How the moments are computed (method 2). Model the frame as one period of a circular
 * stationary Gaussian sequence x of G samples whose covariance matrix Σ is circulant with
 * eigenvalues λ_j = the spectrum of ρ at the G Fourier frequencies (the usual circulant
 * approximation of a stationary covariance: it ignores the frame's edges, an error of the
 * order of the correlation length over N; exact for white noise). Removing the frame mean
 * removes the j = 0 component: d = Ax, A = I − 11ᵀ/G. With Q = Σd² and R = Σd⁴, T = Σd³,
 *   b2^k = G^k R^k / Q^{2k},   b1^k = G^k T^{2k} / Q^{3k},
 * and the identity Q^{−p} = Γ(p)^{−1} ∫₀^∞ t^{p−1} e^{−tQ} dt (Cressie et al., The American
 * Statistician 35:148–150, 1981; from memory) turns each moment into a one-dimensional
 * integral of a Gaussian expectation under the "tilted" covariance (Σ⁻¹ + 2tA)⁻¹, which stays circulant:
 * its eigenvalues are μ_j = λ_j/(1 + 2tλ_j) (μ_0 = 0) and its normalising factor is
 * D(t) = Π_{j≠0}(1 + 2tλ_j)^{−1/2}. The tilted expectations E[R^k] and E[T^{2k}] are sums over
 * Wick (Isserlis) pairings of the legs of k (resp. 2k) vertices; each pairing pattern is a
 * small multigraph whose position sum over the circle reduces to power sums, convolutions
 * and traces of Hadamard powers of the tilted covariance c(k) — cheap with FFTs — except the
 * complete graph on four vertices, which costs one FFT per lag where c is not negligible.
 * The t-integral is a trapezoid rule in ln t (exponentially accurate for these smooth,
 * doubly decaying integrands).
 *
 * The mean bias of b2. For short correlated frames b2 is biased low well beyond the
 * 3(n−1)/(n+1) of independent samples: to second order E[b2] ≈ 3 − 6Σρ²/N (the frame's own
 * variance scatters with Σρ², not Σρ⁴), and for frames that hold few cycles of the envelope
 * of a lightly damped mode the bias is larger still. Method 2 computes the mean exactly for
 * the circulant model, so the band is centred where clean frames actually fall. Method 1
 * centres on the independent-sample mean at n = N/Σρ⁴ and does not correct the bias.
 *
 * Lengths other than a power of two: the moments are computed at the two powers of two G
 * around N and each standardised moment (N·(mean − 3), N·variance, √N·skewness,
 * N·excess kurtosis) is interpolated linearly in 1/N, their leading behaviour. When N is
 * much longer than the correlation (N > 2G with G the power of two at or above 1024,
 * 4(K+1) and 32Σρ²), they are computed at G and 2G and extrapolated through the known limits
 * as N → ∞ where there are (see `frameStatisticMoments`), so whole records of millions of
 * samples cost the same as a few seconds.
 *
 * Cost (2-core machine, this code): 0.05–0.1 s for white noise, 0.2–0.4 s for one-second
 * frames of lightly damped response at 2048 Hz, 1–2 s when the correlation lasts about a
 * second of samples (it grows with the square of the correlation length in samples, through
 * the complete-graph sums). Compute once per channel and frame length.
 */

/** Fewest samples for which bands are computed: below it the moments are dominated by the model. */
const MIN_SAMPLES = 16;

/**
 * Effective sample count N / Σρ^p of a statistic whose variance is Σρ^p times that of
 * independent samples (Σρ⁴ for kurtosis, Σρ³ for skewness, Σρ² for the variance itself): the
 * number of independent samples that would scatter as much (Lomnicki 1961, from memory).
 * Not capped at N: Σρ³ is below 1 for narrow-band response (ρ³ oscillates and cancels), and
 * skewness then really does scatter less than for independent samples (the simulation in the
 * tests confirms the variance). Floored at 1 sample; NaN for a non-positive or non-finite sum.
 */
export function effectiveSamples(samples: number, sumRho: number): number {
  if (!(samples > 0) || !(sumRho > 0) || !Number.isFinite(sumRho)) return NaN;
  return Math.max(1, samples / sumRho);
}

function checkConfidence(confidence: number): number {
  if (!(confidence > 0 && confidence < 1)) throw new RangeError(`confidence must lie between 0 and 1, not ${confidence}`);
  return normalQuantile(0.5 + confidence / 2);
}

/**
 * Two-sided `confidence` band for the population kurtosis b2 of `samples` samples of a
 * Gaussian process with two-sided Σρ⁴ = `sumRho4`, by Anscombe & Glynn's transformation
 * (Biometrika 70:227–234, 1983; formulas from memory) at n = N/Σρ⁴, inverted:
 *   E = 3(n−1)/(n+1),  V = 24n(n−2)(n−3)/((n+1)²(n+3)(n+5)),
 *   √β1 = 6(n²−5n+2)/((n+7)(n+9)) · √(6(n+3)(n+5)/(n(n−2)(n−3))),
 *   A = 6 + (8/√β1)(2/√β1 + √(1 + 4/β1)),
 *   z = [(1 − 2/(9A)) − ((1 − 2/A)/(1 + x√(2/(A−4))))^{1/3}] / √(2/(9A)),  x = (b2 − E)/√V.
 * Minimum n: 5 (the transformation needs n > 3 and A > 4); NaN below. The upper limit is
 * +Infinity when the transformation has no finite inverse at that confidence (tiny n).
 * Asymptotic in the frame length: see `gaussianBands` for short correlated frames.
 * Example: n = N = 2048, 99.9 % → about [2.69, 3.41].
 */
export function kurtosisBand(samples: number, sumRho4: number, confidence: number): [number, number] {
  const z = checkConfidence(confidence);
  const n = effectiveSamples(samples, sumRho4);
  if (!(n >= 5)) return [NaN, NaN];
  const mean = (3 * (n - 1)) / (n + 1);
  const variance = (24 * n * (n - 2) * (n - 3)) / ((n + 1) ** 2 * (n + 3) * (n + 5));
  const sqrtBeta1 = ((6 * (n * n - 5 * n + 2)) / ((n + 7) * (n + 9))) * Math.sqrt((6 * (n + 3) * (n + 5)) / (n * (n - 2) * (n - 3)));
  return [anscombeGlynnQuantile(mean, variance, sqrtBeta1, -z), anscombeGlynnQuantile(mean, variance, sqrtBeta1, z)];
}

/**
 * Two-sided `confidence` band for the population skewness √b1 of `samples` samples of a
 * Gaussian process with two-sided Σρ³ = `sumRho3`, by D'Agostino's transformation (Biometrika
 * 57:679–681, 1970; formulas from memory) at n = N/Σρ³, inverted:
 *   Y = √b1 · √((n+1)(n+3)/(6(n−2))),  β2 = 3(n²+27n−70)(n+1)(n+3)/((n−2)(n+5)(n+7)(n+9)),
 *   W² = −1 + √(2(β2 − 1)),  δ = 1/√(ln W),  α = √(2/(W² − 1)),  z = δ·asinh(Y/α).
 * Symmetric about 0. Minimum n: 9 (β2 of √b1 must exceed 3); NaN below. Example: n = N = 2048,
 * 99.9 % → about ±0.18.
 */
export function skewnessBand(samples: number, sumRho3: number, confidence: number): [number, number] {
  const z = checkConfidence(confidence);
  const n = effectiveSamples(samples, sumRho3);
  if (!(n >= 9)) return [NaN, NaN];
  const variance = (6 * (n - 2)) / ((n + 1) * (n + 3));
  const beta2 = (3 * (n * n + 27 * n - 70) * (n + 1) * (n + 3)) / ((n - 2) * (n + 5) * (n + 7) * (n + 9));
  const limit = symmetricJohnsonQuantile(variance, beta2, z);
  return [-limit, limit];
}

/**
 * b2 at standard normal deviate z by Anscombe & Glynn's transformation with the given mean,
 * variance and standardised third moment √β1 of b2 (see `kurtosisBand`).
 */
function anscombeGlynnQuantile(mean: number, variance: number, sqrtBeta1: number, z: number): number {
  if (!(sqrtBeta1 > 1e-8)) return mean + z * Math.sqrt(variance);
  const a = 6 + (8 / sqrtBeta1) * (2 / sqrtBeta1 + Math.sqrt(1 + 4 / (sqrtBeta1 * sqrtBeta1)));
  const t = 1 - 2 / (9 * a) - z * Math.sqrt(2 / (9 * a));
  if (t <= 0) return Infinity;
  const x = ((1 - 2 / a) / (t * t * t) - 1) / Math.sqrt(2 / (a - 4));
  return mean + x * Math.sqrt(variance);
}

/**
 * The value exceeded with probability Φ(−z) by a symmetric Johnson S_U variable of the given
 * variance and kurtosis β2 (> 3): D'Agostino's (1970) parametrisation W² = e^{1/δ²} =
 * −1 + √(2(β2 − 1)). Falls back to the normal quantile when β2 ≤ 3.
 */
function symmetricJohnsonQuantile(variance: number, beta2: number, z: number): number {
  if (!(beta2 > 3 + 1e-9)) return z * Math.sqrt(variance);
  const w2 = -1 + Math.sqrt(2 * (beta2 - 1));
  const delta = 1 / Math.sqrt(Math.log(Math.sqrt(w2)));
  const alpha = Math.sqrt(2 / (w2 - 1));
  return Math.sqrt(variance) * alpha * Math.sinh(z / delta);
}

// ---------------------------------------------------------------------------------------
// Johnson S_U fitted by moments.

interface JohnsonSU {
  xi: number;
  lambda: number;
  gamma: number;
  delta: number;
}

/**
 * Moments of Y = sinh((Z − γ)/δ), Z standard normal (Johnson's S_U with ξ = 0, λ = 1), in
 * terms of w = e^{1/δ²} and Ω = γ/δ (Johnson 1949, the moments of S_U; from memory — as
 * Ω → ∞ they tend to the lognormal's, and the band simulation in the tests exercises them):
 * mean m, variance v, skewness and kurtosis.
 */
function johnsonShape(w: number, omega: number): { m: number; v: number; skew: number; kurt: number } {
  const m = -Math.sqrt(w) * Math.sinh(omega);
  const v = 0.5 * (w - 1) * (w * Math.cosh(2 * omega) + 1);
  const mu3 = -0.25 * Math.sqrt(w) * (w - 1) ** 2 * (w * (w + 2) * Math.sinh(3 * omega) + 3 * Math.sinh(omega));
  const mu4 =
    0.125 * (w - 1) ** 2 *
    (w * w * (w ** 4 + 2 * w ** 3 + 3 * w * w - 3) * Math.cosh(4 * omega) + 4 * w * w * (w + 2) * Math.cosh(2 * omega) + 3 * (2 * w + 1));
  return { m, v, skew: mu3 / v ** 1.5, kurt: mu4 / (v * v) };
}

const lognormalKurtosis = (w: number) => w ** 4 + 2 * w ** 3 + 3 * w * w - 3;

/**
 * The S_U curve with the given mean, variance, skewness and kurtosis, or undefined when
 * (skewness², kurtosis) lies on or below the lognormal line (the S_B region) or at the normal
 * point. Nested bisections: for each w the Ω matching the kurtosis (kurtosis grows with |Ω|
 * at fixed w), and w chosen to match the skewness (skewness falls from the lognormal line at
 * the smallest w to 0 at the largest) — the same two-stage search as Tuenter (J. Statist.
 * Comput. Simul. 70:325–347, 2001; from memory), done by bisection for robustness.
 */
function fitJohnsonSU(mean: number, variance: number, skew: number, kurt: number): JohnsonSU | undefined {
  if (!(kurt > 3 + 1e-9) || !(variance > 0)) return undefined;
  const bisect = (f: (x: number) => number, lo: number, hi: number) => {
    for (let i = 0; i < 100; i++) {
      const mid = 0.5 * (lo + hi);
      if (f(mid) < 0) lo = mid;
      else hi = mid;
    }
    return 0.5 * (lo + hi);
  };
  // largest w: the symmetric curve with this kurtosis
  let hi = 2;
  while (johnsonShape(hi, 0).kurt < kurt) hi *= 1.5;
  const wMax = bisect((w) => johnsonShape(w, 0).kurt - kurt, 1, hi);
  // smallest w: where the lognormal line reaches this kurtosis
  const wMin = bisect((w) => lognormalKurtosis(w) - kurt, 1, wMax);
  const target = Math.abs(skew);
  if ((wMin + 2) * Math.sqrt(wMin - 1) <= target) return undefined;
  const omegaFor = (w: number) => {
    let top = 1;
    while (johnsonShape(w, top).kurt < kurt && top < 60) top *= 2;
    return bisect((o) => johnsonShape(w, o).kurt - kurt, 0, top);
  };
  const w = target < 1e-12 ? wMax : bisect((x) => target - Math.abs(johnsonShape(x, omegaFor(x)).skew), wMin * (1 + 1e-12), wMax);
  // johnsonShape(w, +Ω) has negative skewness
  const omega = skew > 0 ? -omegaFor(w) : omegaFor(w);
  const shape = johnsonShape(w, omega);
  const delta = 1 / Math.sqrt(Math.log(w));
  const lambda = Math.sqrt(variance / shape.v);
  return { xi: mean - lambda * shape.m, lambda, gamma: omega * delta, delta };
}

/** X = ξ + λ·sinh((z − γ)/δ) at standard normal deviate z. */
function johnsonQuantile(p: JohnsonSU, z: number): number {
  return p.xi + p.lambda * Math.sinh((z - p.gamma) / p.delta);
}

// ---------------------------------------------------------------------------------------
// Wick pairings: which multigraphs the pairings of k vertices with `legs` legs each form.

interface PairingClass {
  /** Multiplicity of each edge (u < v), in the order of `edgeList(vertices)`. */
  m: number[];
  /** Number of self-pairings (loops), each contributing a factor c(0). */
  loops: number;
  /** Number of pairings that form this multigraph. */
  count: number;
}

function edgeList(vertices: number): [number, number][] {
  const e: [number, number][] = [];
  for (let u = 0; u < vertices; u++) for (let v = u + 1; v < vertices; v++) e.push([u, v]);
  return e;
}

const factorial = (n: number): number => (n <= 1 ? 1 : n * factorial(n - 1));

/**
 * All multigraphs formed by pairing the legs of `vertices` vertices with `legs` legs each,
 * with the number of pairings forming each: Π_v legs! / (Π_v 2^{ℓ_v} ℓ_v! · Π_e m_e!), ℓ_v the
 * loops at v (Isserlis' theorem: E[Π x_i] is the sum over pairings of the product of
 * covariances). The counts add up to (vertices·legs − 1)!!.
 */
function pairingClasses(vertices: number, legs: number): PairingClass[] {
  const edges = edgeList(vertices);
  const out: PairingClass[] = [];
  const m = new Array<number>(edges.length).fill(0);
  const rec = (e: number) => {
    if (e === edges.length) {
      let loops = 0;
      let denominator = 1;
      for (let v = 0; v < vertices; v++) {
        let deg = 0;
        edges.forEach(([a, b], i) => {
          if (a === v || b === v) deg += m[i];
        });
        const rest = legs - deg;
        if (rest < 0 || rest % 2 !== 0) return;
        loops += rest / 2;
        denominator *= 2 ** (rest / 2) * factorial(rest / 2);
      }
      for (const k of m) denominator *= factorial(k);
      out.push({ m: m.slice(), loops, count: factorial(legs) ** vertices / denominator });
      return;
    }
    for (let k = 0; k <= legs; k++) {
      m[e] = k;
      rec(e + 1);
    }
    m[e] = 0;
  };
  rec(0);
  return out;
}

const classCache = new Map<string, PairingClass[]>();
function classesFor(vertices: number, legs: number): PairingClass[] {
  const key = `${vertices}x${legs}`;
  let c = classCache.get(key);
  if (c === undefined) {
    c = pairingClasses(vertices, legs);
    classCache.set(key, c);
  }
  return c;
}

// ---------------------------------------------------------------------------------------
// Position sums of multigraphs on the circle of G samples, for one tilted covariance c.

const fftCache = new Map<number, FFT>();
function fftOf(g: number): FFT {
  let f = fftCache.get(g);
  if (f === undefined) {
    f = new FFT(g);
    fftCache.set(g, f);
  }
  return f;
}

/** dst = DFT of an even real sequence src (its transform is real and even); `out` is scratch of 2G. */
function evenTransform(src: Float64Array, dst: Float64Array, out: Float64Array): void {
  const g = src.length;
  fftOf(g).realTransform(out, src);
  for (let j = 0; j <= g / 2; j++) {
    dst[j] = out[2 * j];
    if (j > 0 && j < g / 2) dst[g - j] = out[2 * j];
  }
}

/**
 * The tilted covariance for one value of t and the sums built on it: c(k), its Hadamard powers
 * c^m, their transforms F_m (F_1 = μ), their circular convolutions and the shape sums of
 * `Part`. Everything is computed on first use after `reset` and kept in buffers that are
 * reused from one t to the next (one instance per G).
 */
class TiltedCovariance {
  readonly g: number;
  c0 = 0;
  private mu: Float64Array;
  private readonly out: Float64Array;
  private readonly scratch: Float64Array;
  private readonly arrays = new Map<string, Float64Array>();
  private readonly fresh = new Set<string>();
  private readonly values = new Map<string, number>();

  constructor(g: number) {
    this.g = g;
    this.mu = new Float64Array(g);
    this.out = new Float64Array(2 * g);
    this.scratch = new Float64Array(g);
  }

  reset(mu: Float64Array): void {
    this.mu = mu;
    let s = 0;
    for (let j = 0; j < this.g; j++) s += mu[j];
    this.c0 = s / this.g;
    this.fresh.clear();
    this.values.clear();
  }

  private buffer(key: string): { a: Float64Array; ready: boolean } {
    let a = this.arrays.get(key);
    if (a === undefined) {
      a = new Float64Array(this.g);
      this.arrays.set(key, a);
    }
    const ready = this.fresh.has(key);
    this.fresh.add(key);
    return { a, ready };
  }

  private value(key: string, f: () => number): number {
    let v = this.values.get(key);
    if (v === undefined) {
      v = f();
      this.values.set(key, v);
    }
    return v;
  }

  /** c^m (m = 1: the tilted covariance itself, c(k) = (1/G)Σ_j μ_j e^{2πijk/G}). */
  cPow(m: number): Float64Array {
    const { a, ready } = this.buffer(`p${m}`);
    if (!ready) {
      if (m === 1) {
        evenTransform(this.mu, a, this.out);
        for (let k = 0; k < this.g; k++) a[k] /= this.g;
      } else {
        const c = this.cPow(1);
        for (let k = 0; k < this.g; k++) a[k] = c[k] ** m;
      }
    }
    return a;
  }

  /** F_m = DFT(c^m); F_1 = μ. */
  spectrum(m: number): Float64Array {
    if (m === 1) return this.mu;
    const { a, ready } = this.buffer(`f${m}`);
    if (!ready) evenTransform(this.cPow(m), a, this.out);
    return a;
  }

  /** (c^a ⊛ c^b)(x) = Σ_y c(y)^a c(x − y)^b, circular. */
  convolution(a: number, b: number): Float64Array {
    const [x, y] = a <= b ? [a, b] : [b, a];
    const { a: r, ready } = this.buffer(`v${x}${y}`);
    if (!ready) {
      const fa = this.spectrum(x);
      const fb = this.spectrum(y);
      for (let j = 0; j < this.g; j++) this.scratch[j] = fa[j] * fb[j];
      evenTransform(this.scratch, r, this.out);
      for (let k = 0; k < this.g; k++) r[k] /= this.g;
    }
    return r;
  }

  /** P_m = Σ_k c(k)^m; P_1 = 0 exactly (the frame mean is removed, μ_0 = 0). */
  powerSum(m: number): number {
    if (m === 1) return 0;
    return this.value(`P${m}`, () => {
      let s = 0;
      if (m === 2) {
        // Parseval: Σ_k c(k)² = (1/G) Σ_j μ_j², no transform needed
        for (let j = 0; j < this.g; j++) s += this.mu[j] * this.mu[j];
        return s / this.g;
      }
      const p = this.cPow(m);
      for (let k = 0; k < this.g; k++) s += p[k];
      return s;
    });
  }

  /** A triangle with edge multiplicities a, b, c: Σ_x c(x)^a (c^b ⊛ c^c)(x). */
  triangle(a: number, b: number, c: number): number {
    const [x, y, z] = [a, b, c].sort();
    return this.value(`t${x}${y}${z}`, () => {
      const v = this.convolution(y, z);
      const p = this.cPow(x);
      let s = 0;
      for (let k = 0; k < this.g; k++) s += p[k] * v[k];
      return s;
    });
  }

  /** A 4-cycle with multiplicities a, b, c, d (three free positions): (1/G)Σ_j F_a F_b F_c F_d. */
  cycle(a: number, b: number, c: number, d: number): number {
    const ms = [a, b, c, d].sort();
    return this.value(`c${ms.join('')}`, () => {
      const [fa, fb, fc, fd] = ms.map((m) => this.spectrum(m));
      let s = 0;
      for (let j = 0; j < this.g; j++) s += fa[j] * fb[j] * fc[j] * fd[j];
      return s / this.g;
    });
  }

  /** Two triangles sharing the edge r–s (multiplicity e): Σ_x c^e(x)(c^a⊛c^b)(x)(c^c⊛c^d)(x). */
  diamond(e: number, a: number, b: number, c: number, d: number): number {
    const ab = a <= b ? `${a}${b}` : `${b}${a}`;
    const cd = c <= d ? `${c}${d}` : `${d}${c}`;
    return this.value(`d${e}${ab < cd ? ab + cd : cd + ab}`, () => {
      const p = this.cPow(e);
      const u = this.convolution(a, b);
      const v = this.convolution(c, d);
      let s = 0;
      for (let k = 0; k < this.g; k++) s += p[k] * u[k] * v[k];
      return s;
    });
  }

  /**
   * The complete graph on four vertices with multiplicities m = [m01, m02, m03, m12, m13, m23]
   * labelled so that m02 = m03 and m12 = m13 (see `canonicalComplete`): with vertex 0 at the
   * origin and vertex 1 at lag x,
   *   Σ_x c^{m01}(x) Σ_{y,z} h_x(y) h_x(z) c^{m23}(z − y),   h_x(y) = c^{m02}(y) c^{m12}(y − x),
   * and the inner sum is (1/G')Σ_j F'_{m23}(j)|ĥ_x(j)|² on a circle of G' > 3L samples, L the
   * last lag at which c is not negligible (products of covariances at larger lags are
   * dropped, see COMPLETE_LAG_THRESHOLD). One real FFT of G' per lag x with c^{m01}(x) not
   * negligible; x and −x give the same inner sum.
   */
  complete(m: number[]): number {
    const [m01, m02, , m12, , m23] = m;
    const c = this.cPow(1);
    const g = this.g;
    let reach = 0;
    const cut = COMPLETE_LAG_THRESHOLD * Math.abs(c[0]);
    for (let k = 1; k <= g / 2; k++) if (Math.abs(c[k]) > cut) reach = k;
    const gs = Math.min(g, 2 ** Math.ceil(Math.log2(3 * reach + 2)));
    const local = (k: number) => (Math.abs(k) <= reach ? c[(k + g) % g] : 0);
    // the sequences on the smaller circle
    const cl = new Float64Array(gs);
    if (gs === g) cl.set(c);
    else for (let k = -reach; k <= reach; k++) cl[(k + gs) % gs] = local(k);
    const pw = (mm: number) => Float64Array.from(cl, (v) => v ** mm);
    const p01 = pw(m01);
    const p02 = pw(m02);
    const p12 = pw(m12);
    const f23 = new Float64Array(gs);
    const out = new Float64Array(2 * gs);
    evenTransform(pw(m23), f23, out);
    const fft = fftOf(gs);
    let peak = 0;
    for (let k = 0; k < gs; k++) peak = Math.max(peak, Math.abs(p01[k]));
    const h = new Float64Array(gs);
    let total = 0;
    for (let x = 0; x <= gs / 2; x++) {
      const px = p01[x];
      if (!(Math.abs(px) > COMPLETE_LAG_THRESHOLD * peak)) continue;
      for (let y = 0; y < gs; y++) h[y] = p02[y] * p12[(y - x + gs) % gs];
      fft.realTransform(out, h);
      let inner = 0;
      for (let j = 0; j <= gs / 2; j++) {
        const wj = j === 0 || j === gs / 2 ? 1 : 2;
        inner += wj * f23[j] * (out[2 * j] * out[2 * j] + out[2 * j + 1] * out[2 * j + 1]);
      }
      total += (x === 0 || x === gs / 2 ? 1 : 2) * px * (inner / gs);
    }
    return total;
  }
}

/**
 * Lags at which |c^{m01}(x)| (and |c| itself) fall below this fraction of their peak are left
 * out of the complete-graph sums. Each left-out term is a product of several such small
 * covariances, and the complete graphs enter only the fourth moments; the effect on the
 * bands is checked in test/stats/gaussian-bands.test.ts against a threshold ten times smaller.
 */
let COMPLETE_LAG_THRESHOLD = 3e-3;
/** For tests: set the lag threshold of the complete-graph sums; returns the previous one. */
export function _setCompleteLagThresholdForTest(v: number): number {
  const old = COMPLETE_LAG_THRESHOLD;
  COMPLETE_LAG_THRESHOLD = v;
  return old;
}

/** One factor of a Wick term's position sum (the sum over one connected component, relative). */
type Part =
  | { kind: 'power'; m: number }
  | { kind: 'triangle'; a: number; b: number; c: number }
  | { kind: 'cycle'; a: number; b: number; c: number; d: number }
  | { kind: 'diamond'; e: number; a: number; b: number; c: number; d: number }
  | { kind: 'complete'; key: string };

/** A pairing class ready to evaluate: count · c(0)^loops · G^components · Π parts. */
interface Term {
  count: number;
  loops: number;
  components: number;
  parts: Part[];
}

/** Relabelled multiplicities of a complete graph (m01 … m23) with m02 = m03 and m12 = m13. */
function canonicalComplete(m: number[]): number[] {
  const pairIndex = (u: number, v: number) => {
    const [a, b] = u < v ? [u, v] : [v, u];
    return [[0, 1], [0, 2], [0, 3], [1, 2], [1, 3], [2, 3]].findIndex(([x, y]) => x === a && y === b);
  };
  const perms: number[][] = [];
  const permute = (done: number[], rest: number[]) => {
    if (rest.length === 0) perms.push(done);
    rest.forEach((r, i) => permute([...done, r], rest.filter((_, j) => j !== i)));
  };
  permute([], [0, 1, 2, 3]);
  for (const p of perms) {
    const r = [[0, 1], [0, 2], [0, 3], [1, 2], [1, 3], [2, 3]].map(([u, v]) => m[pairIndex(p[u], p[v])]);
    if (r[1] === r[2] && r[3] === r[4]) return r;
  }
  // never reached for the classes used here (four legs: a doubled perfect matching; three legs: all ones)
  throw new Error(`internal: complete graph ${m.join(',')} has no symmetric labelling`);
}

/** Splits a pairing class into connected components and names the shape of each. */
function compileTerm(vertices: number, cl: PairingClass): Term {
  const edges = edgeList(vertices);
  const mult = (u: number, v: number) => cl.m[edges.findIndex(([a, b]) => (a === u && b === v) || (a === v && b === u))] ?? 0;
  const parent = Array.from({ length: vertices }, (_, i) => i);
  const find = (i: number): number => (parent[i] === i ? i : (parent[i] = find(parent[i])));
  edges.forEach(([a, b], i) => {
    if (cl.m[i] > 0) parent[find(a)] = find(b);
  });
  const groups = new Map<number, number[]>();
  for (let v = 0; v < vertices; v++) groups.set(find(v), [...(groups.get(find(v)) ?? []), v]);
  const parts: Part[] = [];
  for (const vs of groups.values()) {
    const inner = edges.filter(([a, b]) => vs.includes(a) && vs.includes(b) && mult(a, b) > 0);
    const degree = (v: number) => inner.filter(([a, b]) => a === v || b === v).length;
    if (vs.length === 1) continue;
    if (inner.length === vs.length - 1) {
      // a tree: every edge is a free lag
      for (const [a, b] of inner) parts.push({ kind: 'power', m: mult(a, b) });
      continue;
    }
    if (vs.length === 3) {
      const [u, v, w] = vs;
      parts.push({ kind: 'triangle', a: mult(u, v), b: mult(v, w), c: mult(u, w) });
      continue;
    }
    if (inner.length === 4) {
      const leaf = vs.find((v) => degree(v) === 1);
      if (leaf !== undefined) {
        const [a, b] = inner.find(([x, y]) => x === leaf || y === leaf)!;
        const [p, q, r] = vs.filter((v) => v !== leaf);
        parts.push({ kind: 'power', m: mult(a, b) }, { kind: 'triangle', a: mult(p, q), b: mult(q, r), c: mult(p, r) });
        continue;
      }
      const order = [vs[0]];
      while (order.length < 4) order.push(vs.find((v) => !order.includes(v) && mult(order[order.length - 1], v) > 0)!);
      const [a, b, c, d] = order;
      parts.push({ kind: 'cycle', a: mult(a, b), b: mult(b, c), c: mult(c, d), d: mult(d, a) });
      continue;
    }
    if (inner.length === 5) {
      const pairs: [number, number][] = [[vs[0], vs[1]], [vs[0], vs[2]], [vs[0], vs[3]], [vs[1], vs[2]], [vs[1], vs[3]], [vs[2], vs[3]]];
      const [p, q] = pairs.find(([x, y]) => mult(x, y) === 0)!;
      const [r, s] = vs.filter((v) => v !== p && v !== q);
      parts.push({ kind: 'diamond', e: mult(r, s), a: mult(r, p), b: mult(p, s), c: mult(r, q), d: mult(q, s) });
      continue;
    }
    const m = [mult(vs[0], vs[1]), mult(vs[0], vs[2]), mult(vs[0], vs[3]), mult(vs[1], vs[2]), mult(vs[1], vs[3]), mult(vs[2], vs[3])];
    parts.push({ kind: 'complete', key: canonicalComplete(m).join(',') });
  }
  return { count: cl.count, loops: cl.loops, components: groups.size, parts };
}

const termCache = new Map<string, Term[]>();
function termsFor(vertices: number, legs: number): Term[] {
  const key = `${vertices}x${legs}`;
  let t = termCache.get(key);
  if (t === undefined) {
    t = classesFor(vertices, legs).map((cl) => compileTerm(vertices, cl));
    termCache.set(key, t);
  }
  return t;
}

/** E_t[numerator] = Σ_terms count · c(0)^loops · G^components · Π parts. */
function evaluateTerms(terms: Term[], s: TiltedCovariance, completes: Map<string, number>): number {
  let e = 0;
  for (const term of terms) {
    let v = term.count * s.c0 ** term.loops * s.g ** term.components;
    for (const p of term.parts) {
      switch (p.kind) {
        case 'power': v *= s.powerSum(p.m); break;
        case 'triangle': v *= s.triangle(p.a, p.b, p.c); break;
        case 'cycle': v *= s.cycle(p.a, p.b, p.c, p.d); break;
        case 'diamond': v *= s.diamond(p.e, p.a, p.b, p.c, p.d); break;
        case 'complete': v *= completes.get(p.key)!; break;
      }
      if (v === 0) break;
    }
    e += v;
  }
  return e;
}

// ---------------------------------------------------------------------------------------
// Moments of b2 and √b1 for the circulant model of G samples.

/** Standardised moments of the two frame statistics. */
export interface FrameStatisticMoments {
  /** b2: mean, variance, skewness and (non-excess) kurtosis of its distribution. */
  kurtosis: { mean: number; variance: number; skewness: number; kurtosis: number };
  /** √b1: mean 0 by symmetry; variance and kurtosis of its distribution. */
  skewness: { variance: number; kurtosis: number };
}

/** One moment: E[stat^k] = G^k/Γ(p) ∫ t^p D(t) E_t[numerator] d(ln t), numerator over `vertices` vertices of `legs` legs. */
interface MomentSpec {
  vertices: number;
  legs: number;
  p: number;
  k: number;
}

/** E[b2], E[b2²], E[b2³], E[b2⁴] (R = Σd⁴ over Q²), then E[b1], E[b1²] (T = Σd³, T² over Q³). */
const MOMENTS: MomentSpec[] = [
  { vertices: 1, legs: 4, p: 2, k: 1 },
  { vertices: 2, legs: 4, p: 4, k: 2 },
  { vertices: 3, legs: 4, p: 6, k: 3 },
  { vertices: 4, legs: 4, p: 8, k: 4 },
  { vertices: 2, legs: 3, p: 3, k: 1 },
  { vertices: 4, legs: 3, p: 6, k: 2 },
];

/** Relative size below which the tails of an integrand are dropped. */
const NEGLIGIBLE = 1e-16;

/**
 * Step of the trapezoid rule in u = ln t. The integrands are analytic in the strip
 * |Im u| < π/2 (e^{−tQ} stays bounded there) and decay at both ends, so the error falls like
 * e^{−π²/h} times the integrand's growth inside the strip (Trefethen & Weideman, SIAM Review
 * 56:385–458, 2014; from memory). The fourth moment of b2 is a small difference of raw
 * moments near 81, so it needs them to about 1e-13: with h = 0.15, n·(kurtosis − 3) of b2 for
 * 16384 independent samples agreed with h = 0.1 to 0.1 %, while h = 0.25 was 25 % off
 * (measured while developing this).
 */
const STEP = 0.15;

/**
 * Complete-graph sums vary smoothly with ln t once divided by c(0)^{edges}: they are computed
 * at this many Chebyshev nodes over the part of the range that carries all but 1e-10 of the
 * moment, interpolated between and held constant beyond.
 */
const COMPLETE_NODES = 7;
const COMPLETE_SPAN = 1e-10;

/** Lagrange interpolation through (xs, ys) at x (Chebyshev nodes keep it well conditioned). */
function lagrange(xs: number[], ys: number[], x: number): number {
  let s = 0;
  for (let i = 0; i < xs.length; i++) {
    let l = 1;
    for (let j = 0; j < xs.length; j++) if (j !== i) l *= (x - xs[j]) / (xs[i] - xs[j]);
    s += l * ys[i];
  }
  return s;
}

/** Complete-graph sums (divided by c(0)^{edges}) at nodes in u = ln t, per pattern key. */
interface CompleteTable {
  nodes: number[];
  values: Map<string, number[]>;
}

/**
 * The circulant model of G samples with eigenvalues λ (λ_0 is ignored — the frame mean is
 * removed — and the others are scaled to mean 1, so that E[Q] ≈ G; b2 and b1 do not depend
 * on the scale). Computes the raw moments E[b2], E[b2²], E[b2³], E[b2⁴], E[b1], E[b1²].
 */
class CirculantModel {
  readonly g: number;
  private readonly lambda: Float64Array;
  private readonly u0: number;
  private readonly memo = new Map<number, { logD: number; c0: number }>();
  private readonly tilted: TiltedCovariance;
  private readonly mu: Float64Array;
  /** Grid-index range of each moment's integrand (all but NEGLIGIBLE of it). */
  readonly ranges: { lo: number; hi: number }[];

  constructor(lambdaIn: Float64Array) {
    const g = lambdaIn.length;
    this.g = g;
    this.lambda = new Float64Array(g);
    let sum = 0;
    for (let j = 1; j < g; j++) sum += Math.max(0, lambdaIn[j]);
    for (let j = 1; j < g; j++) this.lambda[j] = (Math.max(0, lambdaIn[j]) * (g - 1)) / sum;
    this.u0 = Math.log(1 / g);
    this.tilted = new TiltedCovariance(g);
    this.mu = new Float64Array(g);
    this.ranges = MOMENTS.map((spec) => this.span(spec.p, NEGLIGIBLE));
  }

  /** u = ln t at grid index i (step STEP). */
  u(i: number): number {
    return this.u0 + i * STEP;
  }

  /** ln D(t) and c(0) at grid index i, memoised. */
  private base(i: number): { logD: number; c0: number } {
    let v = this.memo.get(i);
    if (v === undefined) {
      const t = Math.exp(this.u(i));
      let ld = 0;
      let s = 0;
      for (let j = 1; j < this.g; j++) {
        const x = 2 * t * this.lambda[j];
        ld += Math.log1p(x);
        s += this.lambda[j] / (1 + x);
      }
      v = { logD: -0.5 * ld, c0: s / this.g };
      this.memo.set(i, v);
    }
    return v;
  }

  /**
   * The leading term of E_t[numerator] is (const·G·c(0)^{legs/2})^{vertices}, so a moment with
   * denominator power p has a log-integrand close to p·ln(G t c(0)) + ln D(t).
   */
  private rough(i: number, p: number): number {
    const b = this.base(i);
    return p * (Math.log(this.g * b.c0) + this.u(i)) + b.logD;
  }

  /** Grid-index range where the rough integrand of power p is above `fraction` of its peak. */
  span(p: number, fraction: number): { lo: number; hi: number } {
    let peak = Math.round(Math.log(p / 2) / STEP);
    while (this.rough(peak + 1, p) > this.rough(peak, p)) peak++;
    while (this.rough(peak - 1, p) > this.rough(peak, p)) peak--;
    const floor = this.rough(peak, p) + Math.log(fraction);
    let lo = peak;
    while (this.rough(lo - 1, p) > floor) lo--;
    let hi = peak;
    while (this.rough(hi + 1, p) > floor && hi - peak < 4000) hi++;
    return { lo, hi };
  }

  private setT(u: number): void {
    const t = Math.exp(u);
    for (let j = 1; j < this.g; j++) this.mu[j] = this.lambda[j] / (1 + 2 * t * this.lambda[j]);
    this.mu[0] = 0;
    this.tilted.reset(this.mu);
  }

  /** Complete-graph sums of moment `m` at COMPLETE_NODES Chebyshev nodes over [uLo, uHi]. */
  completeTable(m: number, uLo: number, uHi: number): CompleteTable | undefined {
    const spec = MOMENTS[m];
    const keys = new Set<string>();
    for (const term of termsFor(spec.vertices, spec.legs)) for (const p of term.parts) if (p.kind === 'complete') keys.add(p.key);
    if (keys.size === 0) return undefined;
    const nodes: number[] = [];
    for (let q = 0; q < COMPLETE_NODES; q++) nodes.push(uLo + ((uHi - uLo) * (1 - Math.cos((Math.PI * (q + 0.5)) / COMPLETE_NODES))) / 2);
    const values = new Map<string, number[]>([...keys].map((k) => [k, []]));
    for (const u of nodes) {
      this.setT(u);
      for (const key of keys) {
        const mm = key.split(',').map(Number);
        values.get(key)!.push(this.tilted.complete(mm) / this.tilted.c0 ** edgeTotal(mm));
      }
    }
    return { nodes, values };
  }

  /** The u-range over which moment m's complete-graph table is needed. */
  completeRange(m: number): [number, number] {
    const r = this.span(MOMENTS[m].p, COMPLETE_SPAN);
    return [this.u(r.lo), this.u(r.hi)];
  }

  /**
   * Raw moments, integrated by the trapezoid rule in u over each moment's range; `tables`
   * gives the complete-graph tables (computed here over this model's own ranges if absent).
   */
  rawMoments(tables?: (CompleteTable | undefined)[]): number[] {
    const own = tables ?? MOMENTS.map((_, m) => this.completeTable(m, ...this.completeRange(m)));
    const raw = new Array<number>(MOMENTS.length).fill(0);
    const iLo = Math.min(...this.ranges.map((r) => r.lo));
    const iHi = Math.max(...this.ranges.map((r) => r.hi));
    const completeValues = new Map<string, number>();
    const logG = Math.log(this.g);
    for (let i = iLo; i <= iHi; i++) {
      const u = this.u(i);
      this.setT(u);
      const ld = this.base(i).logD;
      MOMENTS.forEach((spec, m) => {
        if (i < this.ranges[m].lo || i > this.ranges[m].hi) return;
        const table = own[m];
        if (table !== undefined) {
          const uc = Math.min(table.nodes[table.nodes.length - 1], Math.max(table.nodes[0], u));
          for (const [key, ys] of table.values) {
            completeValues.set(key, lagrange(table.nodes, ys, uc) * this.tilted.c0 ** edgeTotal(key.split(',').map(Number)));
          }
        }
        const e = evaluateTerms(termsFor(spec.vertices, spec.legs), this.tilted, completeValues);
        // G^k t^p D(t) E_t / Γ(p), integrated in ln t (dt = t du)
        raw[m] += Math.exp(spec.k * logG + spec.p * u + ld - Math.log(factorial(spec.p - 1))) * e * STEP;
      });
    }
    return raw;
  }
}

const edgeTotal = (m: number[]) => m.reduce((a, b) => a + b, 0);

/** Standardised moments from the raw ones (see FrameStatisticMoments). */
function standardise(raw: number[]): FrameStatisticMoments {
  const [e1, e2, e3, e4, f1, f2] = raw;
  const variance = e2 - e1 * e1;
  const mu3 = e3 - 3 * e1 * e2 + 2 * e1 ** 3;
  const mu4 = e4 - 4 * e1 * e3 + 6 * e1 * e1 * e2 - 3 * e1 ** 4;
  return {
    kurtosis: { mean: e1, variance, skewness: mu3 / variance ** 1.5, kurtosis: mu4 / (variance * variance) },
    skewness: { variance: f1, kurtosis: f2 / (f1 * f1) },
  };
}

/**
 * Eigenvalues of the G-sample circulant model: ρ̂ through the lag window of
 * autocorrelation.ts (as estimated up to the truncation lag K, then a cosine taper over ⌈K/2⌉
 * lags, so that the cut does not ring into negative spectrum values); lags wrap modulo G;
 * the few values still below zero (noise) are set to zero.
 */
function circulantSpectrum(shape: CorrelationShape, g: number): Float64Array {
  const k = shape.truncationLag;
  const taper = lagTaper(k, shape.maxLag);
  const c = new Float64Array(g);
  c[0] = 1;
  for (let lag = 1; lag <= k + taper; lag++) {
    const r = shape.rho[lag] * lagWindow(lag, k, taper);
    c[lag % g] += r;
    c[(g - (lag % g)) % g] += r;
  }
  const lambda = new Float64Array(g);
  evenTransform(c, lambda, new Float64Array(2 * g));
  for (let j = 0; j < g; j++) if (lambda[j] < 0) lambda[j] = 0;
  return lambda;
}

const nextPow2 = (n: number) => 2 ** Math.ceil(Math.log2(n));

/**
 * Mean, variance, skewness and kurtosis of b2, and variance and kurtosis of √b1, for frames
 * of `frameSamples` samples of a Gaussian process with the autocorrelation in `shape` (see
 * the file comment for the method). For white noise (shape with ρ(k) = 0 for k ≥ 1) these are
 * the exact moments for independent normal samples: E[b2] = 3(n−1)/(n+1),
 * Var(√b1) = 6(n−2)/((n+1)(n+3)), … (Pearson 1930).
 */
export function frameStatisticMoments(frameSamples: number, shape: CorrelationShape): FrameStatisticMoments {
  const n = frameSamples;
  if (!(n >= MIN_SAMPLES) || !Number.isFinite(n)) throw new RangeError(`frameSamples must be at least ${MIN_SAMPLES}, not ${n}`);
  if (!(shape.rho[0] === 1)) throw new RangeError('The autocorrelation is not defined (a constant or empty channel)');
  const high = nextPow2(n);
  const far = Math.min(MAX_CIRCLE / 2, Math.max(1024, nextPow2(4 * (shape.truncationLag + 1)), nextPow2(32 * shape.sumRho2)));
  const model = (g: number) => ({ g, lambda: circulantSpectrum(shape, g) });
  if (high === n && high <= 2 * far) {
    const only = model(high);
    return standardise(new CirculantModel(only.lambda).rawMoments());
  }
  // two circles: (G/2, G] around N, or far and 2·far when N is much longer than the correlation
  const [ga, gb] = high <= 2 * far ? [high / 2, high] : [far, 2 * far];
  const a = model(ga);
  const b = model(gb);
  const ma = new CirculantModel(a.lambda);
  const mb = new CirculantModel(b.lambda);
  // the complete-graph sums depend on t, not on G (they are sums over lags within the
  // correlation): one table over both circles' ranges, on the larger circle
  const tables = MOMENTS.map((_, m) => {
    const [aLo, aHi] = ma.completeRange(m);
    const [bLo, bHi] = mb.completeRange(m);
    return mb.completeTable(m, Math.min(aLo, bLo), Math.max(aHi, bHi));
  });
  const sa = { g: ga, m: standardise(ma.rawMoments(tables)) };
  const sb = { g: gb, m: standardise(mb.rawMoments(tables)) };
  if (high <= 2 * far) return fitInverse(n, sa, sb, undefined);
  // N much longer than the correlation: extrapolated with the known limits as N → ∞,
  //   N(E[b2] − 3) → −6Σρ²,  N·Var(b2) → 24Σρ⁴,  N·Var(√b1) → 6Σρ³,
  //   √N·skewness(b2) → 1728·Σ_{a,b}ρ(a)²ρ(b)²ρ(a−b)² / (24Σρ⁴)^{3/2},
  // from b2 − 3 = L − 2uL − 3u² + …, L and u the frame means of He4 and He2 of the
  // standardised samples (derived here; the variances are Lomnicki's, from memory; the
  // skewness limit is 6√6 for independent samples, Anscombe & Glynn's leading term).
  return fitInverse(n, sa, sb, modelPowerSums(b.lambda));
}

/** Largest circle the moments are computed on. */
const MAX_CIRCLE = 65536;

/**
 * Sums of the circulant model's correlation ρ (two-sided, ρ(0) = 1) that give the limits of
 * the standardised moments as N → ∞: s_m = Σ_k ρ(k)^m and t222 = Σ_{a,b} ρ(a)²ρ(b)²ρ(a−b)².
 */
function modelPowerSums(lambda: Float64Array): ModelSums {
  const g = lambda.length;
  const mu = Float64Array.from(lambda);
  mu[0] = 0;
  const out = new Float64Array(2 * g);
  const c = new Float64Array(g);
  evenTransform(mu, c, out);
  const c0 = c[0];
  let s2 = 0;
  let s3 = 0;
  let s4 = 0;
  const sq = new Float64Array(g);
  for (let k = 0; k < g; k++) {
    const r = c[k] / c0;
    sq[k] = r * r;
    s2 += r * r;
    s3 += r * r * r;
    s4 += r * r * r * r;
  }
  const f2 = new Float64Array(g);
  evenTransform(sq, f2, out);
  for (let j = 0; j < g; j++) f2[j] *= f2[j];
  const conv = new Float64Array(g);
  evenTransform(f2, conv, out);
  let t222 = 0;
  for (let k = 0; k < g; k++) t222 += (sq[k] * conv[k]) / g;
  return { s2, s3, s4, t222 };
}

interface ModelSums {
  s2: number;
  s3: number;
  s4: number;
  t222: number;
}

/**
 * Each standardised moment as a function of 1/N: through the two evaluations (A + B/N), or
 * also through its known limit at 1/N = 0 where there is one (A + B/N + C/N²).
 */
function fitInverse(
  n: number,
  lo: { g: number; m: FrameStatisticMoments },
  hi: { g: number; m: FrameStatisticMoments },
  limits: ModelSums | undefined,
): FrameStatisticMoments {
  const x1 = 1 / lo.g;
  const x2 = 1 / hi.g;
  const x = 1 / n;
  const fit = (y1: number, y2: number, limit: number | undefined) => {
    if (limit === undefined) return y1 + ((y2 - y1) * (x - x1)) / (x2 - x1);
    // quadratic through (0, limit), (x1, y1), (x2, y2)
    const b1 = (y1 - limit) / x1;
    const b2 = (y2 - limit) / x2;
    const c = (b1 - b2) / (x1 - x2);
    const b = b1 - c * x1;
    return limit + b * x + c * x * x;
  };
  const k1 = lo.m.kurtosis;
  const k2 = hi.m.kurtosis;
  const s1 = lo.m.skewness;
  const s2 = hi.m.skewness;
  return {
    kurtosis: {
      mean: 3 + x * fit((k1.mean - 3) * lo.g, (k2.mean - 3) * hi.g, limits && -6 * limits.s2),
      variance: x * fit(k1.variance * lo.g, k2.variance * hi.g, limits && 24 * limits.s4),
      skewness: Math.sqrt(x) * fit(k1.skewness * Math.sqrt(lo.g), k2.skewness * Math.sqrt(hi.g), limits && (1728 * limits.t222) / (24 * limits.s4) ** 1.5),
      kurtosis: 3 + x * fit((k1.kurtosis - 3) * lo.g, (k2.kurtosis - 3) * hi.g, undefined),
    },
    skewness: {
      variance: x * fit(s1.variance * lo.g, s2.variance * hi.g, limits && 6 * limits.s3),
      kurtosis: 3 + x * fit((s1.kurtosis - 3) * lo.g, (s2.kurtosis - 3) * hi.g, undefined),
    },
  };
}

/** Bands for one frame length, with the moments they rest on. */
export interface GaussianBands {
  /** Two-sided band for the population kurtosis b2 (non-excess). */
  kurtosis: [number, number];
  /** Two-sided band for the population skewness √b1. */
  skewness: [number, number];
  moments: FrameStatisticMoments;
}

/**
 * Two-sided `confidence` bands for frame kurtosis and skewness of clean Gaussian data with
 * this channel's autocorrelation, for frames of `frameSamples` samples (method 2 of the file
 * comment): the quantiles (1 ∓ confidence)/2 of Johnson S_U curves with the moments of
 * `frameStatisticMoments`. For b2 the S_U curve takes all four moments; where they fall in the
 * S_B region (bounded curves, below the lognormal line) Anscombe & Glynn's three-moment
 * transformation is used instead. For √b1 the symmetric S_U (D'Agostino's form) takes the
 * variance and kurtosis. Check `frameTooShort` and `shape.settled` before trusting them.
 */
export function gaussianBands(frameSamples: number, shape: CorrelationShape, confidence: number): GaussianBands {
  const z = checkConfidence(confidence);
  const moments = frameStatisticMoments(frameSamples, shape);
  const k = moments.kurtosis;
  const su = fitJohnsonSU(k.mean, k.variance, k.skewness, k.kurtosis);
  const kurtosis: [number, number] = su
    ? [johnsonQuantile(su, -z), johnsonQuantile(su, z)]
    : [anscombeGlynnQuantile(k.mean, k.variance, k.skewness, -z), anscombeGlynnQuantile(k.mean, k.variance, k.skewness, z)];
  const limit = symmetricJohnsonQuantile(moments.skewness.variance, moments.skewness.kurtosis, z);
  return { kurtosis, skewness: [-limit, limit], moments };
}

/**
 * True when frames of `frameSamples` samples are too short for this channel's content for the
 * bands to be trusted: the frame holds fewer than 10 decay lengths of the correlation
 * (`shape.correlationSamples`), or fewer than 30 effective samples for kurtosis (N/Σρ⁴).
 * The round numbers are common practice, no source; they match what a simulation showed
 * while this was developed (20 000 one-second frames each of single modes at 40–80 Hz,
 * ζ 1–2 %, about 5 decay lengths per frame: 0.17–0.23 % of clean frames outside the 99.9 %
 * skewness band instead of 0.1 %; at 8–16 decay lengths and 44–78 effective samples the
 * counts were within their binomial scatter). Also true when the correlation has not settled
 * within the estimated lags.
 */
export function frameTooShort(frameSamples: number, shape: CorrelationShape): boolean {
  if (!shape.settled) return true;
  if (!(frameSamples >= MIN_SAMPLES)) return true;
  return frameSamples < 10 * shape.correlationSamples || frameSamples / shape.sumRho4 < 30;
}
