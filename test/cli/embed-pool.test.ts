// The command line's embedding threads give the bytes one thread gives (in part order, whatever thread took which
// chunk), for one encoder and for the two-encoder pose.

import { beforeAll, describe, expect, it } from 'vitest';
import { embedInThreads, EMBED_CHUNK } from '../../src/cli/embed-pool';
import type { Checkpoint } from '../../src/core/model/checkpoint';
import { DEFAULT_TRAIN } from '../../src/core/model/defaults';
import { disposeEncoders, embedForRetrieval } from '../../src/core/model/embed';
import { encodersFromCheckpoint } from '../../src/core/model/checkpoint';
import { Encoder } from '../../src/core/model/encoder';
import { CHECKPOINT_FORMAT, CHECKPOINT_VERSION } from '../../src/core/model/model-json';
import type { Pose } from '../../src/core/model/train-config';
import type { ModelPart } from '../../src/core/model/views';
import { createRng } from '../../src/core/rng';
import { useBackend } from '../tf-helpers';
import { demoModelParts } from '../meshes';

let demo: ModelPart[] = [];
beforeAll(async () => {
  await useBackend('wasm');
  demo = demoModelParts(256);
});

/** A checkpoint of freshly initialised encoders (one per member pose) with the default settings. */
function checkpointFor(pose: Pose): Checkpoint {
  const config = { ...DEFAULT_TRAIN, pose, points: 64 };
  const members = pose === 'file-and-principal' ? 2 : 1;
  const weights: Float32Array[] = [];
  for (let m = 0; m < members; m++) {
    const enc = new Encoder(config.encoder, createRng(10 + m));
    weights.push(...enc.variables.map((v) => v.dataSync() as Float32Array));
    enc.dispose();
  }
  return {
    manifest: {
      format: CHECKPOINT_FORMAT,
      version: CHECKPOINT_VERSION,
      config,
      sampling: { points: 256, seed: 0 },
      step: 0,
      totalSteps: 0,
      status: 'done',
      backend: 'wasm',
      history: [],
      checks: [],
    },
    weights,
    adam: null,
  };
}

describe('embedding threads', () => {
  for (const pose of ['principal-axes', 'file-and-principal'] as const)
    it(`two threads give one thread's bytes (${pose}, ${EMBED_CHUNK} parts a request, a short last chunk)`, async () => {
      const parts = demo.slice(0, 2 * EMBED_CHUNK + 5);
      const ckpt = checkpointFor(pose);
      const enc = encodersFromCheckpoint(ckpt);
      const here = embedForRetrieval(enc, parts, 64, pose);
      disposeEncoders(enc);
      const seen: number[] = [];
      const pooled = await embedInThreads(ckpt, parts, 2, (p) => seen.push(p.done));
      expect(pooled).toEqual(here);
      expect(seen.at(-1)).toBe(parts.length);
      expect(parts[0].points.length).toBe(256 * 3); // the caller's parts are kept (copies went to the threads)
    }, 120_000);
});
