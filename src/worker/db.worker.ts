// The workbench's parts database: PostgreSQL with pgvector (PGlite) kept in IndexedDB, owned by this worker so
// the page never waits on it. It holds the library (parts with their meshes), the current model and the
// embeddings, answers one request at a time, and on first start moves over what an earlier version kept in plain
// IndexedDB records (the library; embeddings are recomputed).

import { namedTable, tableArrays } from '../core/retrieval/neighbour-table';
import { modelFingerprint } from '../core/checksum';
import { openEmbedded } from '../core/db/embedded';
import { PartsDb } from '../core/db/parts-db';
import { replaceContents } from '../core/db/copy';
import { WorkbenchStore, type HashedPart } from '../core/db/workbench';
import { partTransfers, type LibraryPart } from '../core/library';
import type { ImportFailure } from '../core/mesh/import';
import { modelJsonFor, readModelJson, type ModelJson } from '../core/model/model-json';
import type { DbAnswers, DbReply, DbRequest } from './protocol';

const NAME = 'shapekin-parts';
/**
 * Where the database lives: the origin-private file system through a pool of sync access handles where the browser
 * has them (dedicated workers in Chromium and Firefox), else IndexedDB. Measured on 990 KiCad parts with their
 * meshes: IndexedDB copies its changes after every transaction, so each write of 10 parts took 0.5 s at first and
 * 2 s by the end (2 minutes in all), and the reload took 35 s.
 */
const OPFS = typeof (globalThis as { FileSystemSyncAccessHandle?: unknown }).FileSystemSyncAccessHandle === 'function';
const DATA = OPFS ? `opfs-ahp://${NAME}` : `idb://${NAME}`;

let current: Promise<WorkbenchStore> | null = null;

async function open(): Promise<WorkbenchStore> {
  const sql = await openEmbedded(DATA);
  const store = new WorkbenchStore(await PartsDb.open(sql));
  await moveEarlierLibrary(store);
  return store;
}

const store = (): Promise<WorkbenchStore> => (current ??= open());

// ---- the one-time move from the plain IndexedDB records of earlier versions ----

const EARLIER_DB = 'shapekin-workbench';
const EARLIER_STORE = 'library';

function request<T>(r: IDBRequest<T>): Promise<T> {
  return new Promise((resolve, reject) => {
    r.onsuccess = () => resolve(r.result);
    r.onerror = () => reject(r.error);
  });
}

async function moveEarlierLibrary(target: WorkbenchStore): Promise<void> {
  const known = await indexedDB.databases?.().catch(() => []);
  if (!known?.some((d) => d.name === EARLIER_DB)) return;
  if (await target.contents()) return; // already has a library: the earlier records are not needed
  const db = await request(indexedDB.open(EARLIER_DB, 1));
  try {
    if (!db.objectStoreNames.contains(EARLIER_STORE)) return;
    const read = <T>(key: string) =>
      request(db.transaction(EARLIER_STORE, 'readonly').objectStore(EARLIER_STORE).get(key)) as Promise<T | undefined>;
    const index = await read<{
      names?: string[];
      parts?: LibraryPart[];
      failures: ImportFailure[];
      source: 'demo' | 'user';
    }>('current');
    if (!index) return;
    const names = index.parts ? index.parts.map((p) => p.name) : (index.names ?? []);
    for (let i = 0; i < names.length; i += 20) {
      const batch = index.parts
        ? index.parts.slice(i, i + 20)
        : (await Promise.all(names.slice(i, i + 20).map((n) => read<LibraryPart>(`part:${n}`)))).filter(
            (p): p is LibraryPart => Boolean(p),
          );
      await target.putParts(batch);
    }
    await target.setContents(names, index.failures ?? [], index.source ?? 'user');
    // Moved: the earlier records go (thumbnails stay: the page keeps them there).
    const t = db.transaction(EARLIER_STORE, 'readwrite');
    const s = t.objectStore(EARLIER_STORE);
    for (const key of (await request(s.getAllKeys())) as string[])
      if (key === 'current' || key === 'embeddings' || key.startsWith('part:')) s.delete(key);
    await new Promise<void>((resolve, reject) => {
      t.oncomplete = () => resolve();
      t.onerror = () => reject(t.error);
    });
  } finally {
    db.close();
  }
}

// ---- requests ----

