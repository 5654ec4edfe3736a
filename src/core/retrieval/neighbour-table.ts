// The library's neighbour table: each part's `width` most similar other parts by cosine, best first, found in one
// blocked pass over all pairs and then kept (stored with the embeddings, updated when parts come and go). Ordering
// through the library needs nothing else: the hub correction's r(i) is the mean of a row's first HUB_NEIGHBOURS
// scores, and the diffusion graph's edges are each row's k best hub-corrected scores, chosen among the row's
// candidates whenever a bound proves no part outside them can beat them (else that row alone is scanned again).
// So the quadratic work is done once, as matrix products where a backend has them, and queries touch n·width.

import { topK, type Hit } from './topk';
import { HUB_NEIGHBOURS } from './hubness';
import { DIFFUSION_DEFAULTS, DiffusionGraph, type DiffusionOptions } from './diffusion';
import type { SizePrior } from './size-prior';

/**
 * Cosine similarities of library rows [start, end) to all n parts: r[(i − start)·n + j] = cos(i, j), written into
 * `out` (at least that long) or into an array of the scorer's own, and returned (a matrix product hands its result
 * over without a second copy). The same (i, j) should give the same value whichever block it is computed in.
 */
export type RowScorer = (start: number, end: number, out: Float32Array) => Float32Array;

/**
 * Candidates kept per part: more than the hub correction's 30, so r(i) and the graph's first choices come from the
 * table, and a row's 15 hub-corrected neighbours can be taken from its candidates when a bound proves it
 * (`outsideBounds`); the rest are scored again.
 */
export const TABLE_WIDTH = 64;

/**
 * Room left in the graph's bound for rounding: a pair's cosine computed in the other part's block may differ from
 * its own row's in the last place of float32 (about 6e-8 near 1).
 */
const BOUND_SLACK = 1e-6;

/**
 * Rows scored per block: at most this many similarities in memory at once (16 MB of float32). Blocks of 64 MB grew
 * the building worker's WebAssembly heap by about 60 MB more at 20,000 parts, for a build time within this
 * machine's noise (Node, one run each).
 */
const BLOCK_VALUES = 1 << 22;

export class NeighbourTable {
  /** Row i's candidates are index[i·width .. i·width + length[i]), best first; score holds their cosines. */
  private constructor(
    readonly size: number,
    readonly width: number,
    readonly index: Int32Array,
    readonly score: Float32Array,
    readonly length: Int32Array,
  ) {}

  /** The table of n parts from their cosines, scored in blocks of rows. */
  static build(n: number, scoreRows: RowScorer, width = TABLE_WIDTH): NeighbourTable {
    if (!(Number.isInteger(width) && width >= 1))
      throw new RangeError(`neighbour table: width must be ≥ 1, got ${width}`);
    const table = new NeighbourTable(
      n,
      width,
      new Int32Array(n * width),
      new Float32Array(n * width),
      new Int32Array(n),
    );
    table.scanRows(range(0, n), scoreRows);
    return table;
  }

  /** A table from its stored arrays (as `parts()` gives them), checked for shape. */
  static fromArrays(
    size: number,
    width: number,
    index: Int32Array,
    score: Float32Array,
    length: Int32Array,
  ): NeighbourTable {
    if (index.length !== size * width || score.length !== size * width || length.length !== size)
      throw new RangeError(`neighbour table: arrays do not fit ${size} rows of ${width}`);
    for (let i = 0; i < size; i++) {
      if (length[i] < 0 || length[i] > width) throw new RangeError(`neighbour table: row ${i} has length ${length[i]}`);
      for (let c = 0; c < length[i]; c++) {
        const j = index[i * width + c];
        if (!(j >= 0 && j < size && j !== i)) throw new RangeError(`neighbour table: row ${i} names part ${j}`);
      }
    }
    return new NeighbourTable(size, width, index, score, length);
  }

  /** Row i's candidates as hits, best first. */
  row(i: number): Hit[] {
    const out: Hit[] = [];
    for (let c = 0; c < this.length[i]; c++)
      out.push({ index: this.index[i * this.width + c], score: this.score[i * this.width + c] });
    return out;
  }

  /** Scores `rows` against all parts in blocks and keeps each one's best `width` (itself left out). */
  private scanRows(rows: readonly number[], scoreRows: RowScorer): void {
    inBlocks(rows, this.size, scoreRows, (start, end, scores) => this.takeRows(start, end, scores));
  }

  /** Rows [start, end) from their scores against all parts (`out` as a RowScorer fills it); itself left out. */
  private takeRows(start: number, end: number, out: Float32Array): void {
    const n = this.size;
    const keep = Math.min(this.width, n - 1);
    for (let i = start; i < end; i++) {
      const r = out.subarray((i - start) * n, (i - start + 1) * n);
      const self = r[i];
      r[i] = NaN; // never itself
      this.setRow(i, keep > 0 ? topK(r, keep) : []);
      r[i] = self;
    }
  }

