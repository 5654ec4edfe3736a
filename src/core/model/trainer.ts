// Contrastive training on CPU: view pairs from batch.ts, one fused forward/backward per step, a loss from the
// registry, Adam with a cosine schedule and warm-up, progress events, pause/resume/cancel, held-out checks for
// early stopping, and the weights for checkpoints. The same code runs in Node, vitest and a Web Worker.
// The settings and result shapes live in train-config.ts (no tfjs).

import * as tf from '@tensorflow/tfjs';
import { createRng, hashString } from '../rng';
import { Adam, cosineWithWarmup, type AdamState } from './adam';
import { BatchMaker, checkViews, splitParts } from './batch';
import { embedParts } from './embed';
import { alikeBeforeTraining, excludedPairs } from './false-negatives';
import { Encoder } from './encoder';
import { inputChannels } from './encoder-config';
import { computeLoss } from './losses';
import { MemoryBank } from './memory-bank';
import { LABELLED_LOSSES } from './losses/names';
import {
  memberPoses,
  stepsPerEpoch,
  validateTrainConfig,
  type HeldOutCheck,
  type TrainConfig,
  type TrainProgress,
  type TrainResult,
  type TrainStatus,
} from './train-config';
import { posed, type ModelPart } from './views';

export interface TrainEvents {
  onProgress?(p: TrainProgress): void;
  onCheck?(c: HeldOutCheck): void;
  /** Steps between yields to the host's event loop (so a worker can take messages). */
  yieldEvery?: number;
}

export interface TrainerOptions {
  readonly labels?: readonly number[] | null;
  /** Start from these weights (a checkpoint). */
  readonly initialWeights?: readonly Float32Array[];
  /**
   * Each part's alike parts, kept out of its negatives when the loss asks for false negatives (false-negatives.ts);
   * absent: found from the parts' surface grids when needed.
   */
  readonly alike?: readonly Int32Array[];
  readonly resume?: {
    readonly step: number;
    readonly adam: AdamState;
    readonly history: TrainResult['history'];
    readonly checks: readonly HeldOutCheck[];
  };
}

/**
 * How closely the memory's key encoder follows the trained one each step: k ← m·k + (1 − m)·q. MoCo (He et al. 2020)
 * uses 0.999 over hundreds of thousands of steps (from memory); our runs are a few hundred steps per encoder, so the
 * key encoder keeps about the last hundred steps' weights (0.99).
 */
export const KEY_MOMENTUM = 0.99;

export class Trainer {
  /** One encoder per pose of `memberPoses(config.pose)`, trained one after the other. */
  readonly encoders: readonly Encoder[];
  readonly config: TrainConfig;
  readonly trainIdx: number[];
  readonly heldIdx: number[];
  /** Steps of all encoders together. */
  readonly totalSteps: number;
  /** Steps of one encoder (epochs × steps per epoch). */
  readonly memberSteps: number;
  readonly stepsPerEpoch: number;
  private readonly adams: readonly Adam[];
  /** The parts in each encoder's pose. */
  private readonly memberParts: readonly (readonly ModelPart[])[];
  private readonly batches: readonly BatchMaker[];
  private readonly labels: readonly number[] | null;
  /** Each part's alike parts, not its negatives (false-negatives.ts); null: every other part is a negative. */
  readonly alike: readonly Int32Array[] | null;
  /** Each encoder's store of earlier steps' projections, further negatives (memory-bank.ts); null: none. */
  private readonly memories: readonly (MemoryBank | null)[];
  /** With a memory: each encoder's slowly following copy that encodes the rows the memory keeps. */
  readonly keyEncoders: readonly (Encoder | null)[];
  step = 0;
  status: TrainStatus = 'idle';
  history: { step: number; loss: number; lr: number }[] = [];
  checks: HeldOutCheck[] = [];
  private resumeGate: (() => void) | null = null;
  private cancelRequested = false;
  private pauseRequested = false;

