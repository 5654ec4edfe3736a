import * as tf from '@tensorflow/tfjs';
import { beforeAll, describe, expect, it } from 'vitest';
import { Adam, cosineWithWarmup } from '../../../src/core/model/adam';
import { encoderFromCheckpoint, fromArtifacts, toArtifacts, type Checkpoint } from '../../../src/core/model/checkpoint';
import {
  DEFAULT_STEP_BUDGET,
  DEFAULT_TRAIN,
  defaultEpochs,
  defaultInputs,
  defaultTemperature,
  OPEN_LIBRARY_TEMPERATURE,
  defaultPose,
  defaultTrainFor,
  FILE_FRAME_FIT,
  inputsReason,
  temperatureReason,
  MIN_DEFAULT_EPOCHS,
  poseReason,
} from '../../../src/core/model/defaults';
import { embedParts } from '../../../src/core/model/embed';
import { type ModelPart } from '../../../src/core/model/views';
import { getWeights, probeStepMs, Trainer } from '../../../src/core/model/trainer';
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

const small: TrainConfig = {
  ...DEFAULT_TRAIN,
  encoder: { inputFeatures: 'xyz', widths: [32, 64, 128], pooling: 'max', projection: [128, 64] },
  pipeline: PRESETS.gentle,
  points: 128,
  batchSize: 16,
  epochs: 2,
  seed: 3,
};

describe('Adam (Kingma & Ba 2015) against tf.train.adam', () => {
  it('gives the same parameters after five steps on a quadratic', () => {
    const target = tf.tensor1d([1, -2, 3]);
    const a = tf.tidy(() => tf.variable(tf.tensor1d([0.5, 0.5, 0.5])));
    const b = tf.tidy(() => tf.variable(tf.tensor1d([0.5, 0.5, 0.5])));
    const ours = new Adam([a]);
    const theirs = tf.train.adam(0.05, 0.9, 0.999, 1e-8);
    for (let i = 0; i < 5; i++) {
      tf.tidy(() => {
        const { grads } = tf.variableGrads(() => tf.sum(tf.square(tf.sub(a, target))) as tf.Scalar, [a]);
        ours.apply([grads[a.name]], 0.05);
        theirs.minimize(() => tf.sum(tf.square(tf.sub(b, target))) as tf.Scalar, false, [b]);
      });
    }
    // float32 rounding differs in the order of operations (tfjs keeps β^t as running products): 1e-5.
    expectClose(a.dataSync(), b.dataSync(), { atol: 1e-5 });
    tf.dispose([target, a, b]);
    ours.dispose();
    theirs.dispose();
  });
});

describe('cosine schedule with warm-up (Loshchilov & Hutter 2017 form)', () => {
  it('ramps linearly, peaks, and decays to the floor along ½(1 + cos)', () => {
    // 10 warm-up steps of 110: step 4 → 0.5·peak; step 10 → peak; step 60 (half way) → ½; step 110 → 0.
    expectClose(cosineWithWarmup(4, 110, 1, 10), 0.5, { atol: 1e-12 });
    expectClose(cosineWithWarmup(10, 110, 1, 10), 1, { atol: 1e-12 });
    expectClose(cosineWithWarmup(60, 110, 1, 10), 0.5, { atol: 1e-12 });
    expectClose(cosineWithWarmup(110, 110, 1, 10), 0, { atol: 1e-12 });
  });
});

