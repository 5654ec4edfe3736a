// Diagnostic: a saved run's retrieval embedding also averaged over the mirror images of each part (the four
// improper sign choices beside the four proper ones), by cosine and through the library.
//   npx tsx research/scripts/mirror-tta.ts <library-dir> <run-dir>
import { embedForRetrieval } from '../../src/core/model/embed';
import { normaliseRows } from '../../src/core/vectors';
import { embeddingReadings, openSavedRun } from './saved-run';

const [libDir, runDir] = process.argv.slice(2);
const { lib, parts, enc, cfg } = await openSavedRun(libDir, runDir);
const score = (v: Float32Array) => embeddingReadings(lib.labels, v);
const mirror = (a: Float32Array) => {
  const o = a.slice();
  for (let i = 0; i < o.length; i += 3) o[i] = -o[i];
  return o;
};
const plain = embedForRetrieval(enc, parts, cfg.points, cfg.pose);
console.log(`as trained (${cfg.pose}): ${score(plain)}`);
const mirrored = embedForRetrieval(
  enc,
  parts.map((p) => ({ ...p, points: mirror(p.points), normals: mirror(p.normals) })),
  cfg.points,
  cfg.pose,
);
const sum = plain.map((v, i) => v + mirrored[i]);
console.log(`with mirror images: ${score(normaliseRows(sum, sum.length / parts.length))}`);
enc.dispose();
