// PointNet-style encoder: an optional EdgeConv first layer, a shared per-point MLP (the same weights on every
// point, so point order cannot matter), a symmetric pooling over points, and a projection head used by the
// contrastive loss. The embedding is the head's output or the pooled feature under it, L2-normalised.
// Configuration: encoder-config.ts; the fused ops: ops/; the neighbour search: points/neighbours.ts.

import * as tf from '@tensorflow/tfjs';
import type { Rng } from '../rng';
import { neighbourIndex } from '../points/neighbours';
import { embeddingSize, inputChannels, validateEncoderConfig, type EncoderConfig } from './encoder-config';
import { edgeConv } from './ops/edge-conv';
import { pointMlpPool, type Layer } from './ops/point-mlp';

/** He-normal weights (std √(2/fan_in)) from our Rng, so initialisation is repeatable on every backend. */
function heNormal(rng: Rng, fanIn: number, fanOut: number, gain = 2): Float32Array {
  const std = Math.sqrt(gain / fanIn);
  const w = new Float32Array(fanIn * fanOut);
  for (let i = 0; i < w.length; i++) w[i] = rng.normal() * std;
  return w;
}

/** Inference only (no gradient kept): optionally the batch's neighbour lists, computed once for its mirror images. */
export interface InferenceOptions {
  readonly neighbours?: Int32Array;
}

let instances = 0; // tfjs variable names must be unique per process

export class Encoder {
  readonly config: EncoderConfig;
  readonly layers: Layer[];
  readonly head: Layer[];
  readonly edge: Layer | null;

  constructor(config: EncoderConfig, rng: Rng) {
    validateEncoderConfig(config);
    this.config = config;
    const id = `enc${++instances}`;
    // tf.variable keeps its own reference to the initial values; the tensors that carried them are let go here,
    // or every encoder built would leave two tensors per layer behind after its dispose().
    const make = (fanIn: number, fanOut: number, name: string, gain: number): Layer => {
      const w0 = tf.tensor2d(heNormal(rng, fanIn, fanOut, gain), [fanIn, fanOut]);
      const b0 = tf.zeros([fanOut]);
      const layer = { w: tf.variable(w0, true, `${id}/${name}/w`), b: tf.variable(b0, true, `${id}/${name}/b`) };
      tf.dispose([w0, b0]);
      return layer;
    };
    let c = inputChannels(config.inputFeatures);
    this.edge = config.edge ? make(c + 3, config.edge.width, 'edge', 2) : null;
    if (config.edge) c = config.edge.width;
    this.layers = config.widths.map((w, i) => {
      const l = make(c, w, `point${i}`, 2);
      c = w;
      return l;
    });
    c = embeddingSize(config);
    this.head = config.projection.map((w, i) => {
      const last = i === config.projection.length - 1;
      const l = make(c, w, `head${i}`, last ? 1 : 2);
      c = w;
      return l;
    });
  }

  get variables(): tf.Variable[] {
    return [...(this.edge ? [this.edge] : []), ...this.layers, ...this.head].flatMap((l) => [l.w, l.b]);
  }

  /** Stable names for saving: "point0/w", …, "head1/b" (independent of the instance). */
  get weightNames(): string[] {
    return [
      ...(this.edge ? ['edge/w', 'edge/b'] : []),
      ...this.layers.flatMap((_, i) => [`point${i}/w`, `point${i}/b`]),
      ...this.head.flatMap((_, i) => [`head${i}/w`, `head${i}/b`]),
    ];
  }

  /**
   * Pooled features (B, C) of a batch x: (B, N, F). For inference (`embed`), the EdgeConv layer may be given the
   * batch's neighbour lists (`neighbours`), which a mirror image of the same points shares.
   */
  pooled(x: tf.Tensor3D, inference?: InferenceOptions): tf.Tensor2D {
    const [B, N, F] = x.shape;
    const expected = inputChannels(this.config.inputFeatures);
    if (F !== expected)
      throw new RangeError(
        `encoder: input has ${F} channels per point, expected ${expected} (${this.config.inputFeatures})`,
      );
    const values = inference !== undefined;
    if (!this.edge) return pointMlpPool(tf.reshape(x, [B * N, F]), B, N, this.layers, this.config.pooling, values);
    return tf.tidy(() => pointMlpPool(this.edgeOutput(x, inference), B, N, this.layers, this.config.pooling, values));
  }

  /**
   * The EdgeConv layer's neighbour lists for a batch buffer x: (B, N, F) (`neighbourIndex`), or null without the
   * layer. Distances are unchanged by flipping axes' signs, so the four sign choices of a pose share them.
   */
  neighbours(x: Float32Array, B: number, N: number): Int32Array | null {
    if (!this.config.edge) return null;
    return neighbourIndex(x, B, N, inputChannels(this.config.inputFeatures), Math.min(this.config.edge.k, N));
  }

  /** Per-point output of the EdgeConv layer (B·N, width) for a batch x: (B, N, F); only with an edge layer. */
  edgeOutput(x: tf.Tensor3D, inference?: InferenceOptions): tf.Tensor2D {
    if (!this.edge) throw new Error('encoder: no EdgeConv layer in this configuration');
    const [B, N, F] = x.shape;
    const k = Math.min(this.config.edge!.k, N);
    return tf.tidy(() => {
      const flat = tf.reshape(x, [B * N, F]) as tf.Tensor2D;
      const given = inference?.neighbours;
      if (given && given.length !== B * N * k)
        throw new RangeError(`encoder: ${given.length} neighbour entries for ${B} × ${N} points, k = ${k}`);
      const neighbours = given ?? neighbourIndex(flat.dataSync() as Float32Array, B, N, F, k);
      return edgeConv(flat, neighbours, k, this.edge!, inference !== undefined);
    });
  }

  /** L2-normalised embeddings: what retrieval uses — the head's output (B, P), or the pooled features (B, C). */
  embed(x: tf.Tensor3D, neighbours?: Int32Array): tf.Tensor2D {
    return tf.tidy(() => {
      const pooled = this.pooled(x, { neighbours });
      return l2Normalise(this.config.retrieval === 'projection' ? this.project(pooled) : pooled);
    });
  }

  /** Projection-head output (B, P), not normalised; losses normalise as they need. */
  project(pooled: tf.Tensor2D): tf.Tensor2D {
    let h = pooled;
    this.head.forEach((l, i) => {
      const last = i === this.head.length - 1;
      h = tf.add(tf.matMul(h, l.w), l.b);
      if (!last) h = tf.relu(h);
    });
    return h;
  }

  dispose(): void {
    for (const v of this.variables) v.dispose();
  }
}

export const NORMALISE_EPSILON = 1e-12;

/** Rows scaled to unit length: x / max(‖x‖, ε). */
export function l2Normalise(x: tf.Tensor2D): tf.Tensor2D {
  return tf.tidy(() => tf.div(x, tf.maximum(tf.norm(x, 'euclidean', 1, true), NORMALISE_EPSILON)));
}
