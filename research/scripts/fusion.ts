// Training-free descriptors alone and fused with a trained encoder's retrieval embedding, leave-one-out on a
// labelled library, by cosine and ordered through the library. One JSON line per configuration.
//   npx tsx research/scripts/fusion.ts <library-dir> [--run <run-dir>] [--weights 0,0.25,0.5] [--grids '[{"cells":8,"facing":true}]']
//       [--points 256] [--resamplings 4]   (points a pass and point subsets at retrieval; the defaults are the product's)
// Fusion sets the learned row (unit) and the descriptor row (unit) side by side, scaled by √(1−w) and √w: the
// fused row is unit length and its cosine is (1−w)·learned + w·descriptor, so every ordering downstream applies.
import { initBackend } from '../../src/core/model/backend';
import { POOL_POINTS, defaultTrainFor, libraryTraits } from '../../src/core/model/defaults';
import { loadLibrary } from '../../src/cli/library-dir';
import { loadRun } from '../../src/cli/run-dir';
import { encodersFromCheckpoint } from '../../src/core/model/checkpoint';
import {
  embedForRetrieval,
  disposeEncoders,
  fused,
  surfaceGrids,
  RETRIEVAL_RESAMPLINGS,
  type Encoders,
} from '../../src/core/model/embed';
import { memberPoses, type Pose } from '../../src/core/model/train-config';
import { evaluateRetrieval, cosineSimilarity } from '../../src/core/retrieval/metrics';
import { throughLibrary } from '../../src/core/retrieval/hubness';
import { DIFFUSION_DEFAULTS } from '../../src/core/retrieval/diffusion';
import { SHAPE_GRID_DEFAULTS, type ShapeGridOptions } from '../../src/core/descriptors/shape-grid';
import { untrainedEncoders } from '../../src/core/quality/evaluate';

const arg = (flag: string) => {
  const i = process.argv.indexOf(flag);
  return i > 0 ? process.argv[i + 1] : undefined;
};
await initBackend();
const lib = await loadLibrary(process.argv[2], { quiet: true, points: POOL_POINTS });
const parts = lib.parts.map((p) => ({ points: p.points, normals: p.normals }));
const n = parts.length;
const defaults = defaultTrainFor(libraryTraits(lib.parts));
const runDir = arg('--run');
const run = runDir ? await loadRun(runDir) : null;
const pose: Pose = run ? run.manifest.config.pose : defaults.pose;
const weights = (arg('--weights') ?? '0,0.2,0.3,0.4,0.5').split(',').map(Number);
const grids: Partial<ShapeGridOptions>[] = JSON.parse(arg('--grids') ?? '[{}]');
const points = Number(arg('--points') ?? 256);
const resamplings = Number(arg('--resamplings') ?? RETRIEVAL_RESAMPLINGS);

const round = (m: { nn: number; first_tier: number; map: number }) => ({
  nn: +m.nn.toFixed(3),
  ft: +m.first_tier.toFixed(3),
  map: +m.map.toFixed(3),
});
function score(v: Float32Array, dim: number) {
  const sim = cosineSimilarity(v, dim);
  return {
    cosine: round(evaluateRetrieval(lib.labels, sim)),
    library: round(evaluateRetrieval(lib.labels, throughLibrary(n, sim, DIFFUSION_DEFAULTS))),
  };
}
/** The grid descriptor in every pose the encoders use, side by side, as retrieval makes it. */
function grid(o: ShapeGridOptions) {
  const v = surfaceGrids(parts, memberPoses(pose), o);
  return { v, dim: v.length / n };
}
const t0 = Date.now();
const needLearned = weights.some((w) => w < 1);
// The trained encoders (with --run) and the untrained ones of the same seed, as `evaluateMethods` makes them.
const seed = run ? run.manifest.config.seed : 0;
const encoderSets: [string, Encoders][] = [];
if (needLearned) {
  // The encoders alone: a surface grid saved with the run is what this script sets beside them itself.
  if (run) {
    const config = run.manifest.config;
    const manifest = { ...run.manifest, config: { ...config, encoder: { ...config.encoder, surfaceGrid: null } } };
    encoderSets.push(['learned', encodersFromCheckpoint({ ...run, manifest })]);
  }
  encoderSets.push([
    'untrained',
    untrainedEncoders({ ...defaults.encoder, ...(run?.manifest.config.encoder ?? {}), surfaceGrid: null }, pose, seed),
  ]);
}
const embedded = encoderSets.map(([name, e]) => {
  const v = embedForRetrieval(e, parts, points, pose, resamplings);
  disposeEncoders(e);
  return [name, v] as const;
});
console.error(`embedded ${n} parts in ${((Date.now() - t0) / 1000).toFixed(0)} s`);
for (const g of grids) {
  const o = { ...SHAPE_GRID_DEFAULTS, ...g };
  const t1 = Date.now();
  const { v, dim } = grid(o);
  const ms = Date.now() - t1;
  for (const w of weights) {
    for (const [name, learned] of w === 1 ? ([['grid', new Float32Array(n)]] as const) : embedded) {
      const ld = learned.length / n;
      const fusedRows = w === 1 ? v : w === 0 ? learned : fused(learned, v, n, w);
      const D = w === 0 ? ld : w === 1 ? dim : ld + dim;
      console.log(
        JSON.stringify({
          lib: process.argv[2],
          run: runDir ?? '',
          seed,
          encoder: name,
          pose,
          grid: o,
          gridMs: ms,
          w,
          points,
          resamplings,
          ...score(fusedRows, D),
        }),
      );
    }
  }
}
