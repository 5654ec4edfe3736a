// What the encoder reads of a part: its pool of points posed as the model expects, and the batch buffers that
// training and inference fill from it. Plain arrays, no tfjs.

import { makeCloud } from '../points/cloud';
import { alignToPrincipalAxes } from '../points/pca';
import { inputChannels, type InputFeatures } from './encoder-config';
import type { SinglePose } from './train-config';

/** A part as the model sees it: a pool of unit-sphere points (stride 3) with normals. */
export interface ModelPart {
  readonly points: Float32Array;
  readonly normals: Float32Array;
}

/**
 * Write the first n points of a cloud (repeated in order when it has fewer) into slot `slot` of a batch
 * buffer (B, n, F). Pools are random surface samples, so their first n points are a random subset already.
 */
export function fillSlot(
  out: Float32Array,
  slot: number,
  n: number,
  features: InputFeatures,
  points: Float32Array,
  normals: Float32Array,
): void {
  const F = inputChannels(features);
  const count = points.length / 3;
  for (let i = 0; i < n; i++) {
    const src = i % count;
    const o = (slot * n + i) * F;
    out[o] = points[src * 3];
    out[o + 1] = points[src * 3 + 1];
    out[o + 2] = points[src * 3 + 2];
    if (features === 'xyz+normal') {
      out[o + 3] = normals[src * 3];
      out[o + 4] = normals[src * 3 + 1];
      out[o + 5] = normals[src * 3 + 2];
    } else if (features === 'xyz+unsigned-normal') {
      const nx = normals[src * 3],
        ny = normals[src * 3 + 1],
        nz = normals[src * 3 + 2];
      out[o + 3] = nx * nx;
      out[o + 4] = ny * ny;
      out[o + 5] = nz * nz;
      out[o + 6] = Math.SQRT2 * nx * ny;
      out[o + 7] = Math.SQRT2 * ny * nz;
      out[o + 8] = Math.SQRT2 * nz * nx;
    }
  }
}

/** Parts in the pose the model expects: rotated into their principal frame, or unchanged. */
export function posed(parts: readonly ModelPart[], pose: SinglePose): ModelPart[] {
  if (pose !== 'principal-axes') return [...parts];
  return parts.map((p) => {
    const c = alignToPrincipalAxes(makeCloud(p.points, p.normals));
    return { points: c.positions, normals: c.normals ?? p.normals };
  });
}

/** Subset r of a part's pool: n points from offset r·n on (pools are random surface samples, so any run of
 *  consecutive points is a random subset; r = 0 is the first n, what a single embedding reads). */
export function resampled(p: ModelPart, r: number, n: number): ModelPart {
  const count = p.points.length / 3;
  const offset = (r * n) % count;
  if (offset === 0) return p;
  const take = (a: Float32Array) => {
    const out = new Float32Array(n * 3);
    for (let k = 0; k < n; k++) {
      const s = ((offset + k) % count) * 3;
      out[3 * k] = a[s];
      out[3 * k + 1] = a[s + 1];
      out[3 * k + 2] = a[s + 2];
    }
    return out;
  };
  return { points: take(p.points), normals: take(p.normals) };
}
