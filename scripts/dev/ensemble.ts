// Diagnostic: leave-one-out quality of several saved encoders alone and with their embeddings concatenated,
// by cosine and through the library.
//   npx tsx scripts/dev/ensemble.ts <library-dir> <run-dir> <run-dir>...
import { initBackend } from '../../src/core/model/backend';
import { POOL_POINTS } from '../../src/core/model/defaults';
import { loadLibrary } from '../../src/cli/library-dir';
import { loadRun } from '../../src/cli/run-dir';
import { encoderFromCheckpoint } from '../../src/core/model/checkpoint';
import { embedForRetrieval } from '../../src/core/model/embed';
import { embeddingReadings } from './saved-run';

await initBackend();
const [libDir, ...runs] = process.argv.slice(2);
const lib = loadLibrary(libDir, { quiet: true, points: POOL_POINTS });
const parts = lib.parts.map((p) => ({ points: p.points, normals: p.normals }));
const N = parts.length;
const all: Float32Array[] = [];
for (const dir of runs) {
  const ckpt = await loadRun(dir);
  const enc = encoderFromCheckpoint(ckpt);
  const v = embedForRetrieval(enc, parts, ckpt.manifest.config.points, ckpt.manifest.config.pose);
  enc.dispose();
  all.push(v);
  console.log(dir.padEnd(28), embeddingReadings(lib.labels, v));
}
const D = all.reduce((s, v) => s + v.length / N, 0);
const cat = new Float32Array(N * D);
for (let i = 0, o = 0; i < N; i++) for (const v of all) { const d = v.length / N; for (let k = 0; k < d; k++) cat[o++] = v[i * d + k] / Math.sqrt(all.length); }
console.log('concatenated'.padEnd(28), embeddingReadings(lib.labels, cat));
