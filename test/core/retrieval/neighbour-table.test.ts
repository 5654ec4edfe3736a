// The neighbour table gives ordering through the library without a second pass over all pairs. Its reference is
// the direct definition: r(i) the mean of the k highest cosines (CSLS, Conneau et al. 2018, eq. 6) and each node's
// k best hub-corrected scores as the graph's edges (Iscen et al. 2017's kNN graph), computed here over every pair
// with the plain functions `neighbourhoodMeans` and `DiffusionGraph.build`.
import { describe, expect, it } from 'vitest';
import { carryTable, NeighbourTable } from '../../../src/core/retrieval/neighbour-table';
import { EmbeddingIndex } from '../../../src/core/retrieval/index';
import { dot4 } from '../../../src/core/vectors';
import { DIFFUSION_DEFAULTS, DiffusionGraph } from '../../../src/core/retrieval/diffusion';
import { HUB_NEIGHBOURS, neighbourhoodMeans } from '../../../src/core/retrieval/hubness';
import { createRng } from '../../../src/core/rng';
import { normaliseRows } from '../../../src/core/vectors';

/** Unit vectors in `families` clusters of unequal spread, so hubs and anti-hubs both occur. */
function clustered(n: number, dim: number, families: number, seed: number): Float32Array {
  const rng = createRng(seed);
  const centres = Array.from({ length: families }, () => Float32Array.from({ length: dim }, () => rng.normal()));
  const v = new Float32Array(n * dim);
  for (let i = 0; i < n; i++) {
    const c = centres[i % families],
      spread = 0.3 + (i % 7) * 0.25;
    for (let d = 0; d < dim; d++) v[i * dim + d] = c[d] + spread * rng.normal();
  }
  return normaliseRows(v, dim);
}

function index(v: Float32Array, dim: number): EmbeddingIndex {
  const n = v.length / dim;
  return new EmbeddingIndex(
    v,
    dim,
    Array.from({ length: n }, (_, i) => ({ name: `p${i}`, label: '', diagonal: 1 })),
  );
}

/** The direct definition over every pair: cosines as the index scores them, r, then the graph. */
function direct(ix: EmbeddingIndex) {
  const n = ix.count;
  const cos = (i: number, j: number) => Math.fround(dot4(ix.vectors, j * ix.dim, ix.vector(i), ix.dim));
  const r = neighbourhoodMeans(n, cos, HUB_NEIGHBOURS);
  const graph = DiffusionGraph.build(n, (i, j) => 2 * cos(i, j) - r[i] - r[j], DIFFUSION_DEFAULTS);
  return { r, graph };
}

function sameGraph(a: DiffusionGraph, b: DiffusionGraph, n: number): void {
  for (const source of [0, 1, Math.floor(n / 2), n - 1]) {
    const fa = a.scoresFrom(source),
      fb = b.scoresFrom(source);
    for (let j = 0; j < n; j++) expect(fa[j]).toBeCloseTo(fb[j], 12);
  }
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j += 7) expect(a.weight(i, j)).toBeCloseTo(b.weight(i, j), 12);
}

