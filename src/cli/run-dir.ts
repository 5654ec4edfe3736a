// A run folder on disk holds a checkpoint in tfjs's model format — model.json (manifest and weights
// manifest) and weights.bin — through a file-system IOHandler (tfjs ships one only with tfjs-node).
// Writes go to temporary files renamed into place, so a crash never leaves half a model.

import { existsSync, mkdirSync, readFileSync, renameSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type * as tf from '@tensorflow/tfjs';
import { artifactsFromModelJson, fromArtifacts, toArtifacts, type Checkpoint } from '../core/model/checkpoint';
import {
  modelJsonFor,
  WEIGHTS_FILE,
  type ModelJson,
  type RunManifest,
  type WeightSpec,
} from '../core/model/model-json';
import { CliError } from './errors';

const MODEL = 'model.json';
const WEIGHTS = WEIGHTS_FILE;

/** tf.io.IOHandler over a folder: save() writes model.json + weights.bin atomically, load() reads them. */
export function fileSystemHandler(dir: string): Required<Pick<tf.io.IOHandler, 'save' | 'load'>> {
  return {
    async save(art: tf.io.ModelArtifacts): Promise<tf.io.SaveResult> {
      mkdirSync(dir, { recursive: true });
      const manifest = (art.modelTopology as unknown as { shapekin: RunManifest }).shapekin;
      const adamStep = Number((art.userDefinedMetadata as { adamStep?: number } | undefined)?.adamStep ?? 0);
      const json = modelJsonFor(
        manifest,
        (art.weightSpecs ?? []) as WeightSpec[],
        art.weightData as ArrayBuffer,
        adamStep,
      );
      const tmpW = join(dir, `.${WEIGHTS}.tmp`),
        tmpM = join(dir, `.${MODEL}.tmp`);
      writeFileSync(tmpW, new Uint8Array(art.weightData as ArrayBuffer));
      writeFileSync(tmpM, JSON.stringify(json));
      renameSync(tmpW, join(dir, WEIGHTS));
      renameSync(tmpM, join(dir, MODEL));
      return {
        modelArtifactsInfo: {
          dateSaved: new Date(),
          modelTopologyType: 'JSON',
          weightDataBytes: (art.weightData as ArrayBuffer).byteLength,
        },
      };
    },
    async load(): Promise<tf.io.ModelArtifacts> {
      const modelPath = join(dir, MODEL);
      if (!existsSync(modelPath))
        throw new CliError(`no model in ${dir} (expected ${MODEL} and ${WEIGHTS}; train one with "shapekin train")`);
      let json: ModelJson;
      try {
        json = JSON.parse(readFileSync(modelPath, 'utf8'));
      } catch (err) {
        throw new CliError(`${modelPath}: not valid JSON (${(err as Error).message})`);
      }
      const buffers = (json.weightsManifest ?? []).flatMap((g) =>
        g.paths.map((p) => {
          const path = join(dir, p);
          if (!existsSync(path)) throw new CliError(`${modelPath} names ${p}, which is missing`);
          const b = readFileSync(path);
          return b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength) as ArrayBuffer;
        }),
      );
      return artifactsFromModelJson(json, buffers);
    },
  };
}

export async function saveRun(dir: string, ckpt: Checkpoint): Promise<void> {
  await fileSystemHandler(dir).save(toArtifacts(ckpt));
}

export async function loadRun(dir: string): Promise<Checkpoint> {
  const art = await fileSystemHandler(dir).load();
  try {
    return fromArtifacts(art, join(dir, MODEL));
  } catch (err) {
    throw new CliError((err as Error).message);
  }
}
