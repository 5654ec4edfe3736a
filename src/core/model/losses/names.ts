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
  /**
   * NT-Xent only: this many views of earlier steps (detached, newest kept) join each step's negatives once the
   * learning rate has warmed up; cross-batch memory (losses/ntxent.ts, model/memory-bank.ts), its rows encoded by a
   * slowly following copy of the encoder (trainer.ts). 0 or absent: none. Measured, not a default
   * (docs/log/2026-12-05-cross-batch-memory.md). A run resumed from a checkpoint starts with an empty memory and the key
   * encoder at the resumed weights (neither is saved), so it does not repeat an unbroken run exactly.
   */
  readonly memory?: number;
}

/** Losses that need a label per part (folders or labels.csv). */
export const LABELLED_LOSSES: readonly LossName[] = ['supervised-contrastive'];