describe('neighbour table (one pass over all pairs, then n·width)', () => {
  it('gives the r(i) and the graph of the direct definition, on clusters where the bound settles most rows and a narrow table where it cannot', () => {
    const dim = 24,
      v = clustered(300, dim, 9, 3);
    const ix = index(v, dim);
    const { r, graph } = direct(ix);
    for (const width of [64, 31]) {
      const table = NeighbourTable.build(ix.count, ix.rowScorer(), width);
      const rt = table.neighbourhoodMeans();
      for (let i = 0; i < ix.count; i++) expect(rt[i]).toBe(r[i]); // same cosines, added in the same order
      const built = table.diffusionGraph(ix.rowScorer(), DIFFUSION_DEFAULTS, rt);
      sameGraph(built.graph, graph, ix.count);
      if (width === 64) expect(built.rescanned).toBeLessThan(ix.count / 2);
      else expect(built.rescanned).toBeGreaterThan(0); // the fallback is exercised
    }
    // the index orders through the library from its table: same results as the graph built the direct way
    const hits = ix.queryDiffused(ix.vector(5), 10, { exclude: 5 });
    const f = graph.scoresFrom(5);
    const best = hits.slice(1).map((h) => f[h.index]); // after the nearest part, diffusion order
    for (let m = 1; m < best.length; m++) expect(best[m]).toBeLessThanOrEqual(best[m - 1]);
  });

  it('bounds every part outside a row: 2·cos(i, j) − r(j) never exceeds the row’s bound, checked over every pair', () => {
    for (const [n, dim, families, width] of [
      [300, 24, 9, 64],
      [240, 16, 4, 20],
      [200, 8, 40, 12],
    ]) {
      const v = clustered(n, dim, families, 11);
      const ix = index(v, dim);
      const table = NeighbourTable.build(ix.count, ix.rowScorer(), width);
      const r = table.neighbourhoodMeans(Math.min(HUB_NEIGHBOURS, width));
      const bound = table.outsideBounds(r);
      const cos = (i: number, j: number) => Math.fround(dot4(ix.vectors, j * ix.dim, ix.vector(i), ix.dim));
      let tightest = -Infinity;
      for (let i = 0; i < n; i++) {
        const inside = new Set(table.row(i).map((h) => h.index));
        for (let j = 0; j < n; j++) {
          if (j === i || inside.has(j)) continue;
          const key = 2 * cos(i, j) - r[j];
          expect(key).toBeLessThanOrEqual(bound[i] + 1e-6);
          tightest = Math.max(tightest, key - bound[i]);
        }
      }
      // Not vacuous: some outside part comes within 0.1 of its row's bound.
      expect(tightest).toBeGreaterThan(-0.1);
    }
  });

  it('rows are each part’s best cosines, best first, itself never among them (checked against a sort of every pair)', () => {
    const dim = 8,
      v = clustered(60, dim, 4, 11);
    const ix = index(v, dim);
    const table = NeighbourTable.build(ix.count, ix.rowScorer(), 10);
    for (let i = 0; i < ix.count; i++) {
      const all = Array.from({ length: ix.count }, (_, j) => ({
        index: j,
        score: Math.fround(dot4(ix.vectors, j * dim, ix.vector(i), dim)),
      }))
        .filter((h) => h.index !== i)
        .sort((a, b) => b.score - a.score || a.index - b.index)
        .slice(0, 10);
      expect(table.row(i)).toEqual(all);
    }
  });

  it('a library scored in several blocks (2,300 parts: 5.3 million pairs) gives the r(i) of the direct definition', () => {
    const dim = 8,
      v = clustered(2300, dim, 23, 13);
    const ix = index(v, dim);
    const scorer = ix.rowScorer();
    const blocks: number[] = [];
    const table = NeighbourTable.build(ix.count, (start, end, out) => {
      blocks.push(end - start);
      return scorer(start, end, out);
    });
    expect(blocks.length).toBeGreaterThan(1); // the pass over all pairs went in pieces
    expect(blocks.reduce((a, b) => a + b, 0)).toBe(ix.count);
    const rt = table.neighbourhoodMeans();
    const { r } = direct(ix);
    for (let i = 0; i < ix.count; i++) expect(rt[i]).toBe(r[i]);
  });

  it('adding parts updates the table to what a fresh build gives, scoring only the new rows', () => {
    const dim = 16,
      v = clustered(240, dim, 6, 5);
    const small = index(v.slice(0, 200 * dim), dim),
      whole = index(v, dim);
    let scored = 0;
    const counting = (start: number, end: number, out: Float32Array) => {
      scored += end - start;
      return whole.rowScorer()(start, end, out);
    };
    const grown = NeighbourTable.build(200, small.rowScorer(), 40).withAdded(40, counting);
    expect(scored).toBe(40);
    const fresh = NeighbourTable.build(240, whole.rowScorer(), 40);
    for (let i = 0; i < 240; i++) expect(grown.row(i)).toEqual(fresh.row(i));
  });

  it('removing parts renumbers the rest, keeps each row its best among the parts left, and rescans only rows cut short', () => {
    const dim = 16,
      v = clustered(200, dim, 5, 8);
    const whole = index(v, dim);
    const gone = new Set(Array.from({ length: 40 }, (_, m) => m * 5)); // every fifth part
    const keptRows: number[] = [];
    for (let i = 0; i < 200; i++) if (!gone.has(i)) keptRows.push(...v.subarray(i * dim, (i + 1) * dim));
    const rest = index(Float32Array.from(keptRows), dim);
    let scored = 0;
    const shrunk = NeighbourTable.build(200, whole.rowScorer(), 48).withRemoved(gone, (s, e, out) => {
      scored += e - s;
      return rest.rowScorer()(s, e, out);
    });
    const fresh = NeighbourTable.build(160, rest.rowScorer(), 48);
    expect(scored).toBeLessThan(160);
    for (let i = 0; i < 160; i++) {
      const a = shrunk.row(i),
        b = fresh.row(i);
      expect(a.length).toBeGreaterThanOrEqual(HUB_NEIGHBOURS);
      expect(a).toEqual(b.slice(0, a.length)); // a prefix of the fresh row
    }
    // and the ordering built from it is the fresh one's
    const r1 = shrunk.neighbourhoodMeans(),
      r2 = fresh.neighbourhoodMeans();
    for (let i = 0; i < 160; i++) expect(r1[i]).toBe(r2[i]);
    sameGraph(shrunk.diffusionGraph(rest.rowScorer()).graph, fresh.diffusionGraph(rest.rowScorer()).graph, 160);
  });

  it('a stored table comes back only if its arrays fit, and an index refuses a table of another size', () => {
    const dim = 8,
      ix = index(clustered(50, dim, 3, 2), dim);
    const t = NeighbourTable.build(50, ix.rowScorer(), 32);
    const back = NeighbourTable.fromArrays(50, 32, t.index.slice(), t.score.slice(), t.length.slice());
    expect(back.row(7)).toEqual(t.row(7));
    expect(() => NeighbourTable.fromArrays(50, 31, t.index, t.score, t.length)).toThrow(/do not fit/);
    const bad = t.index.slice();
    bad[3 * 32] = 3;
    expect(() => NeighbourTable.fromArrays(50, 32, bad, t.score, t.length)).toThrow(/row 3 names part 3/);
    expect(() => index(clustered(49, dim, 3, 2), dim).useTable(t, ix.sizePrior())).toThrow(
      /table of 50 parts for an index of 49/,
    );
    const other = index(ix.vectors.slice(), dim).useTable(back, ix.sizePrior());
    expect(other.queryDiffused(ix.vector(3), 5, { exclude: 3 })).toEqual(
      ix.queryDiffused(ix.vector(3), 5, { exclude: 3 }),
    );
  });

  it('a library smaller than the table: rows hold every other part; one part has none', () => {
    const dim = 4,
      ix = index(clustered(5, dim, 2, 1), dim);
    const t = NeighbourTable.build(5, ix.rowScorer());
    expect(t.row(0)).toHaveLength(4);
    expect(t.diffusionGraph(ix.rowScorer()).rescanned).toBe(0);
    const one = index(clustered(1, dim, 1, 1), dim);
    expect(NeighbourTable.build(1, one.rowScorer()).row(0)).toEqual([]);
  });

  it('a kept table follows the library: parts gone, parts new and a new order give a fresh build’s rows (a prefix where a row lost parts)', () => {
    const dim = 16,
      v = clustered(260, dim, 6, 21);
    const name = (i: number) => `part-${i}`;
    // kept: parts 0–219; now: 30 of them gone, 40 new (220–259), all in a shuffled order
    const before = Array.from({ length: 220 }, (_, i) => i);
    const rng = createRng(4);
    const now = [...before.filter((i) => i % 7 !== 3), ...Array.from({ length: 40 }, (_, m) => 220 + m)];
    for (let i = now.length - 1; i > 0; i--) {
      const j = rng.int(i + 1);
      [now[i], now[j]] = [now[j], now[i]];
    }
    const rows = (ids: readonly number[]) => {
      const out = new Float32Array(ids.length * dim);
      ids.forEach((id, r) => out.set(v.subarray(id * dim, (id + 1) * dim), r * dim));
      return index(out, dim);
    };
    const kept = { names: before.map(name), table: NeighbourTable.build(220, rows(before).rowScorer(), 48) };
    let scored = 0;
    const carried = carryTable(kept, now.map(name), (order) => {
      const ix = rows(order.map((i) => now[i]));
      return (s, e, out) => {
        scored += e - s;
        return ix.rowScorer()(s, e, out);
      };
    });
    expect(carried).toMatchObject({ added: 40, removed: 220 - before.filter((i) => i % 7 !== 3).length });
    expect(scored).toBeLessThan(now.length); // the new rows and a few cut short: never the whole library
    const fresh = NeighbourTable.build(now.length, rows(now).rowScorer(), 48);
    for (let i = 0; i < now.length; i++) {
      const a = carried.table.row(i);
      expect(a.length).toBeGreaterThanOrEqual(HUB_NEIGHBOURS);
      expect(a).toEqual(fresh.row(i).slice(0, a.length));
    }
    expect(() => kept.table.renumbered(new Int32Array(220))).toThrow(/not a permutation/);
  });
});
