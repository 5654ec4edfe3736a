// A first-in-first-out store of the projections of earlier training steps, used as further negatives by NT-Xent
// (cross-batch memory: Wang, Zhang, Huang & Scott 2020, "Cross-Batch Memory for Embedding Learning", §4). A batch of
// 32 parts meets 62 negatives; KiCad's families (twenty pin counts of a connector, a dozen SOIC widths) need many more
// to be told apart. The rows are stored as plain numbers, unit length, with the part each is a view of, so the loss
// can leave a part's own earlier views (and its alike parts) out of its negatives. No tfjs here.

export class MemoryBank {
  readonly capacity: number;
  readonly dim: number;
  private readonly data: Float32Array;
  private readonly owner: Int32Array;
  /** Rows held (≤ capacity). */
  size = 0;
  /** Where the next row goes. */
  private head = 0;

  constructor(capacity: number, dim: number) {
    if (!Number.isInteger(capacity) || capacity < 1)
      throw new RangeError(`memory: capacity must be ≥ 1, got ${capacity}`);
    if (!Number.isInteger(dim) || dim < 1) throw new RangeError(`memory: row width must be ≥ 1, got ${dim}`);
    this.capacity = capacity;
    this.dim = dim;
    this.data = new Float32Array(capacity * dim);
    this.owner = new Int32Array(capacity);
  }

  /** Store rows (row-major, `dim` values each; normalised to unit length here), row r a view of part `parts[r]`. */
  push(rows: Float32Array, parts: ArrayLike<number>): void {
    const n = parts.length,
      D = this.dim;
    if (rows.length !== n * D) throw new RangeError(`memory: ${rows.length} values for ${n} rows of ${D}`);
    // Only the newest `capacity` rows can stay.
    for (let r = Math.max(0, n - this.capacity); r < n; r++) {
      let ss = 0;
      for (let d = 0; d < D; d++) ss += rows[r * D + d] * rows[r * D + d];
      const inv = 1 / Math.max(Math.sqrt(ss), 1e-12);
      const at = this.head * D;
      for (let d = 0; d < D; d++) this.data[at + d] = rows[r * D + d] * inv;
      this.owner[this.head] = parts[r];
      this.head = (this.head + 1) % this.capacity;
      if (this.size < this.capacity) this.size++;
    }
  }

  clear(): void {
    this.size = 0;
    this.head = 0;
  }

  /** The rows held (size × dim), oldest first. */
  rows(): Float32Array {
    const out = new Float32Array(this.size * this.dim);
    const start = this.size < this.capacity ? 0 : this.head;
    for (let i = 0; i < this.size; i++) {
      const r = (start + i) % this.capacity;
      out.set(this.data.subarray(r * this.dim, (r + 1) * this.dim), i * this.dim);
    }
    return out;
  }

  /** The part each held row is a view of, in `rows()` order. */
  parts(): Int32Array {
    const out = new Int32Array(this.size);
    const start = this.size < this.capacity ? 0 : this.head;
    for (let i = 0; i < this.size; i++) out[i] = this.owner[(start + i) % this.capacity];
    return out;
  }

  /**
   * For anchors that are views of `anchors` (each listed once per view), the (anchors × size) 0/1 matrix, in `rows()`
   * order: 1 where the row is a view of the anchor's own part, or of one of its alike parts (either direction).
   */
  blocked(anchors: readonly number[], alike: readonly Int32Array[] | null = null): Float32Array {
    const held = this.parts(),
      M = held.length;
    const out = new Float32Array(anchors.length * M);
    const near = new Map<number, Set<number>>(); // an anchor part's alike parts, once per part
    anchors.forEach((a, i) => {
      if (alike && !near.has(a)) near.set(a, new Set(alike[a]));
      const mine = near.get(a);
      for (let j = 0; j < M; j++) {
        const q = held[j];
        if (q === a || (alike && (mine!.has(q) || alike[q].includes(a)))) out[i * M + j] = 1;
      }
    });
    return out;
  }
}