async function answer(req: DbRequest): Promise<[DbAnswers[DbRequest['type']], ArrayBuffer[]]> {
  switch (req.type) {
    case 'load-library':
      return [await (await store()).outline(), []];
    case 'load-parts': {
      const { parts, boxRatios } = await (
        await store()
      ).partsAndRatios(req.names, { meshes: req.meshes ?? true, clouds: req.clouds ?? true });
      return [{ parts, boxRatios }, parts.flatMap(partTransfers).filter((b) => b.byteLength > 0)];
    }
    case 'load-clouds': {
      const clouds = await (await store()).clouds(req.names);
      return [clouds, clouds.flatMap((c) => [c.points.buffer as ArrayBuffer, c.normals.buffer as ArrayBuffer])];
    }
    case 'load-meshes': {
      const meshes = await (await store()).meshes(req.names);
      return [meshes, meshes.flatMap((m) => [m.positions.buffer as ArrayBuffer, m.indices.buffer as ArrayBuffer])];
    }
    case 'put-parts':
      await (await store()).putParts(req.parts as HashedPart[]);
      return [null, []];
    case 'set-contents':
      await (await store()).setContents(req.names, req.failures, req.source);
      return [null, []];
    case 'load-units':
      return [await (await store()).folderUnits(), []];
    case 'put-units':
      await (await store()).setFolderUnits(req.units);
      return [null, []];
    case 'load-model': {
      const m = await (await store()).db.currentModel();
      if (!m) return [null, []];
      const weightData = m.weights.buffer.slice(
        m.weights.byteOffset,
        m.weights.byteOffset + m.weights.byteLength,
      ) as ArrayBuffer;
      const { manifest, weightSpecs, adamStep } = readModelJson(
        m.modelJson as ModelJson,
        weightData,
        'the stored model',
      );
      return [
        { checkpoint: { manifest, weightSpecs, weightData, adamStep }, fingerprint: m.fingerprint },
        [weightData],
      ];
    }
    case 'put-model': {
      const c = req.checkpoint;
      const json = modelJsonFor(c.manifest, c.weightSpecs, c.weightData, c.adamStep);
      const text = JSON.stringify(json);
      const fp = await modelFingerprint(text, new Uint8Array(c.weightData));
      await (await store()).putCurrentModel(fp, json, new Uint8Array(c.weightData));
      return [fp, []];
    }
    case 'put-embeddings':
      return [await (await store()).putEmbeddings(req.key, req.names, req.vectors, req.dim), []];
    case 'load-embeddings': {
      const e = await (await store()).embeddings(req.key, req.names);
      return [e, e ? [e.vectors.buffer as ArrayBuffer] : []];
    }
    case 'put-ordering': {
      const { names, table, sizes } = namedTable(req.table);
      return [await (await store()).putOrdering(req.key, names, table, sizes), []];
    }
    case 'load-ordering': {
      const o = await (await store()).ordering(req.key);
      if (!o) return [null, []];
      const t = tableArrays(o);
      return [t, [t.index, t.score, t.length, t.logSize].map((a) => a.buffer as ArrayBuffer)];
    }
    case 'export': {
      const s = await store();
      const dump = await (
        s.db.sql as unknown as { pglite?: { dumpDataDir(c?: 'gzip'): Promise<Blob> } }
      ).pglite?.dumpDataDir('gzip');
      if (!dump) throw new Error('this database cannot be exported');
      return [dump, []];
    }
    case 'import': {
      // The file is opened in memory first (and brought to this schema); its rows then replace this database's in
      // one transaction, so a file that does not open, or a copy that fails, changes nothing.
      const source = await openEmbedded(undefined, { loadDataDir: req.dump });
      try {
        await PartsDb.open(source);
        await replaceContents((await store()).db, source);
      } finally {
        await source.close();
      }
      return [null, []];
    }
  }
}

// One request at a time, in order: PGlite runs one statement at a time anyway, and a save must not overtake
// the save before it.
let queue: Promise<void> = Promise.resolve();
self.onmessage = (event: MessageEvent<DbRequest>) => {
  const req = event.data;
  queue = queue.then(async () => {
    let reply: DbReply;
    let transfer: ArrayBuffer[] = [];
    try {
      const [value, t] = await answer(req);
      reply = { id: req.id, ok: true, value };
      transfer = t;
    } catch (err) {
      reply = { id: req.id, ok: false, message: (err as Error)?.message ?? String(err) };
    }
    (self as unknown as Worker).postMessage(reply, transfer);
  });
};
