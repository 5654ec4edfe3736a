// Batched inference: unit-length embeddings of many parts, and the retrieval embedding that averages over point
// subsets, the frame's sign choices and, with two encoders, both poses.

import * as tf from '@tensorflow/tfjs';
import { SIGN_FLIPS } from '../points/pca';
import { transformPoints } from '../points/rotation';
import { normaliseRows } from '../vectors';
import { shapeGrid, shapeGridLength, type ShapeGridOptions } from '../descriptors/shape-grid';
import { Encoder } from './encoder';
import { inputChannels } from './encoder-config';
import { memberPoses, type Pose, type SinglePose } from './train-config';
import { fillSlot, posed, resampled, type ModelPart } from './views';

/** What retrieval embeds with: one encoder, or one per pose of `memberPoses` (file-and-principal). */
export type Encoders = Encoder | readonly Encoder[];

export function encoderList(e: Encoders): readonly Encoder[] {
  return e instanceof Encoder ? [e] : e;
}

export function disposeEncoders(e: Encoders): void {
  for (const x of encoderList(e)) x.dispose();
}

/**
 * Disjoint point subsets of each part whose embeddings retrieval averages (test-time augmentation). Measured
 * on the real sets, three seeds each (docs/log/): 4 lifted first tier and mAP over 1 by 0.006–0.013; 3 against 4
 * moved mAP by +0.000 / −0.003 / −0.002 (furniture, second set, KiCad) and first tier by at most 0.003, for a
 * quarter less embedding (two encoders: 24 forward passes a part instead of 32).
 */
export const RETRIEVAL_RESAMPLINGS = 3;

/**
 * Retrieval embeddings: the average (then renormalised) over `resamplings` disjoint point subsets of each part
 * and, unless the pose is exactly as in the files, over the four proper sign choices of the frame, so the frame's sign
 * ambiguity cannot change the result. The pose is found from the whole pool, once. With two encoders
 * (file-and-principal) each embeds in its own pose and the two unit rows are set side by side, scaled by 1/√2, so the
 * row stays unit length and its cosine is the mean of the two encoders' cosines.
 */
export function embedForRetrieval(
  encoders: Encoders,
  parts: readonly ModelPart[],
  n: number,
  pose: Pose,
  resamplings = RETRIEVAL_RESAMPLINGS,
): Float32Array {
  const list = encoderList(encoders),
    poses = memberPoses(pose);
  if (list.length !== poses.length)
    throw new RangeError(`embedForRetrieval: the pose "${pose}" needs ${poses.length} encoder(s), got ${list.length}`);
  if (!(Number.isInteger(resamplings) && resamplings >= 1))
    throw new RangeError(`embedForRetrieval: resamplings must be a whole number ≥ 1, got ${resamplings}`);
  // Neighbour lists depend only on distances, which no pose or sign flip changes: each subset's lists are found
  // once, in the files' coordinates, and read by every pose and flip (the same lists whether one encoder or two).
  const k = list[0].config.edge?.k;
  const shared: NeighbourCache[] = [];
  for (let r = 0; r < resamplings; r++)
    shared.push(
      k && list.every((e) => e.config.edge?.k === k)
        ? neighbourLists(
            list[0],
            parts.map((p) => resampled(p, r, n)),
            n,
          )
        : [],
    );
  const learned =
    list.length === 1
      ? embedInPose(list[0], parts, n, poses[0], shared)
      : sideBySide(
          list.map((e, m) => embedInPose(e, parts, n, poses[m], shared)),
          parts.length,
        );
  const grid = list[0].config.surfaceGrid;
  if (!grid || grid.share === 0) return learned;
  return fused(learned, surfaceGrids(parts, poses, { cells: grid.cells, facing: true }), parts.length, grid.share);
}

/**
 * The surface grid of each part's whole pool in every pose the encoders read (sign-free, as retrieval averages
 * the sign choices), side by side (scaled 1/√m): unit rows.
 */
export function surfaceGrids(
  parts: readonly ModelPart[],
  poses: readonly SinglePose[],
  grid: Omit<ShapeGridOptions, 'signFree'>,
): Float32Array {
  return sideBySide(
    poses.map((pose) => {
      // 'as-is' keeps the files' signs; every other pose leaves them open.
      const options = { ...grid, signFree: pose !== 'as-is' };
      const len = shapeGridLength(options),
        out = new Float32Array(parts.length * len);
      posed(parts, pose).forEach((p, i) => out.set(shapeGrid(p.points, p.normals, options), i * len));
      return out;
    }),
    parts.length,
  );
}

/** Unit rows a and b side by side, scaled √(1 − share) and √share: unit rows whose cosine is (1 − share)·a + share·b. */
export function fused(a: Float32Array, b: Float32Array, count: number, share: number): Float32Array {
  const da = a.length / Math.max(1, count),
    db = b.length / Math.max(1, count),
    D = da + db;
  const sa = Math.sqrt(1 - share),
    sb = Math.sqrt(share);
  const out = new Float32Array(count * D);
  for (let i = 0; i < count; i++) {
    for (let d = 0; d < da; d++) out[i * D + d] = a[i * da + d] * sa;
    for (let d = 0; d < db; d++) out[i * D + da + d] = b[i * db + d] * sb;
  }
  return out;
}

/**
 * Unit-row embeddings of the same `count` parts (count × D_m each, row-major) set side by side, each scaled by
 * 1/√m: the rows stay unit length and their cosine is the mean of the m cosines.
 */
