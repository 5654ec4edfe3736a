// Copying a whole parts database into another, table by table, in one transaction.

import type { PartsDb } from './parts-db';
import type { Sql } from './sql';

/** The tables in the order their rows can be inserted (each refers only to those before it). */
const TABLES = ['library_meta', 'parts', 'models', 'embeddings', 'embedding_queue'] as const;

/**
 * Replaces every row of `target` with the rows of `source` (a database of the same schema), in one transaction:
 * how the workbench opens a library file (a dump opened in memory first).
 */
export async function replaceContents(target: PartsDb, source: Sql): Promise<void> {
  await target.sql.transaction(async (tx) => {
    for (const t of [...TABLES].reverse()) await tx.query(`DELETE FROM ${t}`);
    for (const t of TABLES) {
      const cols = await source.query<{ column_name: string; udt_name: string }>(
        `SELECT column_name, udt_name FROM information_schema.columns WHERE table_name = $1 ORDER BY ordinal_position`,
        [t],
      );
      // Vectors travel as text (pgvector's own form); everything else as it is.
      const select = cols.rows.map((c) => (c.udt_name === 'vector' ? `${c.column_name}::text` : c.column_name));
      const casts = cols.rows.map((c, i) => `$${i + 1}${c.udt_name === 'vector' ? '::vector' : ''}`);
      const names = cols.rows.map((c) => c.column_name);
      const rows = await source.query<Record<string, unknown>>(`SELECT ${select.join(', ')} FROM ${t}`);
      for (const r of rows.rows)
        await tx.query(
          `INSERT INTO ${t} (${names.join(', ')}) VALUES (${casts.join(', ')})`,
          names.map((n) => {
            const v = r[n];
            return v !== null &&
              typeof v === 'object' &&
              !(v instanceof Uint8Array) &&
              !(v instanceof Date) &&
              !Array.isArray(v)
              ? JSON.stringify(v)
              : v;
          }),
        );
    }
    for (const t of ['parts', 'models'])
      await tx.query(`SELECT setval(pg_get_serial_sequence('${t}', 'id'), coalesce(max(id), 0) + 1, false) FROM ${t}`);
  });
}
