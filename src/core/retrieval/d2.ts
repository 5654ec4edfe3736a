// The D2 shape distribution (Osada, Funkhouser, Chazelle & Dobkin 2002, "Shape distributions"): the histogram
// of distances between random pairs of surface points, compared with the L1 distance. On unit-sphere clouds
// distances lie in [0, 2]; histograms are normalised to sum to 1.

import type { Rng } from '../rng';

export const D2_BINS = 64;
export const D2_PAIRS = 16384;

export function d2Histogram(
  points: Float32Array,
  rng: Rng,
  pairs = D2_PAIRS,
  bins = D2_BINS,
  maxDistance = 2,
): Float32Array {
  const n = points.length / 3;
  if (n < 2) throw new RangeError('d2Histogram: need at least 2 points');
  const h = new Float32Array(bins);
  for (let k = 0; k < pairs; k++) {
    const i = rng.int(n);
    let j = rng.int(n - 1);
    if (j >= i) j++;
    const dx = points[i * 3] - points[j * 3],
      dy = points[i * 3 + 1] - points[j * 3 + 1],
      dz = points[i * 3 + 2] - points[j * 3 + 2];
    const d = Math.sqrt(dx * dx + dy * dy + dz * dz);
    h[Math.min(bins - 1, Math.floor((d / maxDistance) * bins))] += 1;
  }
  for (let b = 0; b < bins; b++) h[b] /= pairs;
  return h;
}

/** L1 distance between two histograms. */
export function l1(a: ArrayLike<number>, b: ArrayLike<number>, aOffset = 0, bOffset = 0, length = a.length): number {
  let s = 0;
  for (let i = 0; i < length; i++) s += Math.abs(a[aOffset + i] - b[bOffset + i]);
  return s;
}
