// Plain vector helpers shared by the model and retrieval (no tfjs).

/** Rows of a row-major (count × dim) array scaled to unit length (a zero row stays zero). */
export function normaliseRows(v: Float32Array, dim: number): Float32Array {
  const out = new Float32Array(v.length);
  for (let o = 0; o < v.length; o += dim) {
    let s = 0;
    for (let d = 0; d < dim; d++) s += v[o + d] * v[o + d];
    const inv = s > 0 ? 1 / Math.sqrt(s) : 0;
    for (let d = 0; d < dim; d++) out[o + d] = v[o + d] * inv;
  }
  return out;
}

/** How far a row's squared length may be from 1 for `unitRows` to take it as unit length (float32 rounding). */
const UNIT_TOLERANCE = 1e-4;

/**
 * Rows scaled to unit length as `normaliseRows` does, but the array itself when every row is already unit length
 * (or zero): a library's embeddings come so from the workers, and a copy of 20,000 rows of 1,000 values is 80 MB
 * written on the page's thread (about 250 ms on the test machine, most of it the fresh memory's first touch).
 * The caller must then not change the array it passed.
 */
export function unitRows(v: Float32Array, dim: number): Float32Array {
  for (let o = 0; o < v.length; o += dim) {
    let s = 0;
    for (let d = 0; d < dim; d++) s += v[o + d] * v[o + d];
    if (s !== 0 && Math.abs(s - 1) > UNIT_TOLERANCE) return normaliseRows(v, dim);
  }
  return v;
}

/**
 * v[o .. o+D) · q with four independent accumulators (they let the JIT overlap the multiply-adds, ~3× a
 * single running sum); every index scores with this one function so ties break the same way.
 */
export function dot4(v: ArrayLike<number>, o: number, q: ArrayLike<number>, D: number): number {
  const D4 = D - (D % 4);
  let s0 = 0,
    s1 = 0,
    s2 = 0,
    s3 = 0,
    d = 0;
  for (; d < D4; d += 4) {
    s0 += v[o + d] * q[d];
    s1 += v[o + d + 1] * q[d + 1];
    s2 += v[o + d + 2] * q[d + 2];
    s3 += v[o + d + 3] * q[d + 3];
  }
  for (; d < D; d++) s0 += v[o + d] * q[d];
  return s0 + s1 + s2 + s3;
}

/** The (rows, cols) row-major matrix `m` as (cols, rows), in 64 × 64 tiles (each read and write stays in cache). */
export function transposed(
  m: Float32Array,
  rows: number,
  cols: number,
  out: Float32Array = new Float32Array(rows * cols),
): Float32Array {
  const T = 64;
  for (let r0 = 0; r0 < rows; r0 += T)
    for (let c0 = 0; c0 < cols; c0 += T) {
      const r1 = Math.min(rows, r0 + T),
        c1 = Math.min(cols, c0 + T);
      for (let r = r0; r < r1; r++) for (let c = c0; c < c1; c++) out[c * rows + r] = m[r * cols + c];
    }
  return out;
}
