// Ranking by diffusion over the library's nearest-neighbour graph: scores spread from the query along chains of
// close parts, so a part reached through several close neighbours ranks above one that is merely near in one
// step. The iteration and its fixed point f = (1 − α)(I − αS)⁻¹y are those of Zhou, Bousquet, Lal, Weston &
// Schölkopf 2004 ("Learning with local and global consistency"); the kNN graph with affinities max(0, cos)^γ is
// the retrieval form of Iscen, Tolias, Avrithis, Furon & Chum 2017 ("Efficient diffusion on region manifolds").

import { finish, type Steps } from '../steps';
import { topK, type Hit } from './topk';

export interface DiffusionOptions {
  /** Neighbours of each part in the graph. */
  readonly k: number;
  /** Share of the walk against the restart at the query, in (0, 1). */
  readonly alpha: number;
  /** Edge weight max(0, cos)^γ: γ > 1 keeps the closest neighbours dominant. */
  readonly gamma: number;
  /** Steps of f ← αSf + (1 − α)y; the error after t steps is at most α^t of the start. */
  readonly iterations: number;
}

/**
 * k and γ measured on the furniture validation set (docs/log/), near the settings of Iscen et al. 2017 (γ = 3); α
 * on all three real libraries with the size prior (docs/log/2026-12-05-size-prior.md): 0.9 lifted first tier and
 * mAP in each of nine runs (three libraries × three seeds) over 0.8, which had been chosen on furniture alone; k
 * above 15 changed nothing (hub-corrected scores past a part's first neighbours weigh 0). At α = 0.9, 40 iterations
 * leave α^40 ≈ 1.5 % of the start; 90 (≈ 10⁻⁴) gave the same figures to four decimals on all nine, so 40 stay (a
 * query's cost is in its iterations).
 */
export const DIFFUSION_DEFAULTS: DiffusionOptions = { k: 15, alpha: 0.9, gamma: 3, iterations: 40 };

export function validateDiffusion(o: DiffusionOptions): void {
  if (!(Number.isInteger(o.k) && o.k >= 1)) throw new RangeError(`diffusion: k must be a whole number ≥ 1, got ${o.k}`);
  if (!(o.alpha > 0 && o.alpha < 1)) throw new RangeError(`diffusion: alpha must be in (0, 1), got ${o.alpha}`);
  if (!(o.gamma > 0)) throw new RangeError(`diffusion: gamma must be > 0, got ${o.gamma}`);
  if (!(Number.isInteger(o.iterations) && o.iterations >= 1))
    throw new RangeError(`diffusion: iterations must be a whole number ≥ 1, got ${o.iterations}`);
}

/**
 * The directed kNN edges of a graph: edge e goes from[e] → to[e] with weight w[e] (A_ij = max(0, s_ij)^γ).
 */
export interface DirectedEdges {
  readonly from: Int32Array;
  readonly to: Int32Array;
  readonly w: Float64Array;
}

/** Each node's k most similar other nodes, best first, as from a top-k selection. */
export type NeighbourLists = readonly (readonly { readonly index: number; readonly score: number }[])[];

/** W as compressed rows (columns ascending in each row) with 1/√degree per node. */
interface Rows {
  readonly rowStart: Int32Array;
  readonly cols: Int32Array;
  readonly weights: Float64Array;
  readonly invSqrtDegree: Float64Array;
}

/** A built graph as plain arrays (`DiffusionGraph.arrays`), for handing it from one thread to another. */
export interface GraphArrays extends Rows, DirectedEdges {
  readonly size: number;
  readonly kthSimilarity: Float64Array;
}

/**
 * The symmetric affinity W = (A + Aᵀ)/2 of a kNN graph (A_ij = max(0, s_ij)^γ for the k most similar j ≠ i),
 * stored as compressed rows, with its degrees. Diffusion walks S = D^−½ W D^−½.
 */
export class DiffusionGraph {
  private readonly rowStart: Int32Array;
  private readonly cols: Int32Array;
  private readonly weights: Float64Array;
  private readonly invSqrtDegree: Float64Array;

