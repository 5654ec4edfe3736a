// The workbench's library, model and embeddings in the parts database (PGlite in memory, the same SQL the browser
// runs on IndexedDB): what goes in comes back bit for bit, in the workbench's order.

import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { openEmbedded } from '../../../src/core/db/embedded';
import { PartsDb } from '../../../src/core/db/parts-db';
import type { Sql } from '../../../src/core/db/sql';
import { EMBEDDINGS_PER_STATEMENT, WorkbenchStore } from '../../../src/core/db/workbench';
import { replaceContents } from '../../../src/core/db/copy';
import { loadPart, type LibraryPart } from '../../../src/core/library';
import { EmbeddingIndex } from '../../../src/core/retrieval/index';
import { NeighbourTable } from '../../../src/core/retrieval/neighbour-table';
import { fileFrameBoxRatio } from '../../../src/core/points/pca';

const open: Sql[] = [];
afterEach(async () => {
  for (const s of open.splice(0)) await s.close();
});
async function fresh(): Promise<WorkbenchStore> {
  const sql = await openEmbedded();
  open.push(sql);
  return new WorkbenchStore(await PartsDb.open(sql));
}

const DEMO = 'demo-shapes';
function demoParts(family: string, n: number): LibraryPart[] {
  return readdirSync(join(DEMO, family))
    .sort()
    .slice(0, n)
    .map((f) => {
      const b = readFileSync(join(DEMO, family, f));
      return loadPart(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength) as ArrayBuffer, `${family}/${f}`, {
        points: 256,
        seed: 0,
      });
    });
}