describe('training on the demo library', () => {
  it('keeps the tensor count flat across steps', () => {
    const t = new Trainer(demo, small);
    t.trainStep();
    const after1 = tf.memory().numTensors;
    for (let i = 0; i < 4; i++) t.trainStep();
    expect(tf.memory().numTensors).toBe(after1);
    t.dispose();
  });
  it('a seeded run is bit-for-bit repeatable on the same backend', () => {
    const run = () => {
      const t = new Trainer(demo, small);
      for (let i = 0; i < 3; i++) t.trainStep();
      const w = getWeights(t.encoder);
      t.dispose();
      return w;
    };
    const a = run(),
      b = run();
    a.forEach((w, i) => expect(Buffer.from(w.buffer).equals(Buffer.from(b[i].buffer))).toBe(true));
  });
  it('the loss falls within a few hundred steps', async () => {
    const t = new Trainer(demo, { ...small, epochs: 25 }); // 7 steps an epoch → 175 steps
    const result = await t.run({ yieldEvery: 50 });
    const h = result.history.map((s) => s.loss);
    const mean = (xs: number[]) => xs.reduce((s, v) => s + v, 0) / xs.length;
    expect(result.status).toBe('done');
    expect(mean(h.slice(-20))).toBeLessThan(mean(h.slice(0, 20)) * 0.8);
    t.dispose();
  }, 120_000);
  it('pauses, resumes and cancels between steps, reporting progress', async () => {
    const t = new Trainer(demo, { ...small, epochs: 5 });
    const seen: number[] = [];
    let pausedAt = -1;
    const done = t.run({
      onProgress: (p) => {
        seen.push(p.step);
        expect(p.totalSteps).toBe(35);
        expect(p.samplesPerSec).toBeGreaterThan(0);
        if (p.step === 2) t.pause();
        if (p.step === 4) t.cancel();
      },
    });
    await new Promise((r) => setTimeout(r, 300));
    if (t.status === 'paused') {
      pausedAt = t.step;
      t.resume();
    }
    const result = await done;
    expect(pausedAt).toBe(2);
    expect(result.status).toBe('cancelled');
    expect(result.steps).toBe(4);
    expect(seen).toEqual([1, 2, 3, 4]);
    t.dispose();
  });
  it('a checkpoint restores the run exactly: 2 + 2 steps equal 4 steps', () => {
    const straight = new Trainer(demo, small);
    for (let i = 0; i < 4; i++) straight.trainStep();
    const first = new Trainer(demo, small);
    first.trainStep();
    first.trainStep();
    const ckpt: Checkpoint = {
      manifest: {
        format: 'shapekin-encoder',
        version: 1,
        config: small,
        sampling: { points: 512, seed: 0 },
        step: first.step,
        totalSteps: first.totalSteps,
        status: 'paused',
        backend: tf.getBackend(),
        history: first.history,
        checks: [],
      },
      weights: getWeights(first.encoder),
      adam: first.adamState(),
    };
    const restored = fromArtifacts(toArtifacts(ckpt));
    const second = new Trainer(demo, restored.manifest.config, {
      initialWeights: restored.weights,
      resume: { step: restored.manifest.step, adam: restored.adam!, history: restored.manifest.history, checks: [] },
    });
    second.trainStep();
    second.trainStep();
    const a = getWeights(straight.encoder),
      b = getWeights(second.encoder);
    a.forEach((w, i) => expect(Buffer.from(b[i].buffer).equals(Buffer.from(w.buffer)), `weight ${i}`).toBe(true));
    const enc = encoderFromCheckpoint(restored);
    expect(enc.variables.length).toBe(10);
    [straight, first, second].forEach((t) => t.dispose());
    enc.dispose();
  });
  it('a checkpoint with an EdgeConv layer round-trips and embeds the same', () => {
    const cfg: TrainConfig = { ...small, encoder: { ...small.encoder, edge: { k: 8, width: 16 } } };
    const t = new Trainer(demo, cfg);
    t.trainStep();
    const ckpt: Checkpoint = {
      manifest: {
        format: 'shapekin-encoder',
        version: 1,
        config: cfg,
        sampling: { points: 512, seed: 0 },
        step: t.step,
        totalSteps: t.totalSteps,
        status: 'paused',
        backend: tf.getBackend(),
        history: t.history,
        checks: [],
      },
      weights: getWeights(t.encoder),
      adam: null,
    };
    const enc = encoderFromCheckpoint(fromArtifacts(toArtifacts(ckpt)));
    expect(enc.variables.length).toBe(12);
    const few = demo.slice(0, 4);
    expect(embedParts(enc, few, 128)).toEqual(embedParts(t.encoder, few, 128));
    t.dispose();
    enc.dispose();
  });
});