  private setRow(i: number, hits: readonly Hit[]): void {
    const o = i * this.width;
    hits.forEach((h, c) => {
      this.index[o + c] = h.index;
      this.score[o + c] = h.score;
    });
    this.length[i] = hits.length;
  }

  /** r(i) for every part: the mean of its HUB_NEIGHBOURS highest cosines to the others (hubness.ts). */
  neighbourhoodMeans(k = HUB_NEIGHBOURS): Float64Array {
    if (k > this.width) throw new RangeError(`neighbour table: ${k} neighbours asked of rows of ${this.width}`);
    const r = new Float64Array(this.size);
    for (let i = 0; i < this.size; i++) {
      const m = Math.min(k, this.length[i]);
      let s = 0;
      for (let c = 0; c < m; c++) s += this.score[i * this.width + c];
      r[i] = m > 0 ? s / m : 0;
    }
    return r;
  }

  /**
   * The diffusion graph over hub-corrected scores 2·cos(i, j) − r(i) − r(j), each row's k best taken from its
   * candidates when a bound proves no part outside them can beat its k-th (`outsideBounds`); the rows it does not
   * settle are scored again in full (`scoreRows`). Returns the graph and how many rows that took.
   */
  diffusionGraph(
    scoreRows: RowScorer,
    options: DiffusionOptions = DIFFUSION_DEFAULTS,
    r: Float64Array = this.neighbourhoodMeans(),
  ): { graph: DiffusionGraph; lists: Hit[][]; rescanned: number } {
    const n = this.size;
    const k = Math.min(options.k, n - 1);
    const outside = this.outsideBounds(r);
    const lists: Hit[][] = new Array(n);
    const unsettled: number[] = [];
    const keys = new Float64Array(this.width);
    for (let i = 0; i < n; i++) {
      const len = this.length[i],
        o = i * this.width;
      if (k <= 0) {
        lists[i] = [];
        continue;
      }
      for (let c = 0; c < len; c++) keys[c] = 2 * this.score[o + c] - r[i] - r[this.index[o + c]];
      const local = len >= k ? topK(keys.subarray(0, len), k) : [];
      const complete = len === n - 1; // the row holds every other part
      if (local.length === k && (complete || local[k - 1].score > outside[i] - r[i] + BOUND_SLACK))
        lists[i] = local.map((h) => ({ index: this.index[o + h.index], score: h.score }));
      else unsettled.push(i);
    }
    // Unsettled rows scored again in blocks of consecutive rows (a matrix product each where the scorer has one).
    const keyRow = new Float64Array(n);
    inBlocks(unsettled, n, scoreRows, (start, end, got) => {
      for (let i = start; i < end; i++) {
        const o = (i - start) * n;
        for (let j = 0; j < n; j++) keyRow[j] = j === i ? NaN : 2 * got[o + j] - r[i] - r[j];
        lists[i] = topK(keyRow, k);
      }
    });
    return { graph: DiffusionGraph.fromNeighbours(lists, options), lists, rescanned: unsettled.length };
  }