  constructor(parts: readonly ModelPart[], config: TrainConfig, options: TrainerOptions = {}) {
    validateTrainConfig(config, parts.length);
    if (LABELLED_LOSSES.includes(config.loss.name) && !options.labels) {
      throw new RangeError(`${config.loss.name} loss needs labels (folders or labels.csv)`);
    }
    this.config = config;
    this.memberParts = memberPoses(config.pose).map((pose) => posed(parts, pose));
    this.labels = options.labels ?? null;
    const falseNegatives = config.loss.falseNegatives ?? 0;
    if (options.alike && options.alike.length !== parts.length)
      throw new RangeError(`training: alike parts for ${options.alike.length} parts, the library has ${parts.length}`);
    this.alike = falseNegatives > 0 ? (options.alike ?? alikeBeforeTraining(parts, config.pose, falseNegatives)) : null;
    const { train, held } = splitParts(parts.length, config.heldOutFraction, config.seed);
    this.heldIdx = held;
    this.trainIdx = train;
    this.stepsPerEpoch = stepsPerEpoch(this.trainIdx.length, config.batchSize);
    this.memberSteps = this.stepsPerEpoch * config.epochs;
    this.totalSteps = this.memberSteps * this.memberParts.length;
    const settings = {
      pipeline: config.pipeline,
      inputFeatures: config.encoder.inputFeatures,
      points: config.points,
      batchSize: config.batchSize,
      seed: config.seed,
    };
    this.batches = this.memberParts.map((ps) => new BatchMaker(ps, this.trainIdx, settings, this.stepsPerEpoch));
    // Every encoder starts from the seed's initial weights: each is the encoder a one-pose run with this seed would train.
    this.encoders = this.memberParts.map(() => new Encoder(config.encoder, createRng(hashString('init', config.seed))));
    if (options.initialWeights) {
      const w = options.initialWeights,
        per = this.encoders[0].variables.length;
      // One encoder's weights start every encoder; otherwise each encoder takes its own share, in order.
      this.encoders.forEach((e, m) => setWeights(e, w.length === per ? w : w.slice(m * per, (m + 1) * per)));
    }
    this.adams = this.encoders.map((e) => new Adam(e.variables));
    const memory = config.loss.memory ?? 0;
    const projected = config.encoder.projection[config.encoder.projection.length - 1];
    this.memories = this.encoders.map(() => (memory > 0 ? new MemoryBank(memory, projected) : null));
    this.keyEncoders = this.encoders.map((e) => {
      if (memory <= 0) return null;
      const k = new Encoder(config.encoder, createRng(hashString('init', config.seed)));
      setWeights(k, getWeights(e));
      return k;
    });
    if (options.resume) {
      const { adam, step } = options.resume,
        per = this.encoders[0].variables.length;
      if (this.adams.length === 1) this.adams[0].restore(adam);
      else {
        this.adams.forEach((a, m) =>
          a.restore({
            step: Math.min(this.memberSteps, Math.max(0, step - m * this.memberSteps)),
            m: adam.m.slice(m * per, (m + 1) * per),
            v: adam.v.slice(m * per, (m + 1) * per),
          }),
        );
      }
      this.step = options.resume.step;
      this.history = [...options.resume.history];
      this.checks = [...options.resume.checks];
    }
  }

  /** Which encoder step k trains, and its step within that encoder's run. */
  memberOf(k: number): { member: number; step: number } {
    const member = Math.min(this.encoders.length - 1, Math.floor(k / this.memberSteps));
    return { member, step: k - member * this.memberSteps };
  }

  /** The encoder being trained at the current step (the last one once training is over). */
  get encoder(): Encoder {
    return this.encoders[this.memberOf(this.step).member];
  }

  /** All encoders' weights, in `memberPoses` order (each in Encoder.variables order). */
  weights(): Float32Array[] {
    return this.encoders.flatMap((e) => getWeights(e));
  }

  /** The rows encoder `member`'s memory holds (unit length, oldest first); empty without a memory. */
  memoryRows(member: number): Float32Array {
    return this.memories[member]?.rows() ?? new Float32Array(0);
  }

  /**
   * The parts and seeded views of step k: the same k always gives the same batch (resumable). An encoder's steps
   * draw exactly what a one-pose run with the same seed draws at those steps.
   */
  batchFor(k: number): { parts: number[]; x: Float32Array } {
    const { member, step } = this.memberOf(k);
    return this.batches[member].batch(step);
  }

