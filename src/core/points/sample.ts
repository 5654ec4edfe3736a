// Surface sampling: area-weighted triangle choice (cumulative areas + binary search) and uniform points
// inside each triangle by the square-root barycentric formula of Osada et al. 2002 ("Shape distributions"):
//   P = (1 − √r1)·A + √r1·(1 − r2)·B + √r1·r2·C,   r1, r2 ~ U(0, 1).
// Plus resampling of point-only inputs, farthest-point down-sampling, and unit-sphere normalisation.

import type { Rng } from '../rng';
import type { Mesh } from '../mesh/types';
import { makeCloud, type PointCloud } from './cloud';

/** Cumulative triangle areas (float64, length T); the last entry is the total area. */
export function cumulativeAreas(mesh: Mesh): Float64Array {
  const idx = mesh.indices;
  if (!idx) throw new RangeError('cumulativeAreas: the mesh has no triangles');
  const p = mesh.positions;
  const n = idx.length / 3;
  const cum = new Float64Array(n);
  let sum = 0;
  for (let t = 0; t < n; t++) {
    const a = idx[t * 3] * 3,
      b = idx[t * 3 + 1] * 3,
      c = idx[t * 3 + 2] * 3;
    const ux = p[b] - p[a],
      uy = p[b + 1] - p[a + 1],
      uz = p[b + 2] - p[a + 2];
    const vx = p[c] - p[a],
      vy = p[c + 1] - p[a + 1],
      vz = p[c + 2] - p[a + 2];
    const cx = uy * vz - uz * vy,
      cy = uz * vx - ux * vz,
      cz = ux * vy - uy * vx;
    sum += 0.5 * Math.sqrt(cx * cx + cy * cy + cz * cz);
    cum[t] = sum;
  }
  return cum;
}

/** Smallest t with cum[t] > target (binary search). */
function searchTriangle(cum: Float64Array, target: number): number {
  let lo = 0,
    hi = cum.length - 1;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (cum[mid] > target) hi = mid;
    else lo = mid + 1;
  }
  return lo;
}

export interface SurfaceSamplerOptions {
  /** Reuse a precomputed cumulativeAreas(mesh) across calls. */
  readonly cumulative?: Float64Array;
  /** Also report the triangle each point came from (tests and diagnostics). */
  readonly triangleOut?: Uint32Array;
}

/** n points uniform over the surface, with the unit normal of the face each lies on. */
export function sampleSurface(mesh: Mesh, n: number, rng: Rng, options: SurfaceSamplerOptions = {}): PointCloud {
  if (!mesh.indices || mesh.indices.length === 0) throw new RangeError('sampleSurface: the mesh has no triangles');
  if (!(n > 0) || !Number.isInteger(n)) throw new RangeError(`sampleSurface: n must be a positive integer, got ${n}`);
  const cum = options.cumulative ?? cumulativeAreas(mesh);
  const total = cum[cum.length - 1];
  if (!(total > 0)) throw new RangeError('sampleSurface: the surface has zero area');
  const p = mesh.positions;
  const idx = mesh.indices;
  const out = new Float32Array(n * 3);
  const normals = new Float32Array(n * 3);
  for (let i = 0; i < n; i++) {
    const t = searchTriangle(cum, rng.next() * total);
    if (options.triangleOut) options.triangleOut[i] = t;
    const a = idx[t * 3] * 3,
      b = idx[t * 3 + 1] * 3,
      c = idx[t * 3 + 2] * 3;
    const s1 = Math.sqrt(rng.next());
    const r2 = rng.next();
    const wa = 1 - s1,
      wb = s1 * (1 - r2),
      wc = s1 * r2;
    out[i * 3] = wa * p[a] + wb * p[b] + wc * p[c];
    out[i * 3 + 1] = wa * p[a + 1] + wb * p[b + 1] + wc * p[c + 1];
    out[i * 3 + 2] = wa * p[a + 2] + wb * p[b + 2] + wc * p[c + 2];
    const ux = p[b] - p[a],
      uy = p[b + 1] - p[a + 1],
      uz = p[b + 2] - p[a + 2];
    const vx = p[c] - p[a],
      vy = p[c + 1] - p[a + 1],
      vz = p[c + 2] - p[a + 2];
    const nx = uy * vz - uz * vy,
      ny = uz * vx - ux * vz,
      nz = ux * vy - uy * vx;
    const len = Math.sqrt(nx * nx + ny * ny + nz * nz) || 1;
    normals[i * 3] = nx / len;
    normals[i * 3 + 1] = ny / len;
    normals[i * 3 + 2] = nz / len;
  }
  return makeCloud(out, normals);
}

/**
 * Point-only input to exactly n points: a random subset without repetition when there are enough
 * (partial Fisher–Yates), otherwise every point once and the shortfall drawn with replacement.
 */
export function resamplePoints(cloud: PointCloud, n: number, rng: Rng): PointCloud {
  if (cloud.count === 0) throw new RangeError('resamplePoints: the point cloud is empty');
  return gather(cloud, drawIndices(cloud.count, n, rng));
}

/** n indices into a pool of `count`: distinct when the pool is large enough (partial Fisher–Yates). */
export function drawIndices(
  count: number,
  n: number,
  rng: Rng,
  scratch: Uint32Array = new Uint32Array(count),
): Uint32Array {
  const out = new Uint32Array(n);
  if (count < n) {
    for (let i = 0; i < n; i++) out[i] = i < count ? i : rng.int(count);
    return out;
  }
  for (let i = 0; i < count; i++) scratch[i] = i;
  for (let i = 0; i < n; i++) {
    const j = i + rng.int(count - i);
    const t = scratch[i];
    scratch[i] = scratch[j];
    scratch[j] = t;
    out[i] = scratch[i];
  }
  return out;
}

