// Diagnostic: a saved encoder scored on its pooled features and on its projection head output, whatever the
// saved config says (e.g. encoders saved before the retrieval choice existed).
//   npx tsx research/scripts/retrieval-readings.ts <library-dir> <run-dir>...
import { initBackend } from '../../src/core/model/backend';
import { POOL_POINTS } from '../../src/core/model/defaults';
import { loadLibrary } from '../../src/cli/library-dir';
import { loadRun } from '../../src/cli/run-dir';
import { Encoder } from '../../src/core/model/encoder';
import { setWeights } from '../../src/core/model/trainer';
import { embedForRetrieval } from '../../src/core/model/embed';
import { evaluateRetrieval, cosineSimilarity } from '../../src/core/retrieval/metrics';
import { createRng } from '../../src/core/rng';
await initBackend();
const lib = await loadLibrary(process.argv[2], { quiet: true, points: POOL_POINTS });
const parts = lib.parts.map((p) => ({ points: p.points, normals: p.normals }));
for (const dir of process.argv.slice(3)) {
  const ck = await loadRun(dir);
  for (const retrieval of ['pooled', 'projection'] as const) {
    const enc = new Encoder({ ...ck.manifest.config.encoder, retrieval }, createRng(0));
    setWeights(enc, ck.weights);
    const v = embedForRetrieval(enc, parts, ck.manifest.config.points, ck.manifest.config.pose);
    const m = evaluateRetrieval(lib.labels, cosineSimilarity(v, v.length / parts.length));
    console.log(dir, retrieval, m.nn.toFixed(3), m.first_tier.toFixed(3), m.map.toFixed(3));
    enc.dispose();
  }
}
