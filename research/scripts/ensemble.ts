// Diagnostic: leave-one-out quality of several saved encoders alone and with their embeddings concatenated,
// by cosine and through the library.
//   npx tsx research/scripts/ensemble.ts <library-dir> <run-dir> <run-dir>...
import { initBackend } from '../../src/core/model/backend';
import { POOL_POINTS } from '../../src/core/model/defaults';
import { loadLibrary } from '../../src/cli/library-dir';
import { loadRun } from '../../src/cli/run-dir';
import { encoderFromCheckpoint } from '../../src/core/model/checkpoint';
import { embedForRetrieval, sideBySide } from '../../src/core/model/embed';
import { embeddingReadings } from './saved-run';

await initBackend();
const [libDir, ...runs] = process.argv.slice(2);
const lib = await loadLibrary(libDir, { quiet: true, points: POOL_POINTS });
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
const cat = sideBySide(all, N);
console.log('concatenated'.padEnd(28), embeddingReadings(lib.labels, cat));
