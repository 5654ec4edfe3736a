import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { alikeBeforeTraining, excludedPairs, mostAlike } from '../../../src/core/model/false-negatives';
import { ntXentLoss } from '../../../src/core/model/losses/ntxent';
import { DEFAULT_TRAIN } from '../../../src/core/model/defaults';
import { Trainer } from '../../../src/core/model/trainer';
import { type TrainConfig } from '../../../src/core/model/train-config';
import { PRESETS } from '../../../src/core/points/augment';
import { createRng } from '../../../src/core/rng';
import { type ModelPart } from '../../../src/core/model/views';
import { expectClose } from '../../helpers';
import { demoModelParts } from '../../meshes';
import { disposedAfterEach, guardTensorLeaks, useBackend } from '../../tf-helpers';

guardTensorLeaks();
const input = disposedAfterEach();

let demo: ModelPart[] = [];
beforeAll(async () => {
  await useBackend('wasm');
  demo = demoModelParts(512);
});

describe('NT-Xent with excluded negatives (false-negative elimination, Huynh et al. 2022, §3.2)', () => {
  it('two parts, each excluding the other: only the twin is left in the denominator, so the loss is 0', () => {
    // From the definition: ℓ_i = −s_ip/τ + log(exp(s_ip/τ)) = 0 for every view.
    const za = input(
      tf.tensor2d([
        [1, 0],
        [-1, 0],
      ]),
    );
    const zb = input(
      tf.tensor2d([
        [0.5, Math.sqrt(0.75)],
        [-0.5, Math.sqrt(0.75)],
      ]),
    );
    const exclude = input(
      tf.tensor2d([
        [0, 1],
        [1, 0],
      ]),
    );
    expectClose(
      tf.tidy(() => ntXentLoss(za, zb, 0.5, exclude).dataSync()[0]),
      0,
      { atol: 1e-6 },
    );
  });
  it('equals an independent formulation: tf.losses.softmaxCrossEntropy over logits with the pairs removed by hand', () => {
    const B = 6,
      tau = 0.2;
    const za = input(tf.randomNormal([B, 5], 0, 1, 'float32', 3) as tf.Tensor2D);
    const zb = input(tf.randomNormal([B, 5], 0, 1, 'float32', 4) as tf.Tensor2D);
    const pairs = [
      [0, 2],
      [1, 4],
      [1, 5],
    ];
    const ex = new Float32Array(B * B);
    for (const [a, b] of pairs) ex[a * B + b] = ex[b * B + a] = 1;
    // The reference removes, for each anchor view, both views of each excluded part, one entry at a time.
    const remove = new Float32Array(4 * B * B);
    for (let i = 0; i < 2 * B; i++) {
      remove[i * 2 * B + i] = 1;
      for (const [a, b] of pairs)
        for (const [p, q] of [
          [a, b],
          [b, a],
        ])
          if (i % B === p) for (const v of [q, q + B]) remove[i * 2 * B + v] = 1;
    }
    const reference = tf.tidy(() => {
      const z = tf.concat([za, zb]);
      const n = tf.div(z, tf.norm(z, 'euclidean', 1, true));
      const logits = tf.sub(
        tf.div(tf.matMul(n, n, false, true), tau),
        tf.mul(tf.tensor2d(remove, [2 * B, 2 * B]), 1e9),
      );
      const positives = Array.from({ length: 2 * B }, (_, i) => (i + B) % (2 * B));
      return tf.losses.softmaxCrossEntropy(tf.oneHot(tf.tensor1d(positives, 'int32'), 2 * B), logits).dataSync()[0];
    });
    const exclude = input(tf.tensor2d(ex, [B, B]));
    const ours = tf.tidy(() => ntXentLoss(za, zb, tau, exclude).dataSync()[0]);
    expectClose(ours, reference, { rtol: 1e-5 });
    // And the exclusion changes the loss: with nothing excluded it is plain NT-Xent, which is larger.
    expect(tf.tidy(() => ntXentLoss(za, zb, tau).dataSync()[0])).toBeGreaterThan(ours + 1e-3);
  });
  it('an exclusion matrix of zeros, or one on the diagonal, leaves NT-Xent as it is', () => {
    const za = input(tf.randomNormal([4, 3], 0, 1, 'float32', 5) as tf.Tensor2D);
    const zb = input(tf.randomNormal([4, 3], 0, 1, 'float32', 6) as tf.Tensor2D);
    const plain = tf.tidy(() => ntXentLoss(za, zb, 0.1).dataSync()[0]);
    const eye = input(tf.eye(4) as tf.Tensor2D);
    expectClose(
      tf.tidy(() => ntXentLoss(za, zb, 0.1, eye).dataSync()[0]),
      plain,
      { rtol: 1e-6 },
    );
  });
});

