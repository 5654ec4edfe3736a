import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { DEFAULT_TRAIN } from '../../../src/core/model/defaults';
import { ntXentLoss } from '../../../src/core/model/losses/ntxent';
import { MemoryBank } from '../../../src/core/model/memory-bank';
import { getWeights, KEY_MOMENTUM, Trainer } from '../../../src/core/model/trainer';
import { type TrainConfig } from '../../../src/core/model/train-config';
import { type ModelPart } from '../../../src/core/model/views';
import { PRESETS } from '../../../src/core/points/augment';
import { createRng } from '../../../src/core/rng';
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

const unitRows = (rows: Float32Array, dim: number): number[][] =>
  Array.from({ length: rows.length / dim }, (_, i) => {
    const r = Array.from(rows.subarray(i * dim, (i + 1) * dim));
    const len = Math.hypot(...r);
    return r.map((v) => v / len);
  });

describe('the memory of earlier views', () => {
  it('keeps the newest rows first in, first out, at unit length, with the part each is a view of', () => {
    const bank = new MemoryBank(3, 2);
    bank.push(new Float32Array([3, 4, 0, 2]), [7, 8]);
    expect([...bank.parts()]).toEqual([7, 8]);
    expectClose([...bank.rows()], [0.6, 0.8, 0, 1], { atol: 1e-7 });
    bank.push(new Float32Array([-5, 0, 1, 1]), [9, 10]);
    // Capacity 3: the oldest row (part 7) has gone; the order is oldest first.
    expect([...bank.parts()]).toEqual([8, 9, 10]);
    expectClose([...bank.rows()], [0, 1, -1, 0, Math.SQRT1_2, Math.SQRT1_2], { atol: 1e-7 });
    // More rows than it holds at once: only the newest stay.
    bank.push(new Float32Array([1, 0, 2, 0, 0, 3, 0, 4]), [1, 2, 3, 4]);
    expect([...bank.parts()]).toEqual([2, 3, 4]);
    bank.clear();
    expect(bank.size).toBe(0);
    expect(() => bank.push(new Float32Array(3), [1, 2])).toThrow(/3 values for 2 rows of 2/);
  });
  it("blocks a part's own earlier views and, when given, its alike parts in either direction", () => {
    const bank = new MemoryBank(4, 1);
    bank.push(new Float32Array([1, 1, 1, 1]), [0, 1, 2, 3]);
    expect([...bank.blocked([0, 2])]).toEqual([1, 0, 0, 0, 0, 0, 1, 0]);
    // Part 0 lists 3 as alike; part 1 lists 2. Anchors 0 and 2: 0 blocks {0, 3}; 2 blocks {2, 1} (1 lists 2).
    const alike = [new Int32Array([3]), new Int32Array([2]), new Int32Array([]), new Int32Array([])];
    expect([...bank.blocked([0, 2], alike)]).toEqual([1, 0, 0, 1, 0, 1, 1, 0]);
  });
});

describe('NT-Xent with a memory of earlier views (cross-batch memory, Wang et al. 2020, §4)', () => {
  it('equals SimCLR eq. 1 written out in float64 with the memory rows added to each denominator', () => {
    const B = 4,
      D = 5,
      tau = 0.3;
    const rng = createRng(21);
    const a = new Float32Array(B * D).map(() => rng.normal());
    const b = new Float32Array(B * D).map(() => rng.normal());
    const bank = new MemoryBank(6, D);
    bank.push(
      new Float32Array(9 * D).map(() => rng.normal()),
      [0, 5, 1, 6, 7, 2, 3, 8, 1],
    );
    const parts = [0, 1, 2, 3, 0, 1, 2, 3];
    const blocked = bank.blocked(parts);
    const ours = tf.tidy(
      () =>
        ntXentLoss(input(tf.tensor2d(a, [B, D])), input(tf.tensor2d(b, [B, D])), tau, null, {
          rows: tf.tensor2d(bank.rows(), [bank.size, D]),
          blocked: tf.tensor2d(blocked, [2 * B, bank.size]),
        }).dataSync()[0],
    );
    // The reference: ℓ_i = −log(exp(s_ip/τ) / (Σ_{k≠i} exp(s_ik/τ) + Σ_{memory rows m of other parts} exp(s_im/τ))).
    const z = [...unitRows(a, D), ...unitRows(b, D)];
    const memory = unitRows(bank.rows(), D),
      owner = bank.parts();
    const dot = (u: number[], v: number[]) => u.reduce((s, x, d) => s + x * v[d], 0);
    let total = 0;
    for (let i = 0; i < 2 * B; i++) {
      let den = 0;
      for (let k = 0; k < 2 * B; k++) if (k !== i) den += Math.exp(dot(z[i], z[k]) / tau);
      memory.forEach((m, j) => {
        if (owner[j] !== parts[i]) den += Math.exp(dot(z[i], m) / tau);
      });
      total -= Math.log(Math.exp(dot(z[i], z[(i + B) % (2 * B)]) / tau) / den);
    }
    expectClose(ours, total / (2 * B), { rtol: 1e-5 });
    // The memory adds negatives, so the loss grows over plain NT-Xent on the same pairs.
    const plain = tf.tidy(() => ntXentLoss(tf.tensor2d(a, [B, D]), tf.tensor2d(b, [B, D]), tau).dataSync()[0]);
    expect(ours).toBeGreaterThan(plain + 1e-3);
  });
  it('an empty memory, or one whose rows are all blocked, leaves NT-Xent as it is', () => {
    const za = input(tf.randomNormal([4, 3], 0, 1, 'float32', 5) as tf.Tensor2D);
    const zb = input(tf.randomNormal([4, 3], 0, 1, 'float32', 6) as tf.Tensor2D);
    const plain = tf.tidy(() => ntXentLoss(za, zb, 0.1).dataSync()[0]);
    const empty = { rows: input(tf.zeros([0, 3]) as tf.Tensor2D), blocked: input(tf.zeros([8, 0]) as tf.Tensor2D) };
    expectClose(
      tf.tidy(() => ntXentLoss(za, zb, 0.1, null, empty).dataSync()[0]),
      plain,
      { rtol: 1e-6 },
    );
    const all = { rows: input(tf.ones([2, 3]) as tf.Tensor2D), blocked: input(tf.ones([8, 2]) as tf.Tensor2D) };
    expectClose(
      tf.tidy(() => ntXentLoss(za, zb, 0.1, null, all).dataSync()[0]),
      plain,
      { rtol: 1e-6 },
    );
  });
});

