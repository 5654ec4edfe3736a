// Contrastive training on CPU: view pairs from the augmentation pipeline, one fused forward/backward per
// step, Adam with a cosine schedule and warm-up, progress events, pause/resume/cancel, held-out checks for
// early stopping, and checkpoints. The same code runs in Node, vitest and a Web Worker.

import * as tf from '@tensorflow/tfjs';
import { augmentSubset, validatePipeline, type Pipeline } from '../points/augment';
import { makeCloud } from '../points/cloud';
import { drawIndices } from '../points/sample';
import { createRng, hashString, type Rng } from '../rng';
import { Adam, cosineWithWarmup, type AdamState } from './adam';
import { embedParts, fillSlot, memberPoses, posed, POSES, withLocalShape, type ModelPart, type Pose } from './embed';
import { Encoder, inputChannels, usesLocalShape, validateEncoderConfig, type EncoderConfig } from './encoder';
import { computeLoss, LOSS_NAMES, type LossSettings } from './losses';
import { iMixLoss, mixTargets } from './losses/imix';
import { multiViewSupConLoss } from './losses/supcon';
import { PointIndex } from '../points/kdtree';

export interface TrainConfig {
  readonly encoder: EncoderConfig;
  readonly loss: LossSettings;
  readonly pipeline: Pipeline;
  /**
   * Pose parts before encoding: in their principal-axes frame, in their files' axes (signs open), exactly as they
   * are, or both of the first two (`file-and-principal`: two encoders, the files' axes one trained first, each
   * for the full number of epochs).
   */
  readonly pose: Pose;
  /** Points per view. */
  readonly points: number;
  /** Parts (= view pairs) per step. */
  readonly batchSize: number;
  readonly epochs: number;
  readonly learningRate: number;
  /** Fraction of all steps spent warming the learning rate up linearly. */
  readonly warmupFraction: number;
  readonly seed: number;
  /** Fraction of parts kept out of training to check retrieval on (0: none). */
  readonly heldOutFraction: number;
  /** Steps between held-out checks (0: only at the end). */
  readonly evalEvery: number;
  /** Stop after this many checks without improvement (0: never stop early). */
  readonly patience: number;
  /**
   * 'i-mix' (Lee et al. 2021): each step's anchor views mix two parts (a union of their points, in proportion
   * λ ~ U(0, 1)) and the loss is i-Mix's N-pair cross-entropy against the mixture; the loss setting's
   * temperature applies and its name is not used. Absent or 'none': the loss as set.
   */
  readonly mixing?: 'none' | 'i-mix';
  /**
   * Extra local views per part each step (multi-crop, after SwAV; Caron et al. 2020): each keeps `points` points
   * drawn from the `share` of the part's pool nearest a random pool point, in place (not rescaled), then goes
   * through the pipeline. All views of a part are each other's positives (multi-view NT-Xent, i.e. supervised
   * contrastive with the part as label; with labels, the labels). Absent or count 0: two views only.
   */
  readonly localViews?: { readonly count: number; readonly points: number; readonly share: number };
}

export interface TrainProgress {
  readonly step: number; // steps done
  readonly totalSteps: number;
  readonly epoch: number; // 0-based epoch of the last step
  readonly loss: number;
  readonly learningRate: number;
  /** Parts (view pairs) per second over the recent steps. */
  readonly samplesPerSec: number;
  readonly etaSec: number;
  readonly msPerStep: number;
  /** The encoder being trained (0-based) and how many the pose has (two for file-and-principal). */
  readonly member: number;
  readonly members: number;
}

export interface HeldOutCheck {
  readonly step: number;
  /** Held-out instance recognition: an augmented view's nearest clean held-out part is its own part. */
  readonly instanceTop1: number;
}

export type TrainStatus = 'idle' | 'running' | 'paused' | 'done' | 'stopped-early' | 'cancelled' | 'failed';

export interface TrainEvents {
  onProgress?(p: TrainProgress): void;
  onCheck?(c: HeldOutCheck): void;
  /** Called between steps so a host can process messages; resolve to continue. */
  yieldEvery?: number;
}

export interface TrainResult {
  readonly status: TrainStatus;
  readonly steps: number;
  readonly finalLoss: number;
  readonly history: readonly { step: number; loss: number; lr: number }[];
  readonly checks: readonly HeldOutCheck[];
  readonly message?: string;
}

