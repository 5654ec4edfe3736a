// Keeps the library (parts with their clouds and meshes, and the failures) in IndexedDB, so a reload
// restores it. The model is kept by the training worker through tfjs's own IndexedDB handler.

import type { LibraryPart } from '../../core/library';
import type { ImportFailure } from '../../core/mesh/import';

const DB = 'shapekin-workbench';
const STORE = 'library';

function open(): Promise<IDBDatabase> {
  return new Promise((resolve, reject) => {
    const req = indexedDB.open(DB, 1);
    req.onupgradeneeded = () => req.result.createObjectStore(STORE);
    req.onsuccess = () => resolve(req.result);
    req.onerror = () => reject(req.error);
  });
}

async function tx<T>(mode: IDBTransactionMode, fn: (s: IDBObjectStore) => IDBRequest<T>): Promise<T> {
  const db = await open();
  return new Promise((resolve, reject) => {
    const t = db.transaction(STORE, mode);
    const req = fn(t.objectStore(STORE));
    t.oncomplete = () => {
      db.close();
      resolve(req.result);
    };
    t.onerror = () => {
      db.close();
      reject(t.error);
    };
  });
}

/** Several requests in one transaction; resolves when it commits. */
async function many(mode: IDBTransactionMode, fn: (s: IDBObjectStore) => void): Promise<void> {
  const db = await open();
  return new Promise((resolve, reject) => {
    const t = db.transaction(STORE, mode);
    fn(t.objectStore(STORE));
    t.oncomplete = () => {
      db.close();
      resolve();
    };
    t.onerror = () => {
      db.close();
      reject(t.error);
    };
  });
}

export interface StoredLibrary {
  readonly parts: LibraryPart[];
  readonly failures: ImportFailure[];
  readonly source: 'demo' | 'user';
}

async function put(key: string, value: unknown): Promise<void> {
  await tx('readwrite', (s) => s.put(value, key));
}

/** The stored value, or null when absent or when IndexedDB cannot be read. */
async function get<T>(key: string): Promise<T | null> {
  try {
    return ((await tx('readonly', (s) => s.get(key))) as T | undefined) ?? null;
  } catch {
    return null;
  }
}

/** Parts written per transaction: each write clones its parts on the page's thread, so a few at a time keep every
 * task short (one write of 990 KiCad parts with their meshes held the page for 2.3 s). */
const PARTS_PER_WRITE = 10;

/** What the 'current' record holds since parts are kept one record each ('part:' + name). */
interface LibraryIndex {
  readonly names: string[];
  readonly failures: ImportFailure[];
  readonly source: 'demo' | 'user';
}

let saving = 0;

/**
 * Keeps the library: the parts first, a few per transaction, then the list of names, then the records of parts no
 * longer in it — so a tab closed half-way still finds a whole library (the previous one, or this one). A newer
 * save stops an older one between writes.
 */
export async function saveLibrary(lib: StoredLibrary): Promise<void> {
  const generation = ++saving;
  const before = await get<LibraryIndex & { parts?: unknown }>('current');
  for (let i = 0; i < lib.parts.length; i += PARTS_PER_WRITE) {
    if (generation !== saving) return;
    const batch = lib.parts.slice(i, i + PARTS_PER_WRITE);
    await many('readwrite', (s) => batch.forEach((p) => s.put(p, `part:${p.name}`)));
  }
  if (generation !== saving) return;
  const names = lib.parts.map((p) => p.name);
  await put('current', { names, failures: lib.failures, source: lib.source } satisfies LibraryIndex);
  const keep = new Set(names);
  const stale = (before?.names ?? []).filter((n) => !keep.has(n));
  if (stale.length) await many('readwrite', (s) => stale.forEach((n) => s.delete(`part:${n}`)));
}

/** The kept library (also in the one-record form written before parts were kept one by one), or null. */
export async function loadLibrary(): Promise<StoredLibrary | null> {
  const current = await get<LibraryIndex & { parts?: LibraryPart[] }>('current');
  if (!current) return null;
  if (current.parts) return current as StoredLibrary;
  const parts: LibraryPart[] = [];
  try {
    await many('readonly', (s) =>
      current.names.forEach((n, i) => {
        const req = s.get(`part:${n}`);
        req.onsuccess = () => (parts[i] = req.result as LibraryPart);
      }),
    );
  } catch {
    return null;
  }
  return { parts: parts.filter(Boolean), failures: current.failures, source: current.source };
}

export interface StoredEmbeddings {
  /** Which model made them: "untrained", or step/total of the saved run. */
  readonly model: string;
  readonly names: string[];
  readonly vectors: Float32Array;
  readonly dim: number;
}

export const saveEmbeddings = (e: StoredEmbeddings): Promise<void> => put('embeddings', e);
export const loadEmbeddings = (): Promise<StoredEmbeddings | null> => get<StoredEmbeddings>('embeddings');

/** Thumbnails (PNG data URLs by part name), kept so a reload shows them without drawing them again. */
export const saveThumbnails = (t: ReadonlyMap<string, string>): Promise<void> => put('thumbnails', new Map(t));
export const loadThumbnails = (): Promise<Map<string, string> | null> => get<Map<string, string>>('thumbnails');
