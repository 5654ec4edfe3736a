// The command line's import pool: worker threads (one per core by default) read, import and sample files;
// results come back in file order, so a library loads the same with one thread or many. A file that outlasts
// its time limit ends its thread and is reported; the slot goes on with a fresh thread.

import { availableParallelism } from 'node:os';
import { Worker } from 'node:worker_threads';
import type { LibraryPart, SamplingSettings } from '../core/library';
import type { ImportFailure } from '../core/mesh/import';
import type { ThreadRequest } from './import-thread';

export type ThreadResult = { kind: 'part'; part: LibraryPart } | { kind: 'failed'; failure: ImportFailure };

export interface PoolOptions {
  readonly threads?: number;
  readonly sampling: SamplingSettings;
  readonly maxBytes: number;
  /** A file's time limit from when its thread starts reading it: base + per MiB (as the workbench's). */
  readonly limitMs?: (bytes: number) => number;
}

const THREAD_URL = new URL('./import-thread.ts', import.meta.url).href;

/** A thread that runs the TypeScript import thread through tsx (the command line's own runner). */
function spawn(): Worker {
  return new Worker(
    `import('tsx/esm/api').then((m) => { m.register(); return import(${JSON.stringify(THREAD_URL)}); })`,
    { eval: true },
  );
}

/**
 * Import threads kept across calls of `run` (a thread's start-up, loading the readers, is paid once), each
 * file's result delivered in file order.
 */
export class ImportPool {
  private readonly workers: (Worker | undefined)[] = [];
  private id = 0;
  constructor(private readonly options: PoolOptions) {}

  async run(
    files: readonly { path: string; name: string; bytes: number }[],
    onResult: (index: number, result: ThreadResult) => void,
  ): Promise<void> {
    const options = this.options;
    const count = Math.max(1, Math.min(options.threads ?? availableParallelism(), files.length));
    const limit = options.limitMs ?? ((bytes: number) => 30_000 + (2_000 * bytes) / 2 ** 20);
    const results = new Array<ThreadResult | undefined>(files.length);
    let next = 0,
      delivered = 0;
    const deliver = () => {
      while (delivered < files.length && results[delivered]) {
        onResult(delivered, results[delivered]!);
        results[delivered] = undefined;
        delivered++;
      }
    };
    const runSlot = async (slot: number) => {
      while (next < files.length) {
        const worker = (this.workers[slot] ??= spawn());
        const i = next++;
        const req: ThreadRequest = {
          id: ++this.id,
          path: files[i].path,
          name: files[i].name,
          sampling: options.sampling,
          maxBytes: options.maxBytes,
        };
        const outcome = await new Promise<ThreadResult | 'timed-out'>((resolve, reject) => {
          let timer: NodeJS.Timeout | undefined;
          const onMessage = (m: { id: number; kind: string; part?: LibraryPart; failure?: ImportFailure }) => {
            if (m.id !== req.id) return;
            if (m.kind === 'reading') {
              timer = setTimeout(() => {
                done();
                resolve('timed-out');
              }, limit(files[i].bytes));
              return;
            }
            done();
            resolve(m.kind === 'part' ? { kind: 'part', part: m.part! } : { kind: 'failed', failure: m.failure! });
          };
          const onError = (e: Error) => {
            done();
            reject(e);
          };
          const done = () => {
            clearTimeout(timer);
            worker.off('message', onMessage);
            worker.off('error', onError);
          };
          worker.on('message', onMessage);
          worker.on('error', onError);
          worker.postMessage(req);
        });
        if (outcome === 'timed-out') {
          this.workers[slot] = undefined;
          await worker.terminate();
          const s = limit(files[i].bytes) / 1000;
          results[i] = {
            kind: 'failed',
            failure: {
              file: files[i].name,
              code: 'timed-out',
              reason: `reading took longer than ${s < 10 ? s.toFixed(1) : Math.round(s)} s and was stopped`,
            },
          };
        } else {
          results[i] = outcome;
        }
        deliver();
      }
    };
    await Promise.all(Array.from({ length: count }, (_, slot) => runSlot(slot)));
  }

  async close(): Promise<void> {
    const all = this.workers.splice(0).filter((w): w is Worker => w !== undefined);
    await Promise.all(all.map((w) => w.terminate()));
  }
}

export async function importInThreads(
  files: readonly { path: string; name: string; bytes: number }[],
  options: PoolOptions,
  onResult: (index: number, result: ThreadResult) => void,
): Promise<void> {
  const pool = new ImportPool(options);
  try {
    await pool.run(files, onResult);
  } finally {
    await pool.close();
  }
}
