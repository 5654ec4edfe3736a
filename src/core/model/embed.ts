// Batched inference: embeddings for many parts, and the view tensors training and inference share.

import * as tf from '@tensorflow/tfjs';
import { Encoder, inputChannels, usesLocalShape, type InputFeatures } from './encoder';
import { localShapeOf } from '../points/local';
import { alignToPrincipalAxes, SIGN_FLIPS } from '../points/pca';
import { makeCloud } from '../points/cloud';
import { transformPoints } from '../points/rotation';
import { normaliseRows } from '../retrieval/index';

/** A part as the model sees it: a pool of unit-sphere points (stride 3) with normals. */
export interface ModelPart {
  readonly points: Float32Array;
  readonly normals: Float32Array;
  /** Local shape per pool point (points/local.ts), when the inputs use it; computed on demand otherwise. */
  readonly local?: Float32Array;
}

/** Parts with their local shape attached when the inputs need it (computed once per pool). */
export function withLocalShape(parts: readonly ModelPart[], features: InputFeatures): ModelPart[] {
  if (!usesLocalShape(features)) return [...parts];
  return parts.map((p) => (p.local ? p : { ...p, local: localShapeOf(p.points) }));
}

/**
 * Write the first n points of a cloud (repeated in order when it has fewer) into slot `slot` of a batch
 * buffer (B, n, F). Pools are random surface samples, so their first n points are a random subset already.
 */
export function fillSlot(out: Float32Array, slot: number, n: number, features: InputFeatures, points: Float32Array, normals: Float32Array, local?: Float32Array): void {
  const F = inputChannels(features);
  const count = points.length / 3;
  const withNormal = features === 'xyz+normal' || features === 'xyz+normal+local';
  const localAt = usesLocalShape(features) ? F - 3 : -1;
  if (localAt > 0 && !(local && local.length === points.length)) throw new RangeError('fillSlot: these inputs need the local shape of every point');
  for (let i = 0; i < n; i++) {
    const src = i % count;
    const o = (slot * n + i) * F;
    out[o] = points[src * 3]; out[o + 1] = points[src * 3 + 1]; out[o + 2] = points[src * 3 + 2];
    if (withNormal) { out[o + 3] = normals[src * 3]; out[o + 4] = normals[src * 3 + 1]; out[o + 5] = normals[src * 3 + 2]; }
    if (localAt > 0) { out[o + localAt] = local![src * 3]; out[o + localAt + 1] = local![src * 3 + 1]; out[o + localAt + 2] = local![src * 3 + 2]; }
    else if (features === 'xyz+unsigned-normal') {
      const nx = normals[src * 3], ny = normals[src * 3 + 1], nz = normals[src * 3 + 2];
      out[o + 3] = nx * nx; out[o + 4] = ny * ny; out[o + 5] = nz * nz;
      out[o + 6] = Math.SQRT2 * nx * ny; out[o + 7] = Math.SQRT2 * ny * nz; out[o + 8] = Math.SQRT2 * nz * nx;
    }
  }
}

/**
 * How parts are posed before the encoder sees them: rotated into their principal frame; kept in their files' axes
 * with each axis's sign left open (as for the principal frame: training flips, retrieval averages the four proper
 * sign choices); exactly as in the files; or both of the first two, by two encoders trained one after the other
 * (`file-and-principal`: a part's embedding is the two encoders' embeddings side by side).
 */
export type Pose = 'principal-axes' | 'file-axes' | 'as-is' | 'file-and-principal';
/** A pose that one encoder reads. */
export type SinglePose = Exclude<Pose, 'file-and-principal'>;
export const POSES: readonly Pose[] = ['principal-axes', 'file-axes', 'as-is', 'file-and-principal'];
/** The poses in plain words, for the command line and the workbench. */
export const POSE_LABELS: Record<Pose, string> = {
  'principal-axes': 'principal axes',
  'file-axes': "the files' axes, signs open",
  'as-is': 'exactly as in the files',
  'file-and-principal': "two encoders: the files' axes and principal axes",
};

/** The pose each encoder of a model reads, in the order they are trained and stored. */
export function memberPoses(pose: Pose): SinglePose[] {
  return pose === 'file-and-principal' ? ['file-axes', 'principal-axes'] : [pose];
}

/** What retrieval embeds with: one encoder, or one per pose of `memberPoses` (file-and-principal). */
export type Encoders = Encoder | readonly Encoder[];

export function encoderList(e: Encoders): readonly Encoder[] {
  return e instanceof Encoder ? [e] : e;
}

export function disposeEncoders(e: Encoders): void {
  for (const x of encoderList(e)) x.dispose();
}

/** Parts in the pose the model expects: rotated into their principal frame, or unchanged. */
export function posed(parts: readonly ModelPart[], pose: SinglePose): ModelPart[] {
  if (pose !== 'principal-axes') return [...parts];
  return parts.map((p) => {
    const c = alignToPrincipalAxes(makeCloud(p.points, p.normals));
    return { points: c.positions, normals: c.normals ?? p.normals, ...(p.local ? { local: p.local } : {}) };
  });
}

