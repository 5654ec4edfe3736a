// The embedded host: PostgreSQL compiled to WebAssembly (PGlite) with pgvector, in this process. Node keeps it
// in a folder, the browser in IndexedDB ("idb://name"), tests in memory (no data directory).

import { PGlite, type Transaction } from '@electric-sql/pglite';
import { vector } from '@electric-sql/pglite-pgvector';
import type { Sql, SqlResult } from './sql';

type Queryable = Pick<PGlite | Transaction, 'query'>;

const run = async <T>(q: Queryable, text: string, params?: readonly unknown[]): Promise<SqlResult<T>> => {
  const r = await q.query<T>(text, params ? [...params] : undefined);
  return { rows: r.rows, affected: r.affectedRows ?? 0 };
};

/**
 * An embedded database with pgvector loaded. `dataDir`: a folder (Node), "idb://name" (browser), or memory;
 * `loadDataDir`: a dump (PGlite's dumpDataDir, a Blob or File) to start from.
 */
export async function openEmbedded(
  dataDir?: string,
  options: { loadDataDir?: Blob } = {},
): Promise<Sql & { readonly pglite: PGlite }> {
  const db = await PGlite.create(dataDir, { extensions: { vector }, ...options });
  const wrapTx = (tx: Transaction): Sql => ({
    query: (text, params) => run(tx, text, params),
    exec: async (text) => void (await tx.exec(text)),
    transaction: (fn) => fn(wrapTx(tx)),
    close: async () => {},
    where: dataDir ?? 'memory',
    shared: false,
  });
  return {
    pglite: db,
    query: (text, params) => run(db, text, params),
    exec: async (text) => void (await db.exec(text)),
    transaction: (fn) => db.transaction((tx) => fn(wrapTx(tx))),
    close: () => db.close(),
    where: dataDir ?? 'memory',
    shared: false,
  };
}
