// The same index with its similarity scan done by one tfjs matMul (SIMD wasm): for 100 000 × 256 vectors
// the JS loop is memory- and scalar-bound at ~60 ms; the matMul is several times faster. Results are identical
// up to float32 rounding; top-k selection is the same partial selection.

import * as tf from '@tensorflow/tfjs';
import { dot4, normaliseRows, transposed } from '../vectors';
import { EmbeddingIndex, type IndexEntry, type IndexOptions } from './index';
import { penalisedScorer, sameLogSize, SIZE_WEIGHT, sizePenalty, type SizePrior } from './size-prior';
import { carryTable, TABLE_WIDTH, type NamedTable, type NeighbourTable, type RowScorer } from './neighbour-table';
import type { PackedLists } from './diffusion';

export class TensorIndex extends EmbeddingIndex {
  private readonly matrix: tf.Tensor2D; // (count, dim): the unit rows
  private matrixT: tf.Tensor2D | null = null; // (dim, count): the unit rows as columns, for queries, made on the first

  constructor(vectors: Float32Array, dim: number, entries: readonly IndexEntry[], options: IndexOptions = {}) {
    super(vectors, dim, entries, options);
    this.matrix = tf.tensor2d(this.vectors, [this.count, dim]);
  }

  override scores(query: ArrayLike<number>, out: Float32Array = new Float32Array(this.count)): Float32Array {
    // Queries take the transposed matrix: (1, dim) × (dim, count) ran 0.6–0.8× the time of (count, dim) × (dim, 1)
    // and about 0.3× that of (1, dim) × (count, dim)ᵀ. Transposed here, not by tf.transpose, whose input and output
    // would both sit in the WebAssembly heap, which never gives memory back.
    this.matrixT ??= tf.tensor2d(transposed(this.vectors, this.count, this.dim), [this.dim, this.count]);
    const q = normaliseRows(Float32Array.from(query), this.dim);
    const s = tf.tidy(() => tf.matMul(tf.tensor2d(q, [1, this.dim]), this.matrixT!)); // (1, dim) x (dim, count) -> (1, count)
    out.set(s.dataSync());
    s.dispose();
    return out;
  }

  /**
   * Library rows [start, end) against every part as one (count, dim) × (dim, rows) product, turned to (rows, count)
   * here. The library's matrix is the product's left operand as it is. As the right operand (the queries' form) it
   * was transposed and then packed again by the product (XNNPACK): two more copies in the WebAssembly heap, which
   * never gives memory back. At 20,000 × 1,024 this form built the ordering in 30 s against 57–71 s, with the
   * heap at 113 MB against 235 MB (Node, one run each; clustered random rows).
   */
  override rowScorer(): RowScorer {
    return (start, end, out) => {
      const rows = end - start,
        n = this.count;
      const block = transposed(this.vectors.subarray(start * this.dim, end * this.dim), rows, this.dim);
      const s = tf.tidy(() => tf.matMul(this.matrix, tf.tensor2d(block, [this.dim, rows])));
      const byPart = s.dataSync() as Float32Array; // (count, rows)
      s.dispose();
      return transposed(byPart, n, rows, out);
    };
  }

  dispose(): void {
    this.matrix.dispose();
    this.matrixT?.dispose();
  }
}

/** An ordering through the library built (or carried over from a kept table) for parts in `names` order. */
export interface BuiltOrdering {
  readonly table: NeighbourTable;
  /** The size prior the table's scores include (size-prior.ts). */
  readonly sizes: SizePrior;
  readonly graph: PackedLists;
  readonly added: number;
  readonly removed: number;
  /** Built from all pairs (no usable kept table). */
  readonly fresh: boolean;
}

/**
 * The ordering for a library's embeddings (rows in `names` order, each part's diagonal in `diagonals`): the kept
 * table carried over when it was made at this table width with these embeddings (a few of its scores are checked
 * against the vectors), its size prior's weight kept and parts whose size changed scored again; else built afresh
 * with the prior of these vectors. Then the graph's lists. Every pass over pairs is a tfjs matrix product.
 */
export function buildOrdering(
  names: readonly string[],
  vectors: Float32Array,
  dim: number,
  kept: NamedTable | null,
  diagonals: ArrayLike<number>,
  sizeWeight = SIZE_WEIGHT,
): BuiltOrdering {
  if (diagonals.length !== names.length)
    throw new RangeError(`buildOrdering: ${diagonals.length} sizes for ${names.length} parts`);
  const entries = names.map((name, i) => ({ name, label: '', diagonal: diagonals[i] }));
  const index = new TensorIndex(vectors, dim, entries, { sizeWeight });
  const made: TensorIndex[] = [];
  try {
    let carried: ReturnType<typeof carryTable> | null = null;
    if (kept && kept.table.width === TABLE_WIDTH && keptMatches(kept, names, index)) {
      const sizes: SizePrior = { weight: kept.sizes.weight, logSize: index.sizePrior().logSize };
      carried = carryTable(
        kept,
        names,
        (order) => {
          const rows = new Float32Array(order.length * dim);
          order.forEach((i, r) => rows.set(index.vector(i), r * dim));
          const sub = new TensorIndex(
            rows,
            dim,
            order.map((i) => entries[i]),
          );
          made.push(sub);
          return penalisedScorer(sub.rowScorer(), {
            weight: sizes.weight,
            logSize: Float32Array.from(order, (i) => sizes.logSize[i]),
          });
        },
        (r, i) => !sameLogSize(kept.sizes.logSize[r], sizes.logSize[i]),
      );
      index.useTable(carried.table, sizes);
    }
    const { table, graph } = index.ordering();
    return {
      table,
      sizes: index.sizePrior(),
      graph,
      added: carried?.added ?? 0,
      removed: carried?.removed ?? 0,
      fresh: !carried,
    };
  } finally {
    index.dispose();
    for (const m of made) m.dispose();
  }
}

/**
 * Whether a kept table's first candidates still score as the vectors say, its size prior included (up to 16 rows
 * of parts still present whose and whose candidate's sizes are as kept).
 */
function keptMatches(kept: NamedTable, names: readonly string[], index: EmbeddingIndex): boolean {
  const at = new Map(names.map((n, i) => [n, i]));
  const now = index.sizePrior().logSize,
    was = kept.sizes.logSize;
  let checked = 0;
  for (let r = 0; r < kept.table.size && checked < 16; r++) {
    const i = at.get(kept.names[r]);
    const first = kept.table.row(r)[0];
    const j = first ? at.get(kept.names[first.index]) : undefined;
    if (i === undefined || j === undefined) continue;
    if (!sameLogSize(was[r], now[i]) || !sameLogSize(was[first.index], now[j])) continue;
    const s =
      dot4(index.vectors, j * index.dim, index.vector(i), index.dim) -
      sizePenalty(kept.sizes.weight, was[r], was[first.index]);
    if (!(Math.abs(s - first.score) < 1e-4)) return false;
    checked++;
  }
  return true;
}