describe('the step time the workbench estimates training from', () => {
  it('is the median of the timed steps, the warm-up steps not timed (the median: the middle of the sorted sample)', () => {
    // A fake clock: three timed steps of 500, 400 and 350 ms, whatever the warm-up took.
    const ticks = [0, 500, 1000, 1400, 2000, 2350];
    let calls = 0;
    const now = () => ticks[calls++];
    expect(probeStepMs(demo.slice(0, 8), { ...small, batchSize: 8 }, { warm: 2, timed: 3, now })).toBe(400);
    expect(calls).toBe(6);
    // An even count takes the mean of the middle two: 500, 400, 350 and 600 ms sort to 350, 400, 500, 600 → 450.
    const even = [0, 500, 1000, 1400, 2000, 2350, 3000, 3600];
    calls = 0;
    expect(
      probeStepMs(demo.slice(0, 8), { ...small, batchSize: 8 }, { warm: 1, timed: 4, now: () => even[calls++] }),
    ).toBe(450);
  });
});

describe('bad input and failures end cleanly', () => {
  it('too few parts, a batch of one, an unknown loss, supervised loss without labels', () => {
    expect(() => new Trainer(demo.slice(0, 1), small)).toThrow(/at least 2 parts/);
    expect(() => new Trainer(demo, { ...small, batchSize: 1 })).toThrow(/batch size/);
    expect(() => new Trainer(demo, { ...small, loss: { ...small.loss, name: 'hinge' as 'nt-xent' } })).toThrow(
      /unknown loss "hinge"/,
    );
    expect(() => new Trainer(demo, { ...small, loss: { ...small.loss, name: 'supervised-contrastive' } })).toThrow(
      /needs labels/,
    );
  });
  it('a NaN loss stops the run with status failed and a message, not a hang', async () => {
    const t = new Trainer(demo, small);
    const nan = getWeights(t.encoder).map((w) => new Float32Array(w.length).fill(NaN));
    t.dispose();
    const bad = new Trainer(demo, small, { initialWeights: nan });
    const result = await bad.run();
    expect(result.status).toBe('failed');
    expect(result.message).toMatch(/diverged at step 1: the loss is NaN/);
    bad.dispose();
  });
  it('a checkpoint from an incompatible configuration is refused with a reason', () => {
    const t = new Trainer(demo, small);
    const ckpt: Checkpoint = {
      manifest: {
        format: 'shapekin-encoder',
        version: 1,
        config: small,
        sampling: { points: 512, seed: 0 },
        step: 0,
        totalSteps: 1,
        status: 'idle',
        backend: 'wasm',
        history: [],
        checks: [],
      },
      weights: getWeights(t.encoder),
      adam: null,
    };
    const art = toArtifacts(ckpt);
    const wider = {
      ...art,
      modelTopology: {
        shapekin: { ...ckpt.manifest, config: { ...small, encoder: { ...small.encoder, widths: [32, 64, 256] } } },
      },
    };
    expect(() => fromArtifacts(wider as typeof art)).toThrow(/wrong size|shorter/);
    expect(() => fromArtifacts({ ...art, format: 'layers-model' })).toThrow(/not a Shapekin model/);
    t.dispose();
  });
});

describe('default inputs follow the library', () => {
  // The threshold is our own, from measurements (docs/results.md: normals help on the closed demo library and
  // hurt the trained encoder on the mostly open furniture set); no published source.
  it('uses normals from half the meshes closed, x y z only below', () => {
    const lib = (closed: number, open: number) => [...Array(closed).fill(true), ...Array(open).fill(false)];
    expect(defaultInputs(lib(1, 1))).toBe('xyz+normal');
    expect(defaultInputs(lib(49, 103))).toBe('xyz'); // the furniture set
    expect(defaultInputs(lib(112, 0))).toBe('xyz+normal'); // the demo library
    expect(defaultInputs([])).toBe(DEFAULT_TRAIN.encoder.inputFeatures);
    expect(defaultTrainFor({ closed: lib(0, 3), boxRatios: [] }).encoder).toEqual({
      ...DEFAULT_TRAIN.encoder,
      inputFeatures: 'xyz',
    });
    expect(inputsReason(lib(49, 103))).toMatch(/49 of 152/);
  });
});

