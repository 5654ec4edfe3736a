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

export const saveLibrary = (lib: StoredLibrary): Promise<void> => put('current', lib);
export const loadLibrary = (): Promise<StoredLibrary | null> => get<StoredLibrary>('current');

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