/**
 * Disjoint point subsets of each part whose embeddings retrieval averages (test-time augmentation). Measured
 * on both real sets, three seeds each (docs/results.md): 4 lifted first tier and mAP over 1.
 */
export const RETRIEVAL_RESAMPLINGS = 4;

/** Subset r of a part's pool: n points from offset r·n on (pools are random surface samples, so any run of
 *  consecutive points is a random subset; r = 0 is the first n, what a single embedding reads). */
export function resampled(p: ModelPart, r: number, n: number): ModelPart {
  const count = p.points.length / 3;
  const offset = (r * n) % count;
  if (offset === 0) return p;
  const take = (a: Float32Array) => {
    const out = new Float32Array(n * 3);
    for (let k = 0; k < n; k++) { const s = ((offset + k) % count) * 3; out[3 * k] = a[s]; out[3 * k + 1] = a[s + 1]; out[3 * k + 2] = a[s + 2]; }
    return out;
  };
  return { points: take(p.points), normals: take(p.normals), ...(p.local ? { local: take(p.local) } : {}) };
}

/**
 * Retrieval embeddings: the average (then renormalised) over `resamplings` disjoint point subsets of each part
 * and, unless the pose is exactly as in the files, over the four proper sign choices of the frame, so the frame's sign
 * ambiguity cannot change the result. The pose is found from the whole pool, once. With two encoders
 * (file-and-principal) each embeds in its own pose and the two unit rows are set side by side, scaled by 1/√2, so the
 * row stays unit length and its cosine is the mean of the two encoders' cosines.
 */
export function embedForRetrieval(encoders: Encoders, parts: readonly ModelPart[], n: number, pose: Pose, resamplings = RETRIEVAL_RESAMPLINGS): Float32Array {
  const list = encoderList(encoders), poses = memberPoses(pose);
  if (list.length !== poses.length) throw new RangeError(`embedForRetrieval: the pose "${pose}" needs ${poses.length} encoder(s), got ${list.length}`);
  if (list.length === 1) return embedInPose(list[0], parts, n, poses[0], resamplings);
  return sideBySide(list.map((e, m) => embedInPose(e, parts, n, poses[m], resamplings)), parts.length);
}

/**
 * Unit-row embeddings of the same `count` parts (count × D_m each, row-major) set side by side, each scaled by
 * 1/√m: the rows stay unit length and their cosine is the mean of the m cosines.
 */
export function sideBySide(embeddings: readonly Float32Array[], count: number): Float32Array {
  const dims = embeddings.map((v) => v.length / Math.max(1, count));
  const D = dims.reduce((a, b) => a + b, 0), scale = 1 / Math.sqrt(embeddings.length);
  const out = new Float32Array(count * D);
  for (let i = 0; i < count; i++) {
    let o = i * D;
    embeddings.forEach((v, m) => { for (let d = 0; d < dims[m]; d++) out[o++] = v[i * dims[m] + d] * scale; });
  }
  return out;
}

function embedInPose(encoder: Encoder, parts: readonly ModelPart[], n: number, pose: SinglePose, resamplings: number): Float32Array {
  if (!(Number.isInteger(resamplings) && resamplings >= 1)) throw new RangeError(`embedForRetrieval: resamplings must be a whole number ≥ 1, got ${resamplings}`);
  const ready = posed(withLocalShape(parts, encoder.config.inputFeatures), pose);
  let sum: Float32Array | null = null;
  for (let r = 0; r < resamplings; r++) {
    const subset = ready.map((p) => resampled(p, r, n));
    for (const flip of pose === 'as-is' ? [null] : SIGN_FLIPS) {
      const turned = flip ? subset.map((p) => ({ ...p, points: transformPoints(flip, p.points), normals: transformPoints(flip, p.normals) })) : subset;
      const e = embedParts(encoder, turned, n);
      if (!sum) sum = e; else for (let i = 0; i < e.length; i++) sum[i] += e[i];
    }
  }
  return normaliseRows(sum!, sum!.length / Math.max(1, parts.length));
}

/** Unit-length embeddings (count × D, row-major) of parts, n points each, in batches. */
export function embedParts(encoder: Encoder, parts: readonly ModelPart[], n: number, batch = 32): Float32Array {
  const F = inputChannels(encoder.config.inputFeatures);
  let D = 0;
  const chunks: Float32Array[] = [];
  for (let start = 0; start < parts.length; start += batch) {
    const group = parts.slice(start, start + batch);
    const buf = new Float32Array(group.length * n * F);
    const local = usesLocalShape(encoder.config.inputFeatures);
    group.forEach((p, i) => fillSlot(buf, i, n, encoder.config.inputFeatures, p.points, p.normals, local ? p.local ?? localShapeOf(p.points) : undefined));
    const out = tf.tidy(() => encoder.embed(tf.tensor3d(buf, [group.length, n, F])));
    D = out.shape[1];
    chunks.push(out.dataSync() as Float32Array);
    out.dispose();
  }
  const all = new Float32Array(parts.length * D);
  let o = 0;
  for (const c of chunks) { all.set(c, o); o += c.length; }
  return all;
}
