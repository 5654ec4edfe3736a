// Diagnostic: score two parts by their best relative axis order. A principal-axes pose fixes the order of the
// axes by spread, which parts of one family do not always share (research/scripts/pose-check.ts); here the library
// part is also embedded in the five other orders (each averaged over the four sign flips, as retrieval does)
// and a pair scores its best order, with a penalty w for leaving the pose's own order.
//   npx tsx research/scripts/order-match.ts <library-dir> <run-dir>
import { embedParts } from '../../src/core/model/embed';
import { posed } from '../../src/core/model/views';
import { type SinglePose } from '../../src/core/model/train-config';
import { SIGN_FLIPS } from '../../src/core/points/pca';
import { transformPoints, type Mat3 } from '../../src/core/points/rotation';
import { cosineSimilarity, evaluateRetrieval } from '../../src/core/retrieval/metrics';
import { openSavedRun } from './saved-run';

const [libDir, runDir] = process.argv.slice(2);
const { lib, parts, enc, cfg } = await openSavedRun(libDir, runDir);
const ready = posed(parts, cfg.pose as SinglePose); // encoderFromCheckpoint above accepts one-encoder runs only
const N = parts.length;
// The six axis orders as proper turns: the identity, two cyclic shifts, three swaps with one axis negated.
const orders: Mat3[] = [
  [0, 1, 2],
  [1, 2, 0],
  [2, 0, 1],
  [1, 0, 2],
  [0, 2, 1],
  [2, 1, 0],
].map((perm, k) => {
  const m = new Float64Array(9);
  perm.forEach((col, row) => (m[row * 3 + col] = k >= 3 && row === 0 ? -1 : 1));
  return m;
});
function embedIn(turn: Mat3): Float32Array {
  let sum: Float32Array | null = null;
  for (const flip of SIGN_FLIPS) {
    const t = ready.map((p) => ({
      points: transformPoints(flip, transformPoints(turn, p.points)),
      normals: transformPoints(flip, transformPoints(turn, p.normals)),
    }));
    const e = embedParts(enc, t, cfg.points);
    if (!sum) sum = e;
    else for (let i = 0; i < e.length; i++) sum[i] += e[i];
  }
  const D = sum!.length / N;
  for (let o = 0; o < sum!.length; o += D) {
    let s = 0;
    for (let d = 0; d < D; d++) s += sum![o + d] ** 2;
    s = Math.sqrt(s) || 1;
    for (let d = 0; d < D; d++) sum![o + d] /= s;
  }
  return sum!;
}
const E = orders.map(embedIn);
const D = E[0].length / N;
const r = (m: { nn: number; first_tier: number; map: number }) =>
  `${m.nn.toFixed(3)} / ${m.first_tier.toFixed(3)} / ${m.map.toFixed(3)}`;
console.log('pose order only          ', r(evaluateRetrieval(lib.labels, cosineSimilarity(E[0], D))));
const dot = (a: Float32Array, i: number, b: Float32Array, j: number) => {
  let s = 0;
  for (let d = 0; d < D; d++) s += a[i * D + d] * b[j * D + d];
  return s;
};
for (const w of [0, 0.05, 0.1, 0.2]) {
  const sim = (i: number, j: number) => {
    let best = dot(E[0], i, E[0], j);
    for (let o = 1; o < 6; o++) best = Math.max(best, dot(E[0], i, E[o], j) - w, dot(E[o], i, E[0], j) - w);
    return best;
  };
  console.log(`best order, penalty ${w.toFixed(2)}  `, r(evaluateRetrieval(lib.labels, sim)));
}
enc.dispose();
