// The part's size as a prior for results ordered through the library. Every descriptor sees a part scaled to the
// unit sphere, so a 3 mm and a 30 mm part of one shape look the same to it; the ordering (hub correction, the
// neighbour graph and the diffusion over it) takes each pair's similarity less a penalty on their difference in size:
//   s'(i, j) = s(i, j) − w·|ln dᵢ − ln dⱼ|,   w = λ·σ,
// d the bounding-box diagonal (mm where a part's units are known, else file units), σ the standard deviation of the
// library's pair similarities, so the penalty weighs alike whatever range an encoder's similarities span (an
// untrained encoder's spread about 0.05, a trained one's about 0.28), and λ = SIZE_WEIGHT. Plain cosine searches
// and the similarity each result shows stay without it.

import { dot4 } from '../vectors';
import type { RowScorer } from './neighbour-table';

/**
 * λ: the penalty per factor e in size, in units of the library's spread of similarities. Measured on the three
 * real libraries, seeds 0–2, learned and untrained encoders (docs/log/2026-12-05-shape-distributions-and-size.md):
 * 0.1 helped or held every library with both; 0.2 cost the furniture set 0.012 mAP; an absolute penalty (no σ)
 * cost untrained encoders up to 0.042 mAP.
 */
export const SIZE_WEIGHT = 0.1;

/**
 * Parts whose pairs estimate σ: every part up to this many, else this many spread evenly through the library's
 * order (32,640 pairs). One σ for the whole library measured as the per-part spreads did on all three libraries
 * (log above); a sample of 256 parts puts the standard deviation of pairs within a few per cent of all pairs.
 */
export const SPREAD_SAMPLE = 256;

/** What a table's scores and an index's ordering include: the weight w = λσ and each part's ln diagonal. */
export interface SizePrior {
  readonly weight: number;
  readonly logSize: Float32Array;
}

/** ln d for a usable diagonal; NaN (no penalty with any part) for a missing, zero or non-finite one. */
export function logSizes(diagonals: ArrayLike<number>): Float32Array {
  return Float32Array.from(diagonals, (d) => (d > 0 && Number.isFinite(d) ? Math.log(d) : NaN));
}

/** The penalty between two ln sizes: w·|a − b|, or 0 when either is unknown. */
export function sizePenalty(weight: number, a: number, b: number): number {
  const d = a - b;
  return d === d ? weight * Math.abs(d) : 0;
}

/** Whether two ln diagonals are the same (to float32 rounding), two unknown sizes alike. */
export function sameLogSize(x: number, y: number): boolean {
  return x !== x || y !== y ? x !== x && y !== y : Math.abs(x - y) <= 1e-6;
}

/** Whether two lists of ln diagonals are the same, part by part (`sameLogSize`). */
export function sameSizes(a: Float32Array, b: Float32Array): boolean {
  return a.length === b.length && a.every((x, i) => sameLogSize(x, b[i]));
}

/** The parts σ is estimated from: all of them up to SPREAD_SAMPLE, else that many evenly spaced in row order. */
export function spreadSample(n: number, m = SPREAD_SAMPLE): Int32Array {
  if (n <= m) return Int32Array.from({ length: n }, (_, i) => i);
  return Int32Array.from({ length: m }, (_, k) => Math.floor((k * n) / m));
}

/**
 * σ: the (population) standard deviation of similarity(i, j) over the distinct pairs of `spreadSample(n)`,
 * computed in two passes (mean, then squared deviations); 0 with fewer than two parts.
 */
export function similaritySpread(n: number, similarity: (i: number, j: number) => number): number {
  const s = spreadSample(n);
  const m = s.length;
  if (m < 2) return 0;
  const values = new Float64Array((m * (m - 1)) / 2);
  let p = 0;
  for (let a = 0; a < m; a++) for (let b = a + 1; b < m; b++) values[p++] = similarity(s[a], s[b]);
  let mean = 0;
  for (const v of values) mean += v;
  mean /= values.length;
  let sq = 0;
  for (const v of values) sq += (v - mean) * (v - mean);
  return Math.sqrt(sq / values.length);
}

/** σ of unit rows' cosines (row-major, `dim` values a row). */
export function vectorSpread(vectors: Float32Array, dim: number): number {
  return similaritySpread(vectors.length / dim, (i, j) =>
    dot4(vectors, i * dim, vectors.subarray(j * dim, (j + 1) * dim), dim),
  );
}

/** The prior for a library: w = λ·σ of its rows, and its parts' ln diagonals. */
export function sizePrior(
  vectors: Float32Array,
  dim: number,
  diagonals: ArrayLike<number>,
  lambda = SIZE_WEIGHT,
): SizePrior {
  return { weight: lambda > 0 ? lambda * vectorSpread(vectors, dim) : 0, logSize: logSizes(diagonals) };
}

/** A row scorer whose scores include the prior: each (i, j) less w·|ln dᵢ − ln dⱼ| (in place in the rows given). */
export function penalisedScorer(scoreRows: RowScorer, prior: SizePrior): RowScorer {
  const { weight, logSize } = prior;
  if (!(weight > 0)) return scoreRows;
  const n = logSize.length;
  return (start, end, out) => {
    const rows = scoreRows(start, end, out);
    for (let i = start; i < end; i++) {
      const li = logSize[i],
        o = (i - start) * n;
      if (li !== li) continue;
      for (let j = 0; j < n; j++) {
        const d = li - logSize[j];
        if (d === d) rows[o + j] -= weight * Math.abs(d);
      }
    }
    return rows;
  };
}

/** A query's similarities to every part with the prior: s'_j = s_j − w·|ln d_q − ln d_j| (a copy; NaN ln d_q: none). */
export function penalisedRow(similarity: ArrayLike<number>, prior: SizePrior, queryLogSize: number): Float64Array {
  const out = Float64Array.from(similarity);
  if (!(prior.weight > 0) || queryLogSize !== queryLogSize) return out;
  for (let j = 0; j < out.length; j++) out[j] -= sizePenalty(prior.weight, queryLogSize, prior.logSize[j]);
  return out;
}

/**
 * A similarity (i, j) with the prior, for leave-one-out evaluation over a library in the order the product keeps
 * it: σ from `similaritySpread` of the same function.
 */
export function withSizePrior(
  n: number,
  similarity: (i: number, j: number) => number,
  diagonals: ArrayLike<number>,
  lambda = SIZE_WEIGHT,
): (i: number, j: number) => number {
  if (!(lambda > 0)) return similarity;
  const weight = lambda * similaritySpread(n, similarity);
  const ls = logSizes(diagonals);
  return (i, j) => similarity(i, j) - sizePenalty(weight, ls[i], ls[j]);
}
