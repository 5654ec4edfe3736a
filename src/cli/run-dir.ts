// A run folder on disk holds a checkpoint in tfjs's model format: model.json (manifest, weights manifest)
// and weights.bin. Writes go to temporary files renamed into place, so a crash never leaves half a model.

import { existsSync, mkdirSync, readFileSync, renameSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type * as tf from '@tensorflow/tfjs';
import { fromArtifacts, toArtifacts, type Checkpoint } from '../core/model/checkpoint';
import { CliError } from './errors';

const MODEL = 'model.json';
const WEIGHTS = 'weights.bin';

export function saveRun(dir: string, ckpt: Checkpoint): void {
  mkdirSync(dir, { recursive: true });
  const art = toArtifacts(ckpt);
  const json = {
    format: art.format,
    generatedBy: art.generatedBy,
    convertedBy: art.convertedBy,
    modelTopology: art.modelTopology,
    userDefinedMetadata: art.userDefinedMetadata,
    weightsManifest: [{ paths: [WEIGHTS], weights: art.weightSpecs }],
  };
  const tmpW = join(dir, `.${WEIGHTS}.tmp`), tmpM = join(dir, `.${MODEL}.tmp`);
  writeFileSync(tmpW, new Uint8Array(art.weightData as ArrayBuffer));
  writeFileSync(tmpM, JSON.stringify(json));
  renameSync(tmpW, join(dir, WEIGHTS));
  renameSync(tmpM, join(dir, MODEL));
}

export function loadRun(dir: string): Checkpoint {
  const modelPath = join(dir, MODEL);
  if (!existsSync(modelPath)) throw new CliError(`no model in ${dir} (expected ${MODEL} and ${WEIGHTS}; train one with "shapekin train")`);
  let json: { format?: string; modelTopology?: unknown; userDefinedMetadata?: unknown; weightsManifest?: { paths: string[]; weights: tf.io.WeightsManifestEntry[] }[] };
  try {
    json = JSON.parse(readFileSync(modelPath, 'utf8'));
  } catch (err) {
    throw new CliError(`${modelPath}: not valid JSON (${(err as Error).message})`);
  }
  const groups = json.weightsManifest ?? [];
  const buffers = groups.flatMap((g) => g.paths.map((p) => {
    const path = join(dir, p);
    if (!existsSync(path)) throw new CliError(`${modelPath} names ${p}, which is missing`);
    const b = readFileSync(path);
    return b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength) as ArrayBuffer;
  }));
  const total = buffers.reduce((s, b) => s + b.byteLength, 0);
  const data = new Uint8Array(total);
  let o = 0;
  for (const b of buffers) { data.set(new Uint8Array(b), o); o += b.byteLength; }
  const art: tf.io.ModelArtifacts = {
    format: json.format,
    modelTopology: json.modelTopology as tf.io.ModelArtifacts['modelTopology'],
    userDefinedMetadata: json.userDefinedMetadata as tf.io.ModelArtifacts["userDefinedMetadata"],
    weightSpecs: groups.flatMap((g) => g.weights),
    weightData: data.buffer,
  };
  try {
    return fromArtifacts(art, modelPath);
  } catch (err) {
    throw new CliError((err as Error).message);
  }
}
