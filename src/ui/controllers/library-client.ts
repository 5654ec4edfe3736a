// Talks to the library worker: sends files one at a time, hands back parts, failures and progress as they
// arrive. A file whose reading outlasts its time limit (a parser stuck on a pathological file) is ended by
// terminating the worker; the file is reported and the rest go on in a fresh worker. A newer import
// supersedes an older one: replies to a stale id are dropped.

import type { LibraryPart, SamplingSettings } from '../../core/library';
import type { ImportFailure } from '../../core/mesh/import';
import type { FileInput, LibraryReply } from '../../worker/protocol';

export interface ImportCallbacks {
  onPart(part: LibraryPart): void;
  onFailure(failure: ImportFailure): void;
  onProgress(done: number, total: number, file: string): void;
}

/** How long one file may take to read and sample: a base plus a share per MiB (common practice: generous,
 * so that only a reader that does not finish is stopped). */
export function fileTimeLimitMs(bytes: number, limits: TimeLimits = DEFAULT_TIME_LIMITS): number {
  return limits.baseMs + (limits.perMiBMs * bytes) / 2 ** 20;
}

export interface TimeLimits {
  readonly baseMs: number;
  readonly perMiBMs: number;
}

/** About 25× the time the readers take here on large files (12 MB/s measured in Chromium for OBJ). */
export const DEFAULT_TIME_LIMITS: TimeLimits = { baseMs: 30_000, perMiBMs: 2_000 };

type Outcome = { kind: 'finished' } | { kind: 'timed-out' } | { kind: 'superseded' };

export class LibraryClient {
  private worker: Worker | null = null;
  private nextId = 1;
  private current = 0;
  /** Each file's time limit (a test sets it low). */
  timeLimits: TimeLimits = DEFAULT_TIME_LIMITS;

  private ensureWorker(): Worker {
    if (!this.worker) this.worker = new Worker(new URL('../../worker/library.worker.ts', import.meta.url), { type: 'module' });
    return this.worker;
  }

  async importFiles(files: FileInput[], sampling: SamplingSettings, callbacks: ImportCallbacks): Promise<number> {
    const batch = this.nextId++;
    this.current = batch;
    const t0 = performance.now();
    for (let i = 0; i < files.length; i++) {
      const file = files[i];
      const limitMs = fileTimeLimitMs(file.buffer.byteLength, this.timeLimits);
      const outcome = await this.importOne(file, sampling, limitMs, batch, callbacks);
      if (outcome.kind === 'superseded') throw new Error('superseded');
      if (outcome.kind === 'timed-out') {
        callbacks.onFailure({ file: file.name, code: 'timed-out', reason: `reading took longer than ${limitMs < 10_000 ? (limitMs / 1000).toFixed(1) : Math.round(limitMs / 1000)} s and was stopped; the rest of the library carries on` });
      }
      callbacks.onProgress(i + 1, files.length, file.name);
    }
    return performance.now() - t0;
  }

  private importOne(file: FileInput, sampling: SamplingSettings, limitMs: number, batch: number, callbacks: ImportCallbacks): Promise<Outcome> {
    const worker = this.ensureWorker();
    const id = this.nextId++;
    return new Promise((resolve, reject) => {
      const finish = (outcome: Outcome) => {
        clearTimeout(timer);
        worker.removeEventListener('message', onMessage);
        worker.removeEventListener('error', onError);
        resolve(outcome);
      };
      let timer: ReturnType<typeof setTimeout> | undefined;
      const onMessage = (event: MessageEvent<LibraryReply>) => {
        const msg = event.data;
        if (msg.id !== id) return;
        if (this.current !== batch) { finish({ kind: 'superseded' }); return; }
        if (msg.type === 'reading') {
          timer = setTimeout(() => {
            // The worker is busy inside a parser and cannot be interrupted: end it; the next file gets a new one.
            this.dispose();
            finish({ kind: 'timed-out' });
          }, limitMs);
        } else if (msg.type === 'part') callbacks.onPart(msg.part);
        else if (msg.type === 'failed') callbacks.onFailure(msg.failure);
        else if (msg.type === 'done') finish({ kind: 'finished' });
      };
      const onError = (e: ErrorEvent) => {
        clearTimeout(timer);
        this.dispose();
        reject(new Error(`library worker: ${e.message}`));
      };
      worker.addEventListener('message', onMessage);
      worker.addEventListener('error', onError);
      worker.postMessage({ type: 'import', id, files: [file], sampling }, [file.buffer]);
    });
  }

  dispose(): void {
    this.worker?.terminate();
    this.worker = null;
  }
}
