// The command line's way into the parts database: a folder holds an embedded PGlite database (one process at a
// time, kept by a lock file beside it); a postgres:// URL reaches a PostgreSQL server with pgvector through `pg`,
// where any number of processes and machines may work at once. Connection failures become one plain sentence.

import { closeSync, existsSync, mkdirSync, openSync, readFileSync, unlinkSync, writeFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import pg from 'pg';
import { modelFingerprint } from '../core/checksum';
import { artifactsFromModelJson, fromArtifacts, type Checkpoint } from '../core/model/checkpoint';
import type { ModelJson } from '../core/model/model-json';
import { openEmbedded } from '../core/db/embedded';
import { PartsDb, type StoredModel, type StoredPart } from '../core/db/parts-db';
import { WorkbenchStore } from '../core/db/workbench';
import { buildOrdering, type TensorIndex } from '../core/retrieval/tensor-index';
import { DatabaseSetupError } from '../core/db/schema';
import type { Sql, SqlResult } from '../core/db/sql';
import { CliError } from './errors';

export const isServerUrl = (spec: string): boolean => /^postgres(ql)?:\/\//i.test(spec);

/** A server URL with its password hidden, for messages. */
export function redacted(url: string): string {
  try {
    const u = new URL(url);
    if (u.password) u.password = '***';
    return u.toString();
  } catch {
    return url.replace(/:[^:@/]*@/, ':***@');
  }
}

/** One sentence for a failed connection or query to a server. */
function serverMessage(where: string, err: unknown): string {
  const e = err as { code?: string; message?: string };
  switch (e.code) {
    case 'ECONNREFUSED':
    case 'ENOTFOUND':
    case 'EHOSTUNREACH':
    case 'ETIMEDOUT':
      return `cannot reach the database server ${where} (${e.code}): is it running, and are the host and port right?`;
    case '28P01':
    case '28000':
      return `the database server ${where} refused the user name or password (${e.message}); check them in the URL or PGPASSWORD`;
    case '3D000':
      return `${e.message} on the server ${where}: create it first (createdb, or CREATE DATABASE)`;
    default:
      return `the database server ${where}: ${e.message ?? String(err)}`;
  }
}

const asPg = (params?: readonly unknown[]) =>
  params?.map((v) =>
    v instanceof Uint8Array && !Buffer.isBuffer(v) ? Buffer.from(v.buffer, v.byteOffset, v.byteLength) : v,
  );

const viaClient = (client: pg.PoolClient, where: string): Sql => ({
  async query<T>(text: string, params?: readonly unknown[]): Promise<SqlResult<T>> {
    const r = await client.query(text, asPg(params));
    return { rows: r.rows as T[], affected: r.rowCount ?? 0 };
  },
  exec: async (text) => void (await client.query(text)),
  transaction: (fn) => fn(viaClient(client, where)),
  close: async () => {},
  where,
  shared: true,
});

/** A PostgreSQL server (with pgvector) through a small pool of connections. */
export async function openServer(url: string): Promise<Sql> {
  const where = redacted(url);
  const pool = new pg.Pool({ connectionString: url, max: 4, connectionTimeoutMillis: 15_000 });
  pool.on('error', () => {}); // an idle connection dropped by the server: the next query opens another
  try {
    (await pool.connect()).release();
  } catch (err) {
    await pool.end().catch(() => {});
    throw new CliError(serverMessage(where, err));
  }
  const sql: Sql = {
    // Each statement in its own explicit transaction: the same as autocommit on a server, and it keeps a
    // statement's protocol messages together on a server that runs every connection in one session (PGlite
    // served over the wire protocol, which the tests use).
    query: (text, params) => sql.transaction((tx) => tx.query(text, params)),
    exec: (text) => sql.transaction((tx) => tx.exec(text)),
    async transaction<T>(fn: (tx: Sql) => Promise<T>): Promise<T> {
      const client = await pool.connect();
      let failed: unknown = undefined;
      try {
        await client.query('BEGIN');
        const out = await fn(viaClient(client, where));
        await client.query('COMMIT');
        return out;
      } catch (err) {
        failed = err;
        await client.query('ROLLBACK').catch(() => {});
        throw err;
      } finally {
        client.release(failed instanceof Error && !('code' in failed) ? failed : undefined);
      }
    },
    close: () => pool.end(),
    where,
    shared: true,
  };
  return sql;
}

/** Is a process with this id alive on this machine? */
function alive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (err) {
    return (err as NodeJS.ErrnoException).code === 'EPERM';
  }
}

/**
 * An embedded database in a folder, held by this process alone (PGlite is one process's database): a lock file
 * beside the folder names the holder; one left by a process that died is taken over.
 */
