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
}

/** Losses that need a label per part (folders or labels.csv). */
export const LABELLED_LOSSES: readonly LossName[] = ['supervised-contrastive'];
