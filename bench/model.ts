// Training-step and embedding speed of the encoder on the tfjs CPU backends, for the default model and the
// reference configuration (B = 32 pairs, N = 512, widths 64-128-256, projection 256-128, NT-Xent, Adam).

import * as tf from '@tensorflow/tfjs';
import { initBackend, type BackendName } from '../src/core/model/backend';
import { Adam } from '../src/core/model/adam';
import { DEFAULT_ENCODER, Encoder, embeddingSize, inputChannels, type EncoderConfig } from '../src/core/model/encoder';
import { embedForRetrieval, embedParts } from '../src/core/model/embed';
import { ntXentLoss } from '../src/core/model/losses';
import { createRng } from '../src/core/rng';
import { fmt, report } from './timing';

export const REFERENCE: EncoderConfig = { inputFeatures: 'xyz', widths: [64, 128, 256], pooling: 'max', projection: [256, 128] };

/** Nominal FLOPs of one training step: forward 2·rows·Σ(in·out) over point MLP and head, ×3 for forward + backward
 *  (the usual convention; our sparse max-pool backward actually does fewer). */
export function stepFlops(c: EncoderConfig, pairs: number, points: number): { forward: number; step: number } {
  const rows = 2 * pairs * points;
  let f = 0, cin = inputChannels(c.inputFeatures);
  for (const w of c.widths) { f += 2 * rows * cin * w; cin = w; }
  cin = embeddingSize(c);
  for (const w of c.projection) { f += 2 * 2 * pairs * cin * w; cin = w; }
  return { forward: f, step: 3 * f };
}

/** Median ms of one optimisation step (forward, backward, Adam) on a fixed batch. */
export function timeStep(config: EncoderConfig, pairs: number, points: number, repeats: number): number {
  const enc = new Encoder(config, createRng(1));
  const adam = new Adam(enc.variables);
  const rng = createRng(2);
  const F = inputChannels(config.inputFeatures);
  const x = tf.tensor3d(Float32Array.from({ length: 2 * pairs * points * F }, () => rng.uniform(-1, 1)), [2 * pairs, points, F]);
  const vars = enc.variables;
  const ms: number[] = [];
  for (let r = 0; r < repeats + 2; r++) {
    const t0 = performance.now();
    tf.tidy(() => {
      const { value, grads } = tf.variableGrads(() => {
        const z = enc.project(enc.pooled(x));
        return ntXentLoss(tf.slice(z, [0, 0], [pairs, -1]) as tf.Tensor2D, tf.slice(z, [pairs, 0], [pairs, -1]) as tf.Tensor2D, 0.1);
      }, vars);
      value.dataSync();
      adam.apply(vars.map((v) => grads[v.name]), 1e-3);
    });
    vars[vars.length - 1].dataSync();
    if (r >= 2) ms.push(performance.now() - t0);
  }
  x.dispose(); adam.dispose(); enc.dispose();
  ms.sort((a, b) => a - b);
  return ms[Math.floor(ms.length / 2)];
}

export async function benchModel(): Promise<void> {
  const only = process.env.BENCH_BACKENDS?.split(',') as BackendName[] | undefined;
  for (const backend of only ?? (['wasm', 'cpu'] as BackendName[])) {
    const got = await initBackend({ prefer: backend });
    const rows: [string, string][] = [];
    for (const [name, cfg] of [['reference (xyz, 64-128-256, head 256-128)', REFERENCE], ['default (xyz+normal, same widths)', DEFAULT_ENCODER]] as const) {
      const ms = timeStep(cfg, 32, 512, got === 'cpu' ? 1 : 7);
      const { step } = stepFlops(cfg, 32, 512);
      rows.push([`${name}: one step, B = 32 pairs, N = 512`, `${fmt(ms, 0)} ms · ${fmt((32 * 1000) / ms, 1)} pairs/s · ${fmt(step / 1e9 / (ms / 1000), 1)} GFLOP/s nominal (${fmt(step / 1e9, 2)} GFLOP)`]);
      if (got === 'cpu') break; // the pure-JS backend is ~20× slower: one configuration is enough
    }
    const enc = new Encoder(DEFAULT_ENCODER, createRng(3));
    const rng = createRng(4);
    const parts = Array.from({ length: 64 }, () => ({ points: Float32Array.from({ length: 2048 * 3 }, () => rng.uniform(-1, 1)), normals: Float32Array.from({ length: 2048 * 3 }, () => rng.uniform(-1, 1)) }));
    if (got === 'wasm') {
      let t0 = performance.now();
      embedParts(enc, parts, 512);
      const plain = performance.now() - t0;
      t0 = performance.now();
      embedForRetrieval(enc, parts, 512, 'principal-axes');
      const posed = performance.now() - t0;
      rows.push(['embedding, 512 points a part', `${fmt(64 / (plain / 1000), 0)} parts/s plain · ${fmt(64 / (posed / 1000), 0)} parts/s with principal-axes pose and 4 sign flips`]);
    }
    enc.dispose();
    report(`model on tfjs-${got}`, rows);
  }
}