describe('the most alike parts', () => {
  it('match a direct scan of every pair, best first (the definition, in float64)', () => {
    const rng = createRng(11);
    const count = 300,
      dim = 7,
      m = 5;
    const rows = new Float32Array(count * dim).map(() => rng.normal());
    for (let i = 0; i < count; i++) {
      const r = rows.subarray(i * dim, (i + 1) * dim);
      const len = Math.hypot(...r);
      r.forEach((v, d) => (r[d] = v / len));
    }
    const ours = mostAlike(rows, count, dim, m);
    for (let i = 0; i < count; i++) {
      const scored: [number, number][] = [];
      for (let j = 0; j < count; j++) {
        if (j === i) continue;
        let s = 0;
        for (let d = 0; d < dim; d++) s += rows[i * dim + d] * rows[j * dim + d];
        scored.push([s, j]);
      }
      scored.sort((a, b) => b[0] - a[0] || a[1] - b[1]);
      expect([...ours[i]]).toEqual(scored.slice(0, m).map(([, j]) => j));
    }
  });
  it('asks for no more than the other parts there are', () => {
    const rows = new Float32Array([1, 0, 0, 1, 0.6, 0.8]);
    expect(mostAlike(rows, 3, 2, 10).map((a) => [...a])).toEqual([
      [2, 1],
      [2, 0],
      [1, 0],
    ]);
    expect(mostAlike(rows.subarray(0, 2), 1, 2, 3)).toEqual([new Int32Array(0)]);
  });
  it('a batch excludes a pair when either part lists the other, in both directions, never a part itself', () => {
    const alike = [new Int32Array([3]), new Int32Array([]), new Int32Array([0]), new Int32Array([1])];
    // Batch [2, 0, 3]: 2 lists 0 → (0,1),(1,0); 0 lists 3 → (1,2),(2,1); 3 lists 1, not in the batch.
    expect([...excludedPairs([2, 0, 3], alike)]).toEqual([0, 1, 0, 1, 0, 1, 0, 1, 0]);
  });
});

describe('training with false negatives', () => {
  const small: TrainConfig = {
    ...DEFAULT_TRAIN,
    encoder: { inputFeatures: 'xyz', widths: [32, 64, 128], pooling: 'max', projection: [128, 64] },
    pipeline: PRESETS.gentle,
    points: 128,
    batchSize: 8,
    epochs: 1,
    seed: 3,
  };
  it('every other part alike leaves each view only its twin: the first step has a loss of 0', () => {
    const parts = demo.slice(0, 8);
    const t = new Trainer(parts, { ...small, loss: { ...small.loss, falseNegatives: 7 } });
    expect(t.alike!.every((a) => a.length === 7)).toBe(true);
    expectClose(t.trainStep(), 0, { atol: 1e-5 });
    t.dispose();
    const plain = new Trainer(parts, small);
    expect(plain.alike).toBeNull();
    expect(plain.trainStep()).toBeGreaterThan(0.1);
    plain.dispose();
  });
  it('finds the alike parts from the surface grid of the pose trained, and takes lists it is given', () => {
    const parts = demo.slice(0, 20);
    const config = { ...small, loss: { ...small.loss, falseNegatives: 3 } };
    const t = new Trainer(parts, config);
    expect(t.alike!.map((a) => [...a])).toEqual(alikeBeforeTraining(parts, config.pose, 3).map((a) => [...a]));
    t.dispose();
    const given = parts.map((_, i) => new Int32Array([(i + 1) % 20]));
    const u = new Trainer(parts, config, { alike: given });
    expect(u.alike).toBe(given);
    u.dispose();
    expect(() => new Trainer(parts, config, { alike: given.slice(1) })).toThrow(/alike parts for 19 parts/);
    expect(() => new Trainer(parts, { ...config, loss: { ...config.loss, name: 'triplet-hard' } })).toThrow(
      /nt-xent loss only/,
    );
  });
});
