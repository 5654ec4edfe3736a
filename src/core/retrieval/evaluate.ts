// Leave-one-out retrieval quality of the learned encoder against the two baselines on a labelled library.

import { Encoder, type EncoderConfig } from '../model/encoder';
import type { ModelPart, Pose } from '../model/embed';
import { createRng, hashString } from '../rng';
import { evaluateRetrieval, type RetrievalMetrics } from './metrics';
import { d2Descriptors, encoderDescriptors, type MethodName } from './methods';

export interface EvaluationReport {
  readonly parts: number;
  readonly labels: number;
  readonly methods: Partial<Record<MethodName, Omit<RetrievalMetrics, 'queries'>>>;
}

export interface EvaluationInput {
  readonly parts: readonly ModelPart[];
  readonly labels: readonly string[];
  readonly points: number;
  readonly pose: Pose;
  readonly learned?: Encoder;
  /** Architecture of the untrained baseline (the learned model's, when there is one). */
  readonly untrainedConfig: EncoderConfig;
  readonly seed?: number;
}

/** The untrained baseline: the same architecture with seeded random weights. */
export function untrainedEncoder(config: EncoderConfig, seed = 0): Encoder {
  return new Encoder(config, createRng(hashString('untrained', seed)));
}

export function evaluateMethods(input: EvaluationInput): EvaluationReport {
  const strip = (m: RetrievalMetrics) => ({ nn: m.nn, first_tier: m.first_tier, second_tier: m.second_tier, dcg: m.dcg, map: m.map, p_at_5: m.p_at_5 });
  const methods: EvaluationReport['methods'] = {};
  if (input.learned) methods.learned = strip(evaluateRetrieval(input.labels, encoderDescriptors('learned', input.learned, input.parts, input.points, input.pose).similarity));
  const untrained = untrainedEncoder(input.untrainedConfig, input.seed ?? 0);
  try {
    methods.untrained = strip(evaluateRetrieval(input.labels, encoderDescriptors('untrained', untrained, input.parts, input.points, input.pose).similarity));
  } finally {
    untrained.dispose();
  }
  methods.d2 = strip(evaluateRetrieval(input.labels, d2Descriptors(input.parts, input.seed ?? 0).similarity));
  return { parts: input.parts.length, labels: new Set(input.labels).size, methods };
}
