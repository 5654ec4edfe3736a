import { describe, expect, it } from 'vitest';
import { d2Histogram } from '../../../src/core/retrieval/d2';
import { duplicateGroups } from '../../../src/core/retrieval/duplicates';
import { EmbeddingIndex } from '../../../src/core/retrieval/index';
import { evaluateRetrieval, queryMetrics } from '../../../src/core/retrieval/metrics';
import { writeNpyFloat32 } from '../../../src/core/retrieval/npy';
import { topK } from '../../../src/core/retrieval/topk';
import { createRng } from '../../../src/core/rng';
import { chiSquare, chiSquareCritical, expectClose } from '../../helpers';

describe('retrieval metrics on hand-worked rankings (Shilane et al. 2004 definitions)', () => {
  it('one query of class A with R = 3 relevant among the results A, B, A, B, A, B', () => {
    // ranks of relevant: 1, 3, 5
    // NN = 1; first tier: relevant in top R=3 → {1,3} = 2/3; second tier: top 2R=6 → 3/3 = 1
    // DCG = 1 + 1/log2(3) + 1/log2(5) = 1 + 0.630930 + 0.430677 = 2.061606;
    //   ideal = 1 + 1/log2(2) + 1/log2(3) = 1 + 1 + 0.630930 = 2.630930 → 0.783604
    // AP = (1/1 + 2/3 + 3/5) / 3 = 2.266667 / 3 = 0.755556;  P@5 = 3/5 = 0.6
    const m = queryMetrics(['A', 'B', 'A', 'B', 'A', 'B'], 'A')!;
    expect(m.nn).toBe(1);
    expectClose(m.first_tier, 2 / 3, { atol: 1e-12 });
    expectClose(m.second_tier, 1, { atol: 1e-12 });
    expectClose(m.dcg, 0.783604, { atol: 1e-6 });
    expectClose(m.map, 0.755556, { atol: 1e-6 });
    expectClose(m.p_at_5, 0.6, { atol: 1e-12 });
  });
  it('a miss at rank 1: results B, A  → NN 0, first tier 0, second tier 1, DCG 1/log2(2)/1 = 1, AP 1/2', () => {
    const m = queryMetrics(['B', 'A'], 'A')!;
    expect(m.nn).toBe(0);
    expect(m.first_tier).toBe(0);
    expect(m.second_tier).toBe(1);
    expectClose(m.dcg, 1, { atol: 1e-12 });
    expectClose(m.map, 0.5, { atol: 1e-12 });
  });
  it('mAP equals an independent computation (area under the stepwise precision–recall curve)', () => {
    const rng = createRng(5);
    const labels = Array.from({ length: 30 }, (_, i) => 'ABC'[i % 3]);
    const v = Float32Array.from({ length: 30 * 4 }, () => rng.normal());
    const sim = (i: number, j: number) => {
      let s = 0;
      for (let d = 0; d < 4; d++) s += v[i * 4 + d] * v[j * 4 + d];
      return s;
    };
    const ours = evaluateRetrieval(labels, sim).map;
    // Independent: for each query, AP = Σ_k (recall_k − recall_{k−1}) · precision_k.
    let total = 0;
    for (let q = 0; q < 30; q++) {
      const others = labels
        .map((_, j) => j)
        .filter((j) => j !== q)
        .sort((a, b) => sim(q, b) - sim(q, a) || a - b);
      const R = others.filter((j) => labels[j] === labels[q]).length;
      let tp = 0,
        prevRecall = 0,
        ap = 0;
      others.forEach((j, k) => {
        if (labels[j] === labels[q]) tp++;
        const recall = tp / R,
          precision = tp / (k + 1);
        ap += (recall - prevRecall) * precision;
        prevRecall = recall;
      });
      total += ap;
    }
    expectClose(ours, total / 30, { atol: 1e-12 });
  });
  it('classes of one are skipped as queries', () => {
    const r = evaluateRetrieval(['A', 'A', 'B'], (i, j) => -Math.abs(i - j));
    expect(r.queries).toBe(2);
    expect(r.nn).toBe(1);
  });
});

