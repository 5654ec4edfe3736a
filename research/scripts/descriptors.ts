// Diagnostic: leave-one-out quality of simple non-learned descriptors on a library (no training).
//   npx tsx research/scripts/descriptors.ts <library-dir>
import { initBackend } from '../../src/core/model/backend';
import { POOL_POINTS, DEFAULT_TRAIN } from '../../src/core/model/defaults';
import { loadLibrary } from '../../src/cli/library-dir';
import { evaluateRetrieval, cosineSimilarity } from '../../src/core/retrieval/metrics';
import { d2Descriptors, encoderDescriptors } from '../../src/core/quality/methods';
import { untrainedEncoder } from '../../src/core/quality/evaluate';
import { posed } from '../../src/core/model/views';

await initBackend();
const lib = await loadLibrary(process.argv[2], { quiet: true, points: POOL_POINTS });
const parts = lib.parts.map((p) => ({ points: p.points, normals: p.normals }));
const r = (m: { nn: number; first_tier: number; map: number }) =>
  `${m.nn.toFixed(3)} / ${m.first_tier.toFixed(3)} / ${m.map.toFixed(3)}`;
const unit = (v: Float32Array, dim: number) => {
  for (let i = 0; i < v.length; i += dim) {
    let s = 0;
    for (let d = 0; d < dim; d++) s += v[i + d] ** 2;
    s = Math.sqrt(s) || 1;
    for (let d = 0; d < dim; d++) v[i + d] /= s;
  }
  return v;
};
function extents(ps: typeof parts, sorted: boolean) {
  const v = new Float32Array(ps.length * 3);
  ps.forEach((p, i) => {
    const lo = [Infinity, Infinity, Infinity],
      hi = [-Infinity, -Infinity, -Infinity];
    for (let k = 0; k < p.points.length; k += 3)
      for (let a = 0; a < 3; a++) {
        lo[a] = Math.min(lo[a], p.points[k + a]);
        hi[a] = Math.max(hi[a], p.points[k + a]);
      }
    let e = hi.map((h, a) => h - lo[a]);
    if (sorted) e = e.sort((a, b) => b - a);
    v.set(e.map(Math.log), i * 3);
  });
  return v;
}
function voxels(ps: typeof parts, g: number) {
  const dim = g ** 3,
    v = new Float32Array(ps.length * dim);
  ps.forEach((p, i) => {
    const n = p.points.length / 3;
    for (let k = 0; k < n; k++) {
      const c = [0, 1, 2].map((a) => Math.min(g - 1, Math.max(0, Math.floor(((p.points[3 * k + a] + 1) / 2) * g))));
      v[i * dim + (c[0] * g + c[1]) * g + c[2]] += 1;
    }
    for (let d = 0; d < dim; d++) v[i * dim + d] = Math.sqrt(v[i * dim + d]);
  });
  return unit(v, dim);
}
const negL2 = (v: Float32Array, dim: number) => (i: number, j: number) => {
  let s = 0;
  for (let d = 0; d < dim; d++) s += (v[i * dim + d] - v[j * dim + d]) ** 2;
  return -s;
};
console.log('D2', r(evaluateRetrieval(lib.labels, d2Descriptors(parts).similarity)));
console.log(
  'log size (radius)',
  r(evaluateRetrieval(lib.labels, (i, j) => -Math.abs(Math.log(lib.parts[i].radius / lib.parts[j].radius)))),
);
console.log('extents as-is', r(evaluateRetrieval(lib.labels, negL2(extents(parts, false), 3))));
console.log('extents sorted', r(evaluateRetrieval(lib.labels, negL2(extents(parts, true), 3))));
console.log(
  'extents principal',
  r(evaluateRetrieval(lib.labels, negL2(extents(posed(parts, 'principal-axes'), false), 3))),
);
for (const g of [6, 8, 12])
  console.log(`voxels ${g} as-is`, r(evaluateRetrieval(lib.labels, cosineSimilarity(voxels(parts, g), g ** 3))));
console.log(
  'voxels 8 principal',
  r(evaluateRetrieval(lib.labels, cosineSimilarity(voxels(posed(parts, 'principal-axes'), 8), 512))),
);
for (const feats of ['xyz', 'xyz+normal'] as const)
  for (const pose of ['as-is', 'principal-axes'] as const) {
    const enc = untrainedEncoder({ ...DEFAULT_TRAIN.encoder, inputFeatures: feats }, 0);
    console.log(
      `untrained ${feats} ${pose}`,
      r(evaluateRetrieval(lib.labels, encoderDescriptors('untrained', enc, parts, 512, pose).similarity)),
    );
    enc.dispose();
  }