export function sideBySide(embeddings: readonly Float32Array[], count: number): Float32Array {
  const dims = embeddings.map((v) => v.length / Math.max(1, count));
  const D = dims.reduce((a, b) => a + b, 0),
    scale = 1 / Math.sqrt(embeddings.length);
  const out = new Float32Array(count * D);
  for (let i = 0; i < count; i++) {
    let o = i * D;
    embeddings.forEach((v, m) => {
      for (let d = 0; d < dims[m]; d++) out[o++] = v[i * dims[m] + d] * scale;
    });
  }
  return out;
}

/** Each subset's neighbour lists (`shared[r]`, per batch) are read here, or filled by the first pass when empty. */
function embedInPose(
  encoder: Encoder,
  parts: readonly ModelPart[],
  n: number,
  pose: SinglePose,
  shared: readonly NeighbourCache[],
): Float32Array {
  const ready = posed(parts, pose);
  let sum: Float32Array | null = null;
  for (let r = 0; r < shared.length; r++) {
    const subset = ready.map((p) => resampled(p, r, n));
    for (const flip of pose === 'as-is' ? [null] : SIGN_FLIPS) {
      const turned = flip
        ? subset.map((p) => ({
            ...p,
            points: transformPoints(flip, p.points),
            normals: transformPoints(flip, p.normals),
          }))
        : subset;
      const e = embedParts(encoder, turned, n, EMBED_BATCH, shared[r]);
      if (!sum) sum = e;
      else for (let i = 0; i < e.length; i++) sum[i] += e[i];
    }
  }
  return normaliseRows(sum!, sum!.length / Math.max(1, parts.length));
}

/** Parts per forward pass when embedding (larger batches were no faster: 5.0, 5.2, 6.4 ms a part at 32, 64, 128). */
export const EMBED_BATCH = 32;

/**
 * Neighbour lists per batch (index = batch number), filled by `neighbourLists` or the first `embedParts` call and
 * read by the next ones: only for the same parts' points up to a turn or sign flip (distances unchanged), in the
 * same order and batch size.
 */
export type NeighbourCache = (Int32Array | null)[];

/** The EdgeConv neighbour lists of parts' first n points, batch by batch as `embedParts` reads them. */
export function neighbourLists(
  encoder: Encoder,
  parts: readonly ModelPart[],
  n: number,
  batch = EMBED_BATCH,
): NeighbourCache {
  const lists: NeighbourCache = [];
  for (let start = 0; start < parts.length; start += batch) {
    const group = parts.slice(start, start + batch);
    lists.push(encoder.neighbours(batchInput(encoder, group, n), group.length, n));
  }
  return lists;
}

/** A batch's input buffer (B, n, F) as the encoder reads it. */
function batchInput(encoder: Encoder, group: readonly ModelPart[], n: number): Float32Array {
  const buf = new Float32Array(group.length * n * inputChannels(encoder.config.inputFeatures));
  group.forEach((p, i) => fillSlot(buf, i, n, encoder.config.inputFeatures, p.points, p.normals));
  return buf;
}

/** Unit-length embeddings (count × D, row-major) of parts, n points each, in batches. */
export function embedParts(
  encoder: Encoder,
  parts: readonly ModelPart[],
  n: number,
  batch = EMBED_BATCH,
  neighbours?: NeighbourCache,
): Float32Array {
  const F = inputChannels(encoder.config.inputFeatures);
  let D = 0;
  const chunks: Float32Array[] = [];
  for (let start = 0; start < parts.length; start += batch) {
    const group = parts.slice(start, start + batch);
    const buf = batchInput(encoder, group, n);
    const g = start / batch;
    let lists: Int32Array | null | undefined = neighbours?.[g];
    if (lists === undefined) {
      lists = encoder.neighbours(buf, group.length, n);
      if (neighbours) neighbours[g] = lists;
    }
    const out = tf.tidy(() => encoder.embed(tf.tensor3d(buf, [group.length, n, F]), lists ?? undefined));
    D = out.shape[1];
    chunks.push(out.dataSync() as Float32Array);
    out.dispose();
  }
  const all = new Float32Array(parts.length * D);
  let o = 0;
  for (const c of chunks) {
    all.set(c, o);
    o += c.length;
  }
  return all;
}

/**
 * Retrieval embeddings of `parts` shared between this thread and another: the first whole batches (about
 * `remoteShare` of them) go to `remote`, which is asked first so both work at once, and the rest are embedded here by
 * `local`. The bytes are those of `local` over all the parts, since a part's embedding depends only on its own
 * batch and the split falls between batches.
 */
export async function embedShared(
  parts: readonly ModelPart[],
  local: (parts: readonly ModelPart[]) => Float32Array,
  remote: (parts: readonly ModelPart[]) => Promise<Float32Array>,
  remoteShare = 0.5,
  batch = EMBED_BATCH,
): Promise<Float32Array> {
  if (!(remoteShare >= 0 && remoteShare <= 1)) throw new RangeError(`embedShared: remoteShare ${remoteShare}`);
  const batches = Math.ceil(parts.length / batch);
  const split = Math.min(parts.length, Math.round(batches * remoteShare) * batch);
  if (split === 0) return local(parts);
  const away = remote(parts.slice(0, split));
  // Whatever happens here, the other thread's answer is awaited, so a failure there is never left unheard.
  let here: Float32Array;
  try {
    here = split < parts.length ? local(parts.slice(split)) : new Float32Array(0);
  } catch (err) {
    await away.catch(() => {});
    throw err;
  }
  const there = await away;
  const all = new Float32Array(there.length + here.length);
  all.set(there, 0);
  all.set(here, there.length);
  return all;
}
