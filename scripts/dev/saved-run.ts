// Shared opening of the retrieval diagnostics: a labelled library and a saved encoder run over it.
import { initBackend } from '../../src/core/model/backend';
import { POOL_POINTS } from '../../src/core/model/defaults';
import { loadLibrary } from '../../src/cli/library-dir';
import { loadRun } from '../../src/cli/run-dir';
import { encoderFromCheckpoint } from '../../src/core/model/checkpoint';
import type { ModelPart } from '../../src/core/model/embed';

export async function openSavedRun(libDir: string, runDir: string) {
  await initBackend();
  const lib = loadLibrary(libDir, { quiet: true, points: POOL_POINTS });
  const parts: ModelPart[] = lib.parts.map((p) => ({ points: p.points, normals: p.normals }));
  const ckpt = await loadRun(runDir);
  const enc = encoderFromCheckpoint(ckpt);
  return { lib, parts, ckpt, enc, cfg: ckpt.manifest.config };
}
