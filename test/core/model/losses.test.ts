import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { marginContrastiveLoss } from '../../../src/core/model/losses/margin';
import { ntXentLoss } from '../../../src/core/model/losses/ntxent';
import { supConLoss } from '../../../src/core/model/losses/supcon';
import { tripletLoss } from '../../../src/core/model/losses/triplet';
import { multiViewSupConLoss } from '../../../src/core/model/losses/supcon';
import { expectClose } from '../../helpers';
import { disposedAfterEach, expectNoLeak, useBackend, guardTensorLeaks } from '../../tf-helpers';

guardTensorLeaks();
const input = disposedAfterEach();

beforeAll(async () => {
  await useBackend('wasm');
});

const unit = (deg: number) => [Math.cos((deg * Math.PI) / 180), Math.sin((deg * Math.PI) / 180)];

/** Two parts, views at stated angles in the plane, so every cosine is known exactly. */
function worked(): [tf.Tensor2D, tf.Tensor2D] {
  // a1 = 0°, a2 = 180°, b1 = 60°, b2 = 120°  → cos(a1,b1) = 0.5, cos(a1,a2) = −1, cos(a1,b2) = −0.5,
  // cos(b1,a2) = −0.5, cos(b1,b2) = 0.5, cos(a2,b2) = 0.5.
  return input([tf.tensor2d([unit(0), unit(180)]), tf.tensor2d([unit(60), unit(120)])]);
}

describe('NT-Xent (Chen et al. 2020, eq. 1)', () => {
  it('matches the hand-worked example of two pairs at τ = 0.5', async () => {
    // ℓ_a1 = −0.5/0.5 + ln(e^{1} + e^{−2} + e^{−1}) = −1 + ln(3.221496) = 0.169846   (ℓ_a2 the same by symmetry)
    // ℓ_b1 = −1 + ln(e^{1} + e^{−1} + e^{1}) = −1 + ln(5.804443) = 0.758627          (ℓ_b2 the same)
    // L = (2·0.169846 + 2·0.758627) / 4 = 0.464236
    const [za, zb] = worked();
    const loss = await expectNoLeak(() => tf.tidy(() => ntXentLoss(za, zb, 0.5).dataSync()[0]));
    expectClose(loss, 0.464236, { atol: 1e-5 });
    za.dispose();
    zb.dispose();
  });
  it('equals an independent formulation through tf.losses.softmaxCrossEntropy', () => {
    const za = input(tf.randomNormal([6, 5], 0, 1, 'float32', 1) as tf.Tensor2D);
    const zb = input(tf.randomNormal([6, 5], 0, 1, 'float32', 2) as tf.Tensor2D);
    const tau = 0.2;
    const reference = tf.tidy(() => {
      const z = tf.concat([za, zb]);
      const n = tf.div(z, tf.norm(z, 'euclidean', 1, true));
      const logits = tf.sub(tf.div(tf.matMul(n, n, false, true), tau), tf.mul(tf.eye(12), 1e9));
      const labels = tf.oneHot(tf.tensor1d([6, 7, 8, 9, 10, 11, 0, 1, 2, 3, 4, 5], 'int32'), 12);
      return tf.losses.softmaxCrossEntropy(labels, logits).dataSync()[0];
    });
    expectClose(
      tf.tidy(() => ntXentLoss(za, zb, tau).dataSync()[0]),
      reference,
      { rtol: 1e-5 },
    );
  });
  it('refuses a batch of one, a zero temperature and mismatched views', () => {
    const ones = (rows: number) => input(tf.ones([rows, 3]) as tf.Tensor2D);
    expect(() => ntXentLoss(ones(1), ones(1), 0.1)).toThrow(/at least 2 parts/);
    expect(() => ntXentLoss(ones(2), ones(2), 0)).toThrow(/temperature must be > 0/);
    expect(() => ntXentLoss(ones(2), ones(3), 0.1)).toThrow(/shapes/);
  });
});

describe('supervised contrastive (Khosla et al. 2020, eq. 2)', () => {
  it('with every part its own label equals NT-Xent', () => {
    const [za, zb] = worked();
    expectClose(
      tf.tidy(() => supConLoss(za, zb, [0, 1], 0.5).dataSync()[0]),
      0.464236,
      { atol: 1e-5 },
    );
  });
  it('with both parts sharing a label: hand-worked', () => {
    // Same two pairs, one label: each anchor has P(i) = the other three views.
    // a1: log-probs over {b1: 1, a2: −2, b2: −1} (logits s/τ), denominator ln(3.221496) = 1.169846:
    //   mean of (1 − 1.169846, −2 − 1.169846, −1 − 1.169846) = (−0.169846 − 3.169846 − 2.169846)/3 = −1.836513
    // b1: logits {a1: 1, a2: −1, b2: 1}, ln(5.804443) = 1.758627: mean(−0.758627, −2.758627, −0.758627) = −1.425294
    // L = −(2·(−1.836513) + 2·(−1.425294)) / 4 = 1.630903
    const [za, zb] = worked();
    expectClose(
      tf.tidy(() => supConLoss(za, zb, [3, 3], 0.5).dataSync()[0]),
      1.630903,
      { atol: 1e-5 },
    );
  });
  it('its many-view form gives the same hand-worked values on the views stacked [a; b]', () => {
    const [za, zb] = worked();
    expectClose(
      tf.tidy(() => multiViewSupConLoss(tf.concat([za, zb]), [0, 1, 0, 1], 0.5).dataSync()[0]),
      0.464236,
      { atol: 1e-5 },
    );
    expectClose(
      tf.tidy(() => multiViewSupConLoss(tf.concat([za, zb]), [3, 3, 3, 3], 0.5).dataSync()[0]),
      1.630903,
      { atol: 1e-5 },
    );
  });
});

