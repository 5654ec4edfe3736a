// Batch assembly for contrastive training, without tfjs: which parts are held out, which parts each step takes,
// and the two augmented views of each. Every draw is seeded by the step, so the same step always gives the same
// batch (a resumed run repeats nothing and skips nothing).

import { augmentSubset, type Pipeline } from '../points/augment';
import { makeCloud, type PointCloud } from '../points/cloud';
import { drawIndices } from '../points/sample';
import { createRng, hashString, type Rng } from '../rng';
import { inputChannels, type InputFeatures } from './encoder-config';
import { fillSlot, type ModelPart } from './views';

/** Random permutation of 0..n−1 (Fisher–Yates). */
export function permutation(n: number, rng: Rng): number[] {
  const p = Array.from({ length: n }, (_, i) => i);
  for (let i = n - 1; i > 0; i--) {
    const j = rng.int(i + 1);
    const t = p[i];
    p[i] = p[j];
    p[j] = t;
  }
  return p;
}

/** The parts kept out of training (a seeded share of them) and the rest, each in ascending order. */
export function splitParts(count: number, heldOutFraction: number, seed: number): { train: number[]; held: number[] } {
  const order = permutation(count, createRng(hashString('split', seed)));
  const held = Math.round(count * heldOutFraction);
  return { held: order.slice(0, held).sort((a, b) => a - b), train: order.slice(held).sort((a, b) => a - b) };
}

export interface BatchSettings {
  readonly pipeline: Pipeline;
  readonly inputFeatures: InputFeatures;
  /** Points per view. */
  readonly points: number;
  readonly batchSize: number;
  readonly seed: number;
}

/** Views of B parts as one (2B, n, F) buffer: rows 0..B−1 the first view of each part, B..2B−1 the second. */
export interface Batch {
  readonly parts: number[];
  readonly x: Float32Array;
}

/** Makes the batches of one encoder's run over its posed parts. */
export class BatchMaker {
  readonly batchSize: number;
  readonly stepsPerEpoch: number;
  private readonly clouds: readonly PointCloud[];
  private readonly buffer: Float32Array;
  private readonly scratch: Uint32Array;

  constructor(
    private readonly parts: readonly ModelPart[],
    private readonly trainIdx: readonly number[],
    private readonly settings: BatchSettings,
    stepsPerEpoch: number,
  ) {
    this.batchSize = Math.min(settings.batchSize, trainIdx.length);
    this.stepsPerEpoch = stepsPerEpoch;
    this.clouds = parts.map((p) => makeCloud(p.points, p.normals));
    this.buffer = new Float32Array(2 * this.batchSize * settings.points * inputChannels(settings.inputFeatures));
    this.scratch = new Uint32Array(Math.max(...parts.map((p) => p.points.length / 3)));
  }

  /** The batch of step k of this run (the buffer is reused: read it before the next call). */
  batch(k: number): Batch {
    const { points: n, inputFeatures, pipeline, seed } = this.settings;
    const B = this.batchSize;
    const epoch = Math.floor(k / this.stepsPerEpoch);
    const within = k % this.stepsPerEpoch;
    const perm = permutation(this.trainIdx.length, createRng(hashString(`epoch:${epoch}`, seed)));
    const chosen = perm.slice(within * B, within * B + B).map((i) => this.trainIdx[i]);
    const rng = createRng(hashString(`step:${k}`, seed));
    chosen.forEach((partIndex, slot) => {
      const part = this.parts[partIndex];
      const cloud = this.clouds[partIndex];
      for (let view = 0; view < 2; view++) {
        // Each view draws its own n points from the part's pool (a fresh resampling), then is augmented.
        const v = augmentSubset(cloud, drawIndices(cloud.count, n, rng, this.scratch), pipeline, rng);
        fillSlot(this.buffer, view * B + slot, n, inputFeatures, v.positions, v.normals ?? part.normals);
      }
    });
    return { parts: chosen, x: this.buffer };
  }
}

/** One augmented view of each whole part (every pool point), seeded: what the held-out check embeds. */
export function checkViews(parts: readonly ModelPart[], pipeline: Pipeline, seed: number): ModelPart[] {
  const rng = createRng(hashString('check', seed));
  return parts.map((p) => {
    const count = p.points.length / 3;
    const all = Uint32Array.from({ length: count }, (_, i) => i);
    const v = augmentSubset(makeCloud(p.points, p.normals), all, pipeline, rng);
    return { points: v.positions, normals: v.normals ?? p.normals };
  });
}
