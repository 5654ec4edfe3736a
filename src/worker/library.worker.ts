// Imports and samples files off the main thread, one reply per file; the client sends one file a request
// and ends this worker if a file outlasts its time limit.

import { failureOf, loadPart } from '../core/library';
import type { LibraryReply, LibraryRequest } from './protocol';
import { partTransfers } from './protocol';

const post = (msg: LibraryReply, transfer: ArrayBuffer[] = []): void => (self as unknown as Worker).postMessage(msg, transfer);

self.onmessage = (event: MessageEvent<LibraryRequest>) => {
  const req = event.data;
  if (req.type !== 'import') return;
  const t0 = performance.now();
  post({ type: 'reading', id: req.id });
  req.files.forEach((file) => {
    try {
      const part = loadPart(file.buffer, file.name, req.sampling, req.maxBytes);
      post({ type: 'part', id: req.id, part }, partTransfers(part));
    } catch (err) {
      post({ type: 'failed', id: req.id, failure: failureOf(file.name, err) });
    }
  });
  post({ type: 'done', id: req.id, ms: performance.now() - t0 });
};