describe('triplet loss (Schroff et al. 2015) with in-batch mining', () => {
  it('hand-worked distances, hard and semi-hard negatives', () => {
    // Unit vectors: ‖u − v‖² = 2 − 2cos. From the worked views:
    // a1: d(a1,b1) = 1 (cos 0.5); negatives a2: 4, b2: 3.  hard → n = b2: max(0, 1 − 3 + α).
    // With α = 2.5: a1 → 0.5; a2 (pos b2 = 1; negatives a1 4, b1 3) → 0.5;
    // b1 (pos a1 = 1; negatives a2 3, b2 1) → hard n = b2: max(0, 1 − 1 + 2.5) = 2.5; b2 likewise 2.5.
    // hard mean = (0.5 + 0.5 + 2.5 + 2.5)/4 = 1.5.
    // semi-hard: for b1, negatives farther than d_pos = 1 are {a2: 3} → 1 − 3 + 2.5 = 0.5; all four give 0.5.
    const [za, zb] = worked();
    expectClose(
      tf.tidy(() => tripletLoss(za, zb, 2.5, 'hard').dataSync()[0]),
      1.5,
      { atol: 1e-5 },
    );
    expectClose(
      tf.tidy(() => tripletLoss(za, zb, 2.5, 'semi-hard').dataSync()[0]),
      0.5,
      { atol: 1e-5 },
    );
  });
});

describe('margin contrastive loss (Hadsell, Chopra & LeCun 2006, eq. 4)', () => {
  it('hand-worked pairs with margin m = 1.5', () => {
    // Six pairs among {a1, a2, b1, b2}: positives (a1,b1), (a2,b2) with d² = 1 → ½·1 each.
    // Negatives: (a1,a2) d = 2 → 0; (a1,b2) d = √3 = 1.732 → 0; (a2,b1) d = √3 → 0; (b1,b2) d = 1 → ½(1.5 − 1)² = 0.125.
    // L = (0.5 + 0.5 + 0.125) / 6 = 0.1875
    const [za, zb] = worked();
    expectClose(
      tf.tidy(() => marginContrastiveLoss(za, zb, 1.5).dataSync()[0]),
      0.1875,
      { atol: 1e-5 },
    );
  });
});

describe('gradients of each loss against central finite differences', () => {
  const cases: [string, (a: tf.Tensor2D, b: tf.Tensor2D) => tf.Scalar][] = [
    ['nt-xent', (a, b) => ntXentLoss(a, b, 0.5)],
    ['supervised-contrastive', (a, b) => supConLoss(a, b, [0, 0, 1], 0.5)],
    ['triplet-hard', (a, b) => tripletLoss(a, b, 0.5, 'hard')],
    ['triplet-semi-hard', (a, b) => tripletLoss(a, b, 0.5, 'semi-hard')],
    ['margin-contrastive', (a, b) => marginContrastiveLoss(a, b, 1.2)],
  ];
  it.each(cases)('%s', async (_, loss) => {
    const a0 = Float32Array.from([0.9, 0.2, -0.3, -0.4, 0.8, 0.1, 0.3, -0.5, 0.7]);
    const b0 = Float32Array.from([0.7, 0.5, -0.1, -0.6, 0.6, 0.4, 0.1, -0.8, 0.5]);
    await expectNoLeak(() => {
      const zb = tf.tensor2d(b0, [3, 3]);
      const grad = tf.tidy(() =>
        tf
          .grad((a: tf.Tensor) => loss(a as tf.Tensor2D, zb))(tf.tensor2d(a0, [3, 3]))
          .dataSync(),
      );
      const h = 1e-2; // float32: a large step keeps round-off below the curvature error
      const numeric = Array.from(a0, (_, i) => {
        const f = (delta: number) =>
          tf.tidy(() => {
            const a = a0.slice();
            a[i] += delta;
            return loss(tf.tensor2d(a, [3, 3]), zb).dataSync()[0];
          });
        return (f(h) - f(-h)) / (2 * h);
      });
      zb.dispose();
      expectClose(grad, numeric, { atol: 3e-3, rtol: 3e-2 });
    });
  });
});
