// Default training settings: sized so a library of a hundred or so parts trains in about three minutes on two
// CPU cores, with the per-point inputs chosen from the library itself (normals only where the meshes make them
// trustworthy) and the training length from its size (a step budget). Measured in docs/log/.

import { PRESETS } from '../points/augment';
import { DEFAULT_ENCODER, type InputFeatures } from './encoder-config';
import type { Pose } from './train-config';
import { fileFrameBoxRatio } from '../points/pca';
import { stepsPerEpoch, type TrainConfig } from './train-config';

export const DEFAULT_TRAIN: TrainConfig = {
  encoder: DEFAULT_ENCODER,
  loss: { name: 'nt-xent', temperature: 0.1, margin: 0.2 },
  pipeline: PRESETS['principal-pose'],
  pose: 'principal-axes',
  points: 256,
  batchSize: 32,
  epochs: 160,
  learningRate: 1e-3,
  warmupFraction: 0.05,
  seed: 0,
  heldOutFraction: 0,
  evalEvery: 0,
  patience: 0,
};

/** Points kept per part in the library: views draw `points` of these afresh each time. */
export const POOL_POINTS = 2048;

/**
 * Share of closed meshes from which the default inputs include normals. A closed mesh is re-wound outward on
 * import, so its normals are exact; an open one only gets the away-from-the-centroid guess. Measured (three
 * seeds each, docs/log/): on the closed demo library normals lift the trained encoder's mAP from 0.57 to
 * 0.84, while on the furniture set (49 of 152 closed) the trained encoder does better without them.
 */
export const NORMALS_MIN_CLOSED_SHARE = 0.5;

/**
 * NT-Xent temperature for libraries read as x y z (mostly open meshes). Measured (docs/log/2026-12-05-softmax-
 * temperature.md, seeds 0–2): on the three real libraries, all read as x y z, 0.07 against 0.1 lifted KiCad's first
 * tier and mAP and the second set's mAP in every seed and held furniture within its seed spread; on the closed demo
 * library, read with normals, it cost NN in every seed (0.958 against 0.979), so libraries read with normals keep
 * 0.1. 0.07 is also the value Wu et al. 2018 and MoCo (He et al. 2020) use (from memory).
 */
export const OPEN_LIBRARY_TEMPERATURE = 0.07;

/** Default temperature for a library: 0.07 when it is read as x y z (mostly open meshes), else 0.1. */
export function defaultTemperature(closed: readonly boolean[]): number {
  return defaultInputs(closed) === 'xyz' ? OPEN_LIBRARY_TEMPERATURE : DEFAULT_TRAIN.loss.temperature;
}

/** Default inputs for a library: x y z + normal when at least half its meshes are closed, else x y z. */
export function defaultInputs(closed: readonly boolean[]): InputFeatures {
  if (closed.length === 0) return DEFAULT_ENCODER.inputFeatures;
  const share = closed.filter(Boolean).length / closed.length;
  return share >= NORMALS_MIN_CLOSED_SHARE ? 'xyz+normal' : 'xyz';
}

/** Why those inputs, in a sentence for the command line and the workbench. */
export function inputsReason(closed: readonly boolean[]): string {
  const n = closed.filter(Boolean).length;
  return defaultInputs(closed) === 'xyz'
    ? `x y z only: ${n} of ${closed.length} meshes are closed, so most normals would be guesses`
    : `x y z + normal: ${n} of ${closed.length} meshes are closed, so their normals point outward`;
}

/** Why that temperature, in words for the command line and the workbench. */
export function temperatureReason(closed: readonly boolean[]): string {
  const read = defaultInputs(closed) === 'xyz' ? 'as x y z' : 'with normals';
  return `${defaultTemperature(closed)}, as for libraries read ${read}`;
}

/**
 * Training length in steps that the default epochs aim for. Measured on the furniture set (docs/log/):
 * retrieval improves up to about 600 steps and then levels off (1 280 steps were no better than 640).
 */
export const DEFAULT_STEP_BUDGET = 640;
/** Fewest epochs a large library gets from the step budget: each part is still seen this often. */
export const MIN_DEFAULT_EPOCHS = 10;

/** Default epochs for a library: DEFAULT_TRAIN.epochs, or fewer when that would exceed the step budget. */
export function defaultEpochs(partCount: number, batchSize = DEFAULT_TRAIN.batchSize): number {
  if (partCount < 2) return DEFAULT_TRAIN.epochs;
  const perEpoch = stepsPerEpoch(partCount, batchSize);
  return Math.min(DEFAULT_TRAIN.epochs, Math.max(MIN_DEFAULT_EPOCHS, Math.ceil(DEFAULT_STEP_BUDGET / perEpoch)));
}

/** A part sits square in its file's axes when its box there is at most this much larger than its principal box. */
export const FILE_FRAME_FIT = 1.05;
/**
 * Share of parts that must sit square in their files' axes for the default pose to use the files' frame.
 * Measured (docs/log/): both real furniture sets (96 % and 90 % square) retrieve better in their files'
 * frame, where a chair's seat is up whatever its proportions; the demo library (66 %: a third of its parts were
 * exported turned) keeps the principal-axes pose.
 */
export const FILE_FRAME_MIN_SHARE = 0.8;

/**
 * Default pose for a library from each part's file-frame box ratio (points/pca.ts `fileFrameBoxRatio`). A square
 * library gets two encoders, one in the files' axes and one in principal axes: on both real sets (five seeds
 * each, docs/log/) the pair beat the files'-axes encoder alone, and its twice-as-long training stays
 * within the time budget. Other libraries get principal axes.
 */
export function defaultPose(boxRatios: readonly number[]): Pose {
  if (boxRatios.length === 0) return DEFAULT_TRAIN.pose;
  const square = boxRatios.filter((r) => r <= FILE_FRAME_FIT).length;
  return square / boxRatios.length >= FILE_FRAME_MIN_SHARE ? 'file-and-principal' : 'principal-axes';
}

/** Why that pose, in a sentence for the command line and the workbench. */
export function poseReason(boxRatios: readonly number[]): string {
  const square = boxRatios.filter((r) => r <= FILE_FRAME_FIT).length;
  return defaultPose(boxRatios) === 'file-and-principal'
    ? `the files' own axes and principal axes, one encoder each: ${square} of ${boxRatios.length} parts sit square in their files' axes`
    : `principal axes: only ${square} of ${boxRatios.length} parts sit square in their files' axes`;
}

/** What the defaults read from a library: per part, whether its mesh is closed and how square it sits in its file. */
export interface LibraryTraits {
  readonly closed: readonly boolean[];
  readonly boxRatios: readonly number[];
}

/** The traits of library parts (their clouds centred, as sampled). */
export function libraryTraits(
  parts: readonly { readonly info: { readonly closed: boolean }; readonly points: Float32Array }[],
): LibraryTraits {
  return { closed: parts.map((p) => p.info.closed), boxRatios: parts.map((p) => fileFrameBoxRatio(p.points)) };
}

/** The default settings for a library (inputs and temperature from its closed meshes, pose from its files' frames, epochs from its size). */
export function defaultTrainFor(traits: LibraryTraits): TrainConfig {
  return {
    ...DEFAULT_TRAIN,
    epochs: defaultEpochs(traits.closed.length),
    pose: defaultPose(traits.boxRatios),
    encoder: { ...DEFAULT_TRAIN.encoder, inputFeatures: defaultInputs(traits.closed) },
    loss: { ...DEFAULT_TRAIN.loss, temperature: defaultTemperature(traits.closed) },
  };
}
