// Pre-train the shipped encoder on the procedural corpus (src/gen/corpus.ts), then save it as a run folder.
//   npx tsx research/pretrain.ts [--parts 3000] [--epochs 12] [--seed 0] [--out src/core/model/pretrained] ['<json overrides>']
// Every corpus solid goes through the same path as a user's file (binary STL bytes → import → sampling), so
// the pre-trained encoder sees clouds and normals exactly as it will see real parts.

import { parseArgs } from 'node:util';
import { initBackend } from '../src/core/model/backend';
import { DEFAULT_TRAIN, POOL_POINTS } from '../src/core/model/defaults';
import { Trainer } from '../src/core/model/trainer';
import { type TrainConfig } from '../src/core/model/train-config';
import { writeStlBinary } from '../src/core/mesh/write';
import { loadPart } from '../src/core/library';
import { createRng } from '../src/core/rng';
import { corpusPart } from './corpus';
import { saveRun } from '../src/cli/run-dir';

const { values, positionals } = parseArgs({
  allowPositionals: true,
  options: {
    parts: { type: 'string', default: '3000' },
    epochs: { type: 'string', default: '12' },
    seed: { type: 'string', default: '0' },
    out: { type: 'string', default: 'src/core/model/pretrained' },
    supervised: { type: 'boolean' },
  },
});
const count = Number(values.parts),
  seed = Number(values.seed);
const overrides = JSON.parse(positionals[0] ?? '{}') as Partial<TrainConfig>;
const backend = await initBackend();
const rng = createRng(seed + 7919);
const parts = [];
const labelOf: string[] = [];
const t0 = Date.now();
for (let i = 0; i < count; i++) {
  const { mesh, kind, label } = corpusPart(rng);
  labelOf.push(label);
  const bytes = writeStlBinary({ positions: mesh.positions, indices: mesh.indices! }, `corpus ${i}`);
  const p = loadPart(bytes.buffer as ArrayBuffer, `corpus/${kind}/${i}.stl`, { points: POOL_POINTS, seed: 0 });
  parts.push({ points: p.points, normals: p.normals });
}
console.error(`corpus: ${count} parts in ${((Date.now() - t0) / 1000).toFixed(1)} s`);
const config: TrainConfig = {
  ...DEFAULT_TRAIN,
  ...overrides,
  epochs: Number(values.epochs),
  seed,
  initialWeights: undefined,
} as TrainConfig;
// --supervised: supervised contrastive loss on the generator's structural classes (not on any user data).
const names = [...new Set(labelOf)].sort();
if (values.supervised) console.error(`${names.length} generator classes`);
const trainer = new Trainer(
  parts,
  values.supervised ? { ...config, loss: { ...config.loss, name: 'supervised-contrastive' } } : config,
  values.supervised ? { labels: labelOf.map((l) => names.indexOf(l)) } : {},
);
const t1 = Date.now();
const result = await trainer.run({
  yieldEvery: 1000,
  onProgress: (p) => {
    if (p.step % 50 === 0)
      console.error(
        `step ${p.step}/${p.totalSteps} loss ${p.loss.toFixed(3)} ${p.msPerStep.toFixed(0)} ms/step eta ${Math.round(p.etaSec)} s`,
      );
  },
});
const { initialWeights: _drop, ...cleanConfig } = config as TrainConfig & { initialWeights?: unknown };
await saveRun(values.out!, {
  manifest: {
    format: 'shapekin-encoder',
    version: 1,
    config: { ...(cleanConfig as TrainConfig), loss: DEFAULT_TRAIN.loss },
    sampling: { points: POOL_POINTS, seed: 0 },
    step: trainer.step,
    totalSteps: trainer.totalSteps,
    status: result.status,
    backend,
    history: trainer.history.filter((_, i) => i % 10 === 9),
    checks: [],
    pretraining: {
      corpus: 'src/gen/corpus.ts',
      parts: count,
      loss: trainer.config.loss.name,
      classes: values.supervised ? names.length : 0,
      corpusSeed: seed + 7919,
      seconds: Math.round((Date.now() - t1) / 1000),
    },
  } as never,
  weights: trainer.encoder.variables.map((v) => v.dataSync().slice() as Float32Array),
  adam: null,
});
console.log(
  JSON.stringify({
    parts: count,
    steps: result.steps,
    finalLoss: result.finalLoss,
    seconds: Math.round((Date.now() - t1) / 1000),
  }),
);
