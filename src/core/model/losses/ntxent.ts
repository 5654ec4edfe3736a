// NT-Xent, the normalised temperature-scaled cross-entropy of SimCLR (Chen, Kornblith, Norouzi & Hinton 2020,
// "A Simple Framework for Contrastive Learning of Visual Representations", eq. 1):
//   for the 2B views of B parts, s_ij = cos(z_i, z_j), and for each view i with positive p(i) (its twin):
//   ℓ_i = −log( exp(s_i,p(i)/τ) / Σ_{k≠i} exp(s_ik/τ) ),   L = (1/2B) Σ_i ℓ_i.
// Computed as log-sum-exp over the masked logits minus the positive logit (numerically stable).
// With `exclude` (B, B), 1 where part b is not to be a negative of part a, both views of b leave a's denominator:
// false-negative elimination (Huynh, Kornblith, Walter, Maire & Azizi 2022, "Boosting Contrastive Self-Supervised
// Learning with False Negative Cancellation", §3.2), the positive twin always kept.

import * as tf from '@tensorflow/tfjs';
import { assertPairs, MASKED_LOGIT, selfMask, similarityMatrix } from './common';

export function ntXentLoss(
  za: tf.Tensor2D,
  zb: tf.Tensor2D,
  temperature: number,
  exclude: tf.Tensor2D | null = null,
): tf.Scalar {
  if (!(temperature > 0)) throw new RangeError(`ntXentLoss: temperature must be > 0, got ${temperature}`);
  const B = assertPairs(za, zb, 'ntXentLoss');
  return tf.tidy(() => {
    const logits = tf.div(similarityMatrix(za, zb), temperature); // (2B, 2B)
    // Self-similarity removed, and the excluded parts' views (never the twin: the diagonal of `exclude` is cleared).
    const removed = exclude
      ? tf.add(selfMask(2 * B), tf.tile(tf.mul(exclude, tf.sub(1, tf.eye(B))), [2, 2]))
      : selfMask(2 * B);
    const masked = tf.add(logits, tf.mul(removed, MASKED_LOGIT));
    const lse = tf.logSumExp(masked, 1); // (2B)
    // Positive of view i is i + B (mod 2B): pick it with a one-hot mask.
    const pos = tf.concat([tf.range(B, 2 * B, 1, 'int32'), tf.range(0, B, 1, 'int32')]);
    const positive = tf.sum(tf.mul(logits, tf.oneHot(pos, 2 * B)), 1); // (2B)
    return tf.mean(tf.sub(lse, positive)) as tf.Scalar;
  });
}
