// Margin contrastive loss (Chopra, Hadsell & LeCun 2005, "Learning a similarity metric discriminatively";
// in the form of Hadsell, Chopra & LeCun 2006, eq. 4):
//   for every pair of views (i, j), i < j, with Euclidean distance d on unit-length embeddings:
//   L_ij = y·½·d² + (1 − y)·½·max(0, m − d)²,   y = 1 when i and j are views of the same part.
//   L = mean over all pairs.

import * as tf from '@tensorflow/tfjs';
import { assertPairs, squaredDistances } from './common';

export function marginContrastiveLoss(za: tf.Tensor2D, zb: tf.Tensor2D, margin: number): tf.Scalar {
  if (!(margin > 0)) throw new RangeError(`marginContrastiveLoss: margin must be > 0, got ${margin}`);
  const B = assertPairs(za, zb, 'marginContrastiveLoss');
  return tf.tidy(() => {
    const d2 = squaredDistances(za, zb); // (2B, 2B)
    const d = tf.sqrt(tf.add(d2, 1e-12)); // ε keeps the gradient of √ finite at d = 0
    const idx = tf.range(0, 2 * B, 1, 'int32');
    const part = tf.mod(idx, B);
    const y = tf.cast(tf.equal(part.reshape([2 * B, 1]), part.reshape([1, 2 * B])), 'float32');
    const upper = tf.cast(tf.greater(idx.reshape([1, 2 * B]), idx.reshape([2 * B, 1])), 'float32'); // i < j
    const term = tf.add(
      tf.mul(y, tf.mul(0.5, d2)),
      tf.mul(tf.sub(1, y), tf.mul(0.5, tf.square(tf.relu(tf.sub(margin, d))))),
    );
    const pairs = (2 * B * (2 * B - 1)) / 2;
    return tf.div(tf.sum(tf.mul(term, upper)), pairs) as tf.Scalar;
  });
}
