// How far one cloud is from another: Chamfer and Hausdorff distances over nearest points (nearest.ts).

import type { PointCloud } from './cloud';
import { assertValidCloud } from './cloud';
import { NearestPoint } from './nearest';

function nearestSqFrom(from: PointCloud, to: NearestPoint): Float64Array {
  const d = new Float64Array(from.count);
  const p = from.positions;
  for (let i = 0; i < from.count; i++) d[i] = to.distanceSq(p[i * 3], p[i * 3 + 1], p[i * 3 + 2]);
  return d;
}

export interface CloudDistances {
  /** Symmetric Chamfer distance with squared distances (Fan, Su & Guibas 2017):
   *  CD(A, B) = mean_{a∈A} min_{b∈B} ‖a − b‖² + mean_{b∈B} min_{a∈A} ‖a − b‖². */
  readonly chamfer: number;
  /** Hausdorff distance: max( max_a min_b ‖a − b‖, max_b min_a ‖a − b‖ ). */
  readonly hausdorff: number;
}

export function cloudDistances(a: PointCloud, b: PointCloud): CloudDistances {
  assertValidCloud(a, 'cloudDistances (first cloud)');
  assertValidCloud(b, 'cloudDistances (second cloud)');
  const ab = nearestSqFrom(a, new NearestPoint(b.positions));
  const ba = nearestSqFrom(b, new NearestPoint(a.positions));
  let sab = 0,
    sba = 0,
    mab = 0,
    mba = 0;
  for (const d of ab) {
    sab += d;
    if (d > mab) mab = d;
  }
  for (const d of ba) {
    sba += d;
    if (d > mba) mba = d;
  }
  return { chamfer: sab / a.count + sba / b.count, hausdorff: Math.sqrt(Math.max(mab, mba)) };
}

export const chamferDistance = (a: PointCloud, b: PointCloud): number => cloudDistances(a, b).chamfer;
export const hausdorffDistance = (a: PointCloud, b: PointCloud): number => cloudDistances(a, b).hausdorff;
