// A 2-D map of embeddings: projection on the two leading principal components of the centred vectors,
// found by power iteration with deflation (Golub & Van Loan, "Matrix Computations", §8.2).

import { createRng } from '../rng';

export function pca2d(vectors: Float32Array, dim: number, iterations = 100): Float32Array {
  const n = vectors.length / dim;
  const mean = new Float64Array(dim);
  for (let i = 0; i < n; i++) for (let d = 0; d < dim; d++) mean[d] += vectors[i * dim + d] / n;
  const centred = new Float64Array(vectors.length);
  for (let i = 0; i < n; i++) for (let d = 0; d < dim; d++) centred[i * dim + d] = vectors[i * dim + d] - mean[d];
  const rng = createRng(7);
  const components: Float64Array[] = [];
  const xv = new Float64Array(n);
  for (let c = 0; c < 2; c++) {
    let v = Float64Array.from({ length: dim }, () => rng.normal());
    for (let it = 0; it < iterations; it++) {
      // w = Xᵀ (X v), with earlier components projected out.
      for (let i = 0; i < n; i++) {
        let s = 0;
        const o = i * dim;
        for (let d = 0; d < dim; d++) s += centred[o + d] * v[d];
        xv[i] = s;
      }
      const w = new Float64Array(dim);
      for (let i = 0; i < n; i++) {
        const o = i * dim,
          x = xv[i];
        for (let d = 0; d < dim; d++) w[d] += centred[o + d] * x;
      }
      for (const u of components) {
        let dot = 0;
        for (let d = 0; d < dim; d++) dot += w[d] * u[d];
        for (let d = 0; d < dim; d++) w[d] -= dot * u[d];
      }
      let sq = 0;
      for (let d = 0; d < dim; d++) sq += w[d] * w[d];
      const inv = sq > 0 ? 1 / Math.sqrt(sq) : 1;
      for (let d = 0; d < dim; d++) w[d] *= inv;
      v = w;
    }
    components.push(v);
  }
  const out = new Float32Array(n * 2);
  for (let i = 0; i < n; i++)
    for (let c = 0; c < 2; c++) {
      let s = 0;
      for (let d = 0; d < dim; d++) s += centred[i * dim + d] * components[c][d];
      out[i * 2 + c] = s;
    }
  return out;
}
