// The parts database against a real PostgreSQL (PGlite, in memory) with pgvector: schema versions, the folder
// listing brought in line, reading and embedding taken batch by batch, and search by pgvector's <=>.

import { afterEach, describe, expect, it } from 'vitest';
import { byteaToText, openEmbedded, textToBytea } from '../../../src/core/db/embedded';
import { PartsDb, type ReadOutcome } from '../../../src/core/db/parts-db';
import { DatabaseSetupError, MIGRATIONS, migrate, SCHEMA_VERSION } from '../../../src/core/db/schema';
import { bytesFloats, floatBytes, vectorLiteral, type Sql } from '../../../src/core/db/sql';
import type { MeshInfo } from '../../../src/core/mesh/types';
import { createRng } from '../../../src/core/rng';
import { fileFrameBoxRatio } from '../../../src/core/points/pca';

const open: Sql[] = [];
afterEach(async () => {
  for (const s of open.splice(0)) await s.close();
});
async function fresh(): Promise<PartsDb> {
  const sql = await openEmbedded();
  open.push(sql);
  return PartsDb.open(sql);
}

const info = (extents: [number, number, number], units: 'mm' | 'file' = 'file'): MeshInfo => ({
  format: 'off',
  vertexCount: 8,
  triangleCount: 12,
  degenerateSkipped: 0,
  bboxMin: [0, 0, 0],
  bboxMax: extents,
  extents,
  area: 1,
  closed: true,
  volume: 1,
  fileBytes: 100,
  bodies: null,
  units,
});

const part = (
  seed: number,
  extents: [number, number, number] = [1, 2, 3],
  units: 'mm' | 'file' = 'file',
): ReadOutcome => {
  const rng = createRng(seed);
  const points = Float32Array.from({ length: 12 }, () => rng.next() - 0.5);
  return {
    kind: 'part',
    info: info(extents, units),
    points,
    normals: new Float32Array(12),
    diagonal: Math.hypot(...extents),
  };
};

const listing = (n: number, prefix = 'f') =>
  Array.from({ length: n }, (_, i) => ({
    path: `${prefix}${i % 3}/p${i}.off`,
    hash: `h${i}`,
    bytes: 100 + i,
    label: `${prefix}${i % 3}`,
  }));

describe('schema', () => {
  it('applies each migration once and records it; a database from a newer Shapekin is refused', async () => {
    const sql = await openEmbedded();
    open.push(sql);
    expect(await migrate(sql)).toEqual(MIGRATIONS.map((m) => m.version));
    expect(await migrate(sql)).toEqual([]);
    const v = await sql.query<{ version: number }>('SELECT version FROM shapekin_schema ORDER BY version');
    expect(v.rows.map((r) => r.version)).toEqual(MIGRATIONS.map((m) => m.version));
    // pgvector is there: its extension row (PostgreSQL's catalogue) names it.
    expect((await sql.query("SELECT 1 FROM pg_extension WHERE extname = 'vector'")).rows).toHaveLength(1);
    await sql.query('INSERT INTO shapekin_schema (version) VALUES ($1)', [SCHEMA_VERSION + 1]);
    await expect(migrate(sql)).rejects.toThrow(DatabaseSetupError);
    await expect(migrate(sql)).rejects.toThrow(/newer Shapekin/);
  });
});

describe('schema 6: the size prior of kept orderings', () => {
  it('drops the tables kept before it (plain cosines), and refuses a table without its prior', async () => {
    const sql = await openEmbedded();
    open.push(sql);
    await sql.query('CREATE EXTENSION IF NOT EXISTS vector');
    await sql.query('CREATE TABLE shapekin_schema (version integer PRIMARY KEY, applied_at timestamptz DEFAULT now())');
    for (const m of MIGRATIONS.filter((m) => m.version <= 5)) {
      await sql.exec(m.sql);
      await sql.query('INSERT INTO shapekin_schema (version) VALUES ($1)', [m.version]);
    }
    await sql.query(`INSERT INTO models (fingerprint, model_json, weights) VALUES ('m', '{}', '\\x00')`);
    await sql.query(
      `INSERT INTO orderings (model_id, part_paths, width, neighbours, scores, lengths)
       VALUES (1, '{a}', 1, '\\x00', '\\x00', '\\x00')`,
    );
    expect(await migrate(sql)).toEqual([6]);
    expect((await sql.query('SELECT 1 FROM orderings')).rows).toHaveLength(0);
    // A table without its prior is refused by the schema.
    await expect(
      sql.query(
        `INSERT INTO orderings (model_id, part_paths, width, neighbours, scores, lengths)
         VALUES (1, '{a}', 1, '\\x00', '\\x00', '\\x00')`,
      ),
    ).rejects.toThrow(/size_weight/);
  });
});

