// `npm run bench -- database`: the parts database at 20,000 parts (embedded PGlite in a folder, as the command
// line keeps it): insert rates, size on disk per part, query latency (exact cosine, and an HNSW index with its
// recall@10 against exact search at two ef_search), the same query over the PostgreSQL wire protocol, and a sync of an unchanged
// 20,000-file folder (listing and hashing only). Pools and vectors are synthetic; files are the KiCad scale set
// when it is there (hard links, cycled to 20,000), else generated.

import { linkSync, mkdirSync, mkdtempSync, readdirSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PGLiteSocketServer } from '@electric-sql/pglite-socket';
import { openEmbedded } from '../src/core/db/embedded';
import { PartsDb } from '../src/core/db/parts-db';
import { vectorLiteral } from '../src/core/db/sql';
import type { MeshInfo } from '../src/core/mesh/types';
import { createRng } from '../src/core/rng';
import { syncLibrary } from '../src/cli/sync';
import { openServer } from '../src/cli/db';
import { DEFAULT_MAX_BYTES } from '../src/core/mesh/import';
import { fmt, report } from './timing';

const PARTS = Number(process.env.SHAPEKIN_BENCH_PARTS ?? 20_000);
const DIM = 256; // the default retrieval embedding: two encoders' 128 values side by side
const POOL = 2048;
const KICAD = process.env.SHAPEKIN_KICAD ?? '/work/kicad/all-off';

const info: MeshInfo = {
  format: 'off',
  vertexCount: 100,
  triangleCount: 200,
  degenerateSkipped: 0,
  bboxMin: [0, 0, 0],
  bboxMax: [1, 2, 3],
  extents: [1, 2, 3],
  area: 1,
  closed: true,
  volume: 1,
  fileBytes: 1000,
  bodies: null,
  units: 'file',
};

function du(dir: string): number {
  let total = 0;
  for (const name of readdirSync(dir)) {
    const p = join(dir, name);
    const s = statSync(p);
    total += s.isDirectory() ? du(p) : s.size;
  }
  return total;
}

const median = (a: number[]) => [...a].sort((x, y) => x - y)[Math.floor(a.length / 2)];

async function timed<T>(fn: () => Promise<T>): Promise<[T, number]> {
  const t0 = performance.now();
  const r = await fn();
  return [r, performance.now() - t0];
}

function filesFor(dir: string, count: number): void {
  const sources: string[] = [];
  const walk = (d: string) => {
    for (const n of readdirSync(d).sort()) {
      const p = join(d, n);
      if (statSync(p).isDirectory()) walk(p);
      else if (n.endsWith('.off')) sources.push(p);
    }
  };
  try {
    walk(KICAD);
  } catch {
    /* absent: generated below */
  }
  const rng = createRng(3);
  for (let i = 0; i < count; i++) {
    const sub = join(dir, `family${i % 40}`);
    if (i < 40) mkdirSync(sub);
    const target = join(sub, `part${i}.off`);
    if (sources.length) linkSync(sources[i % sources.length], target);
    else
      writeFileSync(
        target,
        Uint8Array.from({ length: 50_000 }, () => rng.int(256)),
      );
  }
  if (!sources.length) console.log(`  (no KiCad scale set at ${KICAD}: ${count} generated 50 kB files)`);
}