describe('D2 shape distribution (Osada et al. 2002)', () => {
  it('on uniform points over a unit sphere follows the chord-length density f(d) = d/2 on [0, 2], mean 4/3', () => {
    const rng = createRng(1);
    const n = 4000;
    const p = new Float32Array(n * 3);
    for (let i = 0; i < n; i++) {
      const z = rng.uniform(-1, 1),
        a = rng.uniform(0, 2 * Math.PI),
        r = Math.sqrt(1 - z * z);
      p.set([r * Math.cos(a), r * Math.sin(a), z], i * 3);
    }
    const pairs = 200000,
      bins = 20;
    const h = d2Histogram(p, createRng(2), pairs, bins);
    // Expected mass of bin [a, b): ∫ d/2 dd = (b² − a²)/4.
    const expected = Array.from({ length: bins }, (_, k) => ((((k + 1) * 0.1) ** 2 - (k * 0.1) ** 2) / 4) * pairs);
    const observed = Array.from(h, (f) => f * pairs);
    expect(chiSquare(observed, expected)).toBeLessThan(chiSquareCritical(bins - 1));
    const mean = Array.from(h).reduce((s, f, k) => s + f * (k + 0.5) * 0.1, 0);
    expectClose(mean, 4 / 3, { atol: 0.01 }); // bin midpoints add ≤ 0.0025 of error
  });
});

describe('exact top-k by partial selection', () => {
  it('equals a full sort on random data, ties broken by index', () => {
    const rng = createRng(3);
    for (const n of [1, 10, 1000]) {
      const scores = Float32Array.from({ length: n }, () => Math.round(rng.uniform(0, 50)));
      for (const k of [1, 5, 10]) {
        const full = Array.from(scores, (s, i) => ({ index: i, score: s }))
          .sort((a, b) => b.score - a.score || a.index - b.index)
          .slice(0, k);
        expect(topK(scores, k)).toEqual(full);
      }
    }
    // NaN is never selected, and a row with fewer than k numbers gives what it has
    const gappy = Float64Array.from([3, NaN, 3, 7, NaN, 1, 7]);
    expect(topK(gappy, 3)).toEqual([
      { index: 3, score: 7 },
      { index: 6, score: 7 },
      { index: 0, score: 3 },
    ]);
    expect(topK(Float64Array.from([NaN, 2, NaN]), 2)).toEqual([{ index: 1, score: 2 }]);
  });
  it('index queries filter by size ratio, by folder, and leave out the query', () => {
    const entries = [
      { name: 'a', label: 'washer', diagonal: 10 },
      { name: 'b', label: 'washer', diagonal: 30 },
      { name: 'c', label: 'nut', diagonal: 11 },
      { name: 'd', label: 'washer', diagonal: 12 },
    ];
    const index = new EmbeddingIndex(Float32Array.from([1, 0, 0.9, 0.1, 0.8, 0.2, 0.7, 0.3]), 2, entries);
    expect(index.query([1, 0], 4).map((h) => h.index)).toEqual([0, 1, 2, 3]);
    expect(index.query([1, 0], 4, { exclude: 0, sizeRatio: 1.5, queryDiagonal: 10 }).map((h) => h.index)).toEqual([
      2, 3,
    ]);
    expect(index.query([1, 0], 4, { labels: ['washer'], exclude: 0 }).map((h) => h.index)).toEqual([1, 3]);
    expect(index.query([1, 0], 1)[0].score).toBeCloseTo(1, 6);
    // Sizes said again (b's folder was in inches: 30 units = 762 mm; the rest in mm): the same vectors, the filter
    // on the new sizes, the graph built again (the size prior is in it); the original index is unchanged.
    const graph = index.diffusionGraph();
    const inMm = index.withEntries(entries.map((e) => (e.name === 'b' ? { ...e, diagonal: 30 * 25.4 } : e)));
    expect(inMm.vectors).toBe(index.vectors);
    expect(inMm.diffusionGraph()).not.toBe(graph);
    expect(index.diffusionGraph()).toBe(graph);
    expect(inMm.query([1, 0], 4, { exclude: 0, sizeRatio: 50, queryDiagonal: 10 }).map((h) => h.index)).toEqual([2, 3]);
    expect(index.query([1, 0], 4, { exclude: 0, sizeRatio: 50, queryDiagonal: 10 }).map((h) => h.index)).toEqual([
      1, 2, 3,
    ]);
    expect(() => index.withEntries(entries.slice(1))).toThrow(RangeError);
  });
});

