// What a training run is, without running it: the pose choices, the settings, the progress and result shapes,
// and the checks. No tfjs here, so the workbench's page and the command line's argument checks can read it.

import { validatePipeline, type Pipeline } from '../points/augment';
import { validateEncoderConfig, type EncoderConfig } from './encoder-config';
import { LOSS_NAMES, type LossSettings } from './losses/names';

/**
 * How parts are posed before the encoder sees them: rotated into their principal frame; kept in their files' axes
 * with each axis's sign left open (as for the principal frame: training flips, retrieval averages the four proper
 * sign choices); exactly as in the files; or both of the first two, by two encoders trained one after the other
 * (`file-and-principal`: a part's embedding is the two encoders' embeddings side by side).
 */
export type Pose = 'principal-axes' | 'file-axes' | 'as-is' | 'file-and-principal';
/** A pose that one encoder reads. */
export type SinglePose = Exclude<Pose, 'file-and-principal'>;
export const POSES: readonly Pose[] = ['principal-axes', 'file-axes', 'as-is', 'file-and-principal'];
/** The poses in plain words, for the command line and the workbench. */
export const POSE_LABELS: Record<Pose, string> = {
  'principal-axes': 'principal axes',
  'file-axes': "the files' axes, signs open",
  'as-is': 'exactly as in the files',
  'file-and-principal': "two encoders: the files' axes and principal axes",
};

/** The pose each encoder of a model reads, in the order they are trained and stored. */
export function memberPoses(pose: Pose): SinglePose[] {
  return pose === 'file-and-principal' ? ['file-axes', 'principal-axes'] : [pose];
}

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
  if (!POSES.includes(c.pose)) throw new RangeError(`training: pose must be one of ${POSES.join(', ')}, got ${c.pose}`);
  const whole = (v: number, lo: number, name: string) => {
    if (!Number.isInteger(v) || v < lo)
      throw new RangeError(`training: ${name} must be a whole number ≥ ${lo}, got ${v}`);
  };
  whole(c.points, 16, 'points');
  whole(c.batchSize, 2, 'batch size (parts per step; NT-Xent needs a negative)');
  whole(c.epochs, 1, 'epochs');
  if (!(c.learningRate > 0 && c.learningRate < 1))
    throw new RangeError(`training: learning rate must be in (0, 1), got ${c.learningRate}`);
  if (!(c.loss.temperature > 0)) throw new RangeError(`training: temperature must be > 0, got ${c.loss.temperature}`);
  const fn = c.loss.falseNegatives ?? 0;
  whole(fn, 0, 'false negatives (alike parts per part kept out of its negatives)');
  if (fn > 0 && c.loss.name !== 'nt-xent')
    throw new RangeError(`training: false negatives apply to the nt-xent loss only, not ${c.loss.name}`);
  const mem = c.loss.memory ?? 0;
  whole(mem, 0, 'memory (views of earlier steps kept as negatives)');
  if (mem > 0 && c.loss.name !== 'nt-xent')
    throw new RangeError(`training: a memory of earlier views applies to the nt-xent loss only, not ${c.loss.name}`);
  if (c.pose === 'file-and-principal' && c.patience > 0) {
    throw new RangeError('training: early stopping (patience) is not available with two encoders (file-and-principal)');
  }
  if (!(c.heldOutFraction >= 0 && c.heldOutFraction < 0.9)) {
    throw new RangeError(`training: held-out fraction must be in [0, 0.9), got ${c.heldOutFraction}`);
  }
  const trainCount = partCount - Math.round(partCount * c.heldOutFraction);
  if (trainCount < 2) throw new RangeError(`training needs at least 2 parts to train on, got ${trainCount}`);
}

/** Steps per epoch: whole batches of the training parts (a short last batch is dropped, never a batch of 1). */
export function stepsPerEpoch(trainCount: number, batchSize: number): number {
  return Math.max(1, Math.floor(trainCount / Math.min(batchSize, trainCount)));
}
