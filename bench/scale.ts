// `npm run bench -- scale [--parts 20000] [--library DIR] [--model RUN-DIR] [--queries 100] [--threads N]
// [--size-weight λ]`:
// a library of tens of thousands of parts end to end on this machine — read and sampled on all cores, embedded on
// all cores with a trained default model, ordered through the library (the neighbour table and graph), then queried.
// Without --library it writes a generated library (OFF and binary STL, the generator's part families) under the
// system's temporary folder and reuses it on later runs; without --model it trains the library's default model for
// a short while on a sample (the figures time the model's size, not its quality). --size-weight sets the ordering's
// size prior (size-prior.ts; 0: none) to time it against. The last line is one JSON object.

import { existsSync, mkdirSync, writeFileSync } from 'node:fs';
import { availableParallelism, tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { loadLibrary } from '../src/cli/library-dir';
import { EmbedPool } from '../src/cli/embed-pool';
import { loadRun } from '../src/cli/run-dir';
import { initBackend } from '../src/core/model/backend';
import { type Checkpoint } from '../src/core/model/checkpoint';
import { defaultTrainFor, libraryTraits, POOL_POINTS } from '../src/core/model/defaults';
import { stepsPerEpoch } from '../src/core/model/train-config';
import { Trainer } from '../src/core/model/trainer';
import { DIFFUSION_DEFAULTS, packLists } from '../src/core/retrieval/diffusion';
import { SIZE_WEIGHT } from '../src/core/retrieval/size-prior';
import { TensorIndex } from '../src/core/retrieval/tensor-index';
import { createRng } from '../src/core/rng';
import { generateLibrary } from '../src/gen/library';
import { fmt, report } from './timing';

function option(name: string): string | undefined {
  const i = process.argv.indexOf(`--${name}`);
  return i >= 0 ? process.argv[i + 1] : undefined;
}

/** A generated library of at least `parts` parts (112 per generator seed), written once and reused. */
function generated(parts: number): string {
  const dir = join(tmpdir(), `shapekin-scale-${parts}`);
  const marker = `${dir}.complete`; // beside the folder: inside it would be read as a file
  if (existsSync(marker)) return dir;
  let written = 0;
  for (let seed = 1; written < parts; seed++) {
    const lib = generateLibrary(seed, { formats: ['off', 'stl-binary'], extras: false });
    for (const f of lib.files) {
      if (written >= parts) break;
      const path = join(dir, f.path.replace('/', `/s${seed}-`));
      mkdirSync(dirname(path), { recursive: true });
      writeFileSync(path, f.bytes);
      written++;
    }
  }
  writeFileSync(marker, `${written} parts\n`);
  return dir;
}

const quantile = (xs: number[], q: number) => {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.min(s.length - 1, Math.floor(q * s.length))];
};