  /** One optimisation step; returns the loss. */
  trainStep(): number {
    const k = this.step;
    const { parts, x } = this.batchFor(k);
    const B = parts.length;
    const F = inputChannels(this.config.encoder.inputFeatures);
    const { member, step } = this.memberOf(k);
    const encoder = this.encoders[member],
      adam = this.adams[member];
    const warmupSteps = Math.round(this.memberSteps * this.config.warmupFraction);
    const lr = cosineWithWarmup(step, this.memberSteps, this.config.learningRate, warmupSteps);
    const labels = this.labels ? parts.map((i) => this.labels![i]) : null;
    const exclude = this.alike ? excludedPairs(parts, this.alike) : null;
    const vars = encoder.variables;
    const bank = this.memories[member],
      keyEncoder = this.keyEncoders[member];
    const lossValue = tf.tidy(() => {
      const input = tf.tensor3d(x, [2 * B, this.config.points, F]);
      // The memory joins the negatives once the learning rate has warmed up.
      const memory =
        bank && step >= warmupSteps && bank.size > 0
          ? {
              rows: tf.tensor2d(bank.rows(), [bank.size, bank.dim]),
              blocked: tf.tensor2d(bank.blocked([...parts, ...parts], this.alike), [2 * B, bank.size]),
            }
          : null;
      const { value, grads } = tf.variableGrads(() => {
        const z = encoder.project(encoder.pooled(input)); // (2B, P)
        const za = tf.slice(z, [0, 0], [B, -1]) as tf.Tensor2D;
        const zb = tf.slice(z, [B, 0], [B, -1]) as tf.Tensor2D;
        return computeLoss(this.config.loss, za, zb, labels, exclude && tf.tensor2d(exclude, [B, B]), memory);
      }, vars);
      const loss = value.dataSync()[0];
      if (Number.isFinite(loss))
        adam.apply(
          vars.map((v) => grads[v.name]),
          lr,
        );
      if (bank && keyEncoder && Number.isFinite(loss)) {
        // The key encoder follows the trained one by a moving average, and encodes one view of each part for the
        // memory: rows from a slowly changing encoder, so they stay comparable across steps (He et al. 2020, §3.2).
        keyEncoder.variables.forEach((k, i) =>
          k.assign(tf.add(tf.mul(k, KEY_MOMENTUM), tf.mul(vars[i], 1 - KEY_MOMENTUM))),
        );
        const keys = keyEncoder.project(keyEncoder.pooled(tf.slice(input, [0, 0, 0], [B, -1, -1]) as tf.Tensor3D));
        bank.push(keys.dataSync() as Float32Array, parts);
      }
      return loss;
    });
    if (!Number.isFinite(lossValue))
      throw new RangeError(`training diverged at step ${k + 1}: the loss is ${lossValue} (try a lower learning rate)`);
    this.step = k + 1;
    this.history.push({ step: this.step, loss: lossValue, lr });
    return lossValue;
  }

  /** Held-out instance recognition: views of held-out parts against their clean embeddings. */
  heldOutCheck(): HeldOutCheck | null {
    if (this.heldIdx.length < 2) return null;
    const { member } = this.memberOf(Math.max(0, this.step - 1)); // the encoder the last step trained
    const held = this.heldIdx.map((i) => this.memberParts[member][i]);
    const encoder = this.encoders[member];
    const clean = embedParts(encoder, held, this.config.points);
    const viewEmb = embedParts(encoder, checkViews(held, this.config.pipeline, this.config.seed), this.config.points);
    const D = clean.length / held.length;
    let hits = 0;
    for (let i = 0; i < held.length; i++) {
      let best = -Infinity,
        bestJ = -1;
      for (let j = 0; j < held.length; j++) {
        let s = 0;
        for (let d = 0; d < D; d++) s += viewEmb[i * D + d] * clean[j * D + d];
        if (s > best) {
          best = s;
          bestJ = j;
        }
      }
      if (bestJ === i) hits++;
    }
    return { step: this.step, instanceTop1: hits / held.length };
  }

  pause(): void {
    this.pauseRequested = true;
  }
  resume(): void {
    this.pauseRequested = false;
    this.resumeGate?.();
  }
  cancel(): void {
    this.cancelRequested = true;
    this.resumeGate?.();
  }

