// The embedding index: unit-length vectors in one contiguous Float32Array, exact cosine top-k, filters on real
// size and on folder, and results ordered through the library (hub-corrected scores diffused over its graph).

import { finish, type Steps } from '../steps';
import { dot4, normaliseRows, unitRows } from '../vectors';
import { topK, type Hit } from './topk';
import {
  DIFFUSION_DEFAULTS,
  DiffusionGraph,
  packLists,
  rankingKeys,
  type DiffusionOptions,
  type GraphArrays,
  type PackedLists,
} from './diffusion';
import { HUB_NEIGHBOURS, meanOfTop } from './hubness';
import { NeighbourTable, TABLE_WIDTH, type RowScorer } from './neighbour-table';
import {
  logSizes,
  penalisedRow,
  penalisedScorer,
  sameSizes,
  SIZE_WEIGHT,
  sizePrior,
  type SizePrior,
} from './size-prior';

/**
 * How results are ordered: by cosine similarity to the query, or through the library: hub-corrected (CSLS,
 * hubness.ts) and diffused over the library's neighbour graph.
 */
export type Ranking = 'cosine' | 'diffusion';

export interface IndexEntry {
  readonly name: string;
  readonly label: string;
  /** Bounding-box diagonal (the "real size"): in mm where the part's units are known, else in file units. */
  readonly diagonal: number;
}

export interface QueryFilter {
  /** Keep parts whose diagonal is within [d/r, d·r] of the query's diagonal d (r ≥ 1). */
  readonly sizeRatio?: number;
  /** The query's diagonal d: for the size filter, and for the size prior of a query from outside the library. */
  readonly queryDiagonal?: number;
  /** Keep only these folders. */
  readonly labels?: readonly string[];
  /** Leave out this entry (the query itself). */
  readonly exclude?: number;
}

export interface IndexOptions {
  /** Share of each cosine taken from the surface grid (0: none); see `diffusionApplies`. */
  readonly gridShare?: number;
  /** λ of the size prior the ordering through the library includes (size-prior.ts); 0: none. */
  readonly sizeWeight?: number;
}

export class EmbeddingIndex {
  readonly dim: number;
  readonly vectors: Float32Array;
  readonly entries: readonly IndexEntry[];
  /** Share of each cosine that comes from a surface grid set beside the encoder's rows (encoder-config `surfaceGrid`). */
  readonly gridShare: number;
  /** λ of the size prior (size-prior.ts). */
  readonly sizeWeight: number;

  constructor(vectors: Float32Array, dim: number, entries: readonly IndexEntry[], options: IndexOptions = {}) {
    if (vectors.length !== dim * entries.length)
      throw new RangeError(`EmbeddingIndex: ${vectors.length} values for ${entries.length} × ${dim}`);
    this.dim = dim;
    this.entries = entries;
    // Unit rows are kept as given (not copied): the caller hands the array over.
    this.vectors = unitRows(vectors, dim);
    this.gridShare = options.gridShare ?? 0;
    this.sizeWeight = options.sizeWeight ?? SIZE_WEIGHT;
  }

  /**
   * The same vectors with other entries: names or folders said again keep the hub means and graph built from the
   * vectors; sizes said again leave the ordering to be built again (the size prior is in it: `ordered`).
   */
  withEntries(entries: readonly IndexEntry[]): this {
    if (entries.length !== this.count)
      throw new RangeError(`withEntries: ${entries.length} entries for an index of ${this.count}`);
    const copy = Object.create(Object.getPrototypeOf(this) as object) as this;
    const resized = this.sizes !== null && !sameSizes(this.sizes.logSize, logSizes(entries.map((e) => e.diagonal)));
    return Object.assign(
      copy,
      this,
      { entries },
      resized ? { sizes: null, table: null, hubs: null, graph: null, graphLists: null } : {},
    );
  }

  /** Whether the ordering through the library is built or taken over (else the first ordered query builds it). */
  get ordered(): boolean {
    return this.table !== null;
  }

  get count(): number {
    return this.entries.length;
  }

  vector(i: number): Float32Array {
    return this.vectors.subarray(i * this.dim, (i + 1) * this.dim);
  }

