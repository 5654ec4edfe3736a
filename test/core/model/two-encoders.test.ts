// The two-encoder pose (file-and-principal): each encoder is exactly the one a one-pose run with the same seed
// trains, a checkpoint inside the second encoder resumes exactly, and retrieval sets the two embeddings side by side.
import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import {
  encoderFromCheckpoint,
  encodersFromCheckpoint,
  fromArtifacts,
  toArtifacts,
  type Checkpoint,
} from '../../../src/core/model/checkpoint';
import { DEFAULT_TRAIN } from '../../../src/core/model/defaults';
import { disposeEncoders, embedForRetrieval, encoderList } from '../../../src/core/model/embed';
import { type ModelPart } from '../../../src/core/model/views';
import { type SinglePose } from '../../../src/core/model/train-config';
import { getWeights, Trainer } from '../../../src/core/model/trainer';
import { type TrainConfig } from '../../../src/core/model/train-config';
import { PRESETS } from '../../../src/core/points/augment';
import { expectClose } from '../../helpers';
import { useBackend, guardTensorLeaks } from '../../tf-helpers';
import { demoModelParts } from '../../meshes';

guardTensorLeaks();

let demo: ModelPart[] = [];
beforeAll(async () => {
  await useBackend('wasm');
  demo = demoModelParts(512);
});

const pair: TrainConfig = {
  ...DEFAULT_TRAIN,
  encoder: { inputFeatures: 'xyz', widths: [32, 64, 128], pooling: 'max', projection: [128, 64] },
  pipeline: PRESETS['principal-pose'],
  pose: 'file-and-principal',
  points: 128,
  batchSize: 16,
  epochs: 1,
  seed: 5,
};

const same = (a: readonly Float32Array[], b: readonly Float32Array[]) => {
  expect(a.length).toBe(b.length);
  a.forEach((w, i) =>
    expect(
      Buffer.from(b[i].buffer, b[i].byteOffset, b[i].byteLength).equals(
        Buffer.from(w.buffer, w.byteOffset, w.byteLength),
      ),
      `weight ${i}`,
    ).toBe(true),
  );
};

const runToEnd = (t: Trainer) => {
  while (t.step < t.totalSteps) t.trainStep();
};

describe('two encoders, one after the other (file-and-principal)', () => {
  it("trains the files'-axes encoder and then the principal-axes one, each exactly as a one-pose run of the same seed, with the tensor count flat", () => {
    const t = new Trainer(demo, pair);
    expect(t.encoders.length).toBe(2);
    expect(t.totalSteps).toBe(2 * t.memberSteps);
    t.trainStep();
    const before = tf.memory().numTensors;
    runToEnd(t);
    expect(tf.memory().numTensors).toBe(before);
    (['file-axes', 'principal-axes'] as SinglePose[]).forEach((pose, m) => {
      const one = new Trainer(demo, { ...pair, pose });
      runToEnd(one);
      same(getWeights(t.encoders[m]), getWeights(one.encoder));
      expect(t.history.slice(m * t.memberSteps, (m + 1) * t.memberSteps).map((h) => [h.loss, h.lr])).toEqual(
        one.history.map((h) => [h.loss, h.lr]),
      );
      one.dispose();
    });
    expect(t.memberOf(t.memberSteps - 1)).toEqual({ member: 0, step: t.memberSteps - 1 });
    expect(t.memberOf(t.memberSteps)).toEqual({ member: 1, step: 0 });
    t.dispose();
  });

  it('a checkpoint taken inside the second encoder resumes exactly, and loads as two encoders whose embeddings sit side by side', () => {
    const straight = new Trainer(demo, pair);
    runToEnd(straight);
    const first = new Trainer(demo, pair);
    while (first.step < first.memberSteps + 2) first.trainStep();
    const ckpt: Checkpoint = {
      manifest: {
        format: 'shapekin-encoder',
        version: 1,
        config: pair,
        sampling: { points: 512, seed: 0 },
        step: first.step,
        totalSteps: first.totalSteps,
        status: 'paused',
        backend: tf.getBackend(),
        history: first.history,
        checks: [],
      },
      weights: first.weights(),
      adam: first.adamState(),
    };
    const restored = fromArtifacts(toArtifacts(ckpt));
    expect(restored.weights.length).toBe(2 * straight.encoders[0].variables.length);
    const second = new Trainer(demo, restored.manifest.config, {
      initialWeights: restored.weights,
      resume: { step: restored.manifest.step, adam: restored.adam!, history: restored.manifest.history, checks: [] },
    });
    runToEnd(second);
    same(straight.weights(), second.weights());

    const encs = encodersFromCheckpoint({ ...restored, weights: second.weights(), adam: null });
    const [a, b] = encoderList(encs);
    const few = demo.slice(0, 5),
      n = 128;
    const both = embedForRetrieval(encs, few, n, 'file-and-principal');
    const ea = embedForRetrieval(a, few, n, 'file-axes'),
      eb = embedForRetrieval(b, few, n, 'principal-axes');
    const Da = ea.length / few.length,
      Db = eb.length / few.length,
      D = Da + Db;
    expect(both.length).toBe(few.length * D);
    for (let i = 0; i < few.length; i++) {
      expectClose(
        both.subarray(i * D, i * D + Da),
        Array.from(ea.subarray(i * Da, (i + 1) * Da), (v) => v / Math.SQRT2),
        { atol: 1e-7 },
      );
      expectClose(
        both.subarray(i * D + Da, (i + 1) * D),
        Array.from(eb.subarray(i * Db, (i + 1) * Db), (v) => v / Math.SQRT2),
        { atol: 1e-7 },
      );
    }
    // Two unit blocks scaled by 1/√2: each row is unit length and its cosine is the mean of the two encoders' cosines.
    const dot = (v: Float32Array, d: number, i: number, j: number) => {
      let s = 0;
      for (let k = 0; k < d; k++) s += v[i * d + k] * v[j * d + k];
      return s;
    };
    expectClose(dot(both, D, 0, 0), 1, { atol: 1e-6 });
    expectClose(dot(both, D, 1, 3), (dot(ea, Da, 1, 3) + dot(eb, Db, 1, 3)) / 2, { atol: 1e-6 });
    expect(() => encoderFromCheckpoint(restored)).toThrow(/has 2 encoders/);
    expect(() => embedForRetrieval(a, few, n, 'file-and-principal')).toThrow(/needs 2 encoder/);
    disposeEncoders(encs);
    [straight, first, second].forEach((t) => t.dispose());
  });

  it('embedding a library 32 parts a request (as the workbench does) gives the bytes of one request', () => {
    const t = new Trainer(demo, pair);
    const parts = demo.slice(0, 70),
      n = 128;
    const whole = embedForRetrieval(t.encoders, parts, n, 'file-and-principal');
    const pieces = [0, 32, 64].map((s) =>
      embedForRetrieval(t.encoders, parts.slice(s, s + 32), n, 'file-and-principal'),
    );
    const joined = new Float32Array(whole.length);
    let o = 0;
    for (const p of pieces) {
      joined.set(p, o);
      o += p.length;
    }
    expect(Buffer.from(joined.buffer).equals(Buffer.from(whole.buffer))).toBe(true);
    t.dispose();
  });

  it('refuses early stopping, which would leave the second encoder untrained', () => {
    expect(() => new Trainer(demo, { ...pair, heldOutFraction: 0.2, patience: 2 })).toThrow(
      /early stopping .* two encoders/,
    );
  });
});