describe('the workbench library in the database', () => {
  it('parts (clouds, normals, meshes, measurements) and failures come back bit for bit, in the order set', async () => {
    const store = await fresh();
    expect(await store.contents()).toBeNull();
    const parts = [...demoParts('washer', 2), ...demoParts('angle', 2)];
    await store.putParts(parts.map((p, i) => ({ ...p, contentHash: `h${i}` })));
    const failures = [{ file: 'broken/empty.stl', code: 'empty' as const, reason: 'the file is empty (0 bytes)' }];
    const order = [parts[2], parts[0], parts[3], parts[1]].map((p) => p.name);
    await store.setContents(order, failures, 'user');
    const back = (await store.contents())!;
    expect(back.source).toBe('user');
    expect(back.failures).toEqual(failures);
    expect(back.parts.map((p) => p.name)).toEqual(order);
    for (const p of back.parts) {
      const orig = parts.find((q) => q.name === p.name)!;
      expect(p).toEqual(orig);
      expect(p.meshIndices).toBeInstanceOf(Uint32Array);
    }
  });

  it('parts can be read without their meshes, and the meshes or the clouds alone, bit for bit, when needed', async () => {
    const store = await fresh();
    const parts = [...demoParts('washer', 2), ...demoParts('angle', 1)];
    await store.putParts(parts);
    const names = [parts[2].name, parts[0].name, 'not/held.stl', parts[1].name];
    const light = await store.parts(names, { meshes: false });
    expect(light.map((p) => p.name)).toEqual([parts[2], parts[0], parts[1]].map((p) => p.name));
    for (const p of light) {
      const orig = parts.find((q) => q.name === p.name)!;
      expect(p).toEqual({ ...orig, meshPositions: new Float32Array(0), meshIndices: new Uint32Array(0) });
    }
    const meshes = await store.meshes(names);
    expect(meshes.map((m) => m.name)).toEqual(light.map((p) => p.name));
    for (const m of meshes) {
      const orig = parts.find((q) => q.name === m.name)!;
      expect(orig.meshIndices.length).toBeGreaterThan(0);
      expect(m.positions).toEqual(orig.meshPositions);
      expect(m.indices).toEqual(orig.meshIndices);
      expect(m.indices).toBeInstanceOf(Uint32Array);
    }
    // The clouds alone, in the order named (a name not held is left out), bit for bit as written.
    const clouds = await store.clouds([parts[1].name, 'nowhere/none.stl', parts[2].name]);
    expect(clouds.map((c) => c.name)).toEqual([parts[1].name, parts[2].name]);
    for (const c of clouds) {
      const orig = parts.find((q) => q.name === c.name)!;
      expect(c.points).toEqual(orig.points);
      expect(c.normals).toEqual(orig.normals);
    }
  });

  it('reopening reads each part’s box ratio, not its cloud; rows kept before the ratio was get it worked out once', async () => {
    const store = await fresh();
    // Three demo parts: the kept ratios must be what fileFrameBoxRatio (points/pca.ts) gives on their clouds, bit for
    // bit (the ratio itself is checked against boxes worked by hand in pca.test).
    const parts = [...demoParts('washer', 1), ...demoParts('angle', 1), ...demoParts('i-beam', 1)];
    await store.putParts(parts);
    const names = parts.map((p) => p.name);
    const expected = parts.map((p) => fileFrameBoxRatio(p.points));
    const ratioOf = async (name: string) =>
      (await store.db.sql.query<{ r: number | null }>('SELECT box_ratio AS r FROM parts WHERE path = $1', [name]))
        .rows[0].r;
    expect(await Promise.all(names.map(ratioOf))).toEqual(expected); // written with the part
    const light = await store.partsAndRatios(names, { meshes: false, clouds: false });
    expect(light.boxRatios).toEqual(expected);
    for (const p of light.parts) {
      expect(p.points).toHaveLength(0);
      expect(p.normals).toHaveLength(0);
    }
    // Rows written before the column existed (NULL): worked out from the cloud, the same figure, and kept.
    await store.db.sql.query('UPDATE parts SET box_ratio = NULL WHERE path = $1', [names[1]]);
    expect((await store.partsAndRatios(names, { meshes: false, clouds: false })).boxRatios).toEqual(expected);
    expect(await ratioOf(names[1])).toBe(expected[1]); // and kept
    // With clouds, the parts are as written.
    const full = await store.partsAndRatios(names, { meshes: false });
    full.parts.forEach((p, i) => expect(p.points).toEqual(parts[i].points));
    expect(full.boxRatios).toEqual(expected);
  });

  it('a part dropped from the library goes, with its embeddings; a part read again loses its old embeddings', async () => {
    const store = await fresh();
    const parts = demoParts('flange', 3);
    await store.putParts(parts);
    await store.setContents(
      parts.map((p) => p.name),
      [],
      'demo',
    );
    const names = parts.map((p) => p.name);
    const vectors = Float32Array.from({ length: 3 * 4 }, (_, i) => i / 7);
    expect(await store.putEmbeddings('untrained:a', names, vectors, 4)).toBe(true);
    expect(await store.embeddings('untrained:a', [names[2], names[0]])).toEqual({
      vectors: Float32Array.from([...vectors.subarray(8, 12), ...vectors.subarray(0, 4)]),
      dim: 4,
    });
    await store.setContents(names.slice(1), [], 'demo');
    expect((await store.contents())!.parts.map((p) => p.name)).toEqual(names.slice(1));
    expect(await store.embeddings('untrained:a', names)).toBeNull(); // one is gone
    await store.putParts([parts[1]]);
    expect(await store.embeddings('untrained:a', [names[2]])).not.toBeNull();
    expect(await store.embeddings('untrained:a', [names[1]])).toBeNull();
  });

  it('a library larger than one statement writes and reads its embeddings in pieces, bit for bit, in order', async () => {
    const store = await fresh();
    const n = 2 * EMBEDDINGS_PER_STATEMENT + 3;
    const names = Array.from({ length: n }, (_, i) => `bolt/b${i}.off`);
    await store.db.sql.query(
      `INSERT INTO parts (path, content_hash, file_bytes, label, state)
       SELECT u, 'h', 1, 'bolt', 'ready' FROM unnest($1::text[]) u`,
      [names],
    );
    const vectors = Float32Array.from({ length: n * 3 }, (_, i) => Math.fround(Math.sin(i) / 3));
    expect(await store.putEmbeddings('untrained:big', names, vectors, 3)).toBe(true);
    const order = [...names].reverse();
    const back = await store.embeddings('untrained:big', order);
    expect(back!.dim).toBe(3);
    for (let i = 0; i < n; i++)
      expect([...back!.vectors.subarray(i * 3, i * 3 + 3)]).toEqual([
        ...vectors.subarray((n - 1 - i) * 3, (n - i) * 3),
      ]);
    // One missing in the last piece: none are served.
    expect(await store.embeddings('untrained:big', [...names, 'bolt/none.off'])).toBeNull();
  });
});

describe('the ordering kept with a model', () => {
  it('a neighbour table comes back bit for bit with its rows’ names, is replaced by the next, and goes with its model', async () => {
    const store = await fresh();
    const parts = demoParts('hex-nut', 6);
    await store.putParts(parts);
    await store.setContents(
      parts.map((p) => p.name),
      [],
      'demo',
    );
    const names = parts.map((p) => p.name);
    const v = Float32Array.from({ length: 6 * 3 }, (_, i) => Math.sin(i + 1));
    const ix = new EmbeddingIndex(
      v,
      3,
      names.map((name) => ({ name, label: '', diagonal: 1 })),
    );
    const table = NeighbourTable.build(6, ix.rowScorer(), 4);
    // The size prior in its scores: weight and ln sizes, an unknown size (NaN) among them.
    const sizes = { weight: 0.025, logSize: Float32Array.from([0, 1.5, NaN, -2, 3.25, 0.5]) };
    expect(await store.putOrdering('untrained:b', names, table, sizes)).toBe(false); // no such model kept yet
    await store.putEmbeddings('untrained:b', names, ix.vectors, 3);
    expect(await store.putOrdering('untrained:b', names, table, sizes)).toBe(true);
    const back = (await store.ordering('untrained:b'))!;
    expect(back.names).toEqual(names);
    expect([back.table.index, back.table.score, back.table.length]).toEqual([table.index, table.score, table.length]);
    expect(back.sizes.weight).toBe(0.025);
    expect(Array.from(back.sizes.logSize)).toEqual(Array.from(sizes.logSize));
    await expect(
      store.putOrdering('untrained:b', names, table, { ...sizes, logSize: new Float32Array(5) }),
    ).rejects.toThrow(/5 sizes for a table of 6/);
    await store.putParts(demoParts('washer', 1)); // a new part: the kept table is carried over later, not dropped
    expect(await store.ordering('untrained:b')).not.toBeNull();
    await store.putParts([{ ...parts[0], contentHash: 'f'.repeat(64) }]); // read again, maybe changed: dropped
    expect(await store.ordering('untrained:b')).toBeNull();
    await store.putParts([{ ...parts[0], contentHash: 'f'.repeat(64) }]);
    await store.putEmbeddings('untrained:b', names, ix.vectors, 3);
    await store.putOrdering('untrained:b', names, table, sizes);
    await store.putParts([{ ...parts[0], contentHash: 'f'.repeat(64) }]); // the same file again: kept
    expect(await store.ordering('untrained:b')).not.toBeNull();
    const smaller = NeighbourTable.build(6, ix.rowScorer(), 2);
    await store.putOrdering('untrained:b', [...names].reverse(), smaller, sizes);
    expect((await store.ordering('untrained:b'))!.table.width).toBe(2);
    await store.putEmbeddings('untrained:c', names, ix.vectors, 3); // one untrained encoder kept: b goes
    expect(await store.ordering('untrained:b')).toBeNull();
  });
});

