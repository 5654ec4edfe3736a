// The ordering a worker builds with tfjs matrix products (`buildOrdering`) orders results as the plain index does
// (the direct JS definition, neighbour-table.test.ts), carries a kept table over to a changed library, and refuses
// a kept table the embeddings no longer match.
import { beforeAll, describe, expect, it } from 'vitest';
import { EmbeddingIndex } from '../../../src/core/retrieval/index';
import { NeighbourTable } from '../../../src/core/retrieval/neighbour-table';
import * as tf from '@tensorflow/tfjs';
import { buildOrdering } from '../../../src/core/retrieval/tensor-index';
import { transposed } from '../../../src/core/vectors';
import { createRng } from '../../../src/core/rng';
import { penalisedScorer } from '../../../src/core/retrieval/size-prior';
import { expectClose } from '../../helpers';
import { useBackend } from '../../tf-helpers';

beforeAll(async () => {
  await useBackend('wasm');
});

function vectors(n: number, dim: number, seed: number): Float32Array {
  const rng = createRng(seed);
  const centres = Array.from({ length: 8 }, () => Float32Array.from({ length: dim }, () => rng.normal()));
  return Float32Array.from(
    { length: n * dim },
    (_, x) => centres[Math.floor(x / dim) % 8][x % dim] + 0.6 * rng.normal(),
  );
}
const ones = (n: number) => new Float64Array(n).fill(1);
const named = (n: number, from = 0) => Array.from({ length: n }, (_, i) => `p${from + i}`);
const plain = (v: Float32Array, dim: number, names: readonly string[]) =>
  new EmbeddingIndex(
    v,
    dim,
    names.map((name) => ({ name, label: '', diagonal: 1 })),
  );

/** Each carried row holds the first candidates of the same row built afresh (a row cut by removals, fewer of them). */
function expectLeadingRows(carried: NeighbourTable, fresh: NeighbourTable): void {
  for (let i = 0; i < fresh.size; i++) {
    const got = carried.row(i).map((h) => h.index);
    expect(got).toEqual(
      fresh
        .row(i)
        .slice(0, got.length)
        .map((h) => h.index),
    );
  }
}

describe('ordering built by matrix products', () => {
  it('transposes its matrix as tf.transpose does (tfjs as the reference), tiles cut at both edges', () => {
    for (const [rows, cols] of [
      [1, 1],
      [3, 130],
      [129, 65],
    ]) {
      const m = Float32Array.from({ length: rows * cols }, (_, i) => i * 0.5 - 7);
      const want = tf.tidy(() => tf.transpose(tf.tensor2d(m, [rows, cols])).dataSync());
      expect(Array.from(transposed(m, rows, cols))).toEqual(Array.from(want));
    }
  });

  it('orders every query as the plain index does (the same top 10 for 40 queries)', () => {
    const dim = 32,
      n = 300,
      v = vectors(n, dim, 1),
      names = named(n);
    const built = buildOrdering(names, v, dim, null, ones(n));
    expect(built.fresh).toBe(true);
    const worker = plain(v, dim, names).useOrdering(built);
    const direct = plain(v, dim, names);
    for (let q = 0; q < 40; q++) {
      const a = worker.queryDiffused(direct.vector(q), 10, { exclude: q }).map((h) => h.index);
      const b = direct.queryDiffused(direct.vector(q), 10, { exclude: q }).map((h) => h.index);
      expect(a).toEqual(b);
    }
  });

  it('carries a kept table over to a library with parts gone and new, and rebuilds when the vectors changed', () => {
    const dim = 32,
      v = vectors(320, dim, 2);
    const first = buildOrdering(named(280), v.slice(0, 280 * dim), dim, null, ones(280));
    const kept = { names: named(280), table: first.table, sizes: first.sizes };
    // now: parts 20–319 (20 gone, 40 new)
    const now = named(300, 20);
    const carried = buildOrdering(now, v.slice(20 * dim), dim, kept, ones(300));
    expect(carried).toMatchObject({ fresh: false, added: 40, removed: 20 });
    const fresh = NeighbourTable.build(300, plain(v.slice(20 * dim), dim, now).rowScorer());
    expectLeadingRows(carried.table, fresh);
    const other = vectors(300, dim, 3); // another model's embeddings under the same names
    expect(buildOrdering(now, other, dim, kept, ones(300)).fresh).toBe(true);
  });

  it('with parts of many sizes: the same orderings as the plain index, and a part whose size changed is scored again', () => {
    const dim = 24,
      n = 260,
      v = vectors(n, dim, 4),
      names = named(n);
    const rng = createRng(5);
    const sizes = Float64Array.from({ length: n }, (_, i) => Math.exp((i % 8) - 4 + 0.3 * rng.normal()));
    const entries = names.map((name, i) => ({ name, label: '', diagonal: sizes[i] }));
    const built = buildOrdering(names, v, dim, null, sizes);
    const direct = new EmbeddingIndex(v.slice(), dim, entries);
    expectClose(built.sizes.weight, direct.sizePrior().weight, { rtol: 1e-5 }); // float32 products against JS sums
    const worker = new EmbeddingIndex(v.slice(), dim, entries).useOrdering(built);
    for (let q = 0; q < n; q += 13) {
      const a = worker.queryDiffused(direct.vector(q), 10, { exclude: q }).map((h) => h.index);
      const b = direct.queryDiffused(direct.vector(q), 10, { exclude: q }).map((h) => h.index);
      expect(a).toEqual(b);
    }
    // A folder said again in inches: its 30 parts' sizes change. They go and come back as new; the rest carry over.
    const resized = Float64Array.from(sizes, (d, i) => (i < 30 ? d * 25.4 : d));
    const kept = { names, table: built.table, sizes: built.sizes };
    const carried = buildOrdering(names, v, dim, kept, resized);
    expect(carried).toMatchObject({ fresh: false, added: 30, removed: 30 });
    expect(carried.sizes.weight).toBe(built.sizes.weight);
    const again = new EmbeddingIndex(
      v.slice(),
      dim,
      names.map((name, i) => ({ name, label: '', diagonal: resized[i] })),
    );
    const fresh = NeighbourTable.build(
      n,
      penalisedScorer(again.rowScorer(), { weight: built.sizes.weight, logSize: again.sizePrior().logSize }),
    );
    expectLeadingRows(carried.table, fresh);
  });
});
