// The size prior of the ordering through the library (size-prior.ts): its pieces against their definitions and a
// worked example, and the index's orderings against leave-one-out over the penalised similarity written out directly.
import { describe, expect, it } from 'vitest';
import { DIFFUSION_DEFAULTS, rankingKeys } from '../../../src/core/retrieval/diffusion';
import { HUB_NEIGHBOURS, meanOfTop, throughLibrary } from '../../../src/core/retrieval/hubness';
import { EmbeddingIndex } from '../../../src/core/retrieval/index';
import {
  logSizes,
  penalisedRow,
  penalisedScorer,
  similaritySpread,
  SIZE_WEIGHT,
  spreadSample,
  vectorSpread,
  withSizePrior,
} from '../../../src/core/retrieval/size-prior';
import { createRng } from '../../../src/core/rng';
import { dot4 } from '../../../src/core/vectors';
import { expectClose } from '../../helpers';

/** n unit rows in `families` clusters, each family drawn at its own size (diagonals lognormal around it). */
function library(n: number, dim: number, families: number, seed: number) {
  const rng = createRng(seed);
  const centres = Array.from({ length: families }, () => Float32Array.from({ length: dim }, () => rng.normal()));
  const vectors = new Float32Array(n * dim);
  const diagonals = new Float64Array(n);
  const labels: string[] = [];
  for (let i = 0; i < n; i++) {
    const f = i % families;
    let s = 0;
    for (let d = 0; d < dim; d++) s += (vectors[i * dim + d] = centres[f][d] + 1.1 * rng.normal()) ** 2;
    for (let d = 0; d < dim; d++) vectors[i * dim + d] /= Math.sqrt(s);
    diagonals[i] = Math.exp(f - families / 2 + 0.4 * rng.normal());
    labels.push(`f${f}`);
  }
  return { vectors, diagonals, labels };
}

describe('the pieces of the size prior', () => {
  it('σ is the population standard deviation of the pairs (worked example: pairs 0.2, 0.5, 0.8 give √0.06)', () => {
    // σ = √(Σ(x − μ)²/N) (the definition; NIST/SEMATECH e-Handbook of Statistical Methods 1.3.5.6 gives the
    // N − 1 form of it): μ = 0.5, deviations ±0.3 and 0, σ = √(0.18/3) = 0.244949.
    const s = [
      [1, 0.2, 0.5],
      [0.2, 1, 0.8],
      [0.5, 0.8, 1],
    ];
    expectClose(
      similaritySpread(3, (i, j) => s[i][j]),
      Math.sqrt(0.06),
      { atol: 1e-12 },
    );
    expect(similaritySpread(1, () => 1)).toBe(0);
  });

  it('σ of a large library comes from 256 parts spread evenly through it, and lands near all pairs’ σ', () => {
    expect(Array.from(spreadSample(200))).toEqual(Array.from({ length: 200 }, (_, i) => i));
    const s = spreadSample(1000);
    expect(s.length).toBe(256);
    expect([s[0], s[1], s[2], s[255]]).toEqual([0, 3, 7, 996]); // ⌊k·1000/256⌋
    const dim = 16,
      { vectors } = library(1200, dim, 6, 3);
    let a = 0,
      b = 0,
      m = 0;
    for (let i = 0; i < 1200; i++)
      for (let j = i + 1; j < 1200; j++) {
        const v = dot4(vectors, i * dim, vectors.subarray(j * dim, (j + 1) * dim), dim);
        a += v;
        b += v * v;
        m++;
      }
    const all = Math.sqrt(b / m - (a / m) ** 2);
    expectClose(vectorSpread(vectors, dim), all, { rtol: 0.05 });
  });

  it('ln sizes: a missing, zero, negative or infinite diagonal is unknown (NaN) and costs no pair anything', () => {
    const ls = logSizes([10, 0, -1, NaN, Infinity, 1]);
    expectClose(ls[0], Math.log(10), { atol: 1e-6 });
    expect([ls[1], ls[2], ls[3], ls[4]].every(Number.isNaN)).toBe(true);
    expect(ls[5]).toBe(0);
    const row = penalisedRow([0.9, 0.8, 0.7], { weight: 0.05, logSize: Float32Array.from([0, NaN, 2]) }, 1);
    expect(Array.from(row)).toEqual([0.9 - 0.05, 0.8, 0.7 - 0.05]);
    expect(Array.from(penalisedRow([0.9, 0.8], { weight: 0.05, logSize: new Float32Array(2) }, NaN))).toEqual([
      0.9, 0.8,
    ]);
  });

  it('a penalised row scorer gives cos(i, j) − w·|ln dᵢ − ln dⱼ| for every pair, blocks alike', () => {
    const dim = 8,
      n = 30,
      { vectors, diagonals } = library(n, dim, 3, 5);
    diagonals[4] = 0; // unknown
    const index = new EmbeddingIndex(
      vectors.slice(),
      dim,
      Array.from(diagonals, (d, i) => ({ name: `p${i}`, label: '', diagonal: d })),
    );
    const prior = index.sizePrior();
    expectClose(prior.weight, SIZE_WEIGHT * vectorSpread(index.vectors, dim), { atol: 1e-12 });
    const rows = penalisedScorer(index.rowScorer(), prior)(10, 14, new Float32Array(4 * n));
    for (let i = 10; i < 14; i++)
      for (let j = 0; j < n; j++) {
        const cos = dot4(index.vectors, j * dim, index.vector(i), dim);
        const want = j === 4 ? cos : cos - prior.weight * Math.abs(Math.log(diagonals[i]) - Math.log(diagonals[j]));
        expectClose(rows[(i - 10) * n + j], want, { atol: 1e-6 });
      }
    // In evaluation: the same weight from the same similarity, the same penalty.
    const sim = (i: number, j: number) => dot4(index.vectors, j * dim, index.vector(i), dim);
    const evaluated = withSizePrior(n, sim, diagonals);
    expectClose(evaluated(11, 2), rows[1 * n + 2], { atol: 1e-6 });
    expect(withSizePrior(n, sim, diagonals, 0)).toBe(sim);
  });
});