  /**
   * For each row i, a bound M(i) on 2·cos(i, j) − r(j) over every part j outside its candidates, so that no such j
   * scores above M(i) − r(i) hub-corrected. With c_i the row's last (lowest) candidate cosine, any j outside the row
   * has cos(i, j) ≤ c_i; if i is not in j's row either, also cos(i, j) ≤ c_j. Hence
   *   M(i) = max( max over all j of 2·min(c_i, c_j) − r(j),  2·c_i − min{ r(j) : i in j's row } ),
   * the first term from the parts sorted by c (a suffix minimum of r and a prefix maximum of 2c − r), the second from
   * the table read backwards. The earlier bound, 2·c_i − min over all r, let through any row the library's lowest r
   * could reach: it settled 46 of 6,225 KiCad rows and 27 of 20,000 generated ones.
   */
  outsideBounds(r: Float64Array): Float64Array {
    const n = this.size,
      W = this.width;
    const last = new Float64Array(n);
    for (let i = 0; i < n; i++) last[i] = this.length[i] > 0 ? this.score[i * W + this.length[i] - 1] : Infinity;
    const order = Int32Array.from({ length: n }, (_, i) => i).sort((a, b) => last[a] - last[b] || a - b);
    const sorted = Float64Array.from(order, (j) => last[j]);
    const suffixMinR = new Float64Array(n + 1).fill(Infinity); // min r over sorted positions ≥ p
    for (let p = n - 1; p >= 0; p--) suffixMinR[p] = Math.min(suffixMinR[p + 1], r[order[p]]);
    const prefixMax = new Float64Array(n + 1).fill(-Infinity); // max 2c − r over sorted positions < p
    for (let p = 0; p < n; p++) {
      const j = order[p];
      prefixMax[p + 1] = Math.max(prefixMax[p], last[j] === Infinity ? Infinity : 2 * last[j] - r[j]);
    }
    const minRevR = new Float64Array(n).fill(Infinity);
    for (let j = 0; j < n; j++)
      for (let c = 0; c < this.length[j]; c++) {
        const i = this.index[j * W + c];
        if (r[j] < minRevR[i]) minRevR[i] = r[j];
      }
    const out = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      const ci = last[i];
      if (ci === Infinity) {
        out[i] = Infinity;
        continue;
      }
      // First sorted position with c ≥ c_i: those j give 2·c_i − r(j); the ones before give 2·c_j − r(j).
      let lo = 0,
        hi = n;
      while (lo < hi) {
        const mid = (lo + hi) >> 1;
        if (sorted[mid] < ci) lo = mid + 1;
        else hi = mid;
      }
      out[i] = Math.max(2 * ci - suffixMinR[lo], prefixMax[lo], 2 * ci - minRevR[i]);
    }
    return out;
  }

  /**
   * The table after `added` parts join at the end (the scorer now covers all size + added parts): their rows are
   * scored in full, and each of them enters an old row when it beats that row's last candidate. Cost: added · n
   * similarities, not n².
   */
  withAdded(added: number, scoreRows: RowScorer): NeighbourTable {
    const n0 = this.size,
      n = n0 + added,
      W = this.width;
    const next = new NeighbourTable(n, W, new Int32Array(n * W), new Float32Array(n * W), new Int32Array(n));
    next.index.set(this.index);
    next.score.set(this.score);
    next.length.set(this.length);
    if (added <= 0) return next;
    const block = scoreRows(n0, n, new Float32Array(added * n));
    next.takeRows(n0, n, block);
    // cos(i, j) for old i and new j from the new rows (the same pair, scored in row j's block). A row that held
    // every other part takes any newcomer; a shorter one (cut by removals) only one that beats its last, so it
    // stays its best among all parts.
    const keep = Math.min(W, n - 1);
    for (let i = 0; i < n0; i++) {
      const candidates = next.row(i);
      const complete = candidates.length === n0 - 1;
      const last = candidates.length ? candidates[candidates.length - 1].score : -Infinity;
      let changed = false;
      for (let j = n0; j < n; j++) {
        const s = block[(j - n0) * n + i];
        if (complete || s > last) {
          candidates.push({ index: j, score: s });
          changed = true;
        }
      }
      if (changed) {
        candidates.sort((a, b) => b.score - a.score || a.index - b.index);
        next.setRow(i, candidates.slice(0, keep));
      }
    }
    return next;
  }

  /**
   * The table without the parts `removed` (indices into this table); the others keep their order and are
   * renumbered. A row that lost candidates keeps the rest (still its best among the remaining parts); one left
   * shorter than `minLength` (HUB_NEIGHBOURS by default) is scored again in full with `scoreRows`, which covers
   * the remaining parts in their new numbering.
   */
  withRemoved(removed: Iterable<number>, scoreRows: RowScorer, minLength = HUB_NEIGHBOURS): NeighbourTable {
    const gone = new Uint8Array(this.size);
    for (const i of removed) if (i >= 0 && i < this.size) gone[i] = 1;
    const renumber = new Int32Array(this.size).fill(-1);
    let n = 0;
    for (let i = 0; i < this.size; i++) if (!gone[i]) renumber[i] = n++;
    const W = this.width;
    const next = new NeighbourTable(n, W, new Int32Array(n * W), new Float32Array(n * W), new Int32Array(n));
    const short: number[] = [];
    for (let i = 0; i < this.size; i++) {
      if (gone[i]) continue;
      const hits: Hit[] = [];
      for (const h of this.row(i)) if (!gone[h.index]) hits.push({ index: renumber[h.index], score: h.score });
      next.setRow(renumber[i], hits);
      if (hits.length < Math.min(minLength, W, n - 1)) short.push(renumber[i]);
    }
    if (short.length) next.scanRows(short, scoreRows);
    return next;
  }

  /**
   * The same table with its parts renumbered: row r becomes row `to[r]` (a permutation of 0 … size − 1), and every
   * candidate is renamed likewise (rows re-sorted, so ties still go to the lower number).
   */
  renumbered(to: Int32Array): NeighbourTable {
    const n = this.size,
      W = this.width;
    if (to.length !== n) throw new RangeError(`renumbered: ${to.length} numbers for ${n} parts`);
    const seen = new Uint8Array(n);
    for (const t of to) {
      if (!(t >= 0 && t < n) || seen[t]) throw new RangeError('renumbered: not a permutation');
      seen[t] = 1;
    }
    const next = new NeighbourTable(n, W, new Int32Array(n * W), new Float32Array(n * W), new Int32Array(n));
    for (let r = 0; r < n; r++) {
      const hits = this.row(r).map((h) => ({ index: to[h.index], score: h.score }));
      hits.sort((a, b) => b.score - a.score || a.index - b.index);
      next.setRow(to[r], hits);
    }
    return next;
  }
}

