// Shared opening of the retrieval diagnostics: a labelled library and a saved encoder run over it.
import { initBackend } from '../../src/core/model/backend';
import { POOL_POINTS } from '../../src/core/model/defaults';
import { loadLibrary } from '../../src/cli/library-dir';
import { loadRun } from '../../src/cli/run-dir';
import { encoderFromCheckpoint, type Checkpoint } from '../../src/core/model/checkpoint';
import type { Encoder } from '../../src/core/model/encoder';
import type { TrainConfig } from '../../src/core/model/train-config';
import type { ModelPart } from '../../src/core/model/views';
import { throughLibrary } from '../../src/core/retrieval/hubness';
import { cosineSimilarity, evaluateRetrieval } from '../../src/core/retrieval/metrics';

/** A library and a saved run over it; with `oneEncoder` (the default) its encoder too, which a two-encoder run refuses. */
export async function openSavedRun(
  libDir: string,
  runDir: string,
): Promise<{
  lib: Awaited<ReturnType<typeof loadLibrary>>;
  parts: ModelPart[];
  ckpt: Checkpoint;
  enc: Encoder;
  cfg: TrainConfig;
}>;
export async function openSavedRun(
  libDir: string,
  runDir: string,
  oneEncoder: false,
): Promise<{ lib: Awaited<ReturnType<typeof loadLibrary>>; parts: ModelPart[]; ckpt: Checkpoint; cfg: TrainConfig }>;
export async function openSavedRun(libDir: string, runDir: string, oneEncoder = true) {
  await initBackend();
  const lib = await loadLibrary(libDir, { quiet: true, points: POOL_POINTS });
  const parts: ModelPart[] = lib.parts.map((p) => ({ points: p.points, normals: p.normals }));
  const ckpt = await loadRun(runDir);
  return { lib, parts, ckpt, cfg: ckpt.manifest.config, ...(oneEncoder ? { enc: encoderFromCheckpoint(ckpt) } : {}) };
}

/** NN / first tier / mAP, three decimals. */
export const threeMeasures = (m: { nn: number; first_tier: number; map: number }) =>
  `${m.nn.toFixed(3)} / ${m.first_tier.toFixed(3)} / ${m.map.toFixed(3)}`;

/** A similarity's leave-one-out measures by itself · through the library (hub correction and diffusion, as the search orders). */
export function bothReadings(labels: readonly string[], similarity: (i: number, j: number) => number): string {
  return `${threeMeasures(evaluateRetrieval(labels, similarity))} · ${threeMeasures(evaluateRetrieval(labels, throughLibrary(labels.length, similarity)))}`;
}

/** bothReadings of unit-length embeddings (count × D, row-major) compared by cosine. */
export const embeddingReadings = (labels: readonly string[], vectors: Float32Array) =>
  bothReadings(labels, cosineSimilarity(vectors, vectors.length / labels.length));
