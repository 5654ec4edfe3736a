// Supervised contrastive loss, L_out form (Khosla et al. 2020, "Supervised Contrastive Learning", eq. 2):
//   ℓ_i = −(1/|P(i)|) Σ_{p∈P(i)} log( exp(s_ip/τ) / Σ_{a≠i} exp(s_ia/τ) ),
//   P(i) = the other views with the same label as i (always including i's own twin). L = mean_i ℓ_i.
// With every part its own label it reduces to NT-Xent.

import * as tf from '@tensorflow/tfjs';
import { assertPairs, MASKED_LOGIT, selfMask } from './common';

/**
 * The same loss over any number of views stacked in z (V·B, D), with one label per row: the multi-view form
 * Khosla et al. give (their eq. 2 with 2N replaced by the number of views). Rows sharing a label are each
 * other's positives; with the part index as the label it is the multi-positive NT-Xent.
 */
export function multiViewSupConLoss(z: tf.Tensor2D, labels: ArrayLike<number>, temperature: number): tf.Scalar {
  if (!(temperature > 0)) throw new RangeError(`multiViewSupConLoss: temperature must be > 0, got ${temperature}`);
  const M = z.shape[0];
  if (labels.length !== M) throw new RangeError(`multiViewSupConLoss: ${labels.length} labels for ${M} views`);
  return tf.tidy(() => {
    const n = tf.div(z, tf.maximum(tf.norm(z, 'euclidean', 1, true), 1e-12));
    const logits = tf.div(tf.matMul(n, tf.transpose(n)), temperature);
    const eye = selfMask(M);
    const logProb = tf.sub(logits, tf.logSumExp(tf.add(logits, tf.mul(eye, MASKED_LOGIT)), 1, true));
    const yt = tf.tensor1d(Int32Array.from(labels), 'int32');
    const same = tf.cast(tf.equal(yt.reshape([M, 1]), yt.reshape([1, M])), 'float32');
    const positives = tf.sub(same, eye);
    const perAnchor = tf.div(tf.sum(tf.mul(positives, logProb), 1), tf.maximum(tf.sum(positives, 1), 1));
    return tf.neg(tf.mean(perAnchor)) as tf.Scalar;
  });
}

export function supConLoss(
  za: tf.Tensor2D,
  zb: tf.Tensor2D,
  labels: ArrayLike<number>,
  temperature: number,
): tf.Scalar {
  if (!(temperature > 0)) throw new RangeError(`supConLoss: temperature must be > 0, got ${temperature}`);
  const B = assertPairs(za, zb, 'supConLoss');
  if (labels.length !== B) throw new RangeError(`supConLoss: ${labels.length} labels for ${B} parts`);
  return tf.tidy(() =>
    multiViewSupConLoss(
      tf.concat([za, zb], 0),
      Int32Array.from({ length: 2 * B }, (_, i) => labels[i % B]),
      temperature,
    ),
  );
}
