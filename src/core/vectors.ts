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
