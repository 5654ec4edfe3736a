// One embedding thread of the command line's pool: loads the model once (tfjs on wasm, one per thread) and
// embeds the chunks of parts it is sent, sending the vectors back moved, not copied.

import { parentPort } from 'node:worker_threads';
import { initBackend, type BackendName } from '../core/model/backend';
import { encodersFromCheckpoint, type Checkpoint } from '../core/model/checkpoint';
import { embedForRetrieval, type Encoders } from '../core/model/embed';
import type { ModelPart } from '../core/model/views';

export type EmbedThreadRequest =
  | { readonly kind: 'load'; readonly checkpoint: Checkpoint; readonly backend: BackendName }
  | { readonly kind: 'embed'; readonly id: number; readonly parts: readonly ModelPart[] };

let encoders: Encoders | null = null;
let checkpoint: Checkpoint | null = null;

parentPort!.on('message', async (req: EmbedThreadRequest) => {
  try {
    if (req.kind === 'load') {
      await initBackend({ prefer: req.backend });
      checkpoint = req.checkpoint;
      encoders = encodersFromCheckpoint(req.checkpoint);
      parentPort!.postMessage({ kind: 'loaded' });
      return;
    }
    const { config } = checkpoint!.manifest;
    const vectors = embedForRetrieval(encoders!, req.parts, config.points, config.pose);
    parentPort!.postMessage({ kind: 'embedded', id: req.id, vectors }, [vectors.buffer as ArrayBuffer]);
  } catch (err) {
    parentPort!.postMessage({ kind: 'error', id: 'id' in req ? req.id : -1, message: (err as Error).message });
  }
});