  private constructor(
    readonly size: number,
    /** The directed kNN edges A (i → j, weight A_ij). */
    private readonly directed: DirectedEdges,
    /** Similarity of each node's k-th neighbour: a newcomer closer than this would be among its k nearest. */
    private readonly kthSimilarity: Float64Array,
    readonly options: DiffusionOptions,
    rows?: Rows,
  ) {
    if (rows) {
      ({ rowStart: this.rowStart, cols: this.cols, weights: this.weights, invSqrtDegree: this.invSqrtDegree } = rows);
      return;
    }
    // Compressed rows by counting: each directed edge adds w/2 to W_ij and to W_ji; a row's entries sorted by
    // column and equal columns merged (an edge both ways).
    const { from, to, w } = directed;
    const E = from.length;
    const count = new Int32Array(size + 1);
    for (let e = 0; e < E; e++) {
      count[from[e] + 1]++;
      count[to[e] + 1]++;
    }
    for (let i = 0; i < size; i++) count[i + 1] += count[i];
    const fill = count.slice(0, size);
    const rawCols = new Int32Array(2 * E);
    const rawW = new Float64Array(2 * E);
    for (let e = 0; e < E; e++) {
      const half = w[e] / 2;
      let p = fill[from[e]]++;
      rawCols[p] = to[e];
      rawW[p] = half;
      p = fill[to[e]]++;
      rawCols[p] = from[e];
      rawW[p] = half;
    }
    this.rowStart = new Int32Array(size + 1);
    const cols = new Int32Array(2 * E);
    const weights = new Float64Array(2 * E);
    this.invSqrtDegree = new Float64Array(size);
    let out = 0;
    let order = new Int32Array(64);
    for (let i = 0; i < size; i++) {
      this.rowStart[i] = out;
      const m = count[i + 1] - count[i];
      if (m > order.length) order = new Int32Array(2 * m);
      // By column, then by the order the edges came in (so merged sums add in a fixed order): an insertion sort on
      // column alone, which keeps equal columns in the order they came. Rows hold about 2k entries; Array.sort with a
      // comparator made this 70 ms of the page's time at 6,225 parts.
      for (let q = 0; q < m; q++) {
        const p = count[i] + q,
          c = rawCols[p];
        let at = q;
        while (at > 0 && rawCols[order[at - 1]] > c) {
          order[at] = order[at - 1];
          at--;
        }
        order[at] = p;
      }
      let degree = 0;
      for (let q = 0; q < m; q++) {
        const p = order[q];
        if (out > this.rowStart[i] && cols[out - 1] === rawCols[p]) weights[out - 1] += rawW[p];
        else {
          cols[out] = rawCols[p];
          weights[out++] = rawW[p];
        }
      }
      for (let e = this.rowStart[i]; e < out; e++) degree += weights[e];
      this.invSqrtDegree[i] = degree > 0 ? 1 / Math.sqrt(degree) : 0;
    }
    this.rowStart[size] = out;
    this.cols = cols.slice(0, out);
    this.weights = weights.slice(0, out);
  }

