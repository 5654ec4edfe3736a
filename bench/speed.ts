// The reference training step, timed: one optimisation step (forward, backward, Adam) on a fixed random
// batch. Shared by `npm run bench` in Node and by the training worker in the browser, so both measure the
// same thing.

import * as tf from '@tensorflow/tfjs';
import { createRng } from '../src/core/rng';
import { Adam } from '../src/core/model/adam';
import { Encoder } from '../src/core/model/encoder';
import { embeddingSize, inputChannels, type EncoderConfig } from '../src/core/model/encoder-config';
import { ntXentLoss } from '../src/core/model/losses/ntxent';

/** The configuration of the speed target: B = 32 pairs, N = 512, widths 64-128-256, projection 256-128. */
export const REFERENCE_ENCODER: EncoderConfig = {
  inputFeatures: 'xyz',
  widths: [64, 128, 256],
  pooling: 'max',
  projection: [256, 128],
};

/** Nominal FLOPs of one step: forward 2·rows·Σ(in·out) over the point MLP (an EdgeConv layer on F inputs with d
 *  differenced channels is two matMuls, F and d rows of weights, plus the neighbour max) and the head, ×3 for
 *  forward + backward (the usual convention; the sparse max-pool backward here actually does fewer). */
export function stepFlops(c: EncoderConfig, pairs: number, points: number): { forward: number; step: number } {
  const rows = 2 * pairs * points;
  let f = 0,
    cin = inputChannels(c.inputFeatures);
  if (c.edge) {
    f += 2 * rows * (cin + 3) * c.edge.width + rows * c.edge.k * c.edge.width;
    cin = c.edge.width;
  }
  for (const w of c.widths) {
    f += 2 * rows * cin * w;
    cin = w;
  }
  cin = embeddingSize(c);
  for (const w of c.projection) {
    f += 2 * 2 * pairs * cin * w;
    cin = w;
  }
  return { forward: f, step: 3 * f };
}

/** Median milliseconds of one step over `repeats` (after two warm-up steps). */
export function timeStep(config: EncoderConfig, pairs: number, points: number, repeats: number): number {
  const enc = new Encoder(config, createRng(1));
  const adam = new Adam(enc.variables);
  const rng = createRng(2);
  const F = inputChannels(config.inputFeatures);
  const x = tf.tensor3d(
    Float32Array.from({ length: 2 * pairs * points * F }, () => rng.uniform(-1, 1)),
    [2 * pairs, points, F],
  );
  const vars = enc.variables;
  const ms: number[] = [];
  for (let r = 0; r < repeats + 2; r++) {
    const t0 = performance.now();
    tf.tidy(() => {
      const { value, grads } = tf.variableGrads(() => {
        const z = enc.project(enc.pooled(x));
        return ntXentLoss(
          tf.slice(z, [0, 0], [pairs, -1]) as tf.Tensor2D,
          tf.slice(z, [pairs, 0], [pairs, -1]) as tf.Tensor2D,
          0.1,
        );
      }, vars);
      value.dataSync();
      adam.apply(
        vars.map((v) => grads[v.name]),
        1e-3,
      );
    });
    vars[vars.length - 1].dataSync();
    if (r >= 2) ms.push(performance.now() - t0);
  }
  x.dispose();
  adam.dispose();
  enc.dispose();
  ms.sort((a, b) => a - b);
  return ms[Math.floor(ms.length / 2)];
}
