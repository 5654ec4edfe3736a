import { describe, expect, it } from 'vitest';
import { Matrix, inverse } from 'ml-matrix';
import {
  DIFFUSION_DEFAULTS,
  DiffusionGraph,
  diffusedSimilarity,
  rankingKeys,
  validateDiffusion,
  type DiffusionOptions,
} from '../../../src/core/retrieval/diffusion';
import { throughLibrary } from '../../../src/core/retrieval/hubness';
import { DIFFUSION_MAX_MEAN_COSINE, diffusionCeiling, EmbeddingIndex } from '../../../src/core/retrieval/index';
import { createRng } from '../../../src/core/rng';
import { finish } from '../../../src/core/steps';
import { expectClose } from '../../helpers';

function unitVectors(n: number, dim: number, seed: number): number[][] {
  const rng = createRng(seed);
  return Array.from({ length: n }, () => {
    const v = Array.from({ length: dim }, () => rng.normal() + 0.8); // a shared offset keeps most cosines positive
    const s = Math.hypot(...v);
    return v.map((x) => x / s);
  });
}
const dot = (a: number[], b: number[]) => a.reduce((s, x, i) => s + x * b[i], 0);

/** W = (A + Aᵀ)/2 written out from the definition: A_ij = max(0, s_ij)^γ for the k most similar j ≠ i. */
function referenceW(sim: number[][], k: number, gamma: number): number[][] {
  const n = sim.length;
  const A = sim.map((row, i) => {
    const order = row
      .map((_, j) => j)
      .filter((j) => j !== i)
      .sort((a, b) => row[b] - row[a] || a - b)
      .slice(0, k);
    const out = new Array<number>(n).fill(0);
    for (const j of order) out[j] = Math.max(0, row[j]) ** gamma;
    return out;
  });
  return A.map((row, i) => row.map((a, j) => (a + A[j][i]) / 2));
}

/** The closed form of Zhou et al. 2004: f = (1 − α)(I − αS)⁻¹ y, S = D^−½ W D^−½, inverted by ml-matrix. */
function closedForm(W: number[][], alpha: number, source: number): number[] {
  const n = W.length;
  const d = W.map((row) => row.reduce((a, b) => a + b, 0));
  const S = new Matrix(W.map((row, i) => row.map((w, j) => w / Math.sqrt(d[i] * d[j]))));
  const M = Matrix.eye(n).sub(S.mul(alpha));
  return inverse(M)
    .getColumn(source)
    .map((v) => (1 - alpha) * v);
}