export async function benchScale(): Promise<void> {
  const parts = Number(option('parts') ?? 20_000);
  const queries = Number(option('queries') ?? 100);
  const threads = Number(option('threads') ?? availableParallelism());
  const sizeWeight = Number(option('size-weight') ?? SIZE_WEIGHT);
  const root = option('library') ?? generated(parts);
  const rows: [string, string][] = [];
  const say = (s: string) => process.stderr.write(`${s}\n`);
  await initBackend({ prefer: 'wasm' });

  say(`reading ${root} on ${threads} threads…`);
  let t0 = performance.now();
  const library = await loadLibrary(root, { threads, points: POOL_POINTS, seed: 0, quiet: true });
  const importS = (performance.now() - t0) / 1000;
  const n = library.parts.length;
  rows.push([
    `read and sampled (${POOL_POINTS} points + normals), ${threads} threads`,
    `${n} parts, ${library.failures.length} refused, ${fmt(importS, 1)} s · ${fmt(n / importS, 0)} parts/s`,
  ]);

  let checkpoint: Checkpoint;
  const modelDir = option('model');
  if (modelDir) checkpoint = await loadRun(modelDir);
  else {
    // The library's own defaults, trained ~48 steps per encoder on a 512-part sample.
    const rng = createRng(5);
    const sample = Array.from({ length: Math.min(512, n) }, () => library.parts[rng.int(n)]);
    const config = defaultTrainFor(libraryTraits(sample));
    const epochs = Math.max(1, Math.ceil(48 / stepsPerEpoch(sample.length, config.batchSize)));
    const trainer = new Trainer(sample, { ...config, epochs });
    say(`training the default model briefly (${trainer.totalSteps} steps, pose ${config.pose})…`);
    t0 = performance.now();
    await trainer.run();
    rows.push([
      'a short training of the default model',
      `${trainer.totalSteps} steps in ${fmt((performance.now() - t0) / 1000, 0)} s`,
    ]);
    checkpoint = {
      manifest: {
        format: 'shapekin-encoder',
        version: 1,
        config: trainer.config,
        sampling: { points: POOL_POINTS, seed: 0 },
        step: trainer.step,
        totalSteps: trainer.totalSteps,
        status: 'done',
        backend: 'wasm',
        history: [],
        checks: [],
      },
      weights: trainer.weights(),
      adam: null,
    };
    trainer.dispose();
  }
  const { pose, points } = checkpoint.manifest.config;

  say(`embedding ${n} parts on ${threads} threads…`);
  const pool = new EmbedPool(checkpoint, threads);
  t0 = performance.now();
  let lastSaid = 0;
  const vectors = await pool.embed(library.parts, (p) => {
    if (performance.now() - lastSaid > 30_000) {
      lastSaid = performance.now();
      say(`  ${p.done} of ${p.total}`);
    }
  });
  await pool.close();
  const embedS = (performance.now() - t0) / 1000;
  const D = vectors.length / n;
  rows.push([
    `retrieval embedding (pose ${pose}, ${points} points a view), ${threads} threads`,
    `${fmt(embedS, 0)} s · ${fmt(n / embedS, 1)} parts/s · ${D} values a part`,
  ]);

  const index = new TensorIndex(
    vectors,
    D,
    library.parts.map((p, i) => ({ name: p.name, label: library.labels[i], diagonal: p.diagonal })),
    { sizeWeight },
  );
  say('building the ordering (neighbour table, hub means, graph)…');
  t0 = performance.now();
  const table = index.neighbourTable();
  const tableS = (performance.now() - t0) / 1000;
  const t1 = performance.now();
  // The graph built once, as the index would, and handed to it (so its count of rescanned rows is known).
  const { lists, rescanned } = table.diffusionGraph(
    index.orderScorer(),
    DIFFUSION_DEFAULTS,
    index.neighbourhoodMeans(),
  );
  index.useOrdering({ table, sizes: index.sizePrior(), graph: packLists(lists, DIFFUSION_DEFAULTS.k) });
  const graphS = (performance.now() - t1) / 1000;
  const orderS = tableS + graphS;
  rows.push([
    'ordering built (one pass over all pairs as matrix products, then the graph)',
    `${fmt(orderS, 1)} s (table ${fmt(tableS, 1)} s, graph ${fmt(graphS, 2)} s; ${rescanned} of ${n} rows scanned again) · mean pair cosine ${fmt(index.meanPairCosine(), 3)}`,
  ]);

  const rng = createRng(9);
  const ordered: number[] = [],
    inLibrary: number[] = [],
    cosine: number[] = [];
  for (let q = 0; q < queries; q++) {
    const i = rng.int(n);
    const v = index.vector(i).slice();
    let s = performance.now();
    index.queryDiffused(v, 10, { queryDiagonal: index.entries[i].diagonal }); // as from outside: joins the graph
    ordered.push(performance.now() - s);
    s = performance.now();
    index.queryDiffused(v, 10, { exclude: i });
    inLibrary.push(performance.now() - s);
    s = performance.now();
    index.query(v, 10);
    cosine.push(performance.now() - s);
  }
  index.dispose();
  rows.push([
    `${queries} queries, top 10, ordered through the library (a part from outside joins the graph)`,
    `p50 ${fmt(quantile(ordered, 0.5), 1)} ms · p95 ${fmt(quantile(ordered, 0.95), 1)} ms`,
  ]);
  rows.push([
    'the same parts queried from their own place in the library',
    `p50 ${fmt(quantile(inLibrary, 0.5), 1)} ms · p95 ${fmt(quantile(inLibrary, 0.95), 1)} ms`,
  ]);
  rows.push(['by cosine alone (one matrix product)', `p50 ${fmt(quantile(cosine, 0.5), 2)} ms`]);
  const peak = process.resourceUsage().maxRSS / 1024;
  rows.push(['peak resident memory (this process and its threads)', `${fmt(peak, 0)} MB`]);
  report(`scale: ${n} parts from ${root}`, rows);
  console.log(
    JSON.stringify({
      parts: n,
      library: root,
      threads,
      pose,
      import_parts_per_s: +(n / importS).toFixed(1),
      embed_parts_per_s: +(n / embedS).toFixed(1),
      order_build_s: +orderS.toFixed(2),
      ordered_query_ms_p50: +quantile(ordered, 0.5).toFixed(1),
      ordered_query_ms_p95: +quantile(ordered, 0.95).toFixed(1),
      in_library_query_ms_p50: +quantile(inLibrary, 0.5).toFixed(1),
      cosine_query_ms_p50: +quantile(cosine, 0.5).toFixed(2),
      peak_rss_mb: Math.round(peak),
      rows_rescanned: rescanned,
      size_weight: sizeWeight,
    }),
  );
}
