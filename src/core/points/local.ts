// Local shape of the surface around each point: the eigenvalues λ1 ≥ λ2 ≥ λ3 of the covariance of its k
// nearest neighbours give linearity (λ1 − λ2)/λ1, planarity (λ2 − λ3)/λ1 and scattering λ3/λ1, which sum to 1
// (the eigenvalue-based dimensionality features of Weinmann, Jutzi & Mallet 2015, "Semantic point cloud
// interpretation based on optimal neighborhoods, relevant features and efficient classifiers", ISPRS J. 105).
// They do not change under rotation, translation or uniform scaling, so they survive every augmentation that
// moves points rigidly, and a per-point encoder sees a little of each point's neighbourhood through them.

import { PointIndex } from './kdtree';
import { symmetricEigen3 } from './pca';

/** Neighbours per point (the point itself included): common practice for clouds of a few thousand points. */
export const LOCAL_NEIGHBOURS = 16;

/** Linearity, planarity, scattering for each point of a stride-3 array (count × 3, row-major). */
export function localShape(positions: Float32Array, k = LOCAL_NEIGHBOURS): Float32Array {
  const count = positions.length / 3;
  const out = new Float32Array(count * 3);
  if (count === 0) return out;
  const kk = Math.min(k, count);
  const index = new PointIndex(positions);
  const cov = new Float64Array(9);
  for (let i = 0; i < count; i++) {
    const near = index.nearest(positions[3 * i], positions[3 * i + 1], positions[3 * i + 2], kk);
    let mx = 0, my = 0, mz = 0;
    for (const { index: j } of near) { mx += positions[3 * j]; my += positions[3 * j + 1]; mz += positions[3 * j + 2]; }
    mx /= near.length; my /= near.length; mz /= near.length;
    cov.fill(0);
    for (const { index: j } of near) {
      const dx = positions[3 * j] - mx, dy = positions[3 * j + 1] - my, dz = positions[3 * j + 2] - mz;
      cov[0] += dx * dx; cov[1] += dx * dy; cov[2] += dx * dz; cov[4] += dy * dy; cov[5] += dy * dz; cov[8] += dz * dz;
    }
    cov[3] = cov[1]; cov[6] = cov[2]; cov[7] = cov[5];
    const [l1, l2raw, l3raw] = symmetricEigen3(cov).values;
    const l2 = Math.max(0, l2raw), l3 = Math.max(0, l3raw);
    if (!(l1 > 0)) { out[3 * i + 2] = 1; continue; } // every neighbour at one spot: no direction at all
    out[3 * i] = (l1 - l2) / l1; out[3 * i + 1] = (l2 - l3) / l1; out[3 * i + 2] = l3 / l1;
  }
  return out;
}

const cache = new WeakMap<Float32Array, Float32Array>();

/** localShape of a pool, computed once per array (pools do not change once sampled). */
export function localShapeOf(positions: Float32Array): Float32Array {
  let f = cache.get(positions);
  if (!f) { f = localShape(positions); cache.set(positions, f); }
  return f;
}
