// Diagnostic: do a library's files agree on their axes? For each part that sits square in its file (box ratio
// ≤ FILE_FRAME_FIT) and has one clearly distinct extent, take its nearest square part by D2 (which ignores the pose)
// and check whether that distinct extent (longest or shortest) lies along the same file axis. Chance is about 1/3.
//   npx tsx research/scripts/axis-agreement.ts <library-dir>
import { FILE_FRAME_FIT, POOL_POINTS } from '../../src/core/model/defaults';
import { loadLibrary } from '../../src/cli/library-dir';
import { boundingBox } from '../../src/core/mesh/geometry';
import { fileFrameBoxRatio } from '../../src/core/points/pca';
import { d2Descriptors } from '../../src/core/quality/methods';
const lib = await loadLibrary(process.argv[2], { quiet: true, points: POOL_POINTS });
// Each part's extents along its file's axes, as fractions of the longest.
const ext = lib.parts.map((p) => {
  const { min, max } = boundingBox(p.points);
  const e = [0, 1, 2].map((a) => max[a] - min[a]),
    m = Math.max(...e);
  return e.map((x) => x / m);
});
const square = lib.parts.map((p) => fileFrameBoxRatio(p.points) <= FILE_FRAME_FIT);
const idx = ext.map((_, i) => i).filter((i) => square[i]);
const D = d2Descriptors(lib.parts.map((p) => ({ points: p.points, normals: p.normals })));
const dim = D.vectors.length / lib.parts.length;
const d2 = (i: number, j: number) => {
  let t = 0;
  for (let k = 0; k < dim; k++) t += Math.abs(D.vectors[i * dim + k] - D.vectors[j * dim + k]);
  return t;
};
const sorted = ext.map((e) => [...e].sort((a, b) => b - a));
let n = 0,
  agree = 0,
  sameLabel = 0;
for (const i of idx) {
  const s = sorted[i];
  if (s[0] - s[1] < 0.15 && s[1] - s[2] < 0.15) continue; // no distinct axis
  let best = -1,
    bd = Infinity;
  for (const j of idx)
    if (j !== i) {
      const d = d2(i, j);
      if (d < bd) {
        bd = d;
        best = j;
      }
    }
  const e = ext[i],
    f = ext[best];
  // the distinct axis: the longest if it stands out, else the shortest
  const pick = (v: number[], w: number[]) =>
    s[0] - s[1] >= s[1] - s[2]
      ? v.indexOf(Math.max(...v)) === w.indexOf(Math.max(...w))
      : v.indexOf(Math.min(...v)) === w.indexOf(Math.min(...w));
  n++;
  if (pick(e, f)) agree++;
  if (lib.labels[i] === lib.labels[best]) sameLabel++;
}
console.log(
  `${process.argv[2]}: ${idx.length} of ${lib.parts.length} square; ${n} with a distinct extent, whose D2 neighbour has it along the same file axis in ${agree} (${(agree / n).toFixed(2)}); neighbour of the same label in ${sameLabel}`,
);
