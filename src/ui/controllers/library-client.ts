// Talks to the library worker: sends files, hands back parts, failures and progress as they arrive.
// A newer import supersedes an older one: replies to a stale id are dropped.

import type { LibraryPart, SamplingSettings } from '../../core/library';
import type { ImportFailure } from '../../core/mesh/import';
import type { FileInput, LibraryReply } from '../../worker/protocol';

export interface ImportCallbacks {
  onPart(part: LibraryPart): void;
  onFailure(failure: ImportFailure): void;
  onProgress(done: number, total: number, file: string): void;
}

export class LibraryClient {
  private worker: Worker | null = null;
  private nextId = 1;
  private current = 0;

  private ensureWorker(): Worker {
    if (!this.worker) this.worker = new Worker(new URL('../../worker/library.worker.ts', import.meta.url), { type: 'module' });
    return this.worker;
  }

  importFiles(files: FileInput[], sampling: SamplingSettings, callbacks: ImportCallbacks): Promise<number> {
    const worker = this.ensureWorker();
    const id = this.nextId++;
    this.current = id;
    return new Promise((resolve, reject) => {
      const onMessage = (event: MessageEvent<LibraryReply>) => {
        const msg = event.data;
        if (msg.id !== id) return;
        if (this.current !== id) { worker.removeEventListener('message', onMessage); reject(new Error('superseded')); return; }
        if (msg.type === 'part') callbacks.onPart(msg.part);
        else if (msg.type === 'failed') callbacks.onFailure(msg.failure);
        else if (msg.type === 'progress') callbacks.onProgress(msg.done, msg.total, msg.file);
        else if (msg.type === 'done') { worker.removeEventListener('message', onMessage); resolve(msg.ms); }
      };
      worker.addEventListener('message', onMessage);
      worker.addEventListener('error', (e) => reject(new Error(`library worker: ${e.message}`)), { once: true });
      worker.postMessage({ type: 'import', id, files, sampling }, files.map((f) => f.buffer));
    });
  }

  dispose(): void {
    this.worker?.terminate();
    this.worker = null;
  }
}
