// From an imported mesh to the normalised cloud the encoder sees, keeping the real size for display and filters.

import type { ImportedMesh } from '../mesh/types';
import { createRng, hashString } from '../rng';
import { makeCloud, type PointCloud } from './cloud';
import { cumulativeAreas, normaliseToUnitSphere, resamplePoints, sampleSurface, surfaceCentroid } from './sample';

export interface SampledPart {
  readonly name: string;
  /** Unit-sphere cloud around the surface centroid. */
  readonly cloud: PointCloud;
  /** Normalisation kept so sizes can be shown in file units. */
  readonly centre: readonly [number, number, number];
  readonly radius: number;
  readonly extents: readonly [number, number, number];
  /** Bounding-box diagonal in file units: the "real size" that size filters compare. */
  readonly diagonal: number;
}

/** Deterministic: the same part, point count and seed give the same cloud. */
export function samplePart(part: ImportedMesh, points: number, seed: number): SampledPart {
  const rng = createRng(hashString(part.name, seed));
  const { mesh, info } = part;
  let raw: PointCloud;
  let centre: [number, number, number];
  if (mesh.indices) {
    raw = sampleSurface(mesh, points, rng, { cumulative: cumulativeAreas(mesh) });
    centre = surfaceCentroid(mesh);
  } else {
    raw = resamplePoints(makeCloud(mesh.positions), points, rng);
    const all = mesh.positions;
    let x = 0,
      y = 0,
      z = 0;
    for (let i = 0; i < all.length; i += 3) {
      x += all[i];
      y += all[i + 1];
      z += all[i + 2];
    }
    const n = all.length / 3;
    centre = [x / n, y / n, z / n];
  }
  // Radius from every vertex, not from the sample, so it does not depend on the seed.
  let r = 0;
  const v = mesh.positions;
  for (let i = 0; i < v.length; i += 3) {
    const d = (v[i] - centre[0]) ** 2 + (v[i + 1] - centre[1]) ** 2 + (v[i + 2] - centre[2]) ** 2;
    if (d > r) r = d;
  }
  if (mesh.indices && !info.closed && raw.normals) orientAwayFromCentre(raw.positions, raw.normals, centre);
  const norm = normaliseToUnitSphere(raw, centre, Math.sqrt(r));
  const [ex, ey, ez] = info.extents;
  return {
    name: part.name,
    cloud: norm.cloud,
    centre: norm.centre,
    radius: norm.radius,
    extents: info.extents,
    diagonal: Math.sqrt(ex * ex + ey * ey + ez * ez),
  };
}

/**
 * Open meshes have no inside, so their face normals point either way: turn each to face away from the
 * centroid (common practice for unoriented normals). Closed meshes keep their true outward normals.
 */
export function orientAwayFromCentre(
  points: Float32Array,
  normals: Float32Array,
  centre: readonly [number, number, number],
): void {
  for (let i = 0; i < points.length; i += 3) {
    const d =
      (points[i] - centre[0]) * normals[i] +
      (points[i + 1] - centre[1]) * normals[i + 1] +
      (points[i + 2] - centre[2]) * normals[i + 2];
    if (d < 0) {
      normals[i] = -normals[i];
      normals[i + 1] = -normals[i + 1];
      normals[i + 2] = -normals[i + 2];
    }
  }
}
