// Talks to the library workers: a small pool (one per core, up to four) takes the files one at a time; parts,
// failures and progress come back in file order whichever worker finished first, so a library reads the same
// on any machine. A file whose reading outlasts its time limit (a parser stuck on a pathological file) is ended
// by terminating its worker; the file is reported and that slot goes on with a fresh worker. A newer import
// supersedes an older one: its replies are dropped.

import type { LibraryPart, SamplingSettings } from '../../core/library';
import type { ImportFailure } from '../../core/mesh/import';
import { inputBytes, type FileInput, type LibraryReply } from '../../worker/protocol';

export interface ImportCallbacks {
  onPart(part: LibraryPart): void;
  onFailure(failure: ImportFailure): void;
  onProgress(done: number, total: number, file: string): void;
  /** Awaited before each file is started: the caller holds reading back while it catches up (e.g. with writing). */
  ready?(): Promise<void>;
}

export interface TimeLimits {
  readonly baseMs: number;
  readonly perMiBMs: number;
}

/** About 25× the time the readers take here on large files (12 MB/s measured in Chromium for OBJ), plus a
 * base for OpenCascade's slowest STEP files (common practice: generous, so only a reader that never finishes
 * is stopped). */
export const DEFAULT_TIME_LIMITS: TimeLimits = { baseMs: 30_000, perMiBMs: 2_000 };

/** How long one file may take to read and sample, from the moment its worker starts on it. */
export function fileTimeLimitMs(bytes: number, limits: TimeLimits = DEFAULT_TIME_LIMITS): number {
  return limits.baseMs + (limits.perMiBMs * bytes) / 2 ** 20;
}

type Outcome =
  | { kind: 'finished'; part: LibraryPart | null; failure: ImportFailure | null }
  | { kind: 'timed-out'; limitMs: number }
  | { kind: 'superseded' };

const MAX_WORKERS = 4;

export class LibraryClient {
  private workers: (Worker | null)[];
  private nextId = 1;
  private current = 0;
  /** Ends each file read in flight as superseded (used by cancel). */
  private readonly inFlight = new Set<() => void>();
  /** Each file's time limit (a test sets it low). */
  timeLimits: TimeLimits = DEFAULT_TIME_LIMITS;

  constructor(workers = Math.max(1, Math.min(MAX_WORKERS, globalThis.navigator?.hardwareConcurrency ?? 1))) {
    this.workers = new Array<Worker | null>(workers).fill(null);
  }

  get poolSize(): number {
    return this.workers.length;
  }

  private worker(slot: number): Worker {
    return (this.workers[slot] ??= new Worker(new URL('../../worker/library.worker.ts', import.meta.url), {
      type: 'module',
    }));
  }

  private endWorker(slot: number): void {
    this.workers[slot]?.terminate();
    this.workers[slot] = null;
  }

  async importFiles(files: FileInput[], sampling: SamplingSettings, callbacks: ImportCallbacks): Promise<number> {
    const batch = this.nextId++;
    this.current = batch;
    const t0 = performance.now();
    const outcomes = new Array<Outcome | undefined>(files.length);
    let next = 0,
      delivered = 0;
    // Hand results on in file order as soon as the ones before them are in.
    const deliver = () => {
      while (delivered < files.length && outcomes[delivered] && this.current === batch) {
        const o = outcomes[delivered]!;
        const file = files[delivered];
        if (o.kind === 'finished') {
          if (o.part) callbacks.onPart(o.part);
          if (o.failure) callbacks.onFailure(o.failure);
        } else if (o.kind === 'timed-out') {
          const s = o.limitMs < 10_000 ? (o.limitMs / 1000).toFixed(1) : String(Math.round(o.limitMs / 1000));
          callbacks.onFailure({
            file: file.name,
            code: 'timed-out',
            reason: `reading took longer than ${s} s and was stopped; the rest of the library carries on`,
          });
        }
        delivered++;
        callbacks.onProgress(delivered, files.length, file.name);
      }
    };
    const run = async (slot: number) => {
      while (next < files.length && this.current === batch) {
        if (callbacks.ready) await callbacks.ready();
        if (next >= files.length || this.current !== batch) break;
        const i = next++;
        const limitMs = fileTimeLimitMs(inputBytes(files[i]), this.timeLimits);
        outcomes[i] = await this.importOne(slot, files[i], sampling, limitMs, batch);
        deliver();
      }
    };
    await Promise.all(
      this.workers.slice(0, Math.max(1, Math.min(this.workers.length, files.length))).map((_, slot) => run(slot)),
    );
    if (this.current !== batch) throw new Error('superseded');
    return performance.now() - t0;
  }

  private importOne(
    slot: number,
    file: FileInput,
    sampling: SamplingSettings,
    limitMs: number,
    batch: number,
  ): Promise<Outcome> {
    const worker = this.worker(slot);
    const id = this.nextId++;
    return new Promise((resolve, reject) => {
      let timer: ReturnType<typeof setTimeout> | undefined;
      let part: LibraryPart | null = null,
        failure: ImportFailure | null = null;
      const finish = (outcome: Outcome) => {
        this.inFlight.delete(abandon);
        clearTimeout(timer);
        worker.removeEventListener('message', onMessage);
        worker.removeEventListener('error', onError);
        resolve(outcome);
      };
      const onMessage = (event: MessageEvent<LibraryReply>) => {
        const msg = event.data;
        if (msg.id !== id) return;
        if (this.current !== batch) {
          finish({ kind: 'superseded' });
          return;
        }
        if (msg.type === 'reading') {
          timer = setTimeout(() => {
            // The worker is busy inside a parser and cannot be interrupted: end it; the slot gets a new one.
            this.endWorker(slot);
            finish({ kind: 'timed-out', limitMs });
          }, limitMs);
        } else if (msg.type === 'part') part = msg.part;
        else if (msg.type === 'failed') failure = msg.failure;
        else if (msg.type === 'done') finish({ kind: 'finished', part, failure });
      };
      const onError = (e: ErrorEvent) => {
        clearTimeout(timer);
        this.endWorker(slot);
        reject(new Error(`library worker: ${e.message}`));
      };
      const abandon = () => finish({ kind: 'superseded' });
      this.inFlight.add(abandon);
      worker.addEventListener('message', onMessage);
      worker.addEventListener('error', onError);
      // A picked file goes as its Blob (the worker reads it); bytes already read are handed over.
      worker.postMessage(
        { type: 'import', id, files: [file], sampling },
        file.bytes instanceof Blob ? [] : [file.bytes],
      );
    });
  }

  /**
   * Stops the import under way: files being read are abandoned (their workers ended), none is started after, and
   * `importFiles` rejects with "superseded". What was delivered before stays delivered.
   */
  cancel(): void {
    this.current = this.nextId++;
    for (let slot = 0; slot < this.workers.length; slot++) this.endWorker(slot);
    for (const abandon of [...this.inFlight]) abandon();
  }

  dispose(): void {
    this.cancel();
  }
}