export async function openFolder(dir: string): Promise<Sql> {
  const lock = `${resolve(dir)}.lock`;
  mkdirSync(dirname(lock), { recursive: true });
  for (let attempt = 0; ; attempt++) {
    try {
      closeSync(openSync(lock, 'wx'));
      writeFileSync(lock, String(process.pid));
      break;
    } catch (err) {
      if ((err as NodeJS.ErrnoException).code !== 'EEXIST' || attempt > 0) throw err;
      const holder = Number(readFileSync(lock, 'utf8').trim());
      if (holder && holder !== process.pid && alive(holder))
        throw new CliError(
          `the database ${dir} is open in another shapekin process (pid ${holder}); wait for it to finish. For ` +
            'several processes or machines at once, use a PostgreSQL server: --db postgres://user@host/db',
        );
      unlinkSync(lock); // left by a process that died
    }
  }
  const release = () => {
    try {
      if (existsSync(lock) && readFileSync(lock, 'utf8').trim() === String(process.pid)) unlinkSync(lock);
    } catch {
      /* already gone */
    }
  };
  process.once('exit', release);
  let sql: Sql;
  try {
    sql = await openEmbedded(dir);
  } catch (err) {
    release();
    throw new CliError(`the database ${dir} could not be opened: ${(err as Error).message}`);
  }
  return {
    ...sql,
    where: dir,
    close: async () => {
      await sql.close();
      release();
    },
  };
}

/** A library file the workbench saved ("Save the library as a file": PGlite's dump, a gzipped tar). */
export const isLibraryFile = (spec: string): boolean => /\.(tar\.gz|tgz)$/i.test(spec);

/** A library file opened in memory: read it, query it; what is written there is not kept. */
async function openLibraryFile(path: string): Promise<Sql> {
  if (!existsSync(path)) throw new CliError(`library file not found: ${path}`);
  try {
    const sql = await openEmbedded(undefined, { loadDataDir: new Blob([readFileSync(path)]) });
    return { ...sql, where: path };
  } catch (err) {
    throw new CliError(`${path} is not a library file saved by the workbench (${(err as Error).message})`);
  }
}

/**
 * Opens the parts database a --db value names (a folder, a postgres:// URL, or a library file saved by the
 * workbench, read-only), schema brought up to date.
 */
export async function openDatabase(spec: string): Promise<PartsDb> {
  const sql = isServerUrl(spec)
    ? await openServer(spec)
    : isLibraryFile(spec)
      ? await openLibraryFile(spec)
      : await openFolder(spec);
  try {
    return await PartsDb.open(sql);
  } catch (err) {
    await sql.close().catch(() => {});
    if (err instanceof DatabaseSetupError) throw new CliError(err.message);
    throw new CliError(sql.shared ? serverMessage(sql.where, err) : `${sql.where}: ${(err as Error).message}`);
  }
}

/** The database a command uses: --db, or "library.db" beside the --model run folder. */
export function databaseSpec(db: string | undefined, model: string | undefined, command: string): string {
  if (db) return db;
  if (model) return join(dirname(resolve(model)), 'library.db');
  throw new CliError(
    `${command} needs --db <folder|postgres://user@host/db> (or --model, to keep it beside the run)`,
    2,
  );
}

/** A run folder's model.json and weights.bin as stored in the database, with a fingerprint of both. */
export async function runFiles(
  dir: string,
): Promise<{ fingerprint: string; modelJson: ModelJson; weights: Uint8Array }> {
  const jsonPath = join(dir, 'model.json');
  if (!existsSync(jsonPath))
    throw new CliError(`no model in ${dir} (expected model.json; train one with "shapekin train")`);
  const text = readFileSync(jsonPath, 'utf8');
  const modelJson = JSON.parse(text) as ModelJson;
  const paths = (modelJson.weightsManifest ?? []).flatMap((g) => g.paths);
  if (paths.length !== 1) throw new CliError(`${jsonPath}: expected one weights file, found ${paths.length}`);
  const weights = new Uint8Array(readFileSync(join(dir, paths[0])));
  const fingerprint = await modelFingerprint(text, weights);
  return { fingerprint, modelJson, weights };
}

/** A stored model back as a checkpoint. */
export function checkpointOf(model: StoredModel): Checkpoint {
  const w = model.weights;
  const buffer = w.buffer.slice(w.byteOffset, w.byteOffset + w.byteLength) as ArrayBuffer;
  try {
    return fromArtifacts(
      artifactsFromModelJson(model.modelJson as ModelJson, [buffer]),
      `the stored model ${model.id}`,
    );
  } catch (err) {
    throw new CliError((err as Error).message);
  }
}

/**
 * Gives the index the model's ordering kept in the database (`orderings`), carried over to the parts embedded now;
 * built and kept when there is none. A library of 20,000 parts then orders its first query without a pass over
 * all pairs.
 */
export async function storedOrdering(
  db: PartsDb,
  modelId: number,
  all: { parts: readonly StoredPart[]; vectors: Float32Array; dim: number },
  index: TensorIndex,
): Promise<{ fresh: boolean; added: number; removed: number } | null> {
  const fp = (await db.sql.query<{ f: string }>('SELECT fingerprint AS f FROM models WHERE id = $1', [modelId])).rows[0]
    ?.f;
  if (!fp) return null;
  const store = new WorkbenchStore(db);
  const names = all.parts.map((p) => p.path);
  const diagonals = index.entries.map((e) => e.diagonal);
  const built = buildOrdering(names, all.vectors, all.dim, await store.ordering(fp), diagonals, index.sizeWeight);
  index.useOrdering(built);
  if (built.fresh || built.added > 0 || built.removed > 0) await store.putOrdering(fp, names, built.table, built.sizes);
  return { fresh: built.fresh, added: built.added, removed: built.removed };
}
