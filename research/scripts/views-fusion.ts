// Research: training-free descriptors (the surface grid, the six height images of depth-views.ts) alone, mixed,
// and fused with a saved run's encoders (and the untrained encoders of its seed), leave-one-out, by cosine and
// ordered through the library. One JSON line per configuration.
//   npx tsx research/scripts/views-fusion.ts <library-dir> --run <run-dir> [--cache <dir>] [--views '[{"pixels":16}]']
//       [--mixes 0,0.3,0.5,0.7] [--shares 0.3,0.5]
// A mix m is the descriptor row [√(1−m)·grid, √m·views]; a share s fuses it with the encoders' row as the product
// fuses the grid: [√(1−s)·encoders, √s·descriptor]. Encoder embeddings are cached per run in --cache (they take
// minutes on 990 parts; the descriptors take seconds).
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { basename, join } from 'node:path';
import { initBackend } from '../../src/core/model/backend';
import { POOL_POINTS, defaultTrainFor, libraryTraits } from '../../src/core/model/defaults';
import { loadLibrary } from '../../src/cli/library-dir';
import { loadRun } from '../../src/cli/run-dir';
import { encodersFromCheckpoint } from '../../src/core/model/checkpoint';
import { embedForRetrieval, disposeEncoders, fused, surfaceGrids, sideBySide } from '../../src/core/model/embed';
import { memberPoses, type Pose } from '../../src/core/model/train-config';
import { posed } from '../../src/core/model/views';
import { evaluateRetrieval, cosineSimilarity } from '../../src/core/retrieval/metrics';
import { throughLibrary } from '../../src/core/retrieval/hubness';
import { DIFFUSION_DEFAULTS } from '../../src/core/retrieval/diffusion';
import { untrainedEncoders } from '../../src/core/quality/evaluate';
import { DEPTH_VIEW_DEFAULTS, depthViewLength, depthViews, type DepthViewOptions } from './depth-views';

const arg = (flag: string) => {
  const i = process.argv.indexOf(flag);
  return i > 0 ? process.argv[i + 1] : undefined;
};
await initBackend();
const libDir = process.argv[2];
const lib = await loadLibrary(libDir, { quiet: true, points: POOL_POINTS });
const parts = lib.parts.map((p) => ({ points: p.points, normals: p.normals }));
const n = parts.length;
const runDir = arg('--run')!;
const run = await loadRun(runDir);
const pose: Pose = run.manifest.config.pose;
const seed = run.manifest.config.seed;
const cache = arg('--cache') ?? '/tmp/views-fusion';
mkdirSync(cache, { recursive: true });
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

function encoderRows(name: 'learned' | 'untrained'): Float32Array {
  const file = join(cache, `${basename(runDir)}-${name}.f32`);
  if (existsSync(file)) {
    const b = readFileSync(file);
    return new Float32Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength));
  }
  const config = run.manifest.config;
  const encoder = { ...config.encoder, surfaceGrid: null };
  const e =
    name === 'learned'
      ? encodersFromCheckpoint({ ...run, manifest: { ...run.manifest, config: { ...config, encoder } } })
      : untrainedEncoders({ ...defaultTrainFor(libraryTraits(lib.parts)).encoder, ...encoder }, pose, seed);
  const v = embedForRetrieval(e, parts, 256, pose);
  disposeEncoders(e);
  writeFileSync(file, Buffer.from(v.buffer, v.byteOffset, v.byteLength));
  return v;
}

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
