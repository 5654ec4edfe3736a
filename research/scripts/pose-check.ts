// Which principal axis the file's up axis lands on, per part, and how close the eigenvalues are.
import { loadLibrary } from '../../src/cli/library-dir';
import { principalFrame, symmetricEigen3 } from '../../src/core/points/pca';
const lib = await loadLibrary(process.argv[2], { quiet: true, points: 2048 });
const up = Number(process.argv[3] ?? 1);
const rows: Record<string, string[]> = {};
lib.parts.forEach((p, i) => {
  const r = principalFrame(p.points);
  const n = p.points.length / 3,
    c = new Float64Array(9);
  for (let k = 0; k < n; k++) {
    const x = p.points[k * 3],
      y = p.points[k * 3 + 1],
      z = p.points[k * 3 + 2];
    c[0] += x * x;
    c[1] += x * y;
    c[2] += x * z;
    c[4] += y * y;
    c[5] += y * z;
    c[8] += z * z;
  }
  c[3] = c[1];
  c[6] = c[2];
  c[7] = c[5];
  const { values } = symmetricEigen3(c);
  const ax = [0, 1, 2].reduce((b, a) => (Math.abs(r[a * 3 + up]) > Math.abs(r[b * 3 + up]) ? a : b), 0);
  (rows[lib.labels[i]] ??= []).push(
    `${'xyz'[ax]}${(values[1] / values[0]).toFixed(2)},${(values[2] / values[1]).toFixed(2)}`,
  );
});
for (const [k, v] of Object.entries(rows)) console.log(k.padEnd(12), v.join(' '));
