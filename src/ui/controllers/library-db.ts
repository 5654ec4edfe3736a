// Keeps the library, the current model and the embeddings in the parts database, which the database worker owns
// (PGlite with pgvector in IndexedDB), so a reload restores them and the page never waits on storage. Thumbnails,
// a cache that can always be drawn again, stay in a plain IndexedDB record.

import type { HashedPart, PartClouds, PartMesh, WorkbenchLibrary } from '../../core/db/workbench';
import type { LibraryPart } from '../../core/library';
import type { ImportFailure } from '../../core/mesh/import';
import type { CheckpointMessage, DbAnswers, DbReply, DbRequest, TableMessage } from '../../worker/protocol';
import { copyInSlices } from '../pace';

type Waiter = { resolve: (v: unknown) => void; reject: (e: Error) => void };

/** Distributes a request type over the union so `ask` can take one without its id. */
type WithoutId<T> = T extends unknown ? Omit<T, 'id'> : never;

class DatabaseClient {
  private worker: Worker | null = null;
  private nextId = 1;
  private readonly waiting = new Map<number, Waiter>();

  private get w(): Worker {
    if (!this.worker) {
      this.worker = new Worker(new URL('../../worker/db.worker.ts', import.meta.url), { type: 'module' });
      this.worker.onmessage = (e: MessageEvent<DbReply>) => {
        const waiter = this.waiting.get(e.data.id);
        if (!waiter) return;
        this.waiting.delete(e.data.id);
        if (e.data.ok) waiter.resolve(e.data.value);
        else waiter.reject(new Error(e.data.message));
      };
      this.worker.onerror = (e) => {
        for (const w of this.waiting.values()) w.reject(new Error(`the database worker failed: ${e.message}`));
        this.waiting.clear();
      };
    }
    return this.worker;
  }

  ask<R extends WithoutId<DbRequest>>(req: R, transfer: Transferable[] = []): Promise<DbAnswers[R['type']]> {
    const id = this.nextId++;
    return new Promise((resolve, reject) => {
      this.waiting.set(id, { resolve: resolve as (v: unknown) => void, reject });
      this.w.postMessage({ ...req, id }, transfer);
    });
  }
}

const db = new DatabaseClient();

/** The kept library, its parts without meshes or clouds, and each part's file-frame box ratio (in order). */
export type StoredLibrary = WorkbenchLibrary & { readonly boxRatios: readonly number[] };

/** Parts written per message: each is cloned on the page's thread, so a few at a time keep every task short. */
const PARTS_PER_WRITE = 10;
/**
 * Bytes of arrays per message at most (a part alone may exceed it): cloning ten KiCad parts with their meshes held
 * the page for 50–94 ms; Chromium's structured clone of typed arrays ran at a few hundred MB/s here.
 */
const BYTES_PER_WRITE = 4 * 2 ** 20;

/** The bytes of a part's arrays (what it holds on the page until it is written). */
export const partBytes = (p: LibraryPart): number =>
  p.points.byteLength + p.normals.byteLength + p.meshPositions.byteLength + p.meshIndices.byteLength;

/**
 * A part with copies of its arrays, to hand over (transfer) rather than clone: copying typed arrays is a memcpy,
 * while Chromium's structured clone of ten KiCad parts with their meshes held the page for 45–55 ms (990-part
 * library, CPU profile), and left as much garbage for the collector.
 */
export function withOwnArrays<P extends LibraryPart>(p: P): P {
  return {
    ...p,
    points: p.points.slice(),
    normals: p.normals.slice(),
    meshPositions: p.meshPositions.slice(),
    meshIndices: p.meshIndices.slice(),
  };
}

/** The buffers of a part's arrays (of a `withOwnArrays` copy), to transfer. */
export const partBuffers = (p: LibraryPart): ArrayBuffer[] =>
  [p.points, p.normals, p.meshPositions, p.meshIndices].map((a) => a.buffer as ArrayBuffer);

/** Parts the database already holds as they are (restored from it, or written by a save). */
const stored = new WeakSet<LibraryPart>();

/**
 * How often a long save also writes the library's list (the parts written so far, in order), so that a reload or a
 * closed tab keeps them: with the list written only at the end, a reload 20 s after reading 3,000 parts brought
 * back the library as it was before the import.
 */
export const LIST_EVERY_MS = 3000;

export interface SavedLibrary {
  readonly parts: readonly HashedPart[];
  readonly failures: readonly ImportFailure[];
  readonly source: 'demo' | 'user';
}

export interface SaveOptions {
  /**
   * The library is still growing (an import under way, its arrays filled as files are read): write what is there,
   * keep the list every `listEveryMs`, and leave the closing list to a later, final save.
   */
  readonly interim?: boolean;
  readonly listEveryMs?: number;
  /** Parts of this library written so far, after each write. */
  readonly onWritten?: (written: number, total: number) => void;
  /** The parts of each write, once it is done. */
  readonly onPartsWritten?: (parts: readonly LibraryPart[]) => void;
}

/** What the one writer works towards: the newest library handed to `saveLibrary`. */
let target: { lib: SavedLibrary; options: SaveOptions } | null = null;
let writing: Promise<void> | null = null;
let listedAt = -Infinity;