/**
 * A table kept with the names of the parts its rows stand for, in row order, and the size prior its scores include
 * (size-prior.ts: the weight, and each row's ln diagonal when it was scored).
 */
export interface NamedTable {
  readonly names: readonly string[];
  readonly table: NeighbourTable;
  readonly sizes: SizePrior;
}

/** A named table as plain arrays (for messages between threads): names, width, the three arrays and the prior's. */
export interface TableArrays {
  readonly names: readonly string[];
  readonly width: number;
  readonly index: Int32Array;
  readonly score: Float32Array;
  readonly length: Int32Array;
  readonly sizeWeight: number;
  readonly logSize: Float32Array;
}

export function tableArrays({ names, table, sizes }: NamedTable): TableArrays {
  return {
    names,
    width: table.width,
    index: table.index,
    score: table.score,
    length: table.length,
    sizeWeight: sizes.weight,
    logSize: sizes.logSize,
  };
}

/** The named table back from its arrays (checked for shape by `fromArrays`). */
export function namedTable(t: TableArrays): NamedTable {
  if (t.logSize.length !== t.names.length || !(t.sizeWeight >= 0))
    throw new RangeError(
      `neighbour table: ${t.logSize.length} sizes and weight ${t.sizeWeight} for ${t.names.length} rows`,
    );
  return {
    names: t.names,
    table: NeighbourTable.fromArrays(t.names.length, t.width, t.index, t.score, t.length),
    sizes: { weight: t.sizeWeight, logSize: t.logSize },
  };
}

/**
 * The kept table brought to a library's parts now (`names`, in their order; the same model's embeddings): parts
 * gone are dropped (`withRemoved`), new ones join (`withAdded`), and rows are renumbered to the library's order.
 * `scorerOver(order)` gives a RowScorer over the library's parts listed by `order` (indices into `names`). A kept
 * row that `changed` (its part scores differently now, e.g. its size was said again) goes and comes back as new.
 * Cost: the new parts' rows and the rows cut short, not n².
 */
export function carryTable(
  kept: Omit<NamedTable, 'sizes'>,
  names: readonly string[],
  scorerOver: (order: readonly number[]) => RowScorer,
  changed: (keptRow: number, at: number) => boolean = () => false,
): { table: NeighbourTable; added: number; removed: number } {
  if (kept.names.length !== kept.table.size)
    throw new RangeError(`carryTable: ${kept.names.length} names for a table of ${kept.table.size}`);
  const at = new Map(names.map((n, i) => [n, i]));
  const gone: number[] = [];
  const stay: number[] = []; // indices into names, in the kept table's order
  kept.names.forEach((n, r) => {
    const i = at.get(n);
    if (i === undefined || changed(r, i)) gone.push(r);
    else stay.push(i);
  });
  const stayed = new Set(stay);
  const fresh = names.map((_, i) => i).filter((i) => !stayed.has(i));
  let table = gone.length ? kept.table.withRemoved(gone, scorerOver(stay)) : kept.table;
  const order = [...stay, ...fresh];
  if (fresh.length) table = table.withAdded(fresh.length, scorerOver(order));
  return { table: table.renumbered(Int32Array.from(order)), added: fresh.length, removed: gone.length };
}

/**
 * Scores `rows` (ascending) against all n parts, a run of consecutive rows per block and at most BLOCK_VALUES
 * similarities at a time, and hands each block's scores to `take`.
 */
function inBlocks(
  rows: readonly number[],
  n: number,
  scoreRows: RowScorer,
  take: (start: number, end: number, scores: Float32Array) => void,
): void {
  const perBlock = Math.max(1, Math.floor(BLOCK_VALUES / Math.max(1, n)));
  let block = new Float32Array(0);
  for (let a = 0; a < rows.length;) {
    let b = a + 1;
    while (b < rows.length && rows[b] === rows[b - 1] + 1 && b - a < perBlock) b++;
    const start = rows[a],
      end = rows[b - 1] + 1;
    if (block.length < (end - start) * n) block = new Float32Array((end - start) * n);
    take(start, end, scoreRows(start, end, block.subarray(0, (end - start) * n)));
    a = b;
  }
}

function range(a: number, b: number): number[] {
  return Array.from({ length: Math.max(0, b - a) }, (_, m) => a + m);
}
