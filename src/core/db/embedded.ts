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

/** PostgreSQL's type id for bytea. */
const BYTEA = 17;

const HEX_CODES = new TextEncoder().encode('0123456789abcdef');
const HEX_VALUE = (() => {
  const v = new Uint8Array(128);
  for (let i = 0; i < 10; i++) v[48 + i] = i;
  for (let i = 0; i < 6; i++) v[65 + i] = v[97 + i] = 10 + i;
  return v;
})();

/**
 * bytea in PostgreSQL's hex text form ("\x0a1b…"), both ways, a byte at a time through tables. PGlite's own
 * codecs build a string per byte: a part's 48 KB pool took ~4 ms to read and ~11 ms to write that way.
 */
export function byteaToText(bytes: Uint8Array): string {
  const out = new Uint8Array(2 + bytes.length * 2);
  out[0] = 92; // \
  out[1] = 120; // x
  for (let i = 0, o = 2; i < bytes.length; i++, o += 2) {
    out[o] = HEX_CODES[bytes[i] >> 4];
    out[o + 1] = HEX_CODES[bytes[i] & 15];
  }
  return new TextDecoder().decode(out);
}

export function textToBytea(text: string): Uint8Array {
  if (!text.startsWith('\\x')) throw new RangeError('bytea: only the hex form is read');
  const n = (text.length - 2) >> 1;
  const out = new Uint8Array(n);
  for (let i = 0, c = 2; i < n; i++, c += 2)
    out[i] = (HEX_VALUE[text.charCodeAt(c)] << 4) | HEX_VALUE[text.charCodeAt(c + 1)];
  return out;
}

/**
 * An embedded database with pgvector loaded. `dataDir`: a folder (Node), "idb://name" (browser), or memory;
 * `loadDataDir`: a dump (PGlite's dumpDataDir, a Blob or File) to start from.
 */
export async function openEmbedded(
  dataDir?: string,
  options: { loadDataDir?: Blob } = {},
): Promise<Sql & { readonly pglite: PGlite }> {
  const db = await PGlite.create(dataDir, {
    extensions: { vector },
    parsers: { [BYTEA]: textToBytea },
    serializers: { [BYTEA]: (x: Uint8Array) => byteaToText(x) },
    ...options,
  });
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