describe('ordering through the library with the size prior', () => {
  const dim = 12,
    n = 120, // more parts than the table keeps a row (64): candidates, bounds and rescans all take part
    lib = library(n, dim, 8, 7);
  const entries = Array.from(lib.diagonals, (d, i) => ({ name: `p${i}`, label: lib.labels[i], diagonal: d }));
  const sim = (v: Float32Array) => (i: number, j: number) => dot4(v, j * dim, v.subarray(i * dim, (i + 1) * dim), dim);

  it('each part’s results are leave-one-out over the penalised similarity (hub-corrected, diffused), written out directly', () => {
    const index = new EmbeddingIndex(lib.vectors.slice(), dim, entries);
    const loo = throughLibrary(n, withSizePrior(n, sim(index.vectors), lib.diagonals), DIFFUSION_DEFAULTS);
    let differs = 0;
    const plain = new EmbeddingIndex(lib.vectors.slice(), dim, entries, { sizeWeight: 0 });
    for (let q = 0; q < n; q += 3) {
      const got = index.queryDiffused(index.vector(q), 12, { exclude: q }).map((h) => h.index);
      const want = [...Array(n).keys()]
        .filter((j) => j !== q)
        .sort((a, b) => loo(q, b) - loo(q, a) || a - b)
        .slice(0, 12);
      expect(got).toEqual(want);
      const without = plain.queryDiffused(plain.vector(q), 12, { exclude: q }).map((h) => h.index);
      if (without.join() !== got.join()) differs++;
    }
    expect(differs).toBeGreaterThan(5); // the prior changes what comes first
  });

  it('a part from outside takes the prior with its own size, and without one none', () => {
    const index = new EmbeddingIndex(lib.vectors.slice(), dim, entries);
    const q = index.vector(5).map((x, d) => x + (d % 3 === 0 ? 0.2 : -0.1));
    const cos = index.scores(q);
    const w = index.sizePrior().weight,
      r = index.neighbourhoodMeans();
    const dq = 3.5;
    const s = Array.from(cos, (c, j) => c - w * Math.abs(Math.log(dq) - Math.log(lib.diagonals[j])));
    const rq = meanOfTop(s, HUB_NEIGHBOURS);
    const corrected = index.hubCorrected(cos, undefined, dq);
    for (let j = 0; j < n; j += 7) expectClose(corrected[j], 2 * s[j] - rq - r[j], { atol: 1e-6 }); // ln d in float32
    const none = index.hubCorrected(cos);
    expectClose(none[9], 2 * cos[9] - meanOfTop(cos, HUB_NEIGHBOURS) - r[9], { atol: 1e-9 });
    // The ranking is the joined graph's, from those corrected scores.
    const graph = index.diffusionGraph();
    const keys = rankingKeys(graph.withQuery(corrected).scoresFrom(n), corrected, n);
    const want = [...keys.keys()].sort((a, b) => keys[b] - keys[a] || a - b).slice(0, 8);
    const hits = index.queryDiffused(q, 8, { queryDiagonal: dq });
    expect(hits.map((h) => h.index)).toEqual(want);
    hits.forEach((h) => expectClose(h.score, cos[h.index], { atol: 0 })); // results still show their cosine
  });

  it('names said again keep the ordering; sizes said again leave it to be built again, with the new sizes', () => {
    const index = new EmbeddingIndex(lib.vectors.slice(), dim, entries);
    index.diffusionGraph();
    expect(index.ordered).toBe(true);
    const renamed = index.withEntries(entries.map((e) => ({ ...e, name: `${e.name}.off` })));
    expect(renamed.ordered).toBe(true);
    const inInches = entries.map((e, i) => (i % 2 ? { ...e, diagonal: e.diagonal * 25.4 } : e));
    const resized = index.withEntries(inInches);
    expect(resized.ordered).toBe(false);
    const fresh = new EmbeddingIndex(lib.vectors.slice(), dim, inInches);
    for (const q of [0, 1, 17])
      expect(resized.queryDiffused(resized.vector(q), 10, { exclude: q })).toEqual(
        fresh.queryDiffused(fresh.vector(q), 10, { exclude: q }),
      );
  });
});
