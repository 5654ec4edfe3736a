// The loss registry: one name per published loss, and the call that training uses.

import type * as tf from '@tensorflow/tfjs';
import { debiasedNtXentLoss } from './debiased';
import { marginContrastiveLoss } from './margin';
import { ntXentLoss } from './ntxent';
import { supConLoss } from './supcon';
import { tripletLoss } from './triplet';

export const LOSS_NAMES = ['nt-xent', 'debiased-nt-xent', 'supervised-contrastive', 'triplet-hard', 'triplet-semi-hard', 'margin-contrastive'] as const;
export type LossName = (typeof LOSS_NAMES)[number];

export interface LossSettings {
  readonly name: LossName;
  readonly temperature: number;
  /** Triplet margin α and contrastive margin m (on unit vectors; common practice 0.2 and 0.5). */
  readonly margin: number;
  /** Debiased NT-Xent's prior τ⁺: the expected share of look-alikes among the other parts (absent: 0.1). */
  readonly classPrior?: number;
}

/** Default τ⁺: one look-alike in ten, the value used for ten-class data by Chuang et al. 2020. */
export const DEFAULT_CLASS_PRIOR = 0.1;

export function computeLoss(s: LossSettings, za: tf.Tensor2D, zb: tf.Tensor2D, labels: ArrayLike<number> | null): tf.Scalar {
  switch (s.name) {
    case 'nt-xent': return ntXentLoss(za, zb, s.temperature);
    case 'debiased-nt-xent': return debiasedNtXentLoss(za, zb, s.temperature, s.classPrior ?? DEFAULT_CLASS_PRIOR);
    case 'supervised-contrastive':
      if (!labels) throw new RangeError('supervised-contrastive loss needs labels (folders or labels.csv)');
      return supConLoss(za, zb, labels, s.temperature);
    case 'triplet-hard': return tripletLoss(za, zb, s.margin, 'hard');
    case 'triplet-semi-hard': return tripletLoss(za, zb, s.margin, 'semi-hard');
    case 'margin-contrastive': return marginContrastiveLoss(za, zb, s.margin);
    default: throw new RangeError(`unknown loss "${(s as LossSettings).name}" (expected one of ${LOSS_NAMES.join(', ')})`);
  }
}

export { debiasedNtXentLoss, marginContrastiveLoss, ntXentLoss, supConLoss, tripletLoss };
