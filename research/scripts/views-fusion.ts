// Research: training-free descriptors (the surface grid, the six height images of depth-views.ts) alone, mixed,
// and fused with a saved run's encoders (and the untrained encoders of its seed), leave-one-out, by cosine and
// ordered through the library. One JSON line per configuration.
//   npx tsx research/scripts/views-fusion.ts <library-dir> --run <run-dir> [--cache <dir>] [--views '[{"pixels":16}]']
//       [--mixes 0,0.3,0.5,0.7] [--shares 0.3,0.5]
// A mix m is the descriptor row [√(1−m)·grid, √m·views]; a share s fuses it with the encoders' row as the product
// fuses the grid: [√(1−s)·encoders, √s·descriptor]. Encoder embeddings are cached per run in --cache (they take
// minutes on 990 parts; the descriptors take seconds).
import { fused, surfaceGrids, sideBySide } from '../../src/core/model/embed';
import { memberPoses } from '../../src/core/model/train-config';
import { posed } from '../../src/core/model/views';
import { evaluateRetrieval, cosineSimilarity } from '../../src/core/retrieval/metrics';
import { throughLibrary } from '../../src/core/retrieval/hubness';
import { DIFFUSION_DEFAULTS } from '../../src/core/retrieval/diffusion';
import { arg, cachedEncoderRows, savedRunOnLibrary } from './cached-rows';
import { DEPTH_VIEW_DEFAULTS, depthViewLength, depthViews, type DepthViewOptions } from './depth-views';

const { libDir, lib, parts, n, runDir, run, pose, seed, cache } = await savedRunOnLibrary();
const viewSets: Partial<DepthViewOptions>[] = JSON.parse(arg('--views') ?? '[{}]');
const mixes = (arg('--mixes') ?? '0,0.3,0.5,0.7').split(',').map(Number);
const shares = (arg('--shares') ?? '0.3,0.5').split(',').map(Number);

const round = (m: { nn: number; first_tier: number; map: number }) => ({
  nn: +m.nn.toFixed(3),
  ft: +m.first_tier.toFixed(3),
  map: +m.map.toFixed(3),
});
function score(v: Float32Array) {
  const sim = cosineSimilarity(v, v.length / n);
  return {
    cosine: round(evaluateRetrieval(lib.labels, sim)),
    library: round(evaluateRetrieval(lib.labels, throughLibrary(n, sim, DIFFUSION_DEFAULTS))),
  };
}

const encoderRows = (name: 'learned' | 'untrained') => cachedEncoderRows(name, run, runDir, lib.parts, cache);

const poses = memberPoses(pose);
const grid = surfaceGrids(parts, poses, { cells: 8, facing: true });
const encoders = { learned: encoderRows('learned'), untrained: encoderRows('untrained') };
const line = (o: object) => console.log(JSON.stringify({ lib: libDir, run: runDir, seed, ...o }));
for (const vs of viewSets) {
  const o = { ...DEPTH_VIEW_DEFAULTS, ...vs };
  const t0 = Date.now();
  const views = sideBySide(
    poses.map((p) => {
      const one = { ...o, signFree: o.signFree && p !== 'as-is' };
      const out = new Float32Array(n * depthViewLength(one));
      posed(parts, p).forEach((q, i) => out.set(depthViews(q.points, one), i * depthViewLength(one)));
      return out;
    }),
    n,
  );
  const ms = Date.now() - t0;
  for (const m of mixes) {
    const desc = m === 0 ? grid : fused(grid, views, n, m);
    line({ views: o, viewsMs: ms, mix: m, encoder: 'none', share: 1, ...score(desc) });
    for (const s of shares)
      for (const [name, rows] of Object.entries(encoders))
        line({ views: o, mix: m, encoder: name, share: s, ...score(fused(rows, desc, n, s)) });
  }
  line({ views: o, mix: 1, encoder: 'none', share: 1, ...score(views) });
}
