// Retrieval metrics, leave-one-out over a labelled set, as defined for the Princeton Shape Benchmark
// (Shilane, Min, Kazhdan & Funkhouser 2004, §3): for a query of class C, with R = |C| − 1 relevant parts,
//   nearest neighbour — the top match is in C;
//   first tier  — fraction of the R relevant parts among the top R;
//   second tier — fraction of the R relevant parts among the top 2R;
//   DCG — Σ_i G_i / log2(i) (G_1 counted fully), normalised by the ideal 1 + Σ_{j=2..R} 1/log2(j);
// plus mean average precision (mean over queries of (1/R) Σ_{k: result k relevant} precision@k) and
// precision@5. Queries whose class has no other member are skipped.

export interface RetrievalMetrics {
  readonly nn: number;
  readonly first_tier: number;
  readonly second_tier: number;
  readonly dcg: number;
  readonly map: number;
  readonly p_at_5: number;
  /** Queries that counted (classes of one are skipped). */
  readonly queries: number;
}

/** Metrics for one query from the labels of its ranked results (the query itself excluded). */
export function queryMetrics(
  rankedLabels: readonly string[],
  queryLabel: string,
): Omit<RetrievalMetrics, 'queries'> | null {
  const R = rankedLabels.filter((l) => l === queryLabel).length;
  if (R === 0) return null;
  let hitsR = 0,
    hits2R = 0,
    hits5 = 0,
    dcg = 0,
    ap = 0,
    found = 0;
  rankedLabels.forEach((label, i) => {
    const rank = i + 1;
    if (label !== queryLabel) return;
    if (rank <= R) hitsR++;
    if (rank <= 2 * R) hits2R++;
    if (rank <= 5) hits5++;
    dcg += rank === 1 ? 1 : 1 / Math.log2(rank);
    found++;
    ap += found / rank;
  });
  let ideal = 1;
  for (let j = 2; j <= R; j++) ideal += 1 / Math.log2(j);
  return {
    nn: rankedLabels[0] === queryLabel ? 1 : 0,
    first_tier: hitsR / R,
    second_tier: hits2R / R,
    dcg: dcg / ideal,
    map: ap / R,
    p_at_5: hits5 / Math.min(5, rankedLabels.length),
  };
}

/** Leave-one-out over all items, given a similarity function (higher is closer). */
export function evaluateRetrieval(
  labels: readonly string[],
  similarity: (i: number, j: number) => number,
): RetrievalMetrics {
  const n = labels.length;
  const sums = { nn: 0, first_tier: 0, second_tier: 0, dcg: 0, map: 0, p_at_5: 0 };
  let queries = 0;
  const order = new Array<number>(n - 1);
  const scores = new Float64Array(n);
  for (let q = 0; q < n; q++) {
    let k = 0;
    for (let j = 0; j < n; j++)
      if (j !== q) {
        scores[j] = similarity(q, j);
        order[k++] = j;
      }
    order.sort((a, b) => scores[b] - scores[a] || a - b);
    const m = queryMetrics(
      order.map((j) => labels[j]),
      labels[q],
    );
    if (!m) continue;
    queries++;
    for (const key of Object.keys(sums) as (keyof typeof sums)[]) sums[key] += m[key];
  }
  const mean = (v: number) => (queries ? v / queries : 0);
  return {
    nn: mean(sums.nn),
    first_tier: mean(sums.first_tier),
    second_tier: mean(sums.second_tier),
    dcg: mean(sums.dcg),
    map: mean(sums.map),
    p_at_5: mean(sums.p_at_5),
    queries,
  };
}

/** Cosine similarity between rows of a (n × dim) matrix of unit vectors. */
export function cosineSimilarity(vectors: Float32Array, dim: number): (i: number, j: number) => number {
  return (i, j) => {
    let s = 0;
    const a = i * dim,
      b = j * dim;
    for (let d = 0; d < dim; d++) s += vectors[a + d] * vectors[b + d];
    return s;
  };
}