export function validateTrainConfig(c: TrainConfig, partCount: number): void {
  validateEncoderConfig(c.encoder);
  validatePipeline(c.pipeline);
  if (!LOSS_NAMES.includes(c.loss.name)) throw new RangeError(`training: unknown loss "${c.loss.name}"`);
  const whole = (v: number, lo: number, name: string) => {
    if (!Number.isInteger(v) || v < lo) throw new RangeError(`training: ${name} must be a whole number ≥ ${lo}, got ${v}`);
  };
  whole(c.points, 16, 'points');
  whole(c.batchSize, 2, 'batch size (parts per step; NT-Xent needs a negative)');
  whole(c.epochs, 1, 'epochs');
  if (!(c.learningRate > 0 && c.learningRate < 1)) throw new RangeError(`training: learning rate must be in (0, 1), got ${c.learningRate}`);
  if (!(c.loss.temperature > 0)) throw new RangeError(`training: temperature must be > 0, got ${c.loss.temperature}`);
  const prior = c.loss.classPrior;
  if (prior !== undefined && !(prior >= 0 && prior < 1)) throw new RangeError(`training: class prior τ⁺ must be in [0, 1), got ${prior}`);
  if (c.mixing !== undefined && c.mixing !== 'none' && c.mixing !== 'i-mix') throw new RangeError(`training: mixing must be none or i-mix, got ${c.mixing}`);
  const lv = c.localViews;
  if (lv) {
    whole(lv.count, 0, 'local views per part');
    whole(lv.points, 16, 'points per local view');
    if (!(lv.share > 0 && lv.share <= 1)) throw new RangeError(`training: a local view's share of the part must be in (0, 1], got ${lv.share}`);
    if (c.loss.name !== 'nt-xent' && c.loss.name !== 'supervised-contrastive') throw new RangeError(`training: local views need the nt-xent or supervised-contrastive loss, got ${c.loss.name}`);
    if (c.mixing === 'i-mix') throw new RangeError('training: local views and i-Mix do not combine');
  }
  if (c.pose === 'file-and-principal' && c.patience > 0) throw new RangeError('training: early stopping (patience) is not available with two encoders (file-and-principal)');
  if (!(c.heldOutFraction >= 0 && c.heldOutFraction < 0.9)) throw new RangeError(`training: held-out fraction must be in [0, 0.9), got ${c.heldOutFraction}`);
  const trainCount = partCount - Math.round(partCount * c.heldOutFraction);
  if (trainCount < 2) throw new RangeError(`training needs at least 2 parts to train on, got ${trainCount}`);
}

/** Steps per epoch: whole batches of the training parts (a short last batch is dropped, never a batch of 1). */
export function stepsPerEpoch(trainCount: number, batchSize: number): number {
  return Math.max(1, Math.floor(trainCount / Math.min(batchSize, trainCount)));
}

/** Random permutation of 0..n−1 (Fisher–Yates). */
function permutation(n: number, rng: Rng): number[] {
  const p = Array.from({ length: n }, (_, i) => i);
  for (let i = n - 1; i > 0; i--) { const j = rng.int(i + 1); const t = p[i]; p[i] = p[j]; p[j] = t; }
  return p;
}

