// The loss registry: one entry per published loss, each taking the two views' projections (B, D) of a batch.
// Training calls `computeLoss` and nothing else, so a new loss is a file here plus one line in LOSSES
// (and its name in names.ts).

import type * as tf from '@tensorflow/tfjs';
import { marginContrastiveLoss } from './margin';
import { LOSS_NAMES, type LossName, type LossSettings } from './names';
import { ntXentLoss, type MemoryNegatives } from './ntxent';
import { supConLoss } from './supcon';
import { tripletLoss } from './triplet';

export type LossFn = (
  za: tf.Tensor2D,
  zb: tf.Tensor2D,
  settings: LossSettings,
  labels: ArrayLike<number> | null,
  exclude: tf.Tensor2D | null,
  memory: MemoryNegatives | null,
) => tf.Scalar;

function needLabels(labels: ArrayLike<number> | null): ArrayLike<number> {
  if (!labels) throw new RangeError('supervised-contrastive loss needs labels (folders or labels.csv)');
  return labels;
}

export const LOSSES: Record<LossName, LossFn> = {
  'nt-xent': (za, zb, s, _labels, exclude, memory) => ntXentLoss(za, zb, s.temperature, exclude, memory),
  'supervised-contrastive': (za, zb, s, labels) => supConLoss(za, zb, needLabels(labels), s.temperature),
  'triplet-hard': (za, zb, s) => tripletLoss(za, zb, s.margin, 'hard'),
  'triplet-semi-hard': (za, zb, s) => tripletLoss(za, zb, s.margin, 'semi-hard'),
  'margin-contrastive': (za, zb, s) => marginContrastiveLoss(za, zb, s.margin),
};

export function computeLoss(
  s: LossSettings,
  za: tf.Tensor2D,
  zb: tf.Tensor2D,
  labels: ArrayLike<number> | null,
  exclude: tf.Tensor2D | null = null,
  memory: MemoryNegatives | null = null,
): tf.Scalar {
  const fn = LOSSES[s.name];
  if (!fn) throw new RangeError(`unknown loss "${s.name}" (expected one of ${LOSS_NAMES.join(', ')})`);
  return fn(za, zb, s, labels, exclude, memory);
}
