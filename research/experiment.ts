// Train with the defaults plus JSON overrides, then evaluate against the baselines; prints one JSON line.
//   npx tsx research/experiment.ts <library-dir> '{"epochs": 60, "encoder": {"inputFeatures": "xyz+normal"}}' [--embed-points N] [--init <run-dir>]
// --save <dir> keeps the trained encoder as a run folder (for research/scripts/rerank.ts and the CLI), as soon as
// it is trained; with --train-only nothing is scored.
// --init starts training from a saved encoder (e.g. the pre-trained one) and also reports it before fine-tuning.
// Used for the ablation tables in docs/: every row there names the command that produced it.

import { initBackend } from '../src/core/model/backend';
import { POOL_POINTS, defaultTrainFor, libraryTraits } from '../src/core/model/defaults';
import { Trainer } from '../src/core/model/trainer';
import { type TrainConfig } from '../src/core/model/train-config';
import { PRESETS } from '../src/core/points/augment';
import { evaluateMethods } from '../src/core/quality/evaluate';
import { DIFFUSION_DEFAULTS } from '../src/core/retrieval/diffusion';
import { EmbeddingIndex } from '../src/core/retrieval/index';
import { disposeEncoders, embedForRetrieval, RETRIEVAL_RESAMPLINGS } from '../src/core/model/embed';
import { loadLibrary } from '../src/cli/library-dir';
import { loadRun, saveRun } from '../src/cli/run-dir';

import { encodersFromCheckpoint } from '../src/core/model/checkpoint';
import { evaluateRetrieval } from '../src/core/retrieval/metrics';
import { encoderDescriptors } from '../src/core/quality/methods';

const valueFlags = new Set(['--embed-points', '--init', '--save']);
const [lib, overridesText = '{}'] = process.argv
  .slice(2)
  .filter((a, i, all) => !a.startsWith('--') && !valueFlags.has(all[i - 1]));
const embedPointsArg = process.argv.indexOf('--embed-points');
const overrides = JSON.parse(overridesText) as Partial<TrainConfig> & { preset?: keyof typeof PRESETS };
const backend = await initBackend();
const library = await loadLibrary(lib, { quiet: true, points: POOL_POINTS });
// The library's own defaults (inputs follow its share of closed meshes, pose how square its parts sit in their files), then the overrides.
const DEFAULT_TRAIN = defaultTrainFor(libraryTraits(library.parts));
const config: TrainConfig = {
  ...DEFAULT_TRAIN,
  ...overrides,
  encoder: { ...DEFAULT_TRAIN.encoder, ...(overrides.encoder ?? {}) },
  loss: { ...DEFAULT_TRAIN.loss, ...(overrides.loss ?? {}) },
  pipeline: overrides.preset ? PRESETS[overrides.preset] : (overrides.pipeline ?? DEFAULT_TRAIN.pipeline),
};
const parts = library.parts.map((p) => ({ points: p.points, normals: p.normals }));
const initArg = process.argv.indexOf('--init');
const init = initArg > 0 ? await loadRun(process.argv[initArg + 1]) : null;
let start: Record<string, number> | null = null;
if (init) {
  const enc = encodersFromCheckpoint(init);
  const m = evaluateRetrieval(
    library.labels,
    encoderDescriptors('learned', enc, parts, config.points, config.pose).similarity,
  );
  start = { nn: m.nn, first_tier: m.first_tier, map: m.map };
  console.error('before fine-tuning', JSON.stringify(start));
  disposeEncoders(enc);
}
const t0 = Date.now();
// Labels from folders only for the supervised contrastive loss (its figures are then not label-free).
const names = [...new Set(library.labels)].sort();
const labels = config.loss.name === 'supervised-contrastive' ? library.labels.map((l) => names.indexOf(l)) : null;
const trainer = new Trainer(parts, config, { labels, ...(init ? { initialWeights: init.weights } : {}) });
const result = await trainer.run({ yieldEvery: 1000 });
const seconds = (Date.now() - t0) / 1000;
const saveArg = process.argv.indexOf('--save');
if (saveArg > 0)
  await saveRun(process.argv[saveArg + 1], {
    manifest: {
      format: 'shapekin-encoder',
      version: 1,
      config,
      sampling: { points: POOL_POINTS, seed: 0 },
      step: trainer.step,
      totalSteps: trainer.totalSteps,
      status: result.status,
      backend,
      history: trainer.history,
      checks: trainer.checks,
    },
    weights: trainer.weights(),
    adam: null,
  });
// --train-only: keep the run and stop (a pre-training library's own scores are not wanted).
if (process.argv.includes('--train-only')) {
  trainer.dispose();
  process.exit(0);
}
const points = embedPointsArg > 0 ? Number(process.argv[embedPointsArg + 1]) : config.points;
const report = evaluateMethods({
  parts,
  labels: library.labels,
  points,
  pose: config.pose,
  learned: trainer.encoders,
  untrainedConfig: config.encoder,
  seed: config.seed,
  diffusion: DIFFUSION_DEFAULTS,
});
// How spread out the learned embedding is (diffusion applies below DIFFUSION_MAX_MEAN_COSINE; see EmbeddingIndex.diffusionApplies).
const learnedVectors = embedForRetrieval(trainer.encoders, parts, points, config.pose);
const meanPairCosine = new EmbeddingIndex(
  learnedVectors,
  learnedVectors.length / parts.length,
  parts.map(() => ({ name: '', label: '', diagonal: 1 })),
).meanPairCosine();
trainer.dispose();
const round = (m: Record<string, number>) =>
  Object.fromEntries(Object.entries(m).map(([k, v]) => [k, Math.round(v * 1000) / 1000]));
console.log(
  JSON.stringify({
    overrides,
    inputs: config.encoder.inputFeatures,
    pose: config.pose,
    embedPoints: points,
    backend,
    steps: result.steps,
    seconds: Math.round(seconds),
    finalLoss: Math.round(result.finalLoss * 1000) / 1000,
    ...(start ? { init: process.argv[initArg + 1], beforeFineTune: round(start) } : {}),
    retrieval: config.encoder.retrieval ?? 'pooled',
    edge: config.encoder.edge?.k ?? 0,
    scale: config.pipeline.steps.find((s) => s.kind === 'scale')?.strength ?? 0,
    diffusionOrder: 'nearest first',
    resamplings: RETRIEVAL_RESAMPLINGS,
    learned: round(report.methods.learned!),
    untrained: round(report.methods.untrained!),
    d2: round(report.methods.d2!),
    meanPairCosine: Math.round(meanPairCosine * 1000) / 1000,
    diffused: {
      learned: round(report.methods['learned+diffusion']!),
      untrained: round(report.methods['untrained+diffusion']!),
      d2: round(report.methods['d2+diffusion']!),
    },
  }),
);
