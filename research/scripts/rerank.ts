// Diagnostic: retrieval-time variants on a saved encoder, without retraining. Leave-one-out on a labelled library.
//   npx tsx research/scripts/rerank.ts <library-dir> <run-dir> [--points N]
// Variants: plain cosine; α-query expansion (Radenović, Tolias & Chum 2018) with the query's neighbours taken
// from the library without the query; database-side augmentation (Arandjelović & Zisserman 2012); more points
// or several resamplings at embedding time; the best sign flip instead of their average; fusion with the D2
// histogram, the pooled features or the untrained encoder.
import { Encoder } from '../../src/core/model/encoder';
import { setWeights } from '../../src/core/model/trainer';
import { createRng } from '../../src/core/rng';
import { embedParts } from '../../src/core/model/embed';
import { posed } from '../../src/core/model/views';
import { type SinglePose } from '../../src/core/model/train-config';
import { openSavedRun } from './saved-run';
import { SIGN_FLIPS } from '../../src/core/points/pca';
import { transformPoints } from '../../src/core/points/rotation';
import { evaluateRetrieval, cosineSimilarity } from '../../src/core/retrieval/metrics';
import { d2Descriptors } from '../../src/core/quality/methods';
import { untrainedEncoder } from '../../src/core/quality/evaluate';

const [libDir, runDir] = process.argv.slice(2);
const { lib, parts, ckpt, enc, cfg } = await openSavedRun(libDir, runDir);
const pArg = process.argv.indexOf('--points');
const n = pArg > 0 ? Number(process.argv[pArg + 1]) : cfg.points;
const r = (m: { nn: number; first_tier: number; map: number }) =>
  `${m.nn.toFixed(3)} / ${m.first_tier.toFixed(3)} / ${m.map.toFixed(3)}`;
const N = parts.length;

function unitRows(v: Float32Array, dim: number): Float32Array {
  for (let i = 0; i < v.length; i += dim) {
    let s = 0;
    for (let d = 0; d < dim; d++) s += v[i + d] ** 2;
    s = Math.sqrt(s) || 1;
    for (let d = 0; d < dim; d++) v[i + d] /= s;
  }
  return v;
}
/**
 * Embeddings averaged over `views` disjoint-offset subsets of each part's pool, posed from the whole pool (as
 * retrieval does) and averaged over the sign flips of a principal-axes pose.
 */
const ready = posed(parts, cfg.pose as SinglePose); // encoderFromCheckpoint above accepts one-encoder runs only
function embedViews(encoder: typeof enc, views: number, points: number): Float32Array {
  let sum: Float32Array | null = null;
  for (let v = 0; v < views; v++) {
    const shifted = ready.map((p) => {
      const count = p.points.length / 3,
        off = (v * points) % count;
      const idx = (k: number) => (off + k) % count;
      const pts = new Float32Array(points * 3),
        nrm = new Float32Array(points * 3);
      for (let k = 0; k < points; k++)
        for (let a = 0; a < 3; a++) {
          pts[3 * k + a] = p.points[3 * idx(k) + a];
          nrm[3 * k + a] = p.normals[3 * idx(k) + a];
        }
      return { points: pts, normals: nrm };
    });
    for (const flip of cfg.pose === 'as-is' ? [null] : SIGN_FLIPS) {
      const turned = flip
        ? shifted.map((p) => ({ points: transformPoints(flip, p.points), normals: transformPoints(flip, p.normals) }))
        : shifted;
      const e = embedParts(encoder, turned, points);
      if (!sum) sum = e;
      else for (let i = 0; i < e.length; i++) sum[i] += e[i];
    }
  }
  return unitRows(sum!, sum!.length / N);
}
function gram(v: Float32Array, dim: number): Float64Array {
  const s = cosineSimilarity(v, dim),
    g = new Float64Array(N * N);
  for (let i = 0; i < N; i++) for (let j = 0; j < N; j++) g[i * N + j] = s(i, j);
  return g;
}
/** α-QE: query i becomes the sum of itself and its k nearest library parts (excluding i), weighted by sim^α. */
function alphaQe(
  v: Float32Array,
  dim: number,
  k: number,
  alpha: number,
  exclude: boolean,
): (i: number, j: number) => number {
  const g = gram(v, dim);
  const q = new Float32Array(v.length);
  for (let i = 0; i < N; i++) {
    const order = [...Array(N).keys()]
      .filter((j) => !exclude || j !== i)
      .sort((a, b) => g[i * N + b] - g[i * N + a])
      .slice(0, k);
    for (let d = 0; d < dim; d++) q[i * dim + d] = v[i * dim + d];
    for (const j of order) {
      const w = Math.max(0, g[i * N + j]) ** alpha;
      for (let d = 0; d < dim; d++) q[i * dim + d] += w * v[j * dim + d];
    }
  }
  unitRows(q, dim);
  // The expanded query against the plain library vectors.
  return (i, j) => {
    let s = 0;
    for (let d = 0; d < dim; d++) s += q[i * dim + d] * v[j * dim + d];
    return s;
  };
}
function concat(a: Float32Array, da: number, b: Float32Array, db: number, wb: number): Float32Array {
  const out = new Float32Array(N * (da + db));
  for (let i = 0; i < N; i++) {
    for (let d = 0; d < da; d++) out[i * (da + db) + d] = a[i * da + d];
    for (let d = 0; d < db; d++) out[i * (da + db) + da + d] = wb * b[i * db + d];
  }
  return out;
}