describe('default temperature follows the library', () => {
  // Our own measured rule (docs/log/2026-12-05-softmax-temperature.md): τ = 0.07 lifted the three real libraries
  // read as x y z (three seeds each) and cost the closed demo library NN in every seed, which keeps 0.1; no
  // published source for the split (0.07 itself is the value of Wu et al. 2018 and MoCo, from memory).
  it('is 0.07 where the library is read as x y z and 0.1 where it is read with normals', () => {
    const lib = (closed: number, open: number) => [...Array(closed).fill(true), ...Array(open).fill(false)];
    expect(defaultTemperature(lib(49, 103))).toBe(OPEN_LIBRARY_TEMPERATURE); // the furniture set
    expect(OPEN_LIBRARY_TEMPERATURE).toBe(0.07);
    expect(defaultTemperature(lib(112, 0))).toBe(0.1); // the demo library
    expect(defaultTemperature(lib(1, 1))).toBe(0.1); // half closed: read with normals
    expect(defaultTemperature([])).toBe(DEFAULT_TRAIN.loss.temperature);
    expect(defaultTrainFor({ closed: lib(14, 117), boxRatios: [] }).loss).toEqual({
      ...DEFAULT_TRAIN.loss,
      temperature: 0.07,
    });
    expect(defaultTrainFor({ closed: lib(3, 0), boxRatios: [] }).loss).toEqual(DEFAULT_TRAIN.loss);
    expect(temperatureReason(lib(49, 103))).toBe('0.07, as for libraries read as x y z');
    expect(temperatureReason(lib(112, 0))).toBe('0.1, as for libraries read with normals');
  });
});

describe('default pose follows how square the parts sit in their files', () => {
  // The thresholds are our own, from measurements (docs/results.md: both real furniture sets, 96 % and 90 % of
  // parts square, retrieve better in their files' frame; the demo library, 66 %, keeps principal axes).
  it("uses the files' frame (beside principal axes) from 80 % of parts within 5 % of their principal box, principal axes alone below", () => {
    const lib = (square: number, turned: number) => [...Array(square).fill(0.9), ...Array(turned).fill(2)];
    expect(defaultPose(lib(8, 2))).toBe('file-and-principal');
    expect(defaultPose(lib(7, 3))).toBe('principal-axes');
    expect(defaultPose([FILE_FRAME_FIT, FILE_FRAME_FIT + 1e-9])).toBe('principal-axes'); // one of two square
    expect(defaultPose([])).toBe(DEFAULT_TRAIN.pose);
    expect(defaultTrainFor({ closed: [true, true], boxRatios: [1, 1] }).pose).toBe('file-and-principal');
    expect(poseReason(lib(146, 6))).toMatch(/files' own axes and principal axes, one encoder each: 146 of 152/);
    expect(poseReason(lib(74, 38))).toMatch(/principal axes: only 74 of 112/);
  });
});

describe('default epochs follow the library size (a step budget; our own measured rule, docs/results.md)', () => {
  it('small libraries get the full epochs, large ones about the step budget, never below the floor', () => {
    expect(DEFAULT_TRAIN.epochs).toBe(160);
    expect(defaultEpochs(152)).toBe(160); // furniture: 4 steps an epoch → 640 steps
    expect(defaultEpochs(112)).toBe(160); // demo: 3 steps an epoch → 480 steps
    expect(defaultEpochs(1000)).toBe(Math.ceil(DEFAULT_STEP_BUDGET / 31)); // 31 steps an epoch → 21 epochs, 651 steps
    expect(defaultEpochs(20_000)).toBe(MIN_DEFAULT_EPOCHS);
    expect(defaultEpochs(1000, 16)).toBe(11); // 62 steps an epoch
    expect(defaultTrainFor({ closed: Array(1000).fill(false), boxRatios: [] }).epochs).toBe(21);
  });
});