describe('float and vector encodings', () => {
  it('float32 pools survive the bytea column bit for bit; vectors survive pgvector text bit for bit', async () => {
    const db = await fresh();
    const a = Float32Array.from([0.1, -1e-30, 3.4e38, Math.PI, 1 / 3, 0]);
    expect(bytesFloats(floatBytes(a))).toEqual(a);
    const r = await db.sql.query<{ v: number[] }>('SELECT $1::vector::real[] AS v', [vectorLiteral(a)]);
    expect(Float32Array.from(r.rows[0].v)).toEqual(a);
  });
});

describe('bytea in hex text form', () => {
  // Reference: Node's Buffer hex encoding, and PostgreSQL's own encode()/decode() on the database side.
  it('every byte value goes in and comes out unchanged, as PostgreSQL and Node spell it', async () => {
    const db = await fresh();
    const bytes = Uint8Array.from({ length: 512 }, (_, i) => (i * 37 + 11) & 255);
    expect(byteaToText(bytes)).toBe(`\\x${Buffer.from(bytes).toString('hex')}`);
    expect(textToBytea(byteaToText(bytes))).toEqual(bytes);
    const r = await db.sql.query<{ hex: string; back: Uint8Array }>(
      `SELECT encode($1::bytea, 'hex') AS hex, decode($2, 'hex') AS back`,
      [bytes, Buffer.from(bytes).toString('hex')],
    );
    expect(r.rows[0].hex).toBe(Buffer.from(bytes).toString('hex'));
    expect(new Uint8Array(r.rows[0].back)).toEqual(bytes);
  });
});

describe('reconcile: the folder listing against the stored parts', () => {
  it('counts added, changed, removed and unchanged exactly, and a second pass changes nothing', async () => {
    const db = await fresh();
    const first = listing(10);
    expect(await db.reconcile(first)).toEqual({
      added: first.map((f) => f.path).sort(),
      changed: [],
      removed: [],
      unchanged: 0,
    });
    expect(await db.reconcile(first)).toEqual({ added: [], changed: [], removed: [], unchanged: 10 });
    const second = [
      ...first.slice(0, 8).map((f, i) => (i === 2 ? { ...f, hash: 'edited' } : f)),
      { path: 'new/q.off', hash: 'hq', bytes: 7, label: 'new' },
    ];
    expect(await db.reconcile(second)).toEqual({
      added: ['new/q.off'],
      changed: [first[2].path],
      removed: [first[8].path, first[9].path].sort(),
      unchanged: 7,
    });
    expect(await db.pendingCount()).toBe(9);
  });

  it('a changed file drops its embeddings and is read again; the others keep theirs', async () => {
    const db = await fresh();
    const files = listing(4);
    await db.reconcile(files);
    const model = await db.putModel('m', { name: 'm' }, new Uint8Array([1]));
    await db.readPending(10, { points: 4, seed: 0 }, async (c) => c.map((_, i) => part(i)), model);
    const vec = (i: number) => Float32Array.from([1, i, 0]);
    await db.embedQueued(model, 10, (pools) => {
      const out = new Float32Array(pools.length * 3);
      pools.forEach((p, i) => out.set(vec(p.id), i * 3));
      return out;
    });
    expect((await db.counts(model)).embedded).toBe(4);
    // Each part read keeps its file-frame box ratio (fileFrameBoxRatio of its pool, as the workbench reopens it).
    const ratios = async () =>
      (await db.sql.query<{ r: number | null }>('SELECT box_ratio AS r FROM parts ORDER BY path')).rows.map((x) => x.r);
    const read = await db.readyParts(); // ordered by path, as the query above
    expect(await ratios()).toEqual(read.map((p) => fileFrameBoxRatio(p.points)));
    await db.reconcile(files.map((f, i) => (i === 1 ? { ...f, hash: 'edited' } : f)));
    expect(await db.counts(model)).toEqual({ pending: 1, ready: 3, failed: 0, embedded: 3 });
    expect((await ratios()).filter((r) => r === null)).toHaveLength(1); // the changed file's goes with its pool
  });
});

