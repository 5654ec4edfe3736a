// A saved model's description in tfjs's model format (model.json), without tfjs: our run manifest in
// modelTopology, the weights manifest, and the metadata (Adam's step, the weights file's CRC-32). The command
// line's run folders, the workbench's model export and its model import all write and read this one shape.

import { crc32 } from '../checksum';
import type { SamplingSettings } from '../library';
import type { HeldOutCheck, TrainConfig, TrainStatus } from './train-config';
import { checkWeightData } from './weights-check';

export const CHECKPOINT_FORMAT = 'shapekin-encoder';
export const CHECKPOINT_VERSION = 1;
export const WEIGHTS_FILE = 'weights.bin';

export interface RunManifest {
  readonly format: typeof CHECKPOINT_FORMAT;
  readonly version: typeof CHECKPOINT_VERSION;
  readonly config: TrainConfig;
  /** How library parts were sampled into clouds, so embeddings can be reproduced. */
  readonly sampling: SamplingSettings;
  readonly step: number;
  readonly totalSteps: number;
  readonly status: TrainStatus;
  readonly backend: string;
  readonly history: readonly { step: number; loss: number; lr: number }[];
  readonly checks: readonly HeldOutCheck[];
  readonly labelNames?: readonly string[];
}

export interface WeightSpec {
  readonly name: string;
  readonly shape: number[];
  readonly dtype: 'float32';
}

/** The JSON of a run folder's model.json (tfjs's model format). */
export interface ModelJson {
  readonly format?: string;
  readonly generatedBy?: string;
  readonly convertedBy?: string | null;
  readonly modelTopology?: unknown;
  readonly userDefinedMetadata?: unknown;
  readonly weightsManifest?: readonly { readonly paths: readonly string[]; readonly weights: readonly WeightSpec[] }[];
}

/** model.json for a manifest and its weights (one file, WEIGHTS_FILE), with the weights' CRC-32. */
export function modelJsonFor(
  manifest: RunManifest,
  weightSpecs: readonly WeightSpec[],
  weightData: ArrayBuffer,
  adamStep: number,
): ModelJson {
  return {
    format: CHECKPOINT_FORMAT,
    generatedBy: 'Shapekin',
    convertedBy: null,
    modelTopology: { shapekin: manifest },
    userDefinedMetadata: { adamStep, weightsCrc32: crc32(new Uint8Array(weightData)) },
    weightsManifest: [{ paths: [WEIGHTS_FILE], weights: [...weightSpecs] }],
  };
}

/** A model the user hands over (model.json parsed, weights file read): its parts, checked; throws naming `where`. */
export function readModelJson(
  json: ModelJson,
  weightData: ArrayBuffer,
  where: string,
): { manifest: RunManifest; weightSpecs: WeightSpec[]; adamStep: number } {
  const manifest = (json?.modelTopology as { shapekin?: RunManifest } | undefined)?.shapekin;
  if (json?.format !== CHECKPOINT_FORMAT || !manifest) throw new RangeError(`${where} is not a Shapekin model`);
  if (manifest.version !== CHECKPOINT_VERSION)
    throw new RangeError(`${where}: unsupported Shapekin model version ${manifest.version}`);
  checkWeightData(weightData, json.userDefinedMetadata, where);
  const weightSpecs = (json.weightsManifest ?? []).flatMap((g) => g.weights);
  return {
    manifest,
    weightSpecs,
    adamStep: Number((json.userDefinedMetadata as { adamStep?: number } | undefined)?.adamStep ?? 0),
  };
}
