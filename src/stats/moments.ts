/**
 * Central moment sums of a set of samples, kept so that two sets merge exactly.
 *
 * For n samples with mean x̄: M_k = Σ (x − x̄)^k, k = 2..4. Each block is computed two-pass
 * (mean first, then central sums), which avoids the cancellation of the naive Σx² formula
 * (it gives s = 0 on NIST StRD NumAcc4), and blocks are combined with the pairwise update
 * formulas of Chan, Golub & LeVeque (STAN-CS-79-773, 1979) extended to the third and fourth
 * moments by Pébay (SAND2008-6212, 2008, eq. 2.1–2.3).
 */
export interface Moments {
  /** Number of (finite) samples. */
  n: number;
  mean: number;
  m2: number;
  m3: number;
  m4: number;
}

export const emptyMoments = (): Moments => ({ n: 0, mean: 0, m2: 0, m3: 0, m4: 0 });

/**
 * Moments of the finite samples `x[from..to)`, two-pass. Non-finite samples (NaN, ±Inf) are
 * skipped: they are counted elsewhere and must not poison the moments.
 */
export function momentsOf(x: ArrayLike<number>, from = 0, to = x.length): Moments {
  let n = 0;
  let sum = 0;
  for (let i = from; i < to; i++) {
    const v = x[i];
    if (v - v === 0) {
      sum += v;
      n++;
    }
  }
  if (n === 0) return emptyMoments();
  let mean = sum / n;
  // One correction step: the rounding error of sum/n is removed by the mean of residuals
  // (the "corrected two-pass" algorithm of Chan, Golub & LeVeque).
  let r = 0;
  for (let i = from; i < to; i++) {
    const v = x[i];
    if (v - v === 0) r += v - mean;
  }
  mean += r / n;
  let m2 = 0;
  let m3 = 0;
  let m4 = 0;
  for (let i = from; i < to; i++) {
    const v = x[i];
    if (v - v === 0) {
      const d = v - mean;
      const d2 = d * d;
      m2 += d2;
      m3 += d2 * d;
      m4 += d2 * d2;
    }
  }
  return { n, mean, m2, m3, m4 };
}

/**
 * Moments of the union of two disjoint sets (Pébay 2008, with δ = mean_B − mean_A):
 *   M2 = M2a + M2b + δ²·na·nb/n
 *   M3 = M3a + M3b + δ³·na·nb·(na − nb)/n² + 3δ·(na·M2b − nb·M2a)/n
 *   M4 = M4a + M4b + δ⁴·na·nb·(na² − na·nb + nb²)/n³ + 6δ²·(na²·M2b + nb²·M2a)/n² + 4δ·(na·M3b − nb·M3a)/n
 * Writes into `into` (which may be `a`) and returns it.
 */
export function mergeMoments(a: Moments, b: Moments, into: Moments = emptyMoments()): Moments {
  const na = a.n;
  const nb = b.n;
  if (nb === 0) {
    into.n = na; into.mean = a.mean; into.m2 = a.m2; into.m3 = a.m3; into.m4 = a.m4;
    return into;
  }
  if (na === 0) {
    into.n = nb; into.mean = b.mean; into.m2 = b.m2; into.m3 = b.m3; into.m4 = b.m4;
    return into;
  }
  const n = na + nb;
  const delta = b.mean - a.mean;
  const dn = delta / n;
  const dn2 = dn * dn;
  const nanb = na * nb;
  const m2 = a.m2 + b.m2 + delta * dn * nanb;
  const m3 = a.m3 + b.m3 + delta * dn2 * nanb * (na - nb) + 3 * dn * (na * b.m2 - nb * a.m2);
  const m4 =
    a.m4 + b.m4 +
    delta * dn2 * dn * nanb * (na * na - nanb + nb * nb) +
    6 * dn2 * (na * na * b.m2 + nb * nb * a.m2) +
    4 * dn * (na * b.m3 - nb * a.m3);
  // mean_A + δ·nb/n, written so that equal means stay exactly equal
  into.mean = a.mean + dn * nb;
  into.n = n;
  into.m2 = m2;
  into.m3 = m3;
  into.m4 = m4;
  return into;
}
