// Leave-one-out retrieval quality of the learned encoder against the two baselines on a labelled library.

import { Encoder } from '../model/encoder';
import { type EncoderConfig } from '../model/encoder-config';
import { disposeEncoders, type Encoders } from '../model/embed';
import { memberPoses, type Pose } from '../model/train-config';
import { type ModelPart } from '../model/views';
import { createRng, hashString } from '../rng';
import { evaluateRetrieval, type RetrievalMetrics } from '../retrieval/metrics';
import { d2Descriptors, encoderDescriptors, type Descriptors, type MethodName } from './methods';
import type { DiffusionOptions } from '../retrieval/diffusion';
import { throughLibrary } from '../retrieval/hubness';
import { withSizePrior } from '../retrieval/size-prior';

/** A method as scored: its own similarity, or ordered through the library (hub-corrected, then diffused over the graph built from it). */
export type EvaluatedMethod = MethodName | `${MethodName}+diffusion`;

export interface EvaluationReport {
  readonly parts: number;
  readonly labels: number;
  readonly methods: Partial<Record<EvaluatedMethod, Omit<RetrievalMetrics, 'queries'>>>;
}

export interface EvaluationInput {
  readonly parts: readonly ModelPart[];
  readonly labels: readonly string[];
  readonly points: number;
  readonly pose: Pose;
  readonly learned?: Encoders;
  /** Architecture of the untrained baseline (the learned model's, when there is one). */
  readonly untrainedConfig: EncoderConfig;
  readonly seed?: number;
  /** Also score every method as ordered through the library with these diffusion settings (absent: not scored). */
  readonly diffusion?: DiffusionOptions;
  /**
   * Each part's diagonal (mm where its units are known): ordered through the library, pairs take the size prior as
   * the search does (size-prior.ts, λ = `sizeWeight`, SIZE_WEIGHT unless given). Absent: no size prior.
   */
  readonly diagonals?: ArrayLike<number>;
  readonly sizeWeight?: number;
}

/** The untrained baseline: the same architecture with seeded random weights. */
export function untrainedEncoder(config: EncoderConfig, seed = 0): Encoder {
  return new Encoder(config, createRng(hashString('untrained', seed)));
}

/** The untrained baseline for a pose: one such encoder per encoder the pose trains (`memberPoses`). */
export function untrainedEncoders(config: EncoderConfig, pose: Pose, seed = 0): Encoders {
  const list = memberPoses(pose).map(() => untrainedEncoder(config, seed));
  return list.length === 1 ? list[0] : list;
}

export function evaluateMethods(input: EvaluationInput): EvaluationReport {
  const strip = (m: RetrievalMetrics) => ({
    nn: m.nn,
    first_tier: m.first_tier,
    second_tier: m.second_tier,
    dcg: m.dcg,
    map: m.map,
    p_at_5: m.p_at_5,
  });
  const methods: EvaluationReport['methods'] = {};
  const n = input.parts.length;
  const score = (d: Descriptors) => {
    methods[d.method] = strip(evaluateRetrieval(input.labels, d.similarity));
    if (!input.diffusion) return;
    // D2's similarity is −L1 in [−2, 0]; its graph uses 1 − L1/2 in [0, 1], cosine-like.
    const cosineLike = d.method === 'd2' ? (i: number, j: number) => 1 + d.similarity(i, j) / 2 : d.similarity;
    if (input.diagonals && input.diagonals.length !== n)
      throw new RangeError(`evaluateMethods: ${input.diagonals.length} sizes for ${n} parts`);
    const graphSimilarity = input.diagonals
      ? withSizePrior(n, cosineLike, input.diagonals, input.sizeWeight)
      : cosineLike;
    methods[`${d.method}+diffusion`] = strip(
      evaluateRetrieval(input.labels, throughLibrary(n, graphSimilarity, input.diffusion)),
    );
  };
  if (input.learned) score(encoderDescriptors('learned', input.learned, input.parts, input.points, input.pose));
  const untrained = untrainedEncoders(input.untrainedConfig, input.pose, input.seed ?? 0);
  try {
    score(encoderDescriptors('untrained', untrained, input.parts, input.points, input.pose));
  } finally {
    disposeEncoders(untrained);
  }
  score(d2Descriptors(input.parts, input.seed ?? 0));
  return { parts: input.parts.length, labels: new Set(input.labels).size, methods };
}
