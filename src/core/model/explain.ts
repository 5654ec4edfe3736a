// Why a match: which points of two parts carry their similarity. With max pooling each channel of a part's pooled
// feature comes from one point, its winner (PointNet's critical points, Qi et al. 2017, "PointNet: Deep Learning on
// Point Sets for 3D Classification and Segmentation", sec. 4.3). The cosine of the two pooled features is a sum over
// channels, cos = Σ_c â_c·b̂_c (â = a/‖a‖), so channel c's share â_c·b̂_c goes to the point that won c in each part.
// A point's contribution is the sum of the shares of the channels it won; over all points they add up to the cosine.
// With two encoders (file-and-principal) each encoder's shares are halved, as their cosines are averaged.
// Retrieval compares the projection head's output; this reads the layer under it, the last place points are
// still visible, so it shows which regions share features rather than the exact score.

import * as tf from '@tensorflow/tfjs';
import { neighbourIndex } from '../points/neighbours';
import type { Encoder } from './encoder';
import { inputChannels } from './encoder-config';
import { edgeConv } from './ops/edge-conv';
import { memberPoses, type Pose } from './train-config';
import { fillSlot, posed, type ModelPart } from './views';
import { encoderList, type Encoders } from './embed';

export interface MatchExplanation {
  /** Contribution of each of the first n pool points of each part (sums to `pooledCosine`). */
  readonly a: Float32Array;
  readonly b: Float32Array;
  /** Cosine of the pooled features (the mean over encoders). */
  readonly pooledCosine: number;
}

/** Per-point features of the last shared layer (N, C) for one part's first n points. */
function pointFeatures(encoder: Encoder, part: ModelPart, n: number): { h: Float32Array; C: number } {
  const F = inputChannels(encoder.config.inputFeatures);
  const buf = new Float32Array(n * F);
  fillSlot(buf, 0, n, encoder.config.inputFeatures, part.points, part.normals);
  return tf.tidy(() => {
    let h: tf.Tensor2D = tf.tensor2d(buf, [n, F]);
    if (encoder.edge) {
      const k = Math.min(encoder.config.edge!.k, n);
      h = edgeConv(h, neighbourIndex(buf, 1, n, F, k), k, encoder.edge);
    }
    for (const l of encoder.layers) h = tf.relu(tf.add(tf.matMul(h, l.w), l.b)) as tf.Tensor2D;
    return { h: h.dataSync() as Float32Array, C: h.shape[1] };
  });
}

/** Max over points per channel and the winning point (the first on ties). */
function maxPool(h: Float32Array, n: number, C: number): { pooled: Float32Array; winner: Int32Array } {
  const pooled = new Float32Array(C).fill(-Infinity);
  const winner = new Int32Array(C);
  for (let i = 0; i < n; i++)
    for (let c = 0; c < C; c++)
      if (h[i * C + c] > pooled[c]) {
        pooled[c] = h[i * C + c];
        winner[c] = i;
      }
  return { pooled, winner };
}

/** Contributions of the points of parts a and b to their similarity, from max-pooled encoders. */
export function explainMatch(encoders: Encoders, a: ModelPart, b: ModelPart, n: number, pose: Pose): MatchExplanation {
  const list = encoderList(encoders);
  const poses = memberPoses(pose);
  const outA = new Float32Array(n),
    outB = new Float32Array(n);
  let cosine = 0;
  list.forEach((encoder, m) => {
    if (encoder.config.pooling !== 'max')
      throw new RangeError('explainMatch: needs max pooling (each channel from one point)');
    const [pa] = posed([a], poses[m]);
    const [pb] = posed([b], poses[m]);
    const fa = pointFeatures(encoder, pa, n),
      fb = pointFeatures(encoder, pb, n);
    const A = maxPool(fa.h, n, fa.C),
      B = maxPool(fb.h, n, fb.C);
    const norm = (v: Float32Array) => Math.sqrt(v.reduce((s, x) => s + x * x, 0)) || 1;
    const na = norm(A.pooled),
      nb = norm(B.pooled),
      weight = 1 / list.length;
    for (let c = 0; c < fa.C; c++) {
      const share = (A.pooled[c] / na) * (B.pooled[c] / nb) * weight;
      outA[A.winner[c]] += share;
      outB[B.winner[c]] += share;
      cosine += share;
    }
  });
  return { a: outA, b: outB, pooledCosine: cosine };
}