describe('diffusion over the kNN graph (Zhou et al. 2004; Iscen et al. 2017)', () => {
  const options: DiffusionOptions = { k: 5, alpha: 0.8, gamma: 3, iterations: 120 };
  const V = unitVectors(30, 6, 1);
  const sim = V.map((a) => V.map((b) => dot(a, b)));

  it('builds W = (A + Aᵀ)/2 with A_ij = max(0, cos)^γ over each part’s k nearest', () => {
    const graph = DiffusionGraph.build(V.length, (i, j) => sim[i][j], options);
    const W = referenceW(sim, options.k, options.gamma);
    for (let i = 0; i < V.length; i++)
      expectClose(
        W[i].map((_, j) => graph.weight(i, j)),
        W[i],
        { atol: 1e-12 },
      );
  });

  it('converges to the closed form (1 − α)(I − αS)⁻¹ e_i, inverted by ml-matrix', () => {
    const graph = DiffusionGraph.build(V.length, (i, j) => sim[i][j], options);
    const W = referenceW(sim, options.k, options.gamma);
    for (const source of [0, 7, 29])
      expectClose(graph.scoresFrom(source), closedForm(W, options.alpha, source), { atol: 1e-9 });
    // Fewer iterations stop short by at most α^t of the start (here the start is e_i with norm 1).
    const short = DiffusionGraph.build(V.length, (i, j) => sim[i][j], { ...options, iterations: 10 }).scoresFrom(7);
    const exact = closedForm(W, options.alpha, 7);
    const gap = Math.hypot(...short.map((v, i) => v - exact[i]));
    expect(gap).toBeGreaterThan(1e-6);
    expect(gap).toBeLessThanOrEqual(0.8 ** 10 * 2);
  });

  it('a query from outside joins as one more node, linked as the rule says, and diffuses as the closed form', () => {
    const graph = DiffusionGraph.build(V.length, (i, j) => sim[i][j], options);
    const [q] = unitVectors(1, 6, 2);
    const s = V.map((v) => dot(q, v));
    const joined = graph.withQuery(s);
    expect(joined.size).toBe(31);
    // joining patches the rows the query touches; it must equal the graph built from all edges, bit for bit
    expect(joined.scoresFrom(30)).toEqual(joined.rebuilt().scoresFrom(30));
    expect(joined.scoresFrom(4)).toEqual(joined.rebuilt().scoresFrom(4));
    // Reference: the library's A, plus A_qj for the query's k nearest, plus A_jq where q beats j's k-th neighbour.
    const n = V.length;
    const A: number[][] = Array.from({ length: n + 1 }, () => new Array<number>(n + 1).fill(0));
    sim.forEach((row, i) => {
      const order = row
        .map((_, j) => j)
        .filter((j) => j !== i)
        .sort((a, b) => row[b] - row[a] || a - b);
      for (const j of order.slice(0, options.k)) A[i][j] = Math.max(0, row[j]) ** 3;
      if (s[i] > row[order[options.k - 1]]) A[i][n] = Math.max(0, s[i]) ** 3;
    });
    for (const j of s
      .map((_, j) => j)
      .sort((a, b) => s[b] - s[a] || a - b)
      .slice(0, options.k))
      A[n][j] = Math.max(0, s[j]) ** 3;
    const W = A.map((row, i) => row.map((a, j) => (a + A[j][i]) / 2));
    expect(W[n].filter((w) => w > 0).length).toBeGreaterThanOrEqual(options.k);
    for (let i = 0; i <= n; i++)
      expectClose(
        W[i].map((_, j) => joined.weight(i, j)),
        W[i],
        { atol: 1e-12 },
      );
    expectClose(joined.scoresFrom(n), closedForm(W, options.alpha, n), { atol: 1e-9 });
    // Handed to another thread as arrays and taken back, the graph is the same graph: same scores, same join.
    const copied = (a: ReturnType<DiffusionGraph['arrays']>) =>
      Object.fromEntries(Object.entries(a).map(([k, v]) => [k, typeof v === 'number' ? v : v.slice()]));
    const back = DiffusionGraph.fromArrays(copied(graph.arrays()) as ReturnType<DiffusionGraph['arrays']>, options);
    expect(back.scoresFrom(4)).toEqual(graph.scoresFrom(4));
    expect(back.withQuery(s).scoresFrom(30)).toEqual(joined.scoresFrom(30));
    expect(() => DiffusionGraph.fromArrays({ ...graph.arrays(), size: 29 }, options)).toThrow(/do not match/);
  });

  it('ranks a chain of close neighbours above a part nearer in one step but in another group (worked example)', () => {
    // Unit vectors in a plane: a chain at 0°, 8°, …, 64° and a tight group at −34°, −38°, −42°. From 0°, cosine
    // puts −34° (cos 0.83) above 40° … 64° (cos 0.77 … 0.44); along the chain the diffusion reaches those first.
    const deg = [0, 8, 16, 24, 32, 40, 48, 56, 64, -34, -38, -42];
    const P = deg.map((d) => [Math.cos((d * Math.PI) / 180), Math.sin((d * Math.PI) / 180)]);
    const s = P.map((a) => P.map((b) => dot(a, b)));
    const graph = DiffusionGraph.build(P.length, (i, j) => s[i][j], { k: 2, alpha: 0.95, gamma: 3, iterations: 400 });
    const keys = rankingKeys(graph.scoresFrom(0), s[0], P.length);
    const order = [...keys.keys()].filter((j) => j !== 0).sort((a, b) => keys[b] - keys[a]);
    const byCosine = [...s[0].keys()].filter((j) => j !== 0).sort((a, b) => s[0][b] - s[0][a]);
    expect(byCosine.indexOf(9)).toBeLessThan(byCosine.indexOf(8)); // −34° before 64° by cosine
    expect(order.slice(0, 8)).toEqual([1, 2, 3, 4, 5, 6, 7, 8]); // the whole chain first, in chain order
    expect(order.slice(8)).toEqual([9, 10, 11]); // the other group, unreached, then in cosine order
  });

  it('keeps the most similar part first: a twin at −4° beside a family at 6° … 14° (worked example)', () => {
    // From 0°, the twin at −4° is nearest by cosine, but the family's many links carry the diffusion to 6° and 8°
    // first. Nearest first puts the twin on top and leaves the rest in diffusion order.
    const deg = [0, -4, 6, 8, 10, 12, 14];
    const P = deg.map((d) => [Math.cos((d * Math.PI) / 180), Math.sin((d * Math.PI) / 180)]);
    const s = P.map((a) => P.map((b) => dot(a, b)));
    const f = DiffusionGraph.build(P.length, (i, j) => s[i][j], {
      k: 3,
      alpha: 0.9,
      gamma: 3,
      iterations: 400,
    }).scoresFrom(0);
    const byDiffusion = [1, 2, 3, 4, 5, 6].sort((a, b) => f[b] - f[a]);
    expect(byDiffusion).toEqual([2, 3, 1, 4, 5, 6]); // the twin third by diffusion alone
    const keys = rankingKeys(f, s[0], P.length, (j) => j !== 0);
    expect([1, 2, 3, 4, 5, 6].sort((a, b) => keys[b] - keys[a])).toEqual([1, 2, 3, 4, 5, 6]);
    // The same in leave-one-out scoring by diffusion alone.
    const opts = { k: 3, alpha: 0.9, gamma: 3, iterations: 400 };
    const loo = diffusedSimilarity(P.length, (i, j) => s[i][j], opts);
    expect([1, 2, 3, 4, 5, 6].sort((a, b) => loo(0, b) - loo(0, a))).toEqual([1, 2, 3, 4, 5, 6]);
    // The index orders through the library, hub-corrected before diffusion: the twin still comes first, and the
    // order is the leave-one-out one from the same steps.
    const index = new EmbeddingIndex(
      Float32Array.from(P.flat()),
      2,
      P.map((_, i) => ({ name: `p${i}`, label: i === 1 ? 'twin' : 'family', diagonal: 1 })),
    );
    const through = throughLibrary(P.length, (i, j) => s[i][j], opts);
    const wanted = [1, 2, 3, 4, 5, 6].sort((a, b) => through(0, b) - through(0, a) || a - b);
    expect(wanted[0]).toBe(1);
    expect(index.queryDiffused(index.vector(0), 6, { exclude: 0 }, opts).map((h) => h.index)).toEqual(wanted);
    // A filter that leaves the twin out lifts the nearest part it keeps instead (6°).
    const kept = index.queryDiffused(index.vector(0), 5, { exclude: 0, labels: ['family'] }, opts);
    expect(kept.map((h) => h.index)).toEqual([2, ...wanted.filter((j) => j !== 1 && j !== 2)]);
  });

  it('refuses options outside their ranges, naming the option', () => {
    expect(() => validateDiffusion({ ...options, alpha: 1 })).toThrow(/alpha must be in \(0, 1\)/);
    expect(() => validateDiffusion({ ...options, k: 0 })).toThrow(/k must be a whole number/);
    expect(() => DiffusionGraph.build(3, () => 0, options).scoresFrom(3)).toThrow(/no node 3/);
    expect(() => DiffusionGraph.build(3, () => 0, options).withQuery([1, 2])).toThrow(/2 similarities for 3 parts/);
  });

  it('the index orders hits through the library (hub-corrected, diffused) and reports their cosine; leave-one-out keys come from the same graph', () => {
    const flat = Float32Array.from(V.flat());
    const index = new EmbeddingIndex(
      flat,
      6,
      V.map((_, i) => ({ name: `p${i}`, label: 'x', diagonal: 1 })),
    );
    const graph = index.diffusionGraph();
    expect(index.diffusionGraph()).toBe(graph); // built once
    const fromPart = index.queryDiffused(index.vector(4), 29, { exclude: 4 });
    const keys = rankingKeys(
      graph.scoresFrom(4),
      index.hubCorrected(index.scores(index.vector(4)), 4),
      V.length,
      (j) => j !== 4,
    );
    expect(fromPart.map((h) => h.index)).toEqual(
      [...keys.keys()].filter((j) => j !== 4).sort((a, b) => keys[b] - keys[a] || a - b),
    );
    fromPart.forEach((h) => expectClose(h.score, dot(V[4], V[h.index]), { atol: 1e-6 }));
    const loo = throughLibrary(V.length, (i, j) => sim[i][j], DIFFUSION_DEFAULTS);
    const viaLoo = [...Array(V.length).keys()].filter((j) => j !== 4).sort((a, b) => loo(4, b) - loo(4, a) || a - b);
    expect(viaLoo).toEqual(fromPart.map((h) => h.index));
    // A vector from outside the library ranks as its node in the joined graph.
    const [q] = unitVectors(1, 6, 3);
    const outside = index.queryDiffused(q, 5);
    const cos = index.scores(q),
      corrected = index.hubCorrected(cos);
    const joinedKeys = rankingKeys(
      graph.withQuery(corrected).scoresFrom(V.length),
      corrected,
      V.length,
      (j) => j < V.length,
    );
    expect(outside.map((h) => h.index)).toEqual(
      [...joinedKeys.keys()].sort((a, b) => joinedKeys[b] - joinedKeys[a] || a - b).slice(0, 5),
    );
    expect(index.ranked('cosine', q, 5)).toEqual(index.query(q, 5));
    // The cosines worked out in pieces (as the workbench spreads them over tasks) are the same bits, and a ranking
    // handed them ranks as one that works them out itself.
    const pieces = new Float32Array(V.length);
    for (let from = 0; from < V.length; from += 7) index.scores(q, pieces, from, Math.min(V.length, from + 7));
    expect(pieces).toEqual(cos);
    for (const [i, v] of [
      [-1, q],
      [4, index.vector(4)],
    ] as const) {
      const filter = i >= 0 ? { exclude: i } : {};
      const given = index.scores(v);
      expect(index.queryDiffused(v, 8, filter, DIFFUSION_DEFAULTS, given)).toEqual(index.queryDiffused(v, 8, filter));
      expect(index.ranked('diffusion', v, 8, filter, given)).toEqual(index.ranked('diffusion', v, 8, filter));
      expect(index.ranked('cosine', v, 8, filter, given)).toEqual(index.ranked('cosine', v, 8, filter));
    }
    // A step at a time (as the page spreads it over tasks): a step for each of the α-iterations at least, and two
    // rankings taken in turns, step for step, each end as it does alone.
    const fresh = () =>
      new EmbeddingIndex(
        flat,
        6,
        V.map((_, i) => ({ name: `p${i}`, label: 'x', diagonal: 1 })),
      );
    const stepped = fresh();
    const a = stepped.queryDiffusedSteps(q, 5),
      b = stepped.queryDiffusedSteps(stepped.vector(4), 29, { exclude: 4 });
    let ra = a.next(),
      rb = b.next(),
      steps = 1;
    while (!ra.done || !rb.done) {
      if (!ra.done) ra = a.next();
      if (!rb.done) rb = b.next();
      steps++;
    }
    expect(steps).toBeGreaterThan(DIFFUSION_DEFAULTS.iterations);
    expect([ra.value, rb.value]).toEqual([outside, fromPart]);
    // ranked's steps: this small library is too concentrated for diffusion (it falls back to cosine), as ranked says.
    const r = stepped.rankedSteps('diffusion', q, 5);
    let rr = r.next();
    while (!rr.done) rr = r.next();
    expect(rr.value).toEqual(fresh().ranked('diffusion', q, 5));
  });
});

