// Diagnostic: per-class nearest-neighbour rate, mAP and what the wrong first hits are, for a saved encoder.
//   npx tsx research/scripts/per-class.ts <library-dir> <run-dir>
import { initBackend } from '../../src/core/model/backend';
import { POOL_POINTS } from '../../src/core/model/defaults';
import { loadLibrary } from '../../src/cli/library-dir';
import { loadRun } from '../../src/cli/run-dir';
import { encoderFromCheckpoint } from '../../src/core/model/checkpoint';
import { embedForRetrieval } from '../../src/core/model/embed';
import { queryMetrics } from '../../src/core/retrieval/metrics';
await initBackend();
const lib = await loadLibrary(process.argv[2], { quiet: true, points: POOL_POINTS });
const parts = lib.parts.map((p) => ({ points: p.points, normals: p.normals }));
const ck = await loadRun(process.argv[3]);
const enc = encoderFromCheckpoint(ck);
const v = embedForRetrieval(enc, parts, 512, ck.manifest.config.pose);
const N = parts.length,
  D = v.length / N;
const by: Record<string, { n: number; nn: number; map: number; conf: Record<string, number> }> = {};
for (let q = 0; q < N; q++) {
  const s = (j: number) => {
    let t = 0;
    for (let d = 0; d < D; d++) t += v[q * D + d] * v[j * D + d];
    return t;
  };
  const order = [...Array(N).keys()].filter((j) => j !== q).sort((a, b) => s(b) - s(a));
  const m = queryMetrics(
    order.map((j) => lib.labels[j]),
    lib.labels[q],
  )!;
  const c = (by[lib.labels[q]] ??= { n: 0, nn: 0, map: 0, conf: {} });
  c.n++;
  c.nn += m.nn;
  c.map += m.map;
  const top = lib.labels[order[0]];
  if (top !== lib.labels[q]) c.conf[top] = (c.conf[top] ?? 0) + 1;
}
for (const [k, c] of Object.entries(by).sort())
  console.log(
    k.padEnd(14),
    String(c.n).padStart(3),
    (c.nn / c.n).toFixed(2),
    (c.map / c.n).toFixed(2),
    JSON.stringify(c.conf),
  );