export interface TrainerOptions {
  readonly labels?: readonly number[] | null;
  /** Start from these weights (a checkpoint or a pre-trained encoder). */
  readonly initialWeights?: readonly Float32Array[];
  readonly resume?: { readonly step: number; readonly adam: AdamState; readonly history: TrainResult['history']; readonly checks: readonly HeldOutCheck[] };
}

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
  private readonly labels: readonly number[] | null;
  private readonly viewBuffer: Float32Array;
  private readonly scratch: Uint32Array;
  private readonly origin: Uint32Array;
  private readonly viewLocal: Float32Array;
  private readonly poolClouds: readonly ReturnType<typeof makeCloud>[][];
  private readonly localBuffer: Float32Array | null;
  private readonly poolIndex = new Map<number, PointIndex>();
  step = 0;
  status: TrainStatus = 'idle';
  history: { step: number; loss: number; lr: number }[] = [];
  checks: HeldOutCheck[] = [];
  private resumeGate: (() => void) | null = null;
  private cancelRequested = false;
  private pauseRequested = false;

  constructor(parts: readonly ModelPart[], config: TrainConfig, options: TrainerOptions = {}) {
    validateTrainConfig(config, parts.length);
    if (config.loss.name === 'supervised-contrastive' && !options.labels) throw new RangeError('supervised-contrastive loss needs labels (folders or labels.csv)');
    if (!POSES.includes(config.pose)) throw new RangeError(`training: pose must be one of ${POSES.join(', ')}, got ${config.pose}`);
    this.config = config;
    const withLocal = withLocalShape(parts, config.encoder.inputFeatures);
    this.memberParts = memberPoses(config.pose).map((pose) => posed(withLocal, pose));
    this.labels = options.labels ?? null;
    const order = permutation(parts.length, createRng(hashString('split', config.seed)));
    const held = Math.round(parts.length * config.heldOutFraction);
    this.heldIdx = order.slice(0, held).sort((a, b) => a - b);
    this.trainIdx = order.slice(held).sort((a, b) => a - b);
    this.stepsPerEpoch = stepsPerEpoch(this.trainIdx.length, config.batchSize);
    this.memberSteps = this.stepsPerEpoch * config.epochs;
    this.totalSteps = this.memberSteps * this.memberParts.length;
    // Every encoder starts from the seed's initial weights: each is the encoder a one-pose run with this seed would train.
    this.encoders = this.memberParts.map(() => new Encoder(config.encoder, createRng(hashString('init', config.seed))));
    if (options.initialWeights) {
      const w = options.initialWeights, per = this.encoders[0].variables.length;
      // One encoder's weights start every encoder; otherwise each encoder takes its own share, in order.
      this.encoders.forEach((e, m) => setWeights(e, w.length === per ? w : w.slice(m * per, (m + 1) * per)));
    }
    this.adams = this.encoders.map((e) => new Adam(e.variables));
    const B = Math.min(config.batchSize, this.trainIdx.length);
    this.viewBuffer = new Float32Array(2 * B * config.points * inputChannels(config.encoder.inputFeatures));
    this.scratch = new Uint32Array(Math.max(...parts.map((p) => p.points.length / 3)));
    this.origin = new Uint32Array(config.points);
    this.viewLocal = new Float32Array(config.points * 3);
    this.poolClouds = this.memberParts.map((ps) => ps.map((p) => makeCloud(p.points, p.normals)));
    const lv = config.localViews;
    this.localBuffer = lv && lv.count > 0 ? new Float32Array(lv.count * B * lv.points * inputChannels(config.encoder.inputFeatures)) : null;
    if (options.resume) {
      const { adam, step } = options.resume, per = this.encoders[0].variables.length;
      if (this.adams.length === 1) this.adams[0].restore(adam);
      else this.adams.forEach((a, m) => a.restore({
        step: Math.min(this.memberSteps, Math.max(0, step - m * this.memberSteps)),
        m: adam.m.slice(m * per, (m + 1) * per), v: adam.v.slice(m * per, (m + 1) * per),
      }));
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

  /**
   * The parts and seeded views of step k: the same k always gives the same batch (resumable). An encoder's steps
   * draw exactly what a one-pose run with the same seed draws at those steps.
   */
  private batchFor(k: number): { parts: number[]; x: Float32Array; local: Float32Array | null; mix: { lambda: number; partner: number[] } | null } {
    const { member, step } = this.memberOf(k);
    const parts = this.memberParts[member], clouds = this.poolClouds[member];
    k = step;
    const epoch = Math.floor(k / this.stepsPerEpoch);
    const within = k % this.stepsPerEpoch;
    const B = Math.min(this.config.batchSize, this.trainIdx.length);
    const perm = permutation(this.trainIdx.length, createRng(hashString(`epoch:${epoch}`, this.config.seed)));
    const chosen = perm.slice(within * B, within * B + B).map((i) => this.trainIdx[i]);
    const rng = createRng(hashString(`step:${k}`, this.config.seed));
    const { points: n, encoder } = this.config;
    chosen.forEach((partIndex, slot) => {
      const part = parts[partIndex];
      const cloud = clouds[partIndex];
      for (let view = 0; view < 2; view++) {
        // Each view draws its own n points from the part's pool (a fresh resampling), then is augmented.
        const v = augmentSubset(cloud, drawIndices(cloud.count, n, rng, this.scratch), this.config.pipeline, rng, this.origin);
        fillSlot(this.viewBuffer, view * B + slot, n, encoder.inputFeatures, v.positions, v.normals ?? part.normals, this.localOf(part, this.origin, this.viewLocal));
      }
    });
    const lv = this.config.localViews;
    if (lv && this.localBuffer) {
      chosen.forEach((partIndex, slot) => {
        const part = parts[partIndex];
        const cloud = clouds[partIndex];
        const key = member * this.memberParts[0].length + partIndex;
        let index = this.poolIndex.get(key);
        if (!index) { index = new PointIndex(cloud.positions); this.poolIndex.set(key, index); }
        const region = Math.max(lv.points, Math.min(cloud.count, Math.round(lv.share * cloud.count)));
        for (let view = 0; view < lv.count; view++) {
          const s = rng.int(cloud.count) * 3, p = cloud.positions;
          const near = index.nearest(p[s], p[s + 1], p[s + 2], Math.min(region, cloud.count));
          const pick = drawIndices(near.length, lv.points, rng, this.scratch);
          const chosenIdx = Uint32Array.from(pick, (i) => near[i].index);
          const origin = new Uint32Array(lv.points);
          const v = augmentSubset(cloud, chosenIdx, this.config.pipeline, rng, origin);
          fillSlot(this.localBuffer!, view * B + slot, lv.points, encoder.inputFeatures, v.positions, v.normals ?? part.normals, this.localOf(part, origin, new Float32Array(lv.points * 3)));
        }
      });
    }
    if (this.config.mixing !== 'i-mix') return { parts: chosen, x: this.viewBuffer, local: this.localBuffer, mix: null };
    // i-Mix: anchor i keeps its first round(λ·n) points and takes the rest from partner π(i)'s anchor view.
    const lambda = rng.next();
    const partner = permutation(B, rng);
    const row = n * inputChannels(encoder.inputFeatures);
    const anchors = this.viewBuffer.slice(0, B * row);
    const keep = Math.round(lambda * n) * inputChannels(encoder.inputFeatures);
    for (let i = 0; i < B; i++) this.viewBuffer.set(anchors.subarray(partner[i] * row + keep, (partner[i] + 1) * row), i * row + keep);
    const weight = keep / row; // λ as realised by whole points
    return { parts: chosen, x: this.viewBuffer, local: null, mix: { lambda: weight, partner } };
  }

  /** The local shape of a view's points, looked up by the pool point each copies (rigid moves keep it). */
  private localOf(part: ModelPart, origin: Uint32Array, out: Float32Array): Float32Array | undefined {
    if (!usesLocalShape(this.config.encoder.inputFeatures)) return undefined;
    const src = part.local!;
    for (let i = 0; i < origin.length; i++) { const o = origin[i] * 3; out[3 * i] = src[o]; out[3 * i + 1] = src[o + 1]; out[3 * i + 2] = src[o + 2]; }
    return out;
  }

  /** One optimisation step; returns the loss. */
  trainStep(): number {
    const k = this.step;
    const { parts, x, local, mix } = this.batchFor(k);
    const B = parts.length;
    const F = inputChannels(this.config.encoder.inputFeatures);
    const { member, step } = this.memberOf(k);
    const encoder = this.encoders[member], adam = this.adams[member];
    const lr = cosineWithWarmup(step, this.memberSteps, this.config.learningRate, Math.round(this.memberSteps * this.config.warmupFraction));
    const labels = this.labels ? parts.map((i) => this.labels![i]) : null;
    const vars = encoder.variables;
    const lossValue = tf.tidy(() => {
      const input = tf.tensor3d(x, [2 * B, this.config.points, F]);
      const lv = this.config.localViews;
      const { value, grads } = tf.variableGrads(() => {
        const z = encoder.project(encoder.pooled(input)); // (2B, P)
        if (lv && local) {
          const zl = encoder.project(encoder.pooled(tf.tensor3d(local, [lv.count * B, lv.points, F])));
          const ids = Array.from({ length: (2 + lv.count) * B }, (_, r) => (labels ? labels[r % B] : r % B));
          return multiViewSupConLoss(tf.concat([z, zl], 0) as tf.Tensor2D, ids, this.config.loss.temperature);
        }
        const za = tf.slice(z, [0, 0], [B, -1]) as tf.Tensor2D;
        const zb = tf.slice(z, [B, 0], [B, -1]) as tf.Tensor2D;
        if (mix) return iMixLoss(za, zb, tf.tensor2d(mixTargets(mix.lambda, mix.partner), [B, B]), this.config.loss.temperature);
        return computeLoss(this.config.loss, za, zb, labels);
      }, vars);
      const loss = value.dataSync()[0];
      if (Number.isFinite(loss)) adam.apply(vars.map((v) => grads[v.name]), lr);
      return loss;
    });
    if (!Number.isFinite(lossValue)) throw new RangeError(`training diverged at step ${k + 1}: the loss is ${lossValue} (try a lower learning rate)`);
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
    const rng = createRng(hashString('check', this.config.seed));
    const views = held.map((p) => {
      const count = p.points.length / 3;
      const all = Uint32Array.from({ length: count }, (_, i) => i), origin = new Uint32Array(count);
      const v = augmentSubset(makeCloud(p.points, p.normals), all, this.config.pipeline, rng, origin);
      const local = this.localOf(p, origin, new Float32Array(count * 3));
      return { points: v.positions, normals: v.normals ?? p.normals, ...(local ? { local } : {}) };
    });
    const viewEmb = embedParts(encoder, views, this.config.points);
    const D = clean.length / held.length;
    let hits = 0;
    for (let i = 0; i < held.length; i++) {
      let best = -Infinity, bestJ = -1;
      for (let j = 0; j < held.length; j++) {
        let s = 0;
        for (let d = 0; d < D; d++) s += viewEmb[i * D + d] * clean[j * D + d];
        if (s > best) { best = s; bestJ = j; }
      }
      if (bestJ === i) hits++;
    }
    return { step: this.step, instanceTop1: hits / held.length };
  }

  pause(): void { this.pauseRequested = true; }
  resume(): void { this.pauseRequested = false; this.resumeGate?.(); }
  cancel(): void { this.cancelRequested = true; this.resumeGate?.(); }

  /** Run to the end (or an early stop, a cancel, or a failure), reporting progress after every step. */
  async run(events: TrainEvents = {}): Promise<TrainResult> {
    this.status = 'running';
    const yieldEvery = events.yieldEvery ?? 1;
    const recent: number[] = [];
    let best = -Infinity, sinceBest = 0, bestWeights: Float32Array[] | null = null;
    try {
      while (this.step < this.totalSteps) {
        if (this.cancelRequested) { this.status = 'cancelled'; break; }
        if (this.pauseRequested) {
          this.status = 'paused';
          await new Promise<void>((resolve) => (this.resumeGate = resolve));
          this.resumeGate = null;
          if (this.cancelRequested) { this.status = 'cancelled'; break; }
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
          step: this.step, totalSteps: this.totalSteps, epoch: Math.floor(this.memberOf(this.step - 1).step / this.stepsPerEpoch), loss,
          learningRate: this.history[this.history.length - 1].lr, samplesPerSec: (B * 1000) / avg,
          etaSec: ((this.totalSteps - this.step) * avg) / 1000, msPerStep: avg,
          member: this.memberOf(this.step - 1).member, members: this.encoders.length,
        });
        const due = this.config.evalEvery > 0 ? this.step % this.config.evalEvery === 0 : false;
        if ((due || this.step === this.totalSteps) && this.heldIdx.length >= 2) {
          const check = this.heldOutCheck()!;
          this.checks.push(check);
          events.onCheck?.(check);
          if (check.instanceTop1 > best) { best = check.instanceTop1; sinceBest = 0; if (this.config.patience > 0) bestWeights = getWeights(this.encoder); }
          else if (this.config.patience > 0 && ++sinceBest >= this.config.patience) {
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
    return { status: this.status, steps: this.step, finalLoss: last ? last.loss : NaN, history: this.history, checks: this.checks, ...(message ? { message } : {}) };
  }

  /** The optimiser's state: one encoder's, or every encoder's moments in order with the overall step. */
  adamState(): AdamState {
    if (this.adams.length === 1) return this.adams[0].state();
    const states = this.adams.map((a) => a.state());
    return { step: this.step, m: states.flatMap((s) => s.m), v: states.flatMap((s) => s.v) };
  }

  dispose(): void {
    for (const e of this.encoders) e.dispose();
    for (const a of this.adams) a.dispose();
  }
}

export function getWeights(encoder: Encoder): Float32Array[] {
  return encoder.variables.map((v) => v.dataSync().slice() as Float32Array);
}

export function setWeights(encoder: Encoder, weights: readonly Float32Array[]): void {
  const vars = encoder.variables;
  if (weights.length !== vars.length) throw new RangeError(`weights: ${weights.length} arrays for ${vars.length} variables (a different encoder configuration?)`);
  vars.forEach((v, i) => {
    const size = v.shape.reduce((a, b) => a * b, 1);
    if (weights[i].length !== size) throw new RangeError(`weights: ${encoder.weightNames[i]} has ${weights[i].length} values, expected ${size} (shape ${v.shape})`);
    tf.tidy(() => v.assign(tf.tensor(weights[i], v.shape)));
  });
}
