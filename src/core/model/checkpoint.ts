// Checkpoints in tfjs's own model format: a JSON manifest (model.json: our run description in
// modelTopology, the weights manifest) plus one binary weights file. The same artifacts go to a
// file-system handler in Node and to IndexedDB in the browser, so a model trained by either loads in both.

import type * as tf from '@tensorflow/tfjs';
import { crc32 } from '../checksum';
import { checkWeightData } from './weights-check';
import { createRng } from '../rng';
import type { AdamState } from './adam';
import { Encoder } from './encoder';
import { inputChannels, validateEncoderConfig } from './encoder-config';
import { disposeEncoders, type Encoders } from './embed';
import { setWeights, type TrainerOptions } from './trainer';
import { memberPoses, type TrainConfig } from './train-config';
import { CHECKPOINT_FORMAT, CHECKPOINT_VERSION, type ModelJson, type RunManifest } from './model-json';

export interface Checkpoint {
  readonly manifest: RunManifest;
  /** Encoder variables in Encoder.variables order. */
  readonly weights: readonly Float32Array[];
  readonly adam: AdamState | null;
}

/** Weight names and shapes of a configuration: one encoder's, or each encoder's in turn (the second's names prefixed). */
function shapesFor(config: TrainConfig): { names: string[]; shapes: number[][] } {
  const one = encoderShapes(config);
  const members = memberPoses(config.pose).length;
  return {
    names: Array.from({ length: members }, (_, m) => one.names.map((n) => (m === 0 ? n : `encoder${m}/${n}`))).flat(),
    shapes: Array.from({ length: members }, () => one.shapes).flat(),
  };
}

function encoderShapes(config: TrainConfig): { names: string[]; shapes: number[][] } {
  // Build a throwaway encoder description without tensors: widths give every shape.
  const names: string[] = [];
  const shapes: number[][] = [];
  let c = inputChannels(config.encoder.inputFeatures);
  const edge = config.encoder.edge;
  if (edge) {
    names.push('edge/w', 'edge/b');
    shapes.push([c + 3, edge.width], [edge.width]);
    c = edge.width;
  }
  config.encoder.widths.forEach((w, i) => {
    names.push(`point${i}/w`, `point${i}/b`);
    shapes.push([c, w], [w]);
    c = w;
  });
  c = config.encoder.widths[config.encoder.widths.length - 1] * (config.encoder.pooling === 'max+mean' ? 2 : 1);
  config.encoder.projection.forEach((w, i) => {
    names.push(`head${i}/w`, `head${i}/b`);
    shapes.push([c, w], [w]);
    c = w;
  });
  return { names, shapes };
}

export function toArtifacts(ckpt: Checkpoint): tf.io.ModelArtifacts {
  const { names, shapes } = shapesFor(ckpt.manifest.config);
  const specs: tf.io.WeightsManifestEntry[] = [];
  const arrays: Float32Array[] = [];
  const add = (name: string, shape: number[], data: Float32Array) => {
    const size = shape.reduce((a, b) => a * b, 1);
    if (data.length !== size) throw new RangeError(`checkpoint: ${name} has ${data.length} values, expected ${size}`);
    specs.push({ name, shape, dtype: 'float32' });
    arrays.push(data);
  };
  names.forEach((n, i) => add(n, shapes[i], ckpt.weights[i]));
  if (ckpt.adam) {
    names.forEach((n, i) => add(`adam/m/${n}`, shapes[i], ckpt.adam!.m[i]));
    names.forEach((n, i) => add(`adam/v/${n}`, shapes[i], ckpt.adam!.v[i]));
  }
  const total = arrays.reduce((s, a) => s + a.length, 0);
  const data = new Float32Array(total);
  let o = 0;
  for (const a of arrays) {
    data.set(a, o);
    o += a.length;
  }
  return {
    modelTopology: { shapekin: ckpt.manifest } as unknown as tf.io.ModelArtifacts['modelTopology'],
    format: CHECKPOINT_FORMAT,
    generatedBy: 'Shapekin',
    convertedBy: null,
    weightSpecs: specs,
    weightData: data.buffer,
    userDefinedMetadata: { adamStep: ckpt.adam?.step ?? 0, weightsCrc32: crc32(new Uint8Array(data.buffer)) },
  };
}