  /**
   * The graph over n parts from their pairwise similarity (higher is closer; `similarity(i, j)` for i ≠ j).
   * Cost: n² similarity calls and n partial selections of k.
   */
  static build(
    n: number,
    similarity: (i: number, j: number) => number,
    options: DiffusionOptions = DIFFUSION_DEFAULTS,
  ): DiffusionGraph {
    validateDiffusion(options);
    const k = Math.min(options.k, n - 1);
    const lists: { index: number; score: number }[][] = [];
    const row = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      if (k <= 0) {
        lists.push([]);
        continue;
      }
      for (let j = 0; j < n; j++) row[j] = j === i ? NaN : similarity(i, j); // NaN: never selected
      lists.push(topK(row, k));
    }
    return DiffusionGraph.fromNeighbours(lists, options);
  }

  /**
   * The graph from each node's k most similar others, best first (`lists[i]`, as `topK` returns them; at most
   * `options.k` each, all of them when the library is smaller): what `build` selects, found another way.
   */
  static fromNeighbours(lists: NeighbourLists, options: DiffusionOptions = DIFFUSION_DEFAULTS): DiffusionGraph {
    let longest = 0;
    for (const l of lists) longest = Math.max(longest, l.length);
    return DiffusionGraph.fromPacked(packLists(lists, longest), options);
  }

  /** The graph's arrays, as `fromArrays` takes them back (shared, not copied). */
  arrays(): GraphArrays {
    const { rowStart, cols, weights, invSqrtDegree, kthSimilarity, size } = this;
    return { size, ...this.directed, kthSimilarity, rowStart, cols, weights, invSqrtDegree };
  }

  /** The graph `arrays` came from, as built: nothing is worked out again (a worker builds, the page takes it). */
  static fromArrays(a: GraphArrays, options: DiffusionOptions = DIFFUSION_DEFAULTS): DiffusionGraph {
    validateDiffusion(options);
    if (a.rowStart.length !== a.size + 1 || a.kthSimilarity.length !== a.size)
      throw new RangeError(`diffusion: arrays for ${a.size} nodes do not match their rows`);
    return new DiffusionGraph(a.size, { from: a.from, to: a.to, w: a.w }, a.kthSimilarity, options, a);
  }

  /**
   * `fromNeighbours` from the lists packed in flat arrays, as a worker hands them over and the database keeps them
   * (unpacked into objects first, 6,225 parts took 25 ms more of the page's time).
   */
  static fromPacked(packed: PackedLists, options: DiffusionOptions = DIFFUSION_DEFAULTS): DiffusionGraph {
    validateDiffusion(options);
    const { k, index, score, length } = packed;
    const n = length.length;
    let E = 0;
    for (let i = 0; i < n; i++) E += length[i];
    const from = new Int32Array(E),
      to = new Int32Array(E),
      w = new Float64Array(E);
    const kth = new Float64Array(n).fill(-Infinity);
    let e = 0;
    for (let i = 0; i < n; i++) {
      for (let c = 0; c < length[i]; c++) {
        from[e] = i;
        to[e] = index[i * k + c];
        w[e++] = affinity(score[i * k + c], options.gamma);
      }
      if (length[i]) kth[i] = score[i * k + length[i] - 1];
    }
    return new DiffusionGraph(n, { from, to, w }, kth, options);
  }

  /**
   * The graph a query from outside the library joins: node `size` links to its k most similar parts, and a part
   * links back when the query is closer than its present k-th neighbour (the part keeps its other edges).
   */
  withQuery(similarityToParts: ArrayLike<number>): DiffusionGraph {
    const n = this.size;
    if (similarityToParts.length !== n)
      throw new RangeError(`diffusion: ${similarityToParts.length} similarities for ${n} parts`);
    const { gamma, k } = this.options;
    const extra: Edge[] = [];
    for (const h of topK(similarityToParts, Math.min(k, n)))
      extra.push({ i: n, j: h.index, w: affinity(h.score, gamma) });
    for (let j = 0; j < n; j++)
      if (similarityToParts[j] > this.kthSimilarity[j])
        extra.push({ i: j, j: n, w: affinity(similarityToParts[j], gamma) });
    // W_jn = A_nj/2 + A_jn/2 for the parts the query touches, added in the order the constructor would add them.
    const joined = new Map<number, number>();
    for (const { i, j, w } of extra) {
      const part = i === n ? j : i;
      const before = joined.get(part);
      joined.set(part, before === undefined ? w / 2 : before + w / 2);
    }
    // The rows as they were, with the query's column (n, after every other) appended to the rows it touches.
    const { rowStart, cols, weights, invSqrtDegree } = this;
    const E = rowStart[n] + 2 * joined.size;
    const rs = new Int32Array(n + 2),
      cs = new Int32Array(E),
      ws = new Float64Array(E),
      inv = new Float64Array(n + 1);
    let o = 0;
    for (let i = 0; i < n; i++) {
      rs[i] = o;
      const a = rowStart[i],
        b = rowStart[i + 1];
      cs.set(cols.subarray(a, b), o);
      ws.set(weights.subarray(a, b), o);
      o += b - a;
      const w = joined.get(i);
      if (w === undefined) inv[i] = invSqrtDegree[i];
      else {
        cs[o] = n;
        ws[o++] = w;
        let degree = 0;
        for (let e = rs[i]; e < o; e++) degree += ws[e];
        inv[i] = degree > 0 ? 1 / Math.sqrt(degree) : 0;
      }
    }
    rs[n] = o;
    let degree = 0;
    for (const j of [...joined.keys()].sort((p, q) => p - q)) {
      cs[o] = j;
      ws[o] = joined.get(j)!;
      degree += ws[o++];
    }
    rs[n + 1] = o;
    inv[n] = degree > 0 ? 1 / Math.sqrt(degree) : 0;
    const D = this.directed.from.length;
    const from = new Int32Array(D + extra.length),
      to = new Int32Array(D + extra.length),
      w = new Float64Array(D + extra.length);
    from.set(this.directed.from);
    to.set(this.directed.to);
    w.set(this.directed.w);
    extra.forEach((x, m) => {
      from[D + m] = x.i;
      to[D + m] = x.j;
      w[D + m] = x.w;
    });
    const kth = new Float64Array(n + 1).fill(-Infinity);
    kth.set(this.kthSimilarity);
    return new DiffusionGraph(n + 1, { from, to, w }, kth, this.options, {
      rowStart: rs,
      cols: cs,
      weights: ws,
      invSqrtDegree: inv,
    });
  }

  /** The same graph built by the constructor from the directed edges (what `withQuery` must equal; for checks). */
  rebuilt(): DiffusionGraph {
    return new DiffusionGraph(this.size, this.directed, this.kthSimilarity, this.options);
  }

  /**
   * Diffusion scores of every node from node `source` (y = e_source): f after `iterations` steps of
   * f ← αSf + (1 − α)y, starting from y.
   */
  scoresFrom(source: number): Float64Array {
    return finish(this.scoresFromSteps(source));
  }

  /** `scoresFrom`, a step at a time: it yields after each iteration (at 20,000 parts, about a millisecond each). */
  *scoresFromSteps(source: number): Steps<Float64Array> {
    if (!(Number.isInteger(source) && source >= 0 && source < this.size))
      throw new RangeError(`diffusion: no node ${source} in a graph of ${this.size}`);
    const { alpha, iterations } = this.options;
    const { rowStart, cols, weights, invSqrtDegree: r } = this;
    let f = new Float64Array(this.size),
      next = new Float64Array(this.size);
    const g = new Float64Array(this.size); // r ⊙ f, formed once per step
    f[source] = 1;
    for (let t = 0; t < iterations; t++) {
      for (let i = 0; i < this.size; i++) g[i] = r[i] * f[i];
      for (let i = 0; i < this.size; i++) {
        let acc = 0;
        for (let e = rowStart[i]; e < rowStart[i + 1]; e++) acc += weights[e] * g[cols[e]];
        next[i] = alpha * r[i] * acc; // (αSf)_i with S_ij = W_ij / √(d_i d_j)
      }
      next[source] += 1 - alpha;
      [f, next] = [next, f];
      yield;
    }
    return f;
  }

  /** W_ij (symmetric; 0 when i and j are not linked). */
  weight(i: number, j: number): number {
    for (let e = this.rowStart[i]; e < this.rowStart[i + 1]; e++) if (this.cols[e] === j) return this.weights[e];
    return 0;
  }
}

