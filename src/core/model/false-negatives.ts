// Which parts a part should not be pushed away from in training. Contrastive training treats every other part of a
// batch as a negative; in a library of families (a connector in twenty pin counts, a chair in ten versions) many of
// those are the part's own kind, and pushing them apart is what costs nearest-neighbour retrieval. Before any training
// the surface grid (descriptors/shape-grid.ts) already finds a part's kind first about three times in four on the
// real libraries (docs/results.md), so each part's few most alike parts by the grid are kept out of its negatives:
// false-negative elimination (Huynh, Kornblith, Walter, Maire & Azizi 2022, "Boosting Contrastive Self-Supervised
// Learning with False Negative Cancellation", §3.2), with a training-free descriptor finding the candidates instead
// of the support views of that paper.

import * as tf from '@tensorflow/tfjs';
import { SHAPE_GRID_DEFAULTS } from '../descriptors/shape-grid';
import { NeighbourTable } from '../retrieval/neighbour-table';
import { surfaceGrids } from './embed';
import { memberPoses, type Pose } from './train-config';
import type { ModelPart } from './views';

/**
 * For each of `count` unit rows (row-major, `dim` values a row), the indices of the `m` other rows with the highest
 * cosine, best first (ties: the lower index first): the search's neighbour table (retrieval/neighbour-table.ts),
 * scored in its blocks by one tfjs product a block.
 */
export function mostAlike(rows: Float32Array, count: number, dim: number, m: number): Int32Array[] {
  const k = Math.min(m, count - 1);
  if (k <= 0) return Array.from({ length: count }, () => new Int32Array(0));
  const all = tf.tensor2d(rows, [count, dim]);
  try {
    const table = NeighbourTable.build(
      count,
      (start, end, out) => {
        const s = tf.tidy(() => tf.matMul(tf.slice(all, [start, 0], [end - start, dim]), all, false, true));
        out.set(s.dataSync());
        s.dispose();
        return out;
      },
      k,
    );
    return Array.from({ length: count }, (_, i) => table.index.slice(i * k, i * k + table.length[i]));
  } finally {
    all.dispose();
  }
}

/** Each part's `m` most alike parts by the surface grid in every pose the encoders read (as retrieval sets it). */
export function alikeBeforeTraining(parts: readonly ModelPart[], pose: Pose, m: number): Int32Array[] {
  const grid = surfaceGrids(parts, memberPoses(pose), SHAPE_GRID_DEFAULTS);
  return mostAlike(grid, parts.length, grid.length / Math.max(1, parts.length), m);
}

/**
 * The (B, B) 0/1 matrix of a batch's parts (each part once, as batches draw them): 1 where either part is among the
 * other's alike parts (both directions, so the mask is symmetric), 0 on the diagonal.
 */
export function excludedPairs(batch: readonly number[], alike: readonly Int32Array[]): Float32Array {
  const B = batch.length;
  const out = new Float32Array(B * B);
  const where = new Map(batch.map((p, i) => [p, i]));
  batch.forEach((p, i) => {
    for (const q of alike[p]) {
      const j = where.get(q);
      if (j === undefined || j === i) continue;
      out[i * B + j] = 1;
      out[j * B + i] = 1;
    }
  });
  return out;
}