export function fromArtifacts(artifacts: tf.io.ModelArtifacts, where = 'checkpoint'): Checkpoint {
  if (artifacts.format !== CHECKPOINT_FORMAT)
    throw new RangeError(`${where}: not a Shapekin model (format "${artifacts.format ?? 'none'}")`);
  const manifest = (artifacts.modelTopology as { shapekin?: RunManifest } | undefined)?.shapekin;
  if (!manifest || manifest.version !== CHECKPOINT_VERSION)
    throw new RangeError(`${where}: unsupported Shapekin model version ${manifest?.version}`);
  validateEncoderConfig(manifest.config.encoder);
  const { names, shapes } = shapesFor(manifest.config);
  const specs = artifacts.weightSpecs ?? [];
  const raw = artifacts.weightData;
  const buffer = raw instanceof ArrayBuffer ? raw : Array.isArray(raw) ? concat(raw) : null;
  if (!buffer) throw new RangeError(`${where}: no weight data`);
  checkWeightData(buffer, artifacts.userDefinedMetadata, where);
  const byName = new Map<string, Float32Array>();
  let offset = 0;
  for (const spec of specs) {
    const size = spec.shape.reduce((a, b) => a * b, 1);
    if (spec.dtype !== 'float32')
      throw new RangeError(`${where}: weight ${spec.name} is ${spec.dtype}, expected float32`);
    if ((offset + size) * 4 > buffer.byteLength)
      throw new RangeError(`${where}: weights file is shorter than its manifest (truncated?)`);
    byName.set(spec.name, new Float32Array(buffer.slice(offset * 4, (offset + size) * 4)));
    offset += size;
  }
  const weights = names.map((n, i) => {
    const w = byName.get(n);
    const size = shapes[i].reduce((a, b) => a * b, 1);
    if (!w || w.length !== size)
      throw new RangeError(`${where}: weight ${n} is missing or has the wrong size for the stated configuration`);
    return w;
  });
  const hasAdam = names.every((n) => byName.has(`adam/m/${n}`) && byName.has(`adam/v/${n}`));
  const step = Number((artifacts.userDefinedMetadata as { adamStep?: number } | undefined)?.adamStep ?? 0);
  const adam = hasAdam
    ? { step, m: names.map((n) => byName.get(`adam/m/${n}`)!), v: names.map((n) => byName.get(`adam/v/${n}`)!) }
    : null;
  return { manifest, weights, adam };
}

/** Artifacts from a parsed model.json and the bytes of the weight files it names, in order. */
export function artifactsFromModelJson(json: ModelJson, weightFiles: readonly ArrayBuffer[]): tf.io.ModelArtifacts {
  const groups = json.weightsManifest ?? [];
  return {
    format: json.format,
    modelTopology: json.modelTopology as tf.io.ModelArtifacts['modelTopology'],
    userDefinedMetadata: json.userDefinedMetadata as tf.io.ModelArtifacts['userDefinedMetadata'],
    weightSpecs: groups.flatMap((g) => g.weights),
    weightData: concat([...weightFiles]),
  };
}

function concat(parts: ArrayBuffer[]): ArrayBuffer {
  const total = parts.reduce((s, p) => s + p.byteLength, 0);
  const out = new Uint8Array(total);
  let o = 0;
  for (const p of parts) {
    out.set(new Uint8Array(p), o);
    o += p.byteLength;
  }
  return out.buffer;
}

/** The ready encoder(s) of a checkpoint: one, or one per pose of `memberPoses` in order (file-and-principal). */
export function encodersFromCheckpoint(ckpt: Checkpoint): Encoders {
  const members = memberPoses(ckpt.manifest.config.pose).length;
  const per = ckpt.weights.length / members;
  const list = Array.from({ length: members }, (_, m) => {
    const enc = new Encoder(ckpt.manifest.config.encoder, createRng(0));
    setWeights(enc, ckpt.weights.slice(m * per, (m + 1) * per));
    return enc;
  });
  return members === 1 ? list[0] : list;
}

/** The ready encoder of a one-encoder checkpoint (a diagnostic's or a pre-trained start). */
export function encoderFromCheckpoint(ckpt: Checkpoint): Encoder {
  const e = encodersFromCheckpoint(ckpt);
  if (e instanceof Encoder) return e;
  disposeEncoders(e);
  throw new RangeError(
    `this model has ${e.length} encoders (pose ${ckpt.manifest.config.pose}); this use needs a one-encoder model`,
  );
}

/** Trainer options that continue the run a checkpoint was taken from (its weights, Adam's moments, its history). */
export function resumeOptions(ckpt: Checkpoint): Pick<TrainerOptions, 'initialWeights' | 'resume'> {
  return {
    initialWeights: ckpt.weights,
    resume: {
      step: ckpt.manifest.step,
      adam: ckpt.adam!,
      history: ckpt.manifest.history,
      checks: ckpt.manifest.checks,
    },
  };
}
