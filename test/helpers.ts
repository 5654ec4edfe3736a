// Shared test helpers: one tolerance comparison, distribution statistics, and a tensor-leak guard.

import { expect } from 'vitest';

export interface Tolerance {
  readonly atol?: number;
  readonly rtol?: number;
}

/** |a − e| ≤ atol + rtol·|e| element-wise; fails on a length mismatch or any NaN. Returns the worst excess. */
export function closeness(
  actual: ArrayLike<number> | number,
  expected: ArrayLike<number> | number,
  tol: Tolerance,
): string | null {
  const a = typeof actual === 'number' ? [actual] : Array.from(actual);
  const e = typeof expected === 'number' ? [expected] : Array.from(expected);
  if (a.length !== e.length) return `length ${a.length} differs from expected length ${e.length}`;
  const atol = tol.atol ?? 0;
  const rtol = tol.rtol ?? 0;
  if (atol < 0 || rtol < 0 || (atol === 0 && rtol === 0 && tol.atol === undefined && tol.rtol === undefined)) {
    return 'a tolerance must be given explicitly';
  }
  for (let i = 0; i < a.length; i++) {
    const limit = atol + rtol * Math.abs(e[i]);
    if (!(Math.abs(a[i] - e[i]) <= limit)) return `index ${i}: ${a[i]} vs expected ${e[i]} (limit ${limit})`;
  }
  return null;
}

export function expectClose(
  actual: ArrayLike<number> | number,
  expected: ArrayLike<number> | number,
  tol: Tolerance,
): void {
  const problem = closeness(actual, expected, tol);
  expect(problem, problem ?? '').toBeNull();
}

/** One-sample Kolmogorov–Smirnov statistic D = sup |F_n(x) − F(x)| against a continuous CDF. */
export function ksStatistic(samples: ArrayLike<number>, cdf: (x: number) => number): number {
  const s = Float64Array.from(samples as ArrayLike<number>).sort();
  const n = s.length;
  let d = 0;
  for (let i = 0; i < n; i++) {
    const f = cdf(s[i]);
    d = Math.max(d, (i + 1) / n - f, f - i / n);
  }
  return d;
}

/** KS critical value at α = 0.001 for large n: c(α)/√n with c = √(−ln(α/2)/2) ≈ 1.949 (Smirnov's asymptotic form). */
export function ksCritical(n: number, alpha = 0.001): number {
  return Math.sqrt(-Math.log(alpha / 2) / 2) / Math.sqrt(n);
}

/** Pearson's chi-square statistic Σ (O − E)² / E. */
export function chiSquare(observed: ArrayLike<number>, expected: ArrayLike<number>): number {
  let x = 0;
  for (let i = 0; i < observed.length; i++) x += (observed[i] - expected[i]) ** 2 / expected[i];
  return x;
}

/**
 * Upper critical value of chi-square with k degrees of freedom at α = 0.001, by the Wilson–Hilferty
 * approximation (Wilson & Hilferty 1931): k·(1 − 2/(9k) + z·√(2/(9k)))³ with z = 3.0902 (the 0.999 normal quantile).
 */
export function chiSquareCritical(k: number): number {
  const z = 3.0902;
  return k * (1 - 2 / (9 * k) + z * Math.sqrt(2 / (9 * k))) ** 3;
}
