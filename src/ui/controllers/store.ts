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
    t.oncomplete = () => { db.close(); resolve(req.result); };
    t.onerror = () => { db.close(); reject(t.error); };
  });
}

export interface StoredLibrary {
  readonly parts: LibraryPart[];
  readonly failures: ImportFailure[];
  readonly source: 'demo' | 'user';
}

export async function saveLibrary(lib: StoredLibrary): Promise<void> {
  await tx('readwrite', (s) => s.put(lib, 'current'));
}

export async function loadLibrary(): Promise<StoredLibrary | null> {
  try {
    return ((await tx('readonly', (s) => s.get('current'))) as StoredLibrary | undefined) ?? null;
  } catch {
    return null;
  }
}

export interface StoredEmbeddings {
  /** Which model made them: "untrained", or step/total of the saved run. */
  readonly model: string;
  readonly names: string[];
  readonly vectors: Float32Array;
  readonly dim: number;
}

export async function saveEmbeddings(e: StoredEmbeddings): Promise<void> {
  await tx('readwrite', (s) => s.put(e, 'embeddings'));
}

export async function loadEmbeddings(): Promise<StoredEmbeddings | null> {
  try {
    return ((await tx('readonly', (s) => s.get('embeddings'))) as StoredEmbeddings | undefined) ?? null;
  } catch {
    return null;
  }
}
