// One import thread of the command line's pool: reads a file from disk, imports and samples it, and sends the
// part back (its arrays moved, not copied), or the reason it could not be read.

import { readFileSync, statSync } from 'node:fs';
import { parentPort } from 'node:worker_threads';
import { failureOf, loadPart, partTransfers, type SamplingSettings } from '../core/library';
import { needsCadReader } from '../core/mesh/import';
import { loadCadReader } from '../core/mesh/occt';
import { MeshImportError } from '../core/mesh/types';

export interface ThreadRequest { readonly id: number; readonly path: string; readonly name: string; readonly sampling: SamplingSettings; readonly maxBytes: number }

parentPort!.on('message', async (req: ThreadRequest) => {
  try {
    // The size cap is checked before the file is read, so a huge file costs no memory.
    const size = statSync(req.path).size;
    if (size > req.maxBytes) throw new MeshImportError(req.name, 'too-large', `the file is ${size} bytes, over the ${req.maxBytes}-byte limit (raise it with --max-file-mb)`);
    if (needsCadReader(req.name)) await loadCadReader(); // loaded once; again only after it trapped
    parentPort!.postMessage({ id: req.id, kind: 'reading' });
    const bytes = readFileSync(req.path);
    const part = loadPart(bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer, req.name, req.sampling, req.maxBytes);
    parentPort!.postMessage({ id: req.id, kind: 'part', part }, partTransfers(part));
  } catch (err) {
    parentPort!.postMessage({ id: req.id, kind: 'failed', failure: failureOf(req.name, err) });
  }
});