describe('when diffusion applies', () => {
  it('mean pair cosine from the row sum equals the mean over all pairs, and a concentrated embedding falls back to cosine', () => {
    const rng = createRng(7);
    const spread = Array.from({ length: 20 }, () => Array.from({ length: 5 }, () => rng.normal())); // mean cosine near 0
    const concentrated = unitVectors(20, 5, 8).map((v) => v.map((x, d) => (d === 0 ? x + 20 : x)));
    for (const [set, applies] of [
      [spread, true],
      [concentrated, false],
    ] as const) {
      const index = new EmbeddingIndex(
        Float32Array.from(set.flat()),
        5,
        set.map((_, i) => ({ name: `p${i}`, label: 'x', diagonal: 1 })),
      );
      const unit = set.map((v) => {
        const s = Math.hypot(...v);
        return v.map((x) => x / s);
      });
      let sum = 0,
        pairs = 0;
      for (let i = 0; i < unit.length; i++)
        for (let j = 0; j < unit.length; j++)
          if (i !== j) {
            sum += dot(unit[i], unit[j]);
            pairs++;
          }
      // Stepwise first, on a fresh index: the same answer as the one-piece computation after it.
      expect(finish(index.diffusionAppliesSteps())).toBe(applies);
      expectClose(index.meanPairCosine(), sum / pairs, { atol: 1e-6 });
      expect(index.diffusionApplies()).toBe(applies);
      const q = index.vector(3);
      const want = applies ? index.queryDiffused(q, 5, { exclude: 3 }) : index.query(q, 5, { exclude: 3 });
      expect(index.ranked('diffusion', q, 5, { exclude: 3 })).toEqual(want);
    }
  });

  // A fused cosine is (1 − s)·encoder + s·grid, so the mean pair cosine mixes the same way; worked values:
  // s = 0 keeps 0.2; s = 0.5 gives 0.5·0.2 + 0.5·0.7 = 0.45.
  it("lets the surface grid's share through the spread test", () => {
    expect(diffusionCeiling(0)).toBe(DIFFUSION_MAX_MEAN_COSINE);
    expect(diffusionCeiling(0.5)).toBeCloseTo(0.45, 12);
    // Four unit rows with mean pair cosine 0.4: too concentrated alone, spread enough when half of it is the grid.
    const c = 0.4,
      a = Math.sqrt(c),
      b = Math.sqrt(1 - c);
    const rows = [
      [a, b, 0, 0, 0],
      [a, 0, b, 0, 0],
      [a, 0, 0, b, 0],
      [a, 0, 0, 0, b],
    ];
    const entries = rows.map((_, i) => ({ name: `p${i}`, label: 'x', diagonal: 1 }));
    const plain = new EmbeddingIndex(Float32Array.from(rows.flat()), 5, entries);
    const fused = new EmbeddingIndex(Float32Array.from(rows.flat()), 5, entries, { gridShare: 0.5 });
    expectClose(plain.meanPairCosine(), 0.4, { atol: 1e-6 });
    expect(plain.diffusionApplies()).toBe(false);
    expect(fused.diffusionApplies()).toBe(true);
    expect(fused.withEntries(entries).diffusionApplies()).toBe(true);
  });
});
