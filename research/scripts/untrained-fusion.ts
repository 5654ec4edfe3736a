// Research: the trained encoders' retrieval rows fused with the untrained encoders' of the same seed (the rows the
// workbench searches with before training), then with the surface grid as shipped; leave-one-out on a labelled
// library, ordered through the library with the size prior as `shapekin eval` does. One JSON line per row.
//   npx tsx research/scripts/untrained-fusion.ts <library-dir> --run <run-dir> [--cache <dir>] [--shares 0.2,0.35,0.5]
// A share u weighs the two encoders' cosines by their spreads: (1−u)·s_L/σ_L + u·s_U/σ_U (σ: the library's spread of
// pair cosines, size-prior.ts), since an untrained encoder's cosines span about a fifth of a trained one's; the
// result is set beside the grid at its shipped 30 % as the learned row alone is.
import { fused, surfaceGrids } from '../../src/core/model/embed';
import { memberPoses } from '../../src/core/model/train-config';
import { evaluateRetrieval, cosineSimilarity } from '../../src/core/retrieval/metrics';
import { throughLibrary } from '../../src/core/retrieval/hubness';
import { DIFFUSION_DEFAULTS } from '../../src/core/retrieval/diffusion';
import { vectorSpread, withSizePrior } from '../../src/core/retrieval/size-prior';
import { SHAPE_GRID_DEFAULTS } from '../../src/core/descriptors/shape-grid';
import { arg, cachedEncoderRows, savedRunOnLibrary } from './cached-rows';

const { libDir, lib, parts, n, runDir, run, pose, seed, cache } = await savedRunOnLibrary();
const shares = (arg('--shares') ?? '0.2,0.35,0.5').split(',').map(Number);
const gridShare = Number(arg('--grid-share') ?? 0.3);
const diagonals = lib.parts.map((p) => p.diagonal);
const round = (m: { nn: number; first_tier: number; map: number }) => ({
  nn: +m.nn.toFixed(3),
  ft: +m.first_tier.toFixed(3),
  map: +m.map.toFixed(3),
});
const score = (v: Float32Array) => {
  const sim = cosineSimilarity(v, v.length / n);
  return {
    cosine: round(evaluateRetrieval(lib.labels, sim)),
    library: round(
      evaluateRetrieval(lib.labels, throughLibrary(n, withSizePrior(n, sim, diagonals), DIFFUSION_DEFAULTS)),
    ),
  };
};
const learned = cachedEncoderRows('learned', run, runDir, lib.parts, cache);
const untrained = cachedEncoderRows('untrained', run, runDir, lib.parts, cache);
const grid = surfaceGrids(parts, memberPoses(pose), { ...SHAPE_GRID_DEFAULTS });
const sL = vectorSpread(learned, learned.length / n),
  sU = vectorSpread(untrained, untrained.length / n);
const line = (o: object) => console.log(JSON.stringify({ lib: libDir, run: runDir, seed, sL, sU, ...o }));
line({ rows: 'learned+grid', share: 0, ...score(fused(learned, grid, n, gridShare)) });
line({ rows: 'untrained+grid', share: 1, ...score(fused(untrained, grid, n, gridShare)) });
for (const u of shares) {
  // The share of the concatenation that gives (1−u)/σ_L : u/σ_U between the two cosines.
  const w = u / sU / ((1 - u) / sL + u / sU);
  line({
    rows: 'learned+untrained+grid',
    share: u,
    w,
    ...score(fused(fused(learned, untrained, n, w), grid, n, gridShare)),
  });
}
