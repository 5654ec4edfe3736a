// Shared pieces of the contrastive losses.

import * as tf from '@tensorflow/tfjs';

/** Added to masked logits; exp(−1e9) is 0 in float32, so masked entries drop out of every log-sum-exp. */
export const MASKED_LOGIT = -1e9;

export function assertPairs(za: tf.Tensor2D, zb: tf.Tensor2D, loss: string): number {
  const [B, D] = za.shape;
  if (zb.shape[0] !== B || zb.shape[1] !== D)
    throw new RangeError(`${loss}: the two views have shapes ${za.shape} and ${zb.shape}`);
  if (B < 2) throw new RangeError(`${loss}: a batch needs at least 2 parts (so each has a negative), got ${B}`);
  return B;
}

/** Cosine similarities of all 2B views: z = [za; zb] row-normalised, S = z·zᵀ.  (2B, D) x (D, 2B) -> (2B, 2B) */
export function similarityMatrix(za: tf.Tensor2D, zb: tf.Tensor2D): tf.Tensor2D {
  const z = tf.concat([za, zb], 0);
  const n = tf.div(z, tf.maximum(tf.norm(z, 'euclidean', 1, true), 1e-12));
  return tf.matMul(n, tf.transpose(n));
}

/** Identity mask (2B, 2B) as 0/1 float. */
export function selfMask(n: number): tf.Tensor2D {
  return tf.eye(n);
}

/** Squared Euclidean distances between the rows of unit vectors: ‖a − b‖² = 2 − 2·cos. */
export function squaredDistances(za: tf.Tensor2D, zb: tf.Tensor2D): tf.Tensor2D {
  return tf.maximum(tf.sub(2, tf.mul(2, similarityMatrix(za, zb))), 0);
}