/**
 * Keeps the library: parts the database lacks, a few per message, then what the library now is (its parts in
 * order and the files that failed; anything else goes). One writer does it; a newer call hands it a newer library
 * (a save of the growing import, then of the finished one; or an emptied library), which it takes up between
 * writes, and the promise ends when the newest is kept. While parts are written, the list of those written so far
 * is kept every `listEveryMs`, so a reload finds them.
 */
export function saveLibrary(lib: SavedLibrary, options: SaveOptions = {}): Promise<void> {
  target = { lib, options };
  // The writer starts after `writing` is set and clears it itself as it ends, so no call falls between the two.
  writing ??= Promise.resolve().then(write);
  return writing;
}

/**
 * Writes the newest target until nothing newer is waiting. It clears `writing` in the same step as it ends (done
 * or failed), so a call after that starts a new writer rather than joining one that has stopped.
 */
async function write(): Promise<void> {
  const list = (lib: SavedLibrary, names: string[]) =>
    db.ask({ type: 'set-contents', names, failures: [...lib.failures], source: lib.source });
  try {
    let cursorOf: SavedLibrary | null = null;
    let cursor = 0; // the target's parts before it are written
    for (;;) {
      const { lib, options } = target!;
      const listEvery = options.listEveryMs ?? LIST_EVERY_MS;
      if (lib !== cursorOf) [cursorOf, cursor] = [lib, 0];
      const parts = lib.parts;
      while (cursor < parts.length && stored.has(parts[cursor])) cursor++;
      if (cursor < parts.length) {
        const batch = [parts[cursor]];
        let bytes = partBytes(parts[cursor]);
        for (let j = cursor + 1; j < parts.length && batch.length < PARTS_PER_WRITE; j++) {
          if (stored.has(parts[j])) continue;
          if (bytes + partBytes(parts[j]) > BYTES_PER_WRITE) break;
          bytes += partBytes(parts[j]);
          batch.push(parts[j]);
        }
        const copies = batch.map(withOwnArrays);
        await db.ask({ type: 'put-parts', parts: copies }, copies.flatMap(partBuffers));
        batch.forEach((p) => stored.add(p));
        options.onPartsWritten?.(batch);
        while (cursor < parts.length && stored.has(parts[cursor])) cursor++;
        options.onWritten?.(cursor, parts.length);
        const more = cursor < parts.length;
        if (more && target!.lib === lib && performance.now() - listedAt >= listEvery) {
          await list(
            lib,
            parts.filter((p) => stored.has(p)).map((p) => p.name),
          );
          listedAt = performance.now();
        }
        continue;
      }
      // All of this library is written.
      if (!options.interim || performance.now() - listedAt >= listEvery) {
        await list(
          lib,
          parts.map((p) => p.name),
        );
        listedAt = performance.now();
      }
      if (target!.lib === lib && target!.options === options) {
        target = null;
        writing = null;
        return;
      }
    }
  } catch (err) {
    writing = null;
    throw err;
  }
}

/** Parts read per message on restore: one message of 990 KiCad parts held the page for 0.5 s. */
const PARTS_PER_READ = 50;

/**
 * The kept library, or null (none kept, or the database cannot be read); `onProgress` as its parts arrive. The
 * parts come without their meshes and point clouds (`loadMeshes` and `loadClouds` fetch them when needed).
 */
export async function loadLibrary(onProgress?: (done: number, total: number) => void): Promise<StoredLibrary | null> {
  try {
    const outline = await db.ask({ type: 'load-library' });
    if (!outline) return null;
    const parts: LibraryPart[] = [];
    const boxRatios: number[] = [];
    for (let i = 0; i < outline.names.length; i += PARTS_PER_READ) {
      const names = outline.names.slice(i, i + PARTS_PER_READ);
      const batch = await db.ask({ type: 'load-parts', names, meshes: false, clouds: false });
      batch.parts.forEach((p) => stored.add(p));
      parts.push(...batch.parts);
      boxRatios.push(...batch.boxRatios);
      onProgress?.(parts.length, outline.names.length);
    }
    return { parts, boxRatios, failures: outline.failures, source: outline.source };
  } catch {
    return null;
  }
}

/** The point clouds of the named parts the database holds, in the order named. */
export const loadClouds = (names: readonly string[]): Promise<PartClouds[]> => db.ask({ type: 'load-clouds', names });

/** The meshes of the named parts the database holds, in the order named. */
export const loadMeshes = (names: readonly string[]): Promise<PartMesh[]> => db.ask({ type: 'load-meshes', names });

/** Millimetres per file unit by folder (files whose format has no units), as a person set them; {} when none. */
export const loadFolderUnits = (): Promise<Record<string, number>> => db.ask({ type: 'load-units' }).catch(() => ({}));

/** Keeps the folders' units with the library. */
export const saveFolderUnits = (units: Readonly<Record<string, number>>): Promise<null> =>
  db.ask({ type: 'put-units', units });

