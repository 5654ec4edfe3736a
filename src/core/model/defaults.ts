// Default training settings: sized so the demo library trains in a few minutes on two CPU cores.

import { PRESETS } from '../points/augment';
import { DEFAULT_ENCODER } from './encoder';
import type { TrainConfig } from './train';

export const DEFAULT_TRAIN: TrainConfig = {
  encoder: DEFAULT_ENCODER,
  loss: { name: 'nt-xent', temperature: 0.1, margin: 0.2 },
  pipeline: PRESETS['principal-pose'],
  pose: 'principal-axes',
  points: 512,
  batchSize: 32,
  epochs: 80,
  learningRate: 1e-3,
  warmupFraction: 0.05,
  seed: 0,
  heldOutFraction: 0,
  evalEvery: 0,
  patience: 0,
};

/** Points kept per part in the library: views draw `points` of these afresh each time. */
export const POOL_POINTS = 2048;