  /**
   * Cosine similarity of the query to every entry (rows are unit length, so a dot product); with `from` and `to`,
   * of entries from..to-1 only (into the same places of `out`), so a caller can spread a large library over tasks.
   */
  scores(
    query: ArrayLike<number>,
    out: Float32Array = new Float32Array(this.count),
    from = 0,
    to = this.count,
  ): Float32Array {
    const q = normaliseRows(Float32Array.from(query), this.dim);
    for (let i = from; i < to; i++) out[i] = dot4(this.vectors, i * this.dim, q, this.dim);
    return out;
  }

  /** The candidate test for a filter, or undefined when nothing is filtered. */
  protected filterOf(filter: QueryFilter): ((i: number) => boolean) | undefined {
    const labels = filter.labels ? new Set(filter.labels) : null;
    const r = filter.sizeRatio;
    if (r !== undefined && !(r >= 1)) throw new RangeError(`size ratio must be ≥ 1, got ${r}`);
    const d0 = filter.queryDiagonal;
    const bySize = r !== undefined && d0 !== undefined && d0 > 0;
    if (!labels && filter.exclude === undefined && !bySize) return undefined;
    return (i: number) => {
      if (i === filter.exclude) return false;
      const e = this.entries[i];
      if (labels && !labels.has(e.label)) return false;
      if (bySize && (e.diagonal > d0! * r! || e.diagonal < d0! / r!)) return false;
      return true;
    };
  }

  /** The k nearest by cosine; `cosine`, when given, is `scores(query)` worked out already. */
  query(query: ArrayLike<number>, k: number, filter: QueryFilter = {}, cosine?: Float32Array): Hit[] {
    if (query.length !== this.dim) throw new RangeError(`query has ${query.length} values, the index ${this.dim}`);
    return topK(cosine ?? this.scores(query), Math.min(k, this.count), this.filterOf(filter));
  }

  private graph: DiffusionGraph | null = null;
  private table: NeighbourTable | null = null;
  private sizes: SizePrior | null = null;

  /**
   * The size prior of the ordering through the library: w = λσ from these vectors and the entries' ln diagonals,
   * worked out on first use, or the one of an ordering taken over (`useOrdering`).
   */
  sizePrior(): SizePrior {
    return (this.sizes ??= sizePrior(
      this.vectors,
      this.dim,
      this.entries.map((e) => e.diagonal),
      this.sizeWeight,
    ));
  }

  /** Rows as the ordering scores them: `rowScorer`'s cosines less the size prior. */
  orderScorer(): RowScorer {
    return penalisedScorer(this.rowScorer(), this.sizePrior());
  }

  /** Cosines of library rows [start, end) to every part, row-major: the same dot4 as `scores`. */
  rowScorer(): RowScorer {
    return (start, end, out) => {
      const n = this.count,
        D = this.dim,
        v = this.vectors;
      for (let i = start; i < end; i++) {
        const q = v.subarray(i * D, (i + 1) * D),
          o = (i - start) * n;
        for (let j = 0; j < n; j++) out[o + j] = dot4(v, j * D, q, D);
      }
      return out;
    };
  }

  /**
   * The library's neighbour table (neighbour-table.ts): built on first use in one pass over all pairs, or the one
   * given to `useTable` (kept with the embeddings).
   */
  neighbourTable(): NeighbourTable {
    return (this.table ??= NeighbourTable.build(this.count, this.orderScorer(), TABLE_WIDTH));
  }

  /**
   * Use a table built before for these very vectors and the size prior its scores include (sizes must match); the
   * graph is rebuilt from it.
   */
  useTable(table: NeighbourTable, sizes: SizePrior): this {
    if (table.size !== this.count || sizes.logSize.length !== this.count)
      throw new RangeError(`useTable: a table of ${table.size} parts for an index of ${this.count}`);
    this.table = table;
    this.sizes = sizes;
    this.hubs = null;
    this.graph = null;
    this.graphLists = null;
    return this;
  }

  private hubs: Float64Array | null = null;

  /** r(j) of every part (hubness.ts): the mean cosine to its HUB_NEIGHBOURS nearest other parts, from the table. */
  neighbourhoodMeans(): Float64Array {
    return (this.hubs ??= this.neighbourTable().neighbourhoodMeans(HUB_NEIGHBOURS));
  }