  /** Run to the end (or an early stop, a cancel, or a failure), reporting progress after every step. */
  async run(events: TrainEvents = {}): Promise<TrainResult> {
    this.status = 'running';
    const yieldEvery = events.yieldEvery ?? 1;
    const recent: number[] = [];
    let best = -Infinity,
      sinceBest = 0,
      bestWeights: Float32Array[] | null = null;
    try {
      while (this.step < this.totalSteps) {
        if (this.cancelRequested) {
          this.status = 'cancelled';
          break;
        }
        if (this.pauseRequested) {
          this.status = 'paused';
          await new Promise<void>((resolve) => (this.resumeGate = resolve));
          this.resumeGate = null;
          if (this.cancelRequested) {
            this.status = 'cancelled';
            break;
          }
          this.status = 'running';
        }
        const t0 = performance.now();
        const loss = this.trainStep();
        const ms = performance.now() - t0;
        recent.push(ms);
        if (recent.length > 10) recent.shift();
        const avg = recent.reduce((s, v) => s + v, 0) / recent.length;
        const B = Math.min(this.config.batchSize, this.trainIdx.length);
        events.onProgress?.({
          step: this.step,
          totalSteps: this.totalSteps,
          epoch: Math.floor(this.memberOf(this.step - 1).step / this.stepsPerEpoch),
          loss,
          learningRate: this.history[this.history.length - 1].lr,
          samplesPerSec: (B * 1000) / avg,
          etaSec: ((this.totalSteps - this.step) * avg) / 1000,
          msPerStep: avg,
          member: this.memberOf(this.step - 1).member,
          members: this.encoders.length,
        });
        const due = this.config.evalEvery > 0 ? this.step % this.config.evalEvery === 0 : false;
        if ((due || this.step === this.totalSteps) && this.heldIdx.length >= 2) {
          const check = this.heldOutCheck()!;
          this.checks.push(check);
          events.onCheck?.(check);
          if (check.instanceTop1 > best) {
            best = check.instanceTop1;
            sinceBest = 0;
            if (this.config.patience > 0) bestWeights = getWeights(this.encoder);
          } else if (this.config.patience > 0 && ++sinceBest >= this.config.patience) {
            if (bestWeights) setWeights(this.encoder, bestWeights);
            this.status = 'stopped-early';
            break;
          }
        }
        if (this.step % yieldEvery === 0) await new Promise<void>((r) => setTimeout(() => r(), 0));
      }
      if (this.status === 'running') this.status = 'done';
    } catch (err) {
      this.status = 'failed';
      return this.result((err as Error).message);
    }
    return this.result();
  }

  private result(message?: string): TrainResult {
    const last = this.history[this.history.length - 1];
    return {
      status: this.status,
      steps: this.step,
      finalLoss: last ? last.loss : NaN,
      history: this.history,
      checks: this.checks,
      ...(message ? { message } : {}),
    };
  }

  /** The optimiser's state: one encoder's, or every encoder's moments in order with the overall step. */
  adamState(): AdamState {
    if (this.adams.length === 1) return this.adams[0].state();
    const states = this.adams.map((a) => a.state());
    return { step: this.step, m: states.flatMap((s) => s.m), v: states.flatMap((s) => s.v) };
  }

  dispose(): void {
    for (const e of this.encoders) e.dispose();
    for (const k of this.keyEncoders) k?.dispose();
    for (const a of this.adams) a.dispose();
  }
}

/**
 * Milliseconds a training step with `config` takes, timed on `parts` (a batch-sized sample of the library): the median
 * of `timed` steps after `warm` untimed ones. The first steps pay for compiling kernels and filling caches: in the
 * workbench on KiCad's 990 parts one step timed after a single warm-up step took 531 ms, while the run's steps took
 * 362–423 ms (docs/log/2026-12-05-softmax-temperature.md).
 */
export function probeStepMs(
  parts: readonly ModelPart[],
  config: TrainConfig,
  { warm = 2, timed = 3, now = () => performance.now() }: { warm?: number; timed?: number; now?: () => number } = {},
): number {
  const t = new Trainer(parts, { ...config, epochs: warm + timed, heldOutFraction: 0, patience: 0 });
  try {
    for (let i = 0; i < warm; i++) t.trainStep();
    const ms = Array.from({ length: timed }, () => {
      const t0 = now();
      t.trainStep();
      return now() - t0;
    }).sort((a, b) => a - b);
    return ms.length % 2 ? ms[(ms.length - 1) / 2] : (ms[ms.length / 2 - 1] + ms[ms.length / 2]) / 2;
  } finally {
    t.dispose();
  }
}

export function getWeights(encoder: Encoder): Float32Array[] {
  return encoder.variables.map((v) => v.dataSync().slice() as Float32Array);
}

export function setWeights(encoder: Encoder, weights: readonly Float32Array[]): void {
  const vars = encoder.variables;
  if (weights.length !== vars.length)
    throw new RangeError(
      `weights: ${weights.length} arrays for ${vars.length} variables (a different encoder configuration?)`,
    );
  vars.forEach((v, i) => {
    const size = v.shape.reduce((a, b) => a * b, 1);
    if (weights[i].length !== size)
      throw new RangeError(
        `weights: ${encoder.weightNames[i]} has ${weights[i].length} values, expected ${size} (shape ${v.shape})`,
      );
    tf.tidy(() => v.assign(tf.tensor(weights[i], v.shape)));
  });
}
