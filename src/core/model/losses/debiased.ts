// Debiased NT-Xent (Chuang, Robinson, Lin, Torralba & Jegelka 2020, "Debiased Contrastive Learning", NeurIPS,
// eq. 6 with M = 1): without labels some "negatives" are look-alikes of the anchor. With a prior τ⁺ for the share
// of them, the negative term is corrected to
//   N_g = max( (Σ_k e^{s_ik/t} − τ⁺·N·e^{s_ip/t}) / (1 − τ⁺),  N·e^{−1/t} ),   N = 2B − 2 negatives,
//   ℓ_i = −log( e^{s_ip/t} / (e^{s_ip/t} + N_g) ),   L = (1/2B) Σ_i ℓ_i.
// τ⁺ = 0 gives NT-Xent exactly (the floor N·e^{−1/t} is the smallest Σ_k e^{s_ik/t} can be).

import * as tf from '@tensorflow/tfjs';
import { assertPairs, selfMask, similarityMatrix } from './common';

export function debiasedNtXentLoss(za: tf.Tensor2D, zb: tf.Tensor2D, temperature: number, classPrior: number): tf.Scalar {
  if (!(temperature > 0)) throw new RangeError(`debiasedNtXentLoss: temperature must be > 0, got ${temperature}`);
  if (!(classPrior >= 0 && classPrior < 1)) throw new RangeError(`debiasedNtXentLoss: class prior must be in [0, 1), got ${classPrior}`);
  const B = assertPairs(za, zb, 'debiasedNtXentLoss');
  const N = 2 * B - 2;
  return tf.tidy(() => {
    // Shift every logit by the largest possible, 1/t, so the exponentials stay ≤ 1 (the loss does not change).
    const shifted = tf.sub(tf.div(similarityMatrix(za, zb), temperature), 1 / temperature); // (2B, 2B)
    const e = tf.exp(shifted);
    const pos = tf.concat([tf.range(B, 2 * B, 1, 'int32'), tf.range(0, B, 1, 'int32')]);
    const posMask = tf.oneHot(pos, 2 * B);
    const negMask = tf.sub(tf.sub(1, selfMask(2 * B)), posMask);
    const ePos = tf.sum(tf.mul(e, posMask), 1); // (2B)
    const negSum = tf.sum(tf.mul(e, negMask), 1);
    const floor = N * Math.exp(-2 / temperature); // N·e^{−1/t} in the shifted scale (e^{−1/t − 1/t})
    const ng = tf.maximum(tf.div(tf.sub(negSum, tf.mul(ePos, classPrior * N)), 1 - classPrior), floor);
    const positive = tf.sum(tf.mul(shifted, posMask), 1);
    return tf.mean(tf.sub(tf.log(tf.add(ePos, ng)), positive)) as tf.Scalar;
  });
}
