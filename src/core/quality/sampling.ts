// The augmentation study's sample of queries and the intervals it gives (no tfjs: the page reads these too).

import { createRng, hashString } from '../rng';

/**
 * None, half and full strength: the workbench and `shapekin study` report the same table by default
 * (`--strengths` asks the command line for a finer curve, at a cost that grows with the strengths).
 */
export const STUDY_STRENGTHS = [0, 0.5, 1] as const;

/**
 * The Wilson score interval for a proportion of `successes` in `n` trials (Wilson 1927, "Probable inference, the
 * law of succession, and statistical inference"): centre (p̂ + z²/2n)/(1 + z²/n), half-width
 * z·√(p̂(1 − p̂)/n + z²/4n²)/(1 + z²/n); z = 1.96 for 95 %. Unlike p̂ ± z·√(p̂(1 − p̂)/n) it stays inside [0, 1] and
 * is not empty at p̂ = 0 or 1.
 */
export function wilsonInterval(successes: number, n: number, z = 1.96): [number, number] {
  if (n <= 0) return [0, 1];
  const p = successes / n,
    z2 = z * z;
  const centre = (p + z2 / (2 * n)) / (1 + z2 / n);
  const half = (z * Math.sqrt((p * (1 - p)) / n + z2 / (4 * n * n))) / (1 + z2 / n);
  return [Math.max(0, centre - half), Math.min(1, centre + half)];
}

/**
 * Queries a study takes by default: all parts up to this many, else a seeded sample of this many. The widest 95 %
 * interval (at a rate of one half) is then ±0.056; the whole library is still what each view is looked up in.
 */
export const STUDY_QUERIES = 300;

/** A seeded sample of `count` of the indices 0 … n − 1 (all of them when count ≥ n), ascending. */
export function sampleQueries(n: number, count: number, seed: number): number[] {
  const all = Array.from({ length: n }, (_, i) => i);
  if (count >= n) return all;
  const rng = createRng(hashString('study:queries', seed));
  for (let i = 0; i < count; i++) {
    const j = i + rng.int(n - i);
    [all[i], all[j]] = [all[j], all[i]];
  }
  return all.slice(0, count).sort((a, b) => a - b);
}
