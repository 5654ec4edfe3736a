// One import thread of the command line's pool: reads a file from disk, imports and samples it, and sends the
// part back (its arrays moved, not copied), or the reason it could not be read.

import { parentPort } from 'node:worker_threads';
import { failureOf, loadPart, partTransfers, type SamplingSettings } from '../core/library';
import { prepareToRead, readBytes } from './read-file';

export interface ThreadRequest {
  readonly id: number;
  readonly path: string;
  readonly name: string;
  readonly sampling: SamplingSettings;
  readonly maxBytes: number;
}

parentPort!.on('message', async (req: ThreadRequest) => {
  try {
    await prepareToRead(req.path, req.name, req.maxBytes);
    parentPort!.postMessage({ id: req.id, kind: 'reading' });
    const part = loadPart(readBytes(req.path), req.name, req.sampling, req.maxBytes);
    parentPort!.postMessage({ id: req.id, kind: 'part', part }, partTransfers(part));
  } catch (err) {
    parentPort!.postMessage({ id: req.id, kind: 'failed', failure: failureOf(req.name, err) });
  }
});