const base = embedViews(enc, 1, n),
  D = base.length / N;
console.log(`run ${runDir}: ${N} parts, ${D}-d, ${n} points, pose ${cfg.pose}`);
console.log('plain cosine          ', r(evaluateRetrieval(lib.labels, cosineSimilarity(base, D))));
for (const views of [4])
  console.log(
    `${views} resamplings         `,
    r(evaluateRetrieval(lib.labels, cosineSimilarity(embedViews(enc, views, n), D))),
  );
for (const pts of [1024, 2048])
  console.log(
    `${pts} points           `,
    r(evaluateRetrieval(lib.labels, cosineSimilarity(embedViews(enc, 1, pts), D))),
  );
for (const [k, a] of [
  [1, 0],
  [2, 3],
  [3, 3],
  [5, 3],
  [10, 3],
] as const)
  console.log(`α-QE k=${k} α=${a} (strict)`, r(evaluateRetrieval(lib.labels, alphaQe(base, D, k, a, true))));
const d2 = d2Descriptors(parts),
  dd = d2.dim;
const d2u = unitRows(Float32Array.from(d2.vectors, Math.sqrt), dd);
for (const w of [0.3, 0.5, 1])
  console.log(
    `+ √D2 × ${w}            `,
    r(evaluateRetrieval(lib.labels, cosineSimilarity(unitRows(concat(base, D, d2u, dd, w), D + dd), D + dd))),
  );
if (cfg.pose === 'principal-axes') {
  // Instead of averaging the four sign flips: the best match of the query's first flip over the candidate's four.
  const E = SIGN_FLIPS.map((f) =>
    embedParts(
      enc,
      ready.map((p) => ({ points: transformPoints(f, p.points), normals: transformPoints(f, p.normals) })),
      n,
    ),
  );
  const dot = (a: Float32Array, i: number, b: Float32Array, j: number) => {
    let t = 0;
    for (let d = 0; d < D; d++) t += a[i * D + d] * b[j * D + d];
    return t;
  };
  console.log(
    'max over sign flips   ',
    r(evaluateRetrieval(lib.labels, (i, j) => Math.max(...E.map((e) => dot(E[0], i, e, j))))),
  );
}
{
  const pooledEnc = new Encoder({ ...cfg.encoder, retrieval: 'pooled' }, createRng(0));
  setWeights(pooledEnc, ckpt.weights);
  const pv = embedViews(pooledEnc, 1, n),
    dp = pv.length / N;
  pooledEnc.dispose();
  console.log('pooled features       ', r(evaluateRetrieval(lib.labels, cosineSimilarity(pv, dp))));
  console.log(
    '+ pooled features     ',
    r(evaluateRetrieval(lib.labels, cosineSimilarity(unitRows(concat(base, D, pv, dp, 1), D + dp), D + dp))),
  );
}
const un = untrainedEncoder(cfg.encoder, cfg.seed);
const ue = embedViews(un, 1, n);
console.log('untrained             ', r(evaluateRetrieval(lib.labels, cosineSimilarity(ue, D))));
console.log(
  '+ untrained           ',
  r(evaluateRetrieval(lib.labels, cosineSimilarity(unitRows(concat(base, D, ue, D, 1), 2 * D), 2 * D))),
);
console.log('untrained α-QE k=3    ', r(evaluateRetrieval(lib.labels, alphaQe(ue, D, 3, 3, true))));
console.log('D2                    ', r(evaluateRetrieval(lib.labels, d2.similarity)));
un.dispose();
enc.dispose();
