// i-Mix (Lee, Zhu, Sohn, Li, Shin & Lee 2021, "i-Mix: A Domain-Agnostic Strategy for Contrastive
// Representation Learning", ICLR, eq. 3 for the N-pair form): each anchor view ã_i mixes two parts, i and
// π(i), in proportions λ and 1 − λ, and its target over the batch's positive views b_k is the same mixture:
//   ℓ_i = −Σ_k y_ik · log( e^{ã_i·b_k/τ} / Σ_m e^{ã_i·b_m/τ} ),   y_i = λ·e_i + (1 − λ)·e_π(i),   L = mean_i ℓ_i,
// with every vector normalised to unit length. For point clouds the mix is a union: round(λ·n) points of
// part i's view and the rest from part π(i)'s view (both in their own unit-sphere frames).

import * as tf from '@tensorflow/tfjs';
import { l2Normalise } from '../encoder';
import { assertPairs } from './common';

/** targets: B × B row-stochastic mixture weights (row i: λ at i, 1 − λ at π(i)). */
export function iMixLoss(mixed: tf.Tensor2D, zb: tf.Tensor2D, targets: tf.Tensor2D, temperature: number): tf.Scalar {
  if (!(temperature > 0)) throw new RangeError(`iMixLoss: temperature must be > 0, got ${temperature}`);
  const B = assertPairs(mixed, zb, 'iMixLoss');
  if (targets.shape[0] !== B || targets.shape[1] !== B) throw new RangeError(`iMixLoss: targets have shape ${targets.shape}, expected ${B},${B}`);
  return tf.tidy(() => {
    const logits = tf.div(tf.matMul(l2Normalise(mixed), l2Normalise(zb), false, true), temperature); // (B, B)
    const logProb = tf.sub(logits, tf.logSumExp(logits, 1, true));
    return tf.neg(tf.mean(tf.sum(tf.mul(targets, logProb), 1))) as tf.Scalar;
  });
}

/** Mixture targets for proportion λ and partner permutation π (row-major B × B). */
export function mixTargets(lambda: number, partner: readonly number[]): Float32Array {
  const B = partner.length;
  const t = new Float32Array(B * B);
  for (let i = 0; i < B; i++) { t[i * B + i] += lambda; t[i * B + partner[i]] += 1 - lambda; }
  return t;
}
