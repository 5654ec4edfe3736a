// Hub correction for results ordered through the library: CSLS (cross-domain similarity local scaling; Conneau,
// Lample, Ranzato, Denoyer & Jégou 2018, "Word translation without parallel data", eq. 6),
//   CSLS(q, j) = 2·cos(q, j) − r(q) − r(j),   r(x) = mean similarity of x to its k nearest library parts.
// A part close to many others (a "hub") has a high r, so it stops crowding the first results of queries it is
// not especially near. The diffusion graph is then built on these scores (diffusion.ts).

import { topK } from './topk';
import { DIFFUSION_DEFAULTS, diffusedSimilarity, type DiffusionOptions } from './diffusion';

/**
 * Neighbours behind r. Measured on both real sets and the demo (docs/log/2026-12-03-two-encoders.md): 20, 30 and
 * 40 all helped the two-encoder models, 30 most evenly; a library smaller than 31 parts uses all its other parts.
 */
export const HUB_NEIGHBOURS = 30;

/** Mean of the k highest values of `similarities` that `keep` lets through (k is capped at how many there are). */
export function meanOfTop(similarities: ArrayLike<number>, k: number, keep?: (j: number) => boolean): number {
  let count = 0;
  for (let j = 0; j < similarities.length; j++) if (!Number.isNaN(similarities[j]) && (!keep || keep(j))) count++;
  if (count === 0) return 0;
  const hits = topK(similarities, Math.min(k, count), keep);
  return hits.reduce((s, h) => s + h.score, 0) / hits.length;
}

/** r(i) for every part of a library: the mean of its k highest similarities to the other parts. */
export function neighbourhoodMeans(
  n: number,
  similarity: (i: number, j: number) => number,
  k = HUB_NEIGHBOURS,
): Float64Array {
  if (!(Number.isInteger(k) && k >= 1)) throw new RangeError(`hub correction: k must be a whole number ≥ 1, got ${k}`);
  const r = new Float64Array(n);
  const row = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) row[j] = j === i ? NaN : similarity(i, j); // NaN: never counted
    r[i] = meanOfTop(row, k);
  }
  return r;
}

/** CSLS between library parts: 2·s(i, j) − r(i) − r(j). */
export function hubCorrected(
  n: number,
  similarity: (i: number, j: number) => number,
  k = HUB_NEIGHBOURS,
): (i: number, j: number) => number {
  const r = neighbourhoodMeans(n, similarity, k);
  return (i, j) => 2 * similarity(i, j) - r[i] - r[j];
}

/**
 * A similarity (i, j) → ranking key as the search orders results through the library, for leave-one-out
 * evaluation: hub-corrected, then diffused over the graph built from the corrected scores (most similar first).
 */
export function throughLibrary(
  n: number,
  similarity: (i: number, j: number) => number,
  options: DiffusionOptions = DIFFUSION_DEFAULTS,
  k = HUB_NEIGHBOURS,
): (i: number, j: number) => number {
  return diffusedSimilarity(n, hubCorrected(n, similarity, k), options);
}