/** Makes a checkpoint the current model; resolves to its fingerprint. */
export const saveModel = (c: CheckpointMessage): Promise<string> =>
  db.ask({ type: 'put-model', checkpoint: { ...c, weightData: c.weightData.slice(0) } });

/** The current model and its fingerprint, or null. */
export const loadModel = (): Promise<{ checkpoint: CheckpointMessage; fingerprint: string } | null> =>
  db.ask({ type: 'load-model' });

/** Keeps a model's embeddings of the named parts; false when that model is no longer kept (stale). */
export const saveEmbeddings = async (key: string, names: readonly string[], vectors: Float32Array, dim: number) => {
  // A copy, made a slice at a time and handed over (without the hand-over, the message's clone was a second copy
  // on the page's thread, in one task).
  const copy = await copyInSlices(vectors);
  return db.ask({ type: 'put-embeddings', key, names, vectors: copy, dim }, [copy.buffer]);
};

/** A model's embeddings of the named parts, in that order, or null unless all are kept. */
export const loadEmbeddings = (key: string, names: readonly string[]) =>
  db.ask({ type: 'load-embeddings', key, names });

/** Keeps a model's neighbour table (ordering through the library); false when that model is no longer kept. */
export const saveOrdering = (key: string, table: TableMessage): Promise<boolean> => {
  const copy = {
    ...table,
    index: table.index.slice(),
    score: table.score.slice(),
    length: table.length.slice(),
    logSize: table.logSize.slice(),
  };
  return db.ask({ type: 'put-ordering', key, table: copy }, [
    copy.index.buffer,
    copy.score.buffer,
    copy.length.buffer,
    copy.logSize.buffer,
  ]);
};

/** A model's kept neighbour table, or null. */
export const loadOrdering = (key: string): Promise<TableMessage | null> =>
  db.ask({ type: 'load-ordering', key }).catch(() => null);

/** The whole database as one file, for a colleague. */
export const exportDatabase = (): Promise<Blob> => db.ask({ type: 'export' });

/** Replaces the database with one exported before (checked first: a file that does not open changes nothing). */
export const importDatabase = (dump: Blob): Promise<null> => db.ask({ type: 'import', dump });

// ---- thumbnails: a plain IndexedDB record ----

const THUMBS_DB = 'shapekin-workbench';
const THUMBS_STORE = 'library';

function openThumbs(): Promise<IDBDatabase> {
  return new Promise((resolve, reject) => {
    const req = indexedDB.open(THUMBS_DB, 1);
    req.onupgradeneeded = () => req.result.createObjectStore(THUMBS_STORE);
    req.onsuccess = () => resolve(req.result);
    req.onerror = () => reject(req.error);
  });
}

async function thumbsTx<T>(mode: IDBTransactionMode, fn: (s: IDBObjectStore) => IDBRequest<T>): Promise<T> {
  const idb = await openThumbs();
  return new Promise((resolve, reject) => {
    const t = idb.transaction(THUMBS_STORE, mode);
    const req = fn(t.objectStore(THUMBS_STORE));
    t.oncomplete = () => {
      idb.close();
      resolve(req.result);
    };
    t.onerror = () => {
      idb.close();
      reject(t.error);
    };
  });
}

/**
 * Thumbnails per record: IndexedDB clones a record on the page's thread; one of 990 thumbnails held the page for
 * 247 ms, one of 100 for 45–53 ms (336 generated parts, while the workers embedded).
 */
const THUMBS_PER_RECORD = 20;

/**
 * Thumbnails (PNGs by part name: Blobs, or data URLs kept by an earlier version), kept so a reload shows them
 * without drawing them again: records of THUMBS_PER_RECORD ('thumbnails:0', …), each written in its own
 * transaction, and their count under 'thumbnails'.
 */
export type KeptThumbnail = Blob | string;

export async function saveThumbnails(t: ReadonlyMap<string, KeptThumbnail>): Promise<void> {
  const entries = [...t];
  const records = Math.ceil(entries.length / THUMBS_PER_RECORD);
  await thumbsTx('readwrite', (s) => s.put(0, 'thumbnails')); // none readable while the records change
  for (let r = 0; r < records; r++) {
    const chunk = new Map(entries.slice(r * THUMBS_PER_RECORD, (r + 1) * THUMBS_PER_RECORD));
    await thumbsTx('readwrite', (s) => s.put(chunk, `thumbnails:${r}`));
  }
  await thumbsTx('readwrite', (s) => s.put(records, 'thumbnails'));
}

export async function loadThumbnails(): Promise<Map<string, KeptThumbnail> | null> {
  try {
    const head = (await thumbsTx('readonly', (s) => s.get('thumbnails'))) as
      Map<string, KeptThumbnail> | number | undefined;
    if (head === undefined) return null;
    if (head instanceof Map) return head; // kept by an earlier version as one record
    const all = new Map<string, KeptThumbnail>();
    for (let r = 0; r < head; r++) {
      const chunk = (await thumbsTx('readonly', (s) => s.get(`thumbnails:${r}`))) as
        Map<string, KeptThumbnail> | undefined;
      for (const [k, v] of chunk ?? []) all.set(k, v);
    }
    return all;
  } catch {
    return null;
  }
}