export function gather(cloud: PointCloud, order: ArrayLike<number>): PointCloud {
  const n = order.length;
  const out = new Float32Array(n * 3);
  const normals = cloud.normals ? new Float32Array(n * 3) : null;
  for (let i = 0; i < n; i++) {
    const s = order[i] * 3;
    out[i * 3] = cloud.positions[s];
    out[i * 3 + 1] = cloud.positions[s + 1];
    out[i * 3 + 2] = cloud.positions[s + 2];
    if (normals) {
      normals[i * 3] = cloud.normals![s];
      normals[i * 3 + 1] = cloud.normals![s + 1];
      normals[i * 3 + 2] = cloud.normals![s + 2];
    }
  }
  return makeCloud(out, normals);
}

/**
 * Farthest-point down-sampling to m points: start from a random point, then repeatedly take the point
 * farthest from those chosen. O(n·m); evenly spread, unlike a random subset.
 */
export function farthestPointSample(cloud: PointCloud, m: number, rng: Rng): PointCloud {
  const n = cloud.count;
  if (n === 0) throw new RangeError('farthestPointSample: the point cloud is empty');
  if (m > n) throw new RangeError(`farthestPointSample: asked for ${m} points from ${n}`);
  const p = cloud.positions;
  const nearestSq = new Float64Array(n).fill(Infinity);
  const chosen = new Uint32Array(m);
  let current = rng.int(n);
  for (let k = 0; k < m; k++) {
    chosen[k] = current;
    const cx = p[current * 3],
      cy = p[current * 3 + 1],
      cz = p[current * 3 + 2];
    let best = -1,
      bestIdx = 0;
    for (let i = 0; i < n; i++) {
      const dx = p[i * 3] - cx,
        dy = p[i * 3 + 1] - cy,
        dz = p[i * 3 + 2] - cz;
      const d = dx * dx + dy * dy + dz * dz;
      if (d < nearestSq[i]) nearestSq[i] = d;
      if (nearestSq[i] > best) {
        best = nearestSq[i];
        bestIdx = i;
      }
    }
    current = bestIdx;
  }
  return gather(cloud, chosen);
}

export interface Normalised {
  readonly cloud: PointCloud;
  /** Subtracted before scaling, in file units. */
  readonly centre: readonly [number, number, number];
  /** Divided by: the largest distance from the centre, in file units. Real size = unit size × radius. */
  readonly radius: number;
}

/** Centre on the centroid and scale into the unit sphere; the centre and radius are kept for real sizes. */
export function normaliseToUnitSphere(
  cloud: PointCloud,
  centre?: readonly [number, number, number],
  radius?: number,
): Normalised {
  const p = cloud.positions;
  let cx = 0,
    cy = 0,
    cz = 0;
  if (centre) [cx, cy, cz] = centre;
  else {
    for (let i = 0; i < p.length; i += 3) {
      cx += p[i];
      cy += p[i + 1];
      cz += p[i + 2];
    }
    cx /= cloud.count;
    cy /= cloud.count;
    cz /= cloud.count;
  }
  let r = radius ?? 0;
  if (radius === undefined) {
    for (let i = 0; i < p.length; i += 3) {
      const d = (p[i] - cx) ** 2 + (p[i + 1] - cy) ** 2 + (p[i + 2] - cz) ** 2;
      if (d > r) r = d;
    }
    r = Math.sqrt(r);
  }
  if (!(r > 0)) throw new RangeError('normaliseToUnitSphere: all points coincide, the cloud has no size');
  const out = new Float32Array(p.length);
  for (let i = 0; i < p.length; i += 3) {
    out[i] = (p[i] - cx) / r;
    out[i + 1] = (p[i + 1] - cy) / r;
    out[i + 2] = (p[i + 2] - cz) / r;
  }
  return { cloud: makeCloud(out, cloud.normals), centre: [cx, cy, cz], radius: r };
}

/** Area-weighted centroid of a triangle surface (exact, independent of any sampling). */
export function surfaceCentroid(mesh: Mesh): [number, number, number] {
  const idx = mesh.indices!;
  const p = mesh.positions;
  let sx = 0,
    sy = 0,
    sz = 0,
    sa = 0;
  for (let t = 0; t < idx.length / 3; t++) {
    const a = idx[t * 3] * 3,
      b = idx[t * 3 + 1] * 3,
      c = idx[t * 3 + 2] * 3;
    const ux = p[b] - p[a],
      uy = p[b + 1] - p[a + 1],
      uz = p[b + 2] - p[a + 2];
    const vx = p[c] - p[a],
      vy = p[c + 1] - p[a + 1],
      vz = p[c + 2] - p[a + 2];
    const cx = uy * vz - uz * vy,
      cy = uz * vx - ux * vz,
      cz = ux * vy - uy * vx;
    const area = 0.5 * Math.sqrt(cx * cx + cy * cy + cz * cz);
    sx += (area * (p[a] + p[b] + p[c])) / 3;
    sy += (area * (p[a + 1] + p[b + 1] + p[c + 1])) / 3;
    sz += (area * (p[a + 2] + p[b + 2] + p[c + 2])) / 3;
    sa += area;
  }
  return [sx / sa, sy / sa, sz / sa];
}