export async function benchDatabase(): Promise<void> {
  const rows: [string, string][] = [];
  const root = mkdtempSync(join(tmpdir(), 'shapekin-bench-db-'));
  const dbDir = join(root, 'library.db');
  const [sql, openMs] = await timed(() => openEmbedded(dbDir));
  const db = await PartsDb.open(sql);
  rows.push(['create a database folder', `${fmt(openMs / 1000, 2)} s`]);
  const rng = createRng(1);

  const listing = Array.from({ length: PARTS }, (_, i) => ({
    path: `family${i % 40}/part${i}.off`,
    hash: `synthetic-${i}`,
    bytes: 1000,
    label: `family${i % 40}`,
  }));
  const [, listMs] = await timed(() => db.reconcile(listing));
  rows.push([`list ${PARTS.toLocaleString('en-GB')} new files`, `${fmt(listMs / 1000, 2)} s`]);

  const model = await db.putModel('bench', {}, new Uint8Array(4));
  const pool = () => Float32Array.from({ length: POOL * 3 }, () => rng.uniform(-1, 1));
  const [, readMs] = await timed(async () => {
    for (;;) {
      const r = await db.readPending(500, { points: POOL, seed: 0 }, async (files) =>
        files.map(() => ({ kind: 'part' as const, info, points: pool(), normals: pool(), diagonal: 3.7 })),
      );
      if (r.files.length === 0) break;
    }
  });
  rows.push([
    `store ${PARTS.toLocaleString('en-GB')} sampled parts (${POOL} points + normals, float32)`,
    `${fmt(PARTS / (readMs / 1000), 0)} parts/s`,
  ]);
  await db.queueEmbeddings(model);
  const vectors = new Map<number, Float32Array>();
  const unit = () => {
    const v = Float32Array.from({ length: DIM }, () => rng.normal());
    const n = Math.hypot(...v);
    return v.map((x) => x / n);
  };
  const [, embMs] = await timed(async () => {
    for (;;) {
      const r = await db.embedQueued(model, 1000, (pools) => {
        const out = new Float32Array(pools.length * DIM);
        pools.forEach((p, i) => {
          const v = unit();
          vectors.set(p.id, v);
          out.set(v, i * DIM);
        });
        return out;
      });
      if (r.taken === 0) break;
    }
  });
  rows.push([
    `write ${PARTS.toLocaleString('en-GB')} embeddings (${DIM} values)`,
    `${fmt(PARTS / (embMs / 1000), 0)} embeddings/s`,
  ]);
  await sql.query('CHECKPOINT');
  const bytes = du(dbDir);
  rows.push([
    'database size on disk',
    `${fmt(bytes / 2 ** 20, 0)} MiB: ${fmt(bytes / PARTS / 1024, 1)} KiB a part (the pool alone: ${fmt((POOL * 6 * 4) / 1024, 1)} KiB)`,
  ]);

  // Queries: exact cosine (sequential scan), warm.
  const queries = Array.from({ length: 31 }, unit);
  const exact: number[][] = [];
  const ms: number[] = [];
  for (const [i, q] of queries.entries()) {
    const [hits, t] = await timed(() => db.nearest(model, q, 10));
    if (i > 0) ms.push(t);
    exact.push(hits.map((h) => h.id));
  }
  rows.push([
    `query, exact cosine top-10 (in process)`,
    `${fmt(median(ms), 1)} ms p50, ${fmt(Math.max(...ms), 1)} ms max`,
  ]);

  // An HNSW index (pgvector defaults m = 16, ef_construction = 64), over this model's rows, at two ef_search.
  const [, buildMs] = await timed(() =>
    sql.query(
      `CREATE INDEX embeddings_hnsw_bench ON embeddings USING hnsw ((embedding::vector(${DIM})) vector_cosine_ops) WHERE model_id = ${model}`,
    ),
  );
  for (const ef of [40, 400]) {
    const annMs: number[] = [];
    let found = 0;
    let usesIndex = false;
    for (const [i, q] of queries.entries()) {
      const [r, t] = await timed(() =>
        sql.transaction(async (tx) => {
          await tx.query(`SET LOCAL hnsw.ef_search = ${ef}`);
          const text = `SELECT part_id FROM embeddings WHERE model_id = ${model} ORDER BY embedding::vector(${DIM}) <=> $1::vector(${DIM}) LIMIT 10`;
          if (i === 0)
            usesIndex = (await tx.query(`EXPLAIN ${text}`, [vectorLiteral(q)])).rows.some((row) =>
              /hnsw/.test(Object.values(row as object).join(' ')),
            );
          return tx.query<{ part_id: number }>(text, [vectorLiteral(q)]);
        }),
      );
      if (i > 0) annMs.push(t);
      const truth = new Set(exact[i]);
      found += r.rows.filter((x) => truth.has(Number(x.part_id))).length;
    }
    rows.push([
      `query through an HNSW index, ef_search ${ef} (built in ${fmt(buildMs / 1000, 1)} s)`,
      `${fmt(median(annMs), 1)} ms p50; recall@10 against exact ${fmt(found / (queries.length * 10), 3)}; index used: ${usesIndex} (random vectors: the hardest case for recall)`,
    ]);
  }
  await sql.query('DROP INDEX embeddings_hnsw_bench');

  // The same exact query over the PostgreSQL wire protocol, through the command line's server client.
  const server = new PGLiteSocketServer({ db: sql.pglite, port: 0, host: '127.0.0.1' });
  await server.start();
  const remote = await PartsDb.open(await openServer(`postgres://postgres@${server.getServerConn()}/postgres`));
  const wireMs: number[] = [];
  for (const [i, q] of queries.entries()) {
    const [, t] = await timed(() => remote.nearest(model, q, 10));
    if (i > 0) wireMs.push(t);
  }
  await remote.close();
  await server.stop();
  rows.push([`query, exact cosine top-10 over the wire protocol (pg client)`, `${fmt(median(wireMs), 1)} ms p50`]);

  // Sync of an unchanged folder: the stored rows get the folder's real hashes first.
  const folder = join(root, 'library');
  mkdirSync(folder);
  filesFor(folder, PARTS);
  await db.sql.query(`DELETE FROM parts`);
  // List and hash (a read batch of 0 files reads none), then mark every file read, as after a full sync.
  await syncLibrary(folder, db, { threads: 2, maxBytes: DEFAULT_MAX_BYTES, readBatchPerThread: 0 });
  await db.sql.query(`UPDATE parts SET state = 'ready'`);
  const again = await syncLibrary(folder, db, { threads: 2, maxBytes: DEFAULT_MAX_BYTES });
  const gb = du(folder) / 2 ** 30;
  rows.push([
    `sync of an unchanged ${PARTS.toLocaleString('en-GB')}-file folder (${fmt(gb, 2)} GiB)`,
    `${fmt(again.seconds, 1)} s (${again.unchanged} unchanged, ${again.read} read)`,
  ]);
  await db.close();
  rmSync(root, { recursive: true, force: true });
  report(`parts database, ${PARTS.toLocaleString('en-GB')} parts (PGlite ${'in a folder'})`, rows);
}
