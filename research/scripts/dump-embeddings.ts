// Diagnostic: write a saved encoder's retrieval embeddings (head output and pooled features, principal-axes
// pose with sign-flip averaging, as retrieval does) and the folder labels as JSON, for analysis outside.
//   npx tsx research/scripts/dump-embeddings.ts <library-dir> <run-dir> <out.json>
import { writeFileSync } from 'node:fs';
import { initBackend } from '../../src/core/model/backend';
import { POOL_POINTS } from '../../src/core/model/defaults';
import { loadLibrary } from '../../src/cli/library-dir';
import { loadRun } from '../../src/cli/run-dir';
import { encoderFromCheckpoint } from '../../src/core/model/checkpoint';
import { Encoder } from '../../src/core/model/encoder';
import { setWeights } from '../../src/core/model/trainer';
import { createRng } from '../../src/core/rng';
import { embedForRetrieval } from '../../src/core/model/embed';
import { untrainedEncoder } from '../../src/core/quality/evaluate';

await initBackend();
const [libDir, runDir, out] = process.argv.slice(2);
const lib = await loadLibrary(libDir, { quiet: true, points: POOL_POINTS });
const parts = lib.parts.map((p) => ({ points: p.points, normals: p.normals }));
const ckpt = await loadRun(runDir);
const cfg = ckpt.manifest.config;
const enc = encoderFromCheckpoint(ckpt);
const pooledEnc = new Encoder({ ...cfg.encoder, retrieval: 'pooled' }, createRng(0));
setWeights(pooledEnc, ckpt.weights);
const un = untrainedEncoder(cfg.encoder, cfg.seed);
const rows = (v: Float32Array) => {
  const d = v.length / parts.length;
  return Array.from({ length: parts.length }, (_, i) => Array.from(v.subarray(i * d, (i + 1) * d)));
};
writeFileSync(
  out,
  JSON.stringify({
    labels: lib.labels,
    head: rows(embedForRetrieval(enc, parts, cfg.points, cfg.pose)),
    pooled: rows(embedForRetrieval(pooledEnc, parts, cfg.points, cfg.pose)),
    untrained: rows(embedForRetrieval(un, parts, cfg.points, cfg.pose)),
  }),
);
enc.dispose();
pooledEnc.dispose();
un.dispose();
