// Diagnostic: per folder, nearest neighbour and mAP of the trained and untrained encoders each with the surface grid
// as shipped, and of the grid alone, ordered through the library with the size prior (rows cached as cached-rows.ts).
//   npx tsx research/scripts/per-class-fused.ts <library-dir> --run <run-dir> [--cache <dir>]
import { fused, surfaceGrids } from '../../src/core/model/embed';
import { memberPoses } from '../../src/core/model/train-config';
import { cosineSimilarity, queryMetrics } from '../../src/core/retrieval/metrics';
import { throughLibrary } from '../../src/core/retrieval/hubness';
import { DIFFUSION_DEFAULTS } from '../../src/core/retrieval/diffusion';
import { withSizePrior } from '../../src/core/retrieval/size-prior';
import { SHAPE_GRID_DEFAULTS } from '../../src/core/descriptors/shape-grid';
import { cachedEncoderRows, savedRunOnLibrary } from './cached-rows';
const { lib, parts, n, runDir, run, pose, cache } = await savedRunOnLibrary();
const grid = surfaceGrids(parts, memberPoses(pose), SHAPE_GRID_DEFAULTS);
const diag = lib.parts.map((p) => p.diagonal);
const per = (v: Float32Array) => {
  const s = throughLibrary(n, withSizePrior(n, cosineSimilarity(v, v.length / n), diag), DIFFUSION_DEFAULTS);
  const by: Record<string, { n: number; nn: number; map: number }> = {};
  for (let q = 0; q < n; q++) {
    const idx = [...Array(n).keys()].filter((j) => j !== q);
    const sc = idx.map((j) => s(q, j));
    const order = idx
      .map((_, k) => k)
      .sort((a, b) => sc[b] - sc[a])
      .map((k) => lib.labels[idx[k]]);
    const m = queryMetrics(order, lib.labels[q]);
    const b = (by[lib.labels[q]] ??= { n: 0, nn: 0, map: 0 });
    b.n++;
    if (m) {
      b.nn += m.nn;
      b.map += m.map;
    }
  }
  return by;
};
const L = per(fused(cachedEncoderRows('learned', run, runDir, lib.parts, cache), grid, n, 0.3));
const U = per(fused(cachedEncoderRows('untrained', run, runDir, lib.parts, cache), grid, n, 0.3));
const G = per(grid);
const rows = Object.keys(L).map(
  (c) =>
    [
      c,
      L[c].n,
      L[c].nn / L[c].n,
      U[c].nn / U[c].n,
      G[c].nn / G[c].n,
      L[c].map / L[c].n,
      U[c].map / U[c].n,
      G[c].map / G[c].n,
    ] as const,
);
rows.sort((a, b) => a[5] - a[6] - (b[5] - b[6]));
console.log('class n | NN learned untrained grid | mAP learned untrained grid');
for (const r of rows)
  console.log(
    r[0].padEnd(28),
    String(r[1]).padStart(3),
    r
      .slice(2)
      .map((x) => (x as number).toFixed(2))
      .join(' '),
  );