describe('NumPy .npy v1.0 (NEP 1) header, byte for byte', () => {
  it('writes magic, version, header length and a 64-byte aligned dict', () => {
    const out = writeNpyFloat32(Float32Array.from([1, 2, 3, 4, 5, 6]), 2, 3);
    expect(Array.from(out.slice(0, 8))).toEqual([0x93, 78, 85, 77, 80, 89, 1, 0]);
    const headerLen = out[8] | (out[9] << 8);
    expect((10 + headerLen) % 64).toBe(0);
    const header = new TextDecoder().decode(out.slice(10, 10 + headerLen));
    expect(header.startsWith("{'descr': '<f4', 'fortran_order': False, 'shape': (2, 3), }")).toBe(true);
    expect(header.endsWith('\n')).toBe(true);
    expect(headerLen).toBe(118); // 128 − 10
    expect(Array.from(new Float32Array(out.slice(128).buffer))).toEqual([1, 2, 3, 4, 5, 6]);
  });
});

describe('near-duplicate groups (union-find)', () => {
  it('joins chains above the threshold into one group and leaves the rest alone', () => {
    const s = [
      [1, 0.99, 0.2, 0.1],
      [0.99, 1, 0.97, 0.1],
      [0.2, 0.97, 1, 0.1],
      [0.1, 0.1, 0.1, 1],
    ];
    const groups = duplicateGroups(4, (i, j) => s[i][j], 0.95);
    expect(groups.map((g) => g.members)).toEqual([[0, 1, 2]]);
    expect(groups[0].pairs.length).toBe(2);
  });
});

import { pca2d } from '../../../src/core/retrieval/projection';

describe('2-D map by principal components', () => {
  it('recovers the two directions of largest variance of points spread along known axes', () => {
    // Points along e0 (spread 10) and e1 (spread 3) plus small noise in 4 other dims: the map's first
    // coordinate must carry the e0 spread and the second the e1 spread (up to sign).
    const rng = createRng(9);
    const n = 300,
      dim = 6;
    const v = new Float32Array(n * dim);
    const a: number[] = [],
      b: number[] = [];
    for (let i = 0; i < n; i++) {
      a.push(rng.normal() * 10);
      b.push(rng.normal() * 3);
      v[i * dim] = a[i];
      v[i * dim + 1] = b[i];
      for (let d = 2; d < dim; d++) v[i * dim + d] = rng.normal() * 0.1;
    }
    const m = pca2d(v, dim);
    const corr = (x: number[], y: number[]) => {
      const mx = x.reduce((s, t) => s + t, 0) / x.length,
        my = y.reduce((s, t) => s + t, 0) / y.length;
      let sxy = 0,
        sxx = 0,
        syy = 0;
      x.forEach((t, i) => {
        sxy += (t - mx) * (y[i] - my);
        sxx += (t - mx) ** 2;
        syy += (y[i] - my) ** 2;
      });
      return sxy / Math.sqrt(sxx * syy);
    };
    expect(
      Math.abs(
        corr(
          Array.from({ length: n }, (_, i) => m[i * 2]),
          a,
        ),
      ),
    ).toBeGreaterThan(0.999);
    expect(
      Math.abs(
        corr(
          Array.from({ length: n }, (_, i) => m[i * 2 + 1]),
          b,
        ),
      ),
    ).toBeGreaterThan(0.99);
  });
});

import { TensorIndex } from '../../../src/core/retrieval/tensor-index';
import { initBackend } from '../../../src/core/model/backend';
import { guardTensorLeaks } from '../../tf-helpers';

guardTensorLeaks();

describe('tensor-backed index', () => {
  it('returns the same top-k as the plain index (the matMul scan agrees with the JS scan)', async () => {
    await initBackend({ prefer: 'wasm' });
    const rng = createRng(12);
    const n = 500,
      dim = 32;
    const v = Float32Array.from({ length: n * dim }, () => rng.normal());
    const entries = Array.from({ length: n }, (_, i) => ({
      name: String(i),
      label: 'abc'[i % 3],
      diagonal: 1 + (i % 7),
    }));
    const plain = new EmbeddingIndex(v, dim, entries),
      fast = new TensorIndex(v, dim, entries);
    for (let t = 0; t < 5; t++) {
      const q = Float32Array.from({ length: dim }, () => rng.normal());
      const a = plain.query(q, 10, { labels: ['a', 'b'] }),
        b = fast.query(q, 10, { labels: ['a', 'b'] });
      expect(b.map((h) => h.index)).toEqual(a.map((h) => h.index));
      expectClose(
        b.map((h) => h.score),
        a.map((h) => h.score),
        { atol: 1e-5 },
      );
    }
    fast.dispose();
  });
});
