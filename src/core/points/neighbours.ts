// Each point's k nearest points within its cloud, for the EdgeConv layer: a brute-force search over a batch of
// clouds (exact, deterministic: the point itself first, ties by index). Plain arrays, no tfjs.

/**
 * The k nearest points of each point within its cloud (brute force; the point itself first, ties by index),
 * as rows of the (B·N) batch: entry (b·N + i)·k + m. x: (B, N, F) row-major with x y z first.
 */
export function neighbourIndex(x: Float32Array, B: number, N: number, F: number, k: number): Int32Array {
  const out = new Int32Array(B * N * k);
  const best = new NearestK(k);
  for (let b = 0; b < B; b++) {
    const base = b * N * F;
    for (let i = 0; i < N; i++) {
      const xi = base + i * F;
      const x0 = x[xi],
        x1 = x[xi + 1],
        x2 = x[xi + 2];
      best.start(i);
      for (let j = 0; j < N; j++) {
        if (j === i) continue;
        const xj = base + j * F;
        const d0 = x[xj] - x0,
          d1 = x[xj + 1] - x1,
          d2 = x[xj + 2] - x2;
        best.offer(d0 * d0 + d1 * d1 + d2 * d2, j);
      }
      best.write(out, (b * N + i) * k, b * N);
    }
  }
  return out;
}

/** The k smallest keys offered so far, ascending (ties keep the earlier), the point itself held first. */
class NearestK {
  private readonly key: Float64Array;
  private readonly row: Int32Array;
  private n = 1;
  private worst = Infinity; // a candidate must be strictly nearer than this to enter
  constructor(private readonly k: number) {
    this.key = new Float64Array(k);
    this.row = new Int32Array(k);
  }
  start(self: number): void {
    this.key[0] = -Infinity;
    this.row[0] = self;
    this.n = 1;
    this.worst = this.k === 1 ? -Infinity : Infinity;
  }
  offer(v: number, j: number): void {
    if (!(v < this.worst)) return;
    const { key, row, k } = this;
    let at = this.n < k ? this.n++ : k - 1;
    while (at > 0 && v < key[at - 1]) {
      key[at] = key[at - 1];
      row[at] = row[at - 1];
      at--;
    }
    key[at] = v;
    row[at] = j;
    if (this.n === k) this.worst = key[k - 1];
  }
  /** Rows (offset by `base`) into out[o … o + k). */
  write(out: Int32Array, o: number, base: number): void {
    for (let m = 0; m < this.k; m++) out[o + m] = base + this.row[m];
  }
}

/** EdgeConv inputs [f_i, x_j − x_i] over `neighbourIndex` (B·N·k, F + 3): the layer's definition, kept for checks. */
export function edgeFeatures(x: Float32Array, B: number, N: number, F: number, k: number): Float32Array {
  const nbr = neighbourIndex(x, B, N, F, k);
  const out = new Float32Array(B * N * k * (F + 3));
  for (let e = 0; e < B * N * k; e++) {
    const xi = Math.floor(e / k) * F,
      xj = nbr[e] * F,
      o = e * (F + 3);
    for (let f = 0; f < F; f++) out[o + f] = x[xi + f];
    out[o + F] = x[xj] - x[xi];
    out[o + F + 1] = x[xj + 1] - x[xi + 1];
    out[o + F + 2] = x[xj + 2] - x[xi + 2];
  }
  return out;
}
