// Imports and samples files off the main thread, one reply per file; the client sends one file a request
// and ends this worker if a file outlasts its time limit. OpenCascade (for STEP and IGES) is loaded here on
// the first CAD file, before that file's time limit starts.

import occtWasm from 'occt-import-js/dist/occt-import-js.wasm?url';
import { sha256Hex } from '../core/checksum';
import { failureOf, loadPart } from '../core/library';
import { needsCadReader } from '../core/mesh/import';
import { loadCadReader } from '../core/mesh/occt';
import type { LibraryReply, LibraryRequest } from './protocol';
import { partTransfers } from './protocol';

const post = (msg: LibraryReply, transfer: ArrayBuffer[] = []): void =>
  (self as unknown as Worker).postMessage(msg, transfer);

self.onmessage = async (event: MessageEvent<LibraryRequest>) => {
  const req = event.data;
  if (req.type !== 'import') return;
  if (req.files.some((f) => needsCadReader(f.name))) {
    try {
      await loadCadReader(occtWasm);
    } catch {
      // Reported per file below: importMesh says the reader is not loaded.
    }
  }
  const t0 = performance.now();
  post({ type: 'reading', id: req.id });
  for (const file of req.files) {
    try {
      const buffer = file.bytes instanceof Blob ? await file.bytes.arrayBuffer() : file.bytes;
      // The file's SHA-256, so the parts database can tell a changed file from an unchanged one.
      const contentHash = await sha256Hex(buffer);
      const part = { ...loadPart(buffer, file.name, req.sampling, req.maxBytes), contentHash };
      post({ type: 'part', id: req.id, part }, partTransfers(part));
    } catch (err) {
      post({ type: 'failed', id: req.id, failure: failureOf(file.name, err) });
    }
  }
  post({ type: 'done', id: req.id, ms: performance.now() - t0 });
};
