// Triplet loss with in-batch mining (Schroff, Kalenichenko & Philbin 2015, "FaceNet", eq. 1):
//   L = mean over anchors of max(0, ‖f(a) − f(p)‖² − ‖f(a) − f(n)‖² + α)
// on unit-length embeddings; each view's positive is its twin, negatives are the views of other parts.
// 'hard': the closest negative. 'semi-hard' (FaceNet §3.2): the closest negative farther than the positive,
// i.e. ‖a−p‖² < ‖a−n‖² (< ‖a−p‖² + α); when no negative is farther, the farthest negative is used.

import * as tf from '@tensorflow/tfjs';
import { assertPairs, squaredDistances } from './common';

export type Mining = 'hard' | 'semi-hard';

const BIG = 1e6;

export function tripletLoss(za: tf.Tensor2D, zb: tf.Tensor2D, margin: number, mining: Mining): tf.Scalar {
  if (!(margin >= 0)) throw new RangeError(`tripletLoss: margin must be ≥ 0, got ${margin}`);
  const B = assertPairs(za, zb, 'tripletLoss');
  return tf.tidy(() => {
    const d = squaredDistances(za, zb); // (2B, 2B)
    const idx = tf.range(0, 2 * B, 1, 'int32');
    const part = tf.mod(idx, B);
    const samePart = tf.cast(tf.equal(part.reshape([2 * B, 1]), part.reshape([1, 2 * B])), 'float32'); // self and twin
    const pos = tf.concat([tf.range(B, 2 * B, 1, 'int32'), tf.range(0, B, 1, 'int32')]);
    const dPos = tf.sum(tf.mul(d, tf.oneHot(pos, 2 * B)), 1); // (2B)
    // Negatives only: push same-part entries out of the minimum.
    const negOnly = tf.add(d, tf.mul(samePart, BIG));
    let dNeg: tf.Tensor1D;
    if (mining === 'hard') {
      dNeg = tf.min(negOnly, 1) as tf.Tensor1D;
    } else {
      // Masks by tf.step (gradient 0) rather than comparisons, which have no gradient in tfjs.
      const farther = tf.step(tf.sub(d, dPos.reshape([2 * B, 1])));
      const candidates = tf.add(negOnly, tf.mul(tf.sub(1, farther), BIG)); // only negatives beyond the positive
      const semi = tf.min(candidates, 1);
      const farthest = tf.max(tf.sub(d, tf.mul(samePart, BIG)), 1);
      const found = tf.step(tf.sub(BIG / 2, semi));
      dNeg = tf.add(tf.mul(found, semi), tf.mul(tf.sub(1, found), farthest)) as tf.Tensor1D;
    }
    return tf.mean(tf.relu(tf.add(tf.sub(dPos, dNeg), margin))) as tf.Scalar;
  });
}
