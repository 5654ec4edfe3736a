// Diagnostic: retrieval embeddings also averaged over small turns of each part (test-time augmentation), on a
// saved run, by cosine and through the library; and the same model read without the sign-flip average.
//   npx tsx research/scripts/turns-tta.ts <library-dir> <run-dir> [degrees ...]
import { embedForRetrieval } from '../../src/core/model/embed';
import { axisAngle, transformPoints } from '../../src/core/points/rotation';
import { normaliseRows } from '../../src/core/vectors';
import { embeddingReadings, openSavedRun } from './saved-run';

const [libDir, runDir, ...ds] = process.argv.slice(2);
const { lib, parts, enc, cfg } = await openSavedRun(libDir, runDir);
const score = (v: Float32Array) => embeddingReadings(lib.labels, v);
console.log(`as trained (${cfg.pose}): ${score(embedForRetrieval(enc, parts, cfg.points, cfg.pose))}`);
if (cfg.pose === 'file-axes')
  console.log(`without the sign-flip average: ${score(embedForRetrieval(enc, parts, cfg.points, 'as-is'))}`);
for (const deg of (ds.length ? ds : ['5', '10']).map(Number)) {
  const turns = [
    null,
    ...[
      [1, 0, 0],
      [0, 1, 0],
      [0, 0, 1],
    ].flatMap((axis) => [deg, -deg].map((d) => axisAngle(axis as [number, number, number], (d * Math.PI) / 180))),
  ];
  const sum = new Float32Array(parts.length * enc.config.projection.at(-1)!);
  for (const t of turns) {
    const turned = t
      ? parts.map((p) => ({ points: transformPoints(t, p.points), normals: transformPoints(t, p.normals) }))
      : parts;
    const v = embedForRetrieval(enc, turned, cfg.points, cfg.pose);
    for (let i = 0; i < v.length; i++) sum[i] += v[i];
  }
  console.log(`± ${deg}° about each axis (7 poses): ${score(normaliseRows(sum, sum.length / parts.length))}`);
}
enc.dispose();
