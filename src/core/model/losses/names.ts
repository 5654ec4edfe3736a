// The losses by name and their settings, without tfjs: what the command line and the workbench offer.

export const LOSS_NAMES = [
  'nt-xent',
  'supervised-contrastive',
  'triplet-hard',
  'triplet-semi-hard',
  'margin-contrastive',
] as const;
export type LossName = (typeof LOSS_NAMES)[number];

export interface LossSettings {
  readonly name: LossName;
  readonly temperature: number;
  /** Triplet margin α and contrastive margin m (on unit vectors; common practice 0.2 and 0.5). */
  readonly margin: number;
  /**
   * NT-Xent only: each part's this many most alike parts before training (by the surface grid) are not used as its
   * negatives (false-negative elimination; losses/ntxent.ts, model/false-negatives.ts). 0 or absent: none.
   */
  readonly falseNegatives?: number;
}

/** Losses that need a label per part (folders or labels.csv). */
export const LABELLED_LOSSES: readonly LossName[] = ['supervised-contrastive'];