describe("folders' units (what one unit of a file without units measures)", () => {
  it('are kept as set, replaced as a whole, and a factor that is not a positive number is refused', async () => {
    const store = await fresh();
    expect(await store.folderUnits()).toEqual({});
    await store.setFolderUnits({ washer: 25.4, '': 1000 });
    expect(await store.folderUnits()).toEqual({ washer: 25.4, '': 1000 });
    await store.setFolderUnits({ angle: 10 });
    expect(await store.folderUnits()).toEqual({ angle: 10 });
    await expect(store.setFolderUnits({ angle: 0 })).rejects.toThrow(/positive number/);
    await expect(store.setFolderUnits({ angle: Number.NaN })).rejects.toThrow(/positive number/);
    expect(await store.folderUnits()).toEqual({ angle: 10 });
  });
});

describe('the current model and embeddings by model', () => {
  it('one trained model is kept (the newest), and embeddings for a replaced model are refused as stale', async () => {
    const store = await fresh();
    const parts = demoParts('hex-nut', 2);
    await store.putParts(parts);
    const names = parts.map((p) => p.name);
    await store.setContents(names, [], 'user');
    const a = await store.putCurrentModel('fa', { step: 1 }, new Uint8Array([1, 2]));
    expect(await store.putEmbeddings('fa', names, new Float32Array(6), 3)).toBe(true);
    const b = await store.putCurrentModel('fb', { step: 2 }, new Uint8Array([3, 4, 5]));
    expect(b).not.toBe(a);
    expect(await store.db.currentModel()).toEqual({
      id: b,
      fingerprint: 'fb',
      modelJson: { step: 2 },
      weights: new Uint8Array([3, 4, 5]),
    });
    expect(await store.embeddings('fa', names)).toBeNull();
    expect(await store.putEmbeddings('fa', names, new Float32Array(6), 3)).toBe(false);
    const models = await store.db.sql.query<{ fingerprint: string }>('SELECT fingerprint FROM models');
    expect(models.rows.map((r) => r.fingerprint)).toEqual(['fb']);
  });
});

describe('a library file opened (every row copied into another database)', () => {
  it('the copy holds the same library, model and embeddings, and new rows still get fresh ids', async () => {
    const from = await fresh();
    const parts = [...demoParts('channel', 2), ...demoParts('spacer', 1)];
    await from.putParts(parts.map((p, i) => ({ ...p, contentHash: `c${i}` })));
    const names = parts.map((p) => p.name);
    await from.setContents(names, [{ file: 'broken/x.off', code: 'truncated', reason: 'cut short' }], 'user');
    await from.putCurrentModel('fm', { step: 3 }, new Uint8Array([9, 8, 7]));
    const vectors = Float32Array.from({ length: 3 * 5 }, (_, i) => Math.sin(i));
    await from.putEmbeddings('fm', names, vectors, 5);
    await from.setFolderUnits({ channel: 25.4 });
    const to = await fresh();
    await to.putParts(demoParts('washer', 1)); // replaced by the copy
    await replaceContents(to.db, from.db.sql);
    expect(await to.contents()).toEqual(await from.contents());
    expect(await to.db.currentModel()).toEqual(await from.db.currentModel());
    expect(await to.embeddings('fm', names)).toEqual({ vectors, dim: 5 });
    expect(await to.folderUnits()).toEqual({ channel: 25.4 }); // the folders' units travel with the file
    await to.putParts(demoParts('washer', 1));
    const ids = await to.db.sql.query<{ id: number }>('SELECT id FROM parts ORDER BY id');
    expect(new Set(ids.rows.map((r) => r.id)).size).toBe(ids.rows.length);
  });
});
