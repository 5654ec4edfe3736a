// Shared opening of the retrieval diagnostics: a labelled library and a saved encoder run over it.
import { initBackend } from '../../src/core/model/backend';
import { POOL_POINTS } from '../../src/core/model/defaults';
import { loadLibrary } from '../../src/cli/library-dir';
import { loadRun } from '../../src/cli/run-dir';
import { encoderFromCheckpoint } from '../../src/core/model/checkpoint';
import type { ModelPart } from '../../src/core/model/embed';
import { DIFFUSION_DEFAULTS, diffusedSimilarity } from '../../src/core/retrieval/diffusion';
import { cosineSimilarity, evaluateRetrieval } from '../../src/core/retrieval/metrics';

export async function openSavedRun(libDir: string, runDir: string) {
  await initBackend();
  const lib = loadLibrary(libDir, { quiet: true, points: POOL_POINTS });
  const parts: ModelPart[] = lib.parts.map((p) => ({ points: p.points, normals: p.normals }));
  const ckpt = await loadRun(runDir);
  const enc = encoderFromCheckpoint(ckpt);
  return { lib, parts, ckpt, enc, cfg: ckpt.manifest.config };
}

/** NN / first tier / mAP, three decimals. */
export const threeMeasures = (m: { nn: number; first_tier: number; map: number }) => `${m.nn.toFixed(3)} / ${m.first_tier.toFixed(3)} / ${m.map.toFixed(3)}`;

/** A similarity's leave-one-out measures by itself · through the library (diffusion, as the search orders). */
export function bothReadings(labels: readonly string[], similarity: (i: number, j: number) => number): string {
  return `${threeMeasures(evaluateRetrieval(labels, similarity))} · ${threeMeasures(evaluateRetrieval(labels, diffusedSimilarity(labels.length, similarity, DIFFUSION_DEFAULTS)))}`;
}

/** bothReadings of unit-length embeddings (count × D, row-major) compared by cosine. */
export const embeddingReadings = (labels: readonly string[], vectors: Float32Array) => bothReadings(labels, cosineSimilarity(vectors, vectors.length / labels.length));