  /**
   * Hub-corrected scores of a query against every part, 2·s − r(q) − r(j), s its cosines less the size prior (the
   * query's size: part `self`'s, or `queryDiagonal`; neither, no prior); r(q) leaves out `self`.
   */
  hubCorrected(cosine: ArrayLike<number>, self?: number, queryDiagonal?: number): Float64Array {
    const r = this.neighbourhoodMeans();
    const inLibrary = self !== undefined && self >= 0 && self < this.count;
    const prior = this.sizePrior();
    const s = penalisedRow(
      cosine,
      prior,
      inLibrary ? prior.logSize[self] : queryDiagonal !== undefined ? logSizes([queryDiagonal])[0] : NaN,
    );
    const rq = inLibrary ? r[self] : meanOfTop(s, HUB_NEIGHBOURS);
    for (let j = 0; j < this.count; j++) s[j] = 2 * s[j] - rq - r[j];
    return s;
  }

  /** The default graph's neighbour lists, packed (as `ordering` hands them on and `useOrdering` takes them). */
  private graphLists: PackedLists | null = null;

  /** The library's neighbour graph over hub-corrected scores, from the table (built on first use) and kept. */
  diffusionGraph(options: DiffusionOptions = DIFFUSION_DEFAULTS): DiffusionGraph {
    if (!this.graph || this.graph.options !== options) {
      const built = this.neighbourTable().diffusionGraph(this.orderScorer(), options, this.neighbourhoodMeans());
      this.graph = built.graph;
      this.graphLists = options === DIFFUSION_DEFAULTS ? packLists(built.lists, DIFFUSION_DEFAULTS.k) : null;
    }
    return this.graph;
  }

  /**
   * Everything ordering through the library needs, as arrays a worker can build and hand over: the table, the size
   * prior in its scores, and each part's hub-corrected graph neighbours (the default diffusion settings).
   */
  ordering(): { table: NeighbourTable; sizes: SizePrior; graph: PackedLists } {
    this.diffusionGraph(DIFFUSION_DEFAULTS);
    return { table: this.neighbourTable(), sizes: this.sizePrior(), graph: this.graphLists! };
  }

  /** Takes an ordering built elsewhere (`ordering()` of an index over these very vectors): nothing is rebuilt here. */
  useOrdering(o: { table: NeighbourTable; sizes: SizePrior; graph: PackedLists; built?: GraphArrays }): this {
    this.useTable(o.table, o.sizes);
    if (o.graph.length.length !== this.count || (o.built && o.built.size !== this.count))
      throw new RangeError(`useOrdering: a graph of ${o.graph.length.length} parts for an index of ${this.count}`);
    // The graph as built elsewhere from these lists, or built here from them.
    this.graph = o.built
      ? DiffusionGraph.fromArrays(o.built, DIFFUSION_DEFAULTS)
      : DiffusionGraph.fromPacked(o.graph, DIFFUSION_DEFAULTS);
    this.graphLists = o.graph;
    return this;
  }

  /**
   * The k best parts ordered through the library: by diffusion from the query over the hub-corrected graph, the
   * part with the highest hub-corrected score first (see `rankingKeys`); each hit's score is still its cosine
   * similarity. A library part queries from its own node (pass it as `filter.exclude`); any other vector first
   * joins the graph as one more node.
   */
  queryDiffused(
    query: ArrayLike<number>,
    k: number,
    filter: QueryFilter = {},
    options: DiffusionOptions = DIFFUSION_DEFAULTS,
    scored?: Float32Array,
  ): Hit[] {
    return finish(this.queryDiffusedSteps(query, k, filter, options, scored));
  }

  /** `queryDiffused` a step at a time: each stage, and each diffusion iteration, is a step of its own. */
  *queryDiffusedSteps(
    query: ArrayLike<number>,
    k: number,
    filter: QueryFilter = {},
    options: DiffusionOptions = DIFFUSION_DEFAULTS,
    scored?: Float32Array,
  ): Steps<Hit[]> {
    if (query.length !== this.dim) throw new RangeError(`query has ${query.length} values, the index ${this.dim}`);
    const cosine = scored ?? this.scores(query);
    const graph = this.diffusionGraph(options);
    yield;
    const inLibrary = filter.exclude !== undefined && filter.exclude >= 0 && filter.exclude < this.count;
    const corrected = this.hubCorrected(cosine, inLibrary ? filter.exclude : undefined, filter.queryDiagonal);
    yield;
    const from = inLibrary ? graph : graph.withQuery(corrected);
    if (!inLibrary) yield;
    const f = yield* from.scoresFromSteps(inLibrary ? filter.exclude! : this.count);
    const accept = this.filterOf(filter);
    const hits = topK(rankingKeys(f, corrected, this.count, accept), Math.min(k, this.count), accept);
    return hits.map((h) => ({ index: h.index, score: cosine[h.index] }));
  }

