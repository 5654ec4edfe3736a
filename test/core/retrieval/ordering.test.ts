// The ordering a worker builds with tfjs matrix products (`buildOrdering`) orders results as the plain index does
// (the direct JS definition, neighbour-table.test.ts), carries a kept table over to a changed library, and refuses
// a kept table the embeddings no longer match.
import { beforeAll, describe, expect, it } from 'vitest';
import { EmbeddingIndex } from '../../../src/core/retrieval/index';
import { NeighbourTable } from '../../../src/core/retrieval/neighbour-table';
import { buildOrdering } from '../../../src/core/retrieval/tensor-index';
import { createRng } from '../../../src/core/rng';
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
const named = (n: number, from = 0) => Array.from({ length: n }, (_, i) => `p${from + i}`);
const plain = (v: Float32Array, dim: number, names: readonly string[]) =>
  new EmbeddingIndex(
    v,
    dim,
    names.map((name) => ({ name, label: '', diagonal: 1 })),
  );

describe('ordering built by matrix products', () => {
  it('orders every query as the plain index does (the same top 10 for 40 queries)', () => {
    const dim = 32,
      n = 300,
      v = vectors(n, dim, 1),
      names = named(n);
    const built = buildOrdering(names, v, dim, null);
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
    const first = buildOrdering(named(280), v.slice(0, 280 * dim), dim, null);
    const kept = { names: named(280), table: first.table };
    // now: parts 20–319 (20 gone, 40 new)
    const now = named(300, 20);
    const carried = buildOrdering(now, v.slice(20 * dim), dim, kept);
    expect(carried).toMatchObject({ fresh: false, added: 40, removed: 20 });
    const fresh = NeighbourTable.build(300, plain(v.slice(20 * dim), dim, now).rowScorer());
    for (let i = 0; i < 300; i++) {
      const got = carried.table.row(i).map((h) => h.index);
      expect(got).toEqual(
        fresh
          .row(i)
          .slice(0, got.length)
          .map((h) => h.index),
      );
    }
    const other = vectors(300, dim, 3); // another model's embeddings under the same names
    expect(buildOrdering(now, other, dim, kept).fresh).toBe(true);
  });
});