describe('reading and embedding, batch by batch', () => {
  it('stores parts and failure reasons; queues what was read for the model; embeds each part once', async () => {
    const db = await fresh();
    await db.reconcile(listing(7));
    const model = await db.putModel('m', {}, new Uint8Array([1]));
    expect(await db.putModel('m', {}, new Uint8Array([1]))).toBe(model); // stored once per fingerprint
    let batches = 0;
    for (;;) {
      const r = await db.readPending(
        3,
        { points: 4, seed: 0 },
        async (files) =>
          files.map((f) =>
            f.path.endsWith('p4.off') ? { kind: 'failed', reason: 'face 1 refers to vertex 9' } : part(f.id),
          ),
        model,
      );
      if (r.files.length === 0) break;
      expect(r.files.length).toBeLessThanOrEqual(3);
      batches++;
    }
    expect(batches).toBe(3);
    expect(await db.failures()).toEqual([{ path: 'f1/p4.off', reason: 'face 1 refers to vertex 9' }]);
    expect(await db.queueEmbeddings(model)).toBe(6);
    const seen: number[] = [];
    let written = 0;
    for (;;) {
      const r = await db.embedQueued(model, 4, (pools) => {
        seen.push(...pools.map((p) => p.id));
        // The pool handed back is the one stored.
        for (const p of pools) expect(p.points).toEqual((part(p.id) as { points: Float32Array }).points);
        return Float32Array.from(pools.flatMap((p) => [1, p.id, 0]));
      });
      if (r.taken === 0) break;
      written += r.written;
    }
    expect(written).toBe(6);
    expect(new Set(seen).size).toBe(6);
    expect(await db.queueEmbeddings(model)).toBe(0); // nothing left: a second pass embeds nothing
  });

  it('a batch that throws is rolled back: its files stay to be read, nothing half-written', async () => {
    const db = await fresh();
    await db.reconcile(listing(3));
    await expect(
      db.readPending(10, { points: 4, seed: 0 }, async () => {
        throw new Error('killed');
      }),
    ).rejects.toThrow('killed');
    expect(await db.counts()).toEqual({ pending: 3, ready: 0, failed: 0, embedded: 0 });
  });
});

describe("search with pgvector's cosine distance", () => {
  // Reference: pgvector's documentation defines <=> as cosine distance, 1 − cos(a, b); the expected order here is
  // computed from that definition in double precision, independently of the database.
  it('the top k by <=> equal a brute-force cosine ranking, scores within 1e-6; size and folder filters apply', async () => {
    const db = await fresh();
    const n = 60,
      D = 16;
    const files = listing(n, 'g');
    await db.reconcile(files);
    const model = await db.putModel('m', {}, new Uint8Array([1]));
    const diag = (id: number) => 1 + (id % 10);
    await db.readPending(
      n,
      { points: 4, seed: 0 },
      async (c) => c.map((f) => part(f.id, [diag(f.id), 0, 0], f.id % 2 ? 'mm' : 'file')),
      model,
    );
    const rng = createRng(7);
    const vectors = new Map<number, Float32Array>();
    await db.embedQueued(model, n, (pools) => {
      const out = new Float32Array(pools.length * D);
      pools.forEach((p, i) => {
        const v = Float32Array.from({ length: D }, () => rng.next() * 2 - 1);
        vectors.set(p.id, v);
        out.set(v, i * D);
      });
      return out;
    });
    const q = Float32Array.from({ length: D }, () => rng.next() * 2 - 1);
    const cos = (a: Float32Array, b: Float32Array) => {
      let d = 0,
        na = 0,
        nb = 0;
      for (let i = 0; i < D; i++) {
        d += a[i] * b[i];
        na += a[i] * a[i];
        nb += b[i] * b[i];
      }
      return d / Math.sqrt(na * nb);
    };
    const ranked = [...vectors.entries()]
      .map(([id, v]) => ({ id, score: cos(q, v) }))
      .sort((a, b) => b.score - a.score);
    const hits = await db.nearest(model, q, 10);
    expect(hits.map((h) => h.id)).toEqual(ranked.slice(0, 10).map((r) => r.id));
    hits.forEach((h, i) => expect(Math.abs(h.score - ranked[i].score)).toBeLessThan(1e-6));
    // Size: parts in file units scaled by 2 mm per unit; keep diagonals within [4/1.5, 4·1.5] mm.
    const inSize = (id: number) => {
      const mm = diag(id) * (id % 2 ? 1 : 2);
      return mm >= 4 / 1.5 && mm <= 6;
    };
    const sized = await db.nearest(model, q, 10, { sizeRatio: 1.5, queryDiagonal: 4, scaleFileUnits: 2 });
    expect(sized.map((h) => h.id)).toEqual(
      ranked
        .filter((r) => inSize(r.id))
        .slice(0, 10)
        .map((r) => r.id),
    );
    const label = (id: number) => files.find((f) => f.path === `g${(id - 1) % 3}/p${id - 1}.off`)?.label;
    const folder = await db.nearest(model, q, 5, { labels: ['g1'] });
    expect(folder.every((h) => h.label === 'g1')).toBe(true);
    expect(folder.map((h) => h.id)).toEqual(
      ranked
        .filter((r) => label(r.id) === 'g1')
        .slice(0, 5)
        .map((r) => r.id),
    );
  });
});
