// Supervised contrastive loss, L_out form (Khosla et al. 2020, "Supervised Contrastive Learning", eq. 2):
//   ℓ_i = −(1/|P(i)|) Σ_{p∈P(i)} log( exp(s_ip/τ) / Σ_{a≠i} exp(s_ia/τ) ),
//   P(i) = the other views with the same label as i (always including i's own twin). L = mean_i ℓ_i.
// With every part its own label it reduces to NT-Xent.

import * as tf from '@tensorflow/tfjs';
import { assertPairs, MASKED_LOGIT, selfMask, similarityMatrix } from './common';

export function supConLoss(za: tf.Tensor2D, zb: tf.Tensor2D, labels: ArrayLike<number>, temperature: number): tf.Scalar {
  if (!(temperature > 0)) throw new RangeError(`supConLoss: temperature must be > 0, got ${temperature}`);
  const B = assertPairs(za, zb, 'supConLoss');
  if (labels.length !== B) throw new RangeError(`supConLoss: ${labels.length} labels for ${B} parts`);
  const y = Int32Array.from({ length: 2 * B }, (_, i) => labels[i % B]);
  return tf.tidy(() => {
    const logits = tf.div(similarityMatrix(za, zb), temperature);
    const eye = selfMask(2 * B);
    const logProb = tf.sub(logits, tf.logSumExp(tf.add(logits, tf.mul(eye, MASKED_LOGIT)), 1, true)); // (2B, 2B)
    const yt = tf.tensor1d(y, 'int32');
    const same = tf.cast(tf.equal(yt.reshape([2 * B, 1]), yt.reshape([1, 2 * B])), 'float32');
    const positives = tf.sub(same, eye); // exclude i itself
    const perAnchor = tf.div(tf.sum(tf.mul(positives, logProb), 1), tf.sum(positives, 1)); // (2B)
    return tf.neg(tf.mean(perAnchor)) as tf.Scalar;
  });
}