  /**
   * Mean cosine similarity over distinct pairs of parts, from the sum of the unit rows in one pass:
   * Σ_{i≠j} x_i·x_j = ‖Σ_i x_i‖² − n.
   */
  private meanCosine: number | null = null;

  meanPairCosine(): number {
    return (this.meanCosine ??= finish(this.meanPairCosineSteps()));
  }

  /** `meanPairCosine` a step at a time: a step per 2,000 rows (at 1,024 values, about 2 ms each). */
  private *meanPairCosineSteps(): Steps<number> {
    const n = this.count;
    if (n < 2) return 1;
    const sum = new Float64Array(this.dim);
    for (let i = 0; i < n; i++) {
      for (let d = 0; d < this.dim; d++) sum[d] += this.vectors[i * this.dim + d];
      if ((i + 1) % 2000 === 0) yield;
    }
    let sq = 0;
    for (let d = 0; d < this.dim; d++) sq += sum[d] * sum[d];
    return (sq - n) / (n * (n - 1));
  }

  /**
   * Whether diffusion can order this library: its edge weights max(0, cos)³ only tell neighbours apart when the
   * embedding is spread out. On the demo and furniture libraries, models trained 60 steps or more measured a mean
   * pair cosine of 0.00–0.05, where diffusion helped or changed little; a 9-step model measured 0.37 and untrained
   * encoders 0.98–0.99, where it lowered NN and mAP (docs/log/). The cut sits between.
   */
  diffusionApplies(): boolean {
    return this.meanPairCosine() < diffusionCeiling(this.gridShare);
  }

  /** `diffusionApplies` a step at a time (the mean pair cosine reads every value once: 20 M at 20,000 parts). */
  *diffusionAppliesSteps(): Steps<boolean> {
    this.meanCosine ??= yield* this.meanPairCosineSteps();
    return this.diffusionApplies();
  }

  /**
   * `query` or `queryDiffused`, by ranking; diffusion falls back to cosine where it does not apply. `cosine`, when
   * given, is `scores(query)` worked out already.
   */
  ranked(
    ranking: Ranking,
    query: ArrayLike<number>,
    k: number,
    filter: QueryFilter = {},
    cosine?: Float32Array,
  ): Hit[] {
    return finish(this.rankedSteps(ranking, query, k, filter, cosine));
  }

  /**
   * `ranked` a step at a time (the page spreads it over tasks: at 20,000 parts ordering through the library is tens
   * of milliseconds).
   */
  *rankedSteps(
    ranking: Ranking,
    query: ArrayLike<number>,
    k: number,
    filter: QueryFilter = {},
    cosine?: Float32Array,
  ): Steps<Hit[]> {
    if (ranking === 'diffusion' && (yield* this.diffusionAppliesSteps()))
      return yield* this.queryDiffusedSteps(query, k, filter, DIFFUSION_DEFAULTS, cosine);
    return this.query(query, k, filter, cosine);
  }
}

/** Above this mean pair cosine an embedding is too concentrated for diffusion (see `diffusionApplies`). */
export const DIFFUSION_MAX_MEAN_COSINE = 0.2;
/**
 * Highest mean pair cosine of the surface grid alone expected on a library: measured 0.55 (demo), 0.58
 * (furniture), 0.62 (KiCad), 0.64 (second set) with 8 cells (docs/log/). Grid rows are non-negative, so they are
 * never spread out: the test is on the encoder's share.
 */
export const GRID_MAX_MEAN_COSINE = 0.7;

/**
 * The mean pair cosine below which diffusion applies when `share` of each cosine comes from the grid: a fused
 * cosine is (1 − share)·encoder + share·grid, so its mean is the same mix of the two means; the encoder's share must
 * pass the test it passes alone while the grid's may reach `GRID_MAX_MEAN_COSINE`.
 */
export function diffusionCeiling(share: number): number {
  return (1 - share) * DIFFUSION_MAX_MEAN_COSINE + share * GRID_MAX_MEAN_COSINE;
}