describe('training with a memory of earlier views', () => {
  const small: TrainConfig = {
    ...DEFAULT_TRAIN,
    encoder: { inputFeatures: 'xyz', widths: [32, 64, 128], pooling: 'max', projection: [128, 64] },
    pipeline: PRESETS.gentle,
    points: 128,
    batchSize: 4,
    epochs: 2,
    warmupFraction: 0.25,
    seed: 3,
  };
  it('joins the loss once the learning rate has warmed up, and not before', () => {
    const parts = demo.slice(0, 16); // 4 steps an epoch, 8 in all; warm-up is the first 2
    const withMemory = new Trainer(parts, { ...small, loss: { ...small.loss, memory: 64 } });
    const without = new Trainer(parts, small);
    const losses = (t: Trainer) => Array.from({ length: 4 }, () => t.trainStep());
    const [m, p] = [losses(withMemory), losses(without)];
    // Steps 1–2: the same loss and weights as without a memory; step 3 on: more negatives, a larger loss.
    expectClose(m.slice(0, 2), p.slice(0, 2), { rtol: 1e-6 });
    expect(m[2]).toBeGreaterThan(p[2] + 0.05);
    withMemory.dispose();
    without.dispose();
  });
  it('keeps a key encoder that follows the trained one by θk ← m·θk + (1 − m)·θq (MoCo, He et al. 2020, eq. 2), whose embeddings of the first views fill the memory', () => {
    const parts = demo.slice(0, 16);
    const t = new Trainer(parts, { ...small, loss: { ...small.loss, memory: 64 } });
    const before = getWeights(t.encoders[0]);
    expect(getWeights(t.keyEncoders[0]!)).toEqual(before); // it starts as a copy
    const { x } = t.batchFor(0);
    t.trainStep();
    const after = getWeights(t.encoders[0]),
      key = getWeights(t.keyEncoders[0]!);
    expect(after[0][0]).not.toBe(before[0][0]);
    key.forEach((w, i) =>
      expectClose(
        [...w],
        [...before[i]].map((b, j) => KEY_MOMENTUM * b + (1 - KEY_MOMENTUM) * after[i][j]),
        { atol: 1e-6 },
      ),
    );
    // The memory holds the key encoder's projections of the step's first views (4 parts × 128 points × 3).
    const rows = tf.tidy(() => {
      const k = t.keyEncoders[0]!;
      const first = tf.tensor3d(x.subarray(0, 4 * 128 * 3), [4, 128, 3]);
      return k.project(k.pooled(first)).dataSync() as Float32Array;
    });
    expectClose([...t.memoryRows(0)], unitRows(rows, 64).flat(), { atol: 1e-5 });
    t.dispose();
    const plain = new Trainer(parts, small);
    expect(plain.keyEncoders).toEqual([null]);
    plain.dispose();
  });
  it('is for NT-Xent only, and a whole number', () => {
    const parts = demo.slice(0, 8);
    expect(() => new Trainer(parts, { ...small, loss: { ...small.loss, name: 'triplet-hard', memory: 8 } })).toThrow(
      /nt-xent loss only/,
    );
    expect(() => new Trainer(parts, { ...small, loss: { ...small.loss, memory: 2.5 } })).toThrow(/whole number/);
  });
});
