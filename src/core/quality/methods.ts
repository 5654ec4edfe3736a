// Descriptors for a library under each retrieval method: the learned encoder, the same encoder untrained
// (random weights), and the D2 shape distribution. Every method yields vectors plus a similarity.

import { embedForRetrieval, type Encoders } from '../model/embed';
import { type ModelPart } from '../model/views';
import { type Pose } from '../model/train-config';
import { createRng, hashString } from '../rng';
import { cosineSimilarity } from '../retrieval/metrics';
import { d2Histogram, l1 } from '../retrieval/d2';

export type MethodName = 'learned' | 'untrained' | 'd2';

export interface Descriptors {
  readonly method: MethodName;
  readonly vectors: Float32Array; // count × dim
  readonly dim: number;
  /** Higher is more similar. */
  readonly similarity: (i: number, j: number) => number;
}

export function encoderDescriptors(
  method: 'learned' | 'untrained',
  encoder: Encoders,
  parts: readonly ModelPart[],
  points: number,
  pose: Pose,
): Descriptors {
  const vectors = embedForRetrieval(encoder, parts, points, pose);
  const dim = vectors.length / Math.max(1, parts.length);
  return { method, vectors, dim, similarity: cosineSimilarity(vectors, dim) };
}

export function d2Descriptors(parts: readonly ModelPart[], seed = 0): Descriptors {
  const hists = parts.map((p, i) => d2Histogram(p.points, createRng(hashString(`d2:${i}`, seed))));
  const dim = hists[0]?.length ?? 0;
  const vectors = new Float32Array(parts.length * dim);
  hists.forEach((h, i) => vectors.set(h, i * dim));
  // L1 between histograms in [0, 2]; similarity = −L1.
  return { method: 'd2', vectors, dim, similarity: (i, j) => -l1(vectors, vectors, i * dim, j * dim, dim) };
}
