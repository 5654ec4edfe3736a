// Research: the ordering's own settings on a saved run's shipped rows (encoders + surface grid at 30 %) with the
// size prior as shipped: the diffusion graph's k, α and γ and the hub correction's k, leave-one-out, ordered
// through the library. The shipped settings were chosen on the furniture set alone (diffusion.ts, hubness.ts); this
// scores them on each library so a default can be chosen on the mean of three. One JSON line per setting.
//   npx tsx research/scripts/ordering-grid.ts <library-dir> --run <run-dir> [--cache <dir>]
//       [--grid '[{"k":15,"alpha":0.8,"gamma":3,"hub":30,"iterations":40},…]'] [--encoders learned,untrained]
import { fused, surfaceGrids } from '../../src/core/model/embed';
import { memberPoses } from '../../src/core/model/train-config';
import { evaluateRetrieval, cosineSimilarity } from '../../src/core/retrieval/metrics';
import { throughLibrary } from '../../src/core/retrieval/hubness';
import { DIFFUSION_DEFAULTS } from '../../src/core/retrieval/diffusion';
import { withSizePrior } from '../../src/core/retrieval/size-prior';
import { arg, cachedEncoderRows, savedRunOnLibrary } from './cached-rows';

interface Setting {
  readonly k: number;
  readonly alpha: number;
  readonly gamma: number;
  readonly hub: number;
  /** Diffusion steps (DIFFUSION_DEFAULTS.iterations when absent). */
  readonly iterations?: number;
}

const DEFAULT_GRID: Setting[] = [
  { k: 15, alpha: 0.8, gamma: 3, hub: 30 },
  { k: 10, alpha: 0.8, gamma: 3, hub: 30 },
  { k: 25, alpha: 0.8, gamma: 3, hub: 30 },
  { k: 40, alpha: 0.8, gamma: 3, hub: 30 },
  { k: 15, alpha: 0.7, gamma: 3, hub: 30 },
  { k: 15, alpha: 0.9, gamma: 3, hub: 30 },
  { k: 15, alpha: 0.8, gamma: 2, hub: 30 },
  { k: 15, alpha: 0.8, gamma: 5, hub: 30 },
  { k: 15, alpha: 0.8, gamma: 3, hub: 15 },
  { k: 15, alpha: 0.8, gamma: 3, hub: 50 },
];

async function main(): Promise<void> {
  const { libDir, lib, parts, n, runDir, run, pose, seed, cache } = await savedRunOnLibrary();
  const grid: Setting[] = JSON.parse(arg('--grid') ?? JSON.stringify(DEFAULT_GRID));
  const encoders = (arg('--encoders') ?? 'learned').split(',') as ('learned' | 'untrained')[];
  const cells = surfaceGrids(parts, memberPoses(pose), { cells: 8, facing: true });
  const diagonals = lib.parts.map((p) => p.diagonal);
  for (const enc of encoders) {
    const shipped = fused(cachedEncoderRows(enc, run, runDir, lib.parts, cache), cells, n, 0.3);
    const sim = withSizePrior(n, cosineSimilarity(shipped, shipped.length / n), diagonals);
    for (const s of grid) {
      const t0 = Date.now();
      const options = { ...DIFFUSION_DEFAULTS, k: s.k, alpha: s.alpha, gamma: s.gamma, iterations: s.iterations ?? 40 };
      const m = evaluateRetrieval(lib.labels, throughLibrary(n, sim, options, s.hub));
      console.log(
        JSON.stringify({
          lib: libDir,
          run: runDir,
          seed,
          encoder: enc,
          ...s,
          iterations: options.iterations,
          nn: +m.nn.toFixed(4),
          ft: +m.first_tier.toFixed(4),
          map: +m.map.toFixed(4),
          ms: Date.now() - t0,
        }),
      );
    }
  }
}

if (process.argv[1]?.endsWith('ordering-grid.ts')) await main();
