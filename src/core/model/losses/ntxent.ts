// NT-Xent, the normalised temperature-scaled cross-entropy of SimCLR (Chen, Kornblith, Norouzi & Hinton 2020,
// "A Simple Framework for Contrastive Learning of Visual Representations", eq. 1):
//   for the 2B views of B parts, s_ij = cos(z_i, z_j), and for each view i with positive p(i) (its twin):
//   ℓ_i = −log( exp(s_i,p(i)/τ) / Σ_{k≠i} exp(s_ik/τ) ),   L = (1/2B) Σ_i ℓ_i.
// Computed as log-sum-exp over the masked logits minus the positive logit (numerically stable).
// With `exclude` (B, B), 1 where part b is not to be a negative of part a, both views of b leave a's denominator:
// false-negative elimination (Huynh, Kornblith, Walter, Maire & Azizi 2022, "Boosting Contrastive Self-Supervised
// Learning with False Negative Cancellation", §3.2), the positive twin always kept.
// With `memory`, the views of earlier steps (unit rows, no gradient) join every anchor's denominator as further
// negatives: cross-batch memory (Wang, Zhang, Huang & Scott 2020, "Cross-Batch Memory for Embedding Learning", §4),
// each memory row left out of the anchors whose own part (or an excluded part) it is a view of.

import * as tf from '@tensorflow/tfjs';
import { assertPairs, MASKED_LOGIT, selfMask, similarityMatrix } from './common';

/** Negatives from earlier steps: M unit rows (M, D) and, per anchor view (2B, M), 1 where a row may not be its negative. */
export interface MemoryNegatives {
  readonly rows: tf.Tensor2D;
  readonly blocked: tf.Tensor2D;
}

export function ntXentLoss(
  za: tf.Tensor2D,
  zb: tf.Tensor2D,
  temperature: number,
  exclude: tf.Tensor2D | null = null,
  memory: MemoryNegatives | null = null,
): tf.Scalar {
  if (!(temperature > 0)) throw new RangeError(`ntXentLoss: temperature must be > 0, got ${temperature}`);
  const B = assertPairs(za, zb, 'ntXentLoss');
  return tf.tidy(() => {
    const logits = tf.div(similarityMatrix(za, zb), temperature); // (2B, 2B)
    // Self-similarity removed, and the excluded parts' views (never the twin: the diagonal of `exclude` is cleared).
    const removed = exclude
      ? tf.add(selfMask(2 * B), tf.tile(tf.mul(exclude, tf.sub(1, tf.eye(B))), [2, 2]))
      : selfMask(2 * B);
    let masked = tf.add(logits, tf.mul(removed, MASKED_LOGIT));
    if (memory && memory.rows.shape[0] > 0) {
      const z = tf.concat([za, zb], 0);
      const n = tf.div(z, tf.maximum(tf.norm(z, 'euclidean', 1, true), 1e-12));
      const past = tf.div(tf.matMul(n, memory.rows, false, true), temperature); // (2B, M)
      masked = tf.concat([masked, tf.add(past, tf.mul(memory.blocked, MASKED_LOGIT))], 1);
    }
    const lse = tf.logSumExp(masked, 1); // (2B)
    // Positive of view i is i + B (mod 2B): pick it with a one-hot mask.
    const pos = tf.concat([tf.range(B, 2 * B, 1, 'int32'), tf.range(0, B, 1, 'int32')]);
    const positive = tf.sum(tf.mul(logits, tf.oneHot(pos, 2 * B)), 1); // (2B)
    return tf.mean(tf.sub(lse, positive)) as tf.Scalar;
  });
}