interface Edge {
  readonly i: number;
  readonly j: number;
  readonly w: number;
}

function affinity(similarity: number, gamma: number): number {
  return Math.max(0, similarity) ** gamma;
}

/**
 * Ranking keys for the parts from diffusion scores f (parts 0 … n − 1): the part most similar to the query by
 * cosine, among those `accept` lets through, first (nearest first); then f where the diffusion reached a part;
 * below all of those, parts it never reached (another component of the graph) in cosine order. Nearest first
 * because diffusion favours parts central to a family: alone it can put a file's exact twin second, and over
 * three libraries it lowered the nearest-neighbour rate about as often as it raised it (docs/log/).
 */
export function rankingKeys(
  f: ArrayLike<number>,
  cosine: ArrayLike<number>,
  n: number,
  accept?: (j: number) => boolean,
): Float64Array {
  const keys = new Float64Array(n);
  let nearest = -1;
  for (let j = 0; j < n; j++) {
    keys[j] = f[j] > 0 ? f[j] : -2 + (1 + Math.max(-1, Math.min(1, cosine[j]))) / 4; // in [−2, −1.5]
    if ((!accept || accept(j)) && (nearest < 0 || cosine[j] > cosine[nearest])) nearest = j;
  }
  if (nearest >= 0) keys[nearest] = Infinity;
  return keys;
}

/**
 * A similarity (i, j) → ranking key for leave-one-out over a library: diffusion from part i over the graph
 * built from `similarity`, computed once per query row and kept until the next one (queries go row by row).
 * `similarity` must be cosine-like (higher is closer, affinity from its positive part).
 */
export function diffusedSimilarity(
  n: number,
  similarity: (i: number, j: number) => number,
  options: DiffusionOptions = DIFFUSION_DEFAULTS,
): (i: number, j: number) => number {
  const graph = DiffusionGraph.build(n, similarity, options);
  let row = -1;
  let keys: Float64Array = new Float64Array(0);
  const cosine = new Float64Array(n);
  return (i, j) => {
    if (i !== row) {
      for (let m = 0; m < n; m++) cosine[m] = m === i ? 1 : similarity(i, m);
      keys = rankingKeys(graph.scoresFrom(i), cosine, n, (m) => m !== i);
      row = i;
    }
    return keys[j];
  };
}

/** Neighbour lists (one per part, best first, at most `k` each) as three flat arrays, for messages and storage. */
export interface PackedLists {
  readonly k: number;
  readonly index: Int32Array;
  readonly score: Float64Array;
  readonly length: Int32Array;
}

/** Lists packed: row i's entries at [i·k, i·k + length[i]). */
export function packLists(lists: readonly (readonly Hit[])[], k: number): PackedLists {
  const n = lists.length;
  const out = { k, index: new Int32Array(n * k), score: new Float64Array(n * k), length: new Int32Array(n) };
  lists.forEach((l, i) => {
    if (l.length > k) throw new RangeError(`packLists: row ${i} has ${l.length} entries, more than ${k}`);
    out.length[i] = l.length;
    l.forEach((h, c) => {
      out.index[i * k + c] = h.index;
      out.score[i * k + c] = h.score;
    });
  });
  return out;
}
