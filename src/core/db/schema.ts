// The parts database's schema, as numbered migrations applied in order. A database records the migrations it
// has had (shapekin_schema); opening one applies what is missing, under a lock, in one transaction each, so
// several processes opening a new server database at once apply each migration exactly once.
//
// Never edit a migration that has shipped: add the next one.

import type { Sql } from './sql';

export interface Migration {
  readonly version: number;
  readonly what: string;
  readonly sql: string;
}

export const MIGRATIONS: readonly Migration[] = [
  {
    version: 1,
    what: 'parts, models, embeddings and the embedding queue',
    sql: `
CREATE TABLE library_meta (
  key text PRIMARY KEY,
  value jsonb NOT NULL
);
-- One row per part file of the library, by its path inside the library folder ('/'-separated).
-- state: pending (listed, not yet read), ready (read and sampled), failed (could not be read; failure says why).
CREATE TABLE parts (
  id serial PRIMARY KEY,
  path text NOT NULL UNIQUE,
  content_hash text NOT NULL,
  file_bytes bigint NOT NULL,
  label text NOT NULL,
  state text NOT NULL DEFAULT 'pending' CHECK (state IN ('pending', 'ready', 'failed')),
  failure text,
  format text,
  units text,
  triangles integer,
  closed boolean,
  bodies integer,
  extents double precision[],
  diagonal double precision,
  info jsonb,
  sample_points integer,
  sample_seed integer,
  points bytea,
  normals bytea,
  changed_at timestamptz NOT NULL DEFAULT now()
);
CREATE INDEX parts_state ON parts (state);
CREATE INDEX parts_label ON parts (label);
-- A trained encoder: its model.json and weights.bin, as a run folder holds them.
CREATE TABLE models (
  id serial PRIMARY KEY,
  fingerprint text NOT NULL UNIQUE,
  model_json jsonb NOT NULL,
  weights bytea NOT NULL,
  added_at timestamptz NOT NULL DEFAULT now()
);
CREATE TABLE embeddings (
  model_id integer NOT NULL REFERENCES models ON DELETE CASCADE,
  part_id integer NOT NULL REFERENCES parts ON DELETE CASCADE,
  embedding vector NOT NULL,
  PRIMARY KEY (model_id, part_id)
);
CREATE INDEX embeddings_part ON embeddings (part_id);
-- Parts a model has still to embed. A process takes rows with FOR UPDATE SKIP LOCKED and deletes them in the
-- transaction that writes their embeddings: a process that dies rolls back and the rows go to the others.
CREATE TABLE embedding_queue (
  model_id integer NOT NULL REFERENCES models ON DELETE CASCADE,
  part_id integer NOT NULL REFERENCES parts ON DELETE CASCADE,
  PRIMARY KEY (model_id, part_id)
);
`,
  },
  {
    version: 2,
    what: "what the workbench shows of a part: its mesh, its cloud's centre and radius, a failure's kind",
    sql: `
ALTER TABLE parts
  ADD COLUMN failure_code text,
  ADD COLUMN centre double precision[],
  ADD COLUMN radius double precision,
  ADD COLUMN mesh_positions bytea,
  ADD COLUMN mesh_indices bytea;
`,
  },
  {
    version: 3,
    what: 'float data stored without compression (it does not compress; trying cost the writer time)',
    sql: `
ALTER TABLE parts
  ALTER COLUMN points SET STORAGE EXTERNAL,
  ALTER COLUMN normals SET STORAGE EXTERNAL,
  ALTER COLUMN mesh_positions SET STORAGE EXTERNAL,
  ALTER COLUMN mesh_indices SET STORAGE EXTERNAL;
ALTER TABLE models ALTER COLUMN weights SET STORAGE EXTERNAL;
`,
  },
  {
    version: 4,
    what: "a model's neighbour table (ordering through the library), kept so a reload or a changed library does not redo all pairs",
    sql: `
-- Each part's best candidates by cosine under one model (retrieval/neighbour-table.ts): row r stands for
-- part_paths[r]; neighbours (int32) and scores (float32) hold width entries a row, lengths (int32) how many are used.
CREATE TABLE orderings (
  model_id integer PRIMARY KEY REFERENCES models ON DELETE CASCADE,
  part_paths text[] NOT NULL,
  width integer NOT NULL CHECK (width > 0),
  neighbours bytea NOT NULL,
  scores bytea NOT NULL,
  lengths bytea NOT NULL,
  built_at timestamptz NOT NULL DEFAULT now()
);
ALTER TABLE orderings
  ALTER COLUMN neighbours SET STORAGE EXTERNAL,
  ALTER COLUMN scores SET STORAGE EXTERNAL,
  ALTER COLUMN lengths SET STORAGE EXTERNAL;
`,
  },
  {
    version: 5,
    what: "each part's file-frame box ratio (the default pose reads it), kept so reopening a library need not read its clouds",
    sql: `
-- fileFrameBoxRatio of the part's point pool (points/pca.ts); NULL on rows written before it (worked out on read).
ALTER TABLE parts ADD COLUMN box_ratio double precision;
`,
  },
  {
    version: 6,
    what: "the size prior a kept neighbour table's scores include, so it is carried over as it was built",
    sql: `
-- Tables kept before hold plain cosines, and the ordering now takes each pair's cosine less the size prior
-- (retrieval/size-prior.ts): they are dropped, and the next search builds them again. size_weight is the prior's
-- weight, log_sizes (float32) each row's ln diagonal (NaN: unknown) when its scores were worked out.
DELETE FROM orderings;
ALTER TABLE orderings
  ADD COLUMN size_weight double precision NOT NULL CHECK (size_weight >= 0),
  ADD COLUMN log_sizes bytea NOT NULL;
ALTER TABLE orderings ALTER COLUMN log_sizes SET STORAGE EXTERNAL;
`,
  },
];

export const SCHEMA_VERSION = MIGRATIONS[MIGRATIONS.length - 1].version;

/** Raised when pgvector is missing or the database is newer than this program. */
export class DatabaseSetupError extends Error {}

/** Applies the migrations a database lacks; returns the versions applied. */
export async function migrate(sql: Sql): Promise<number[]> {
  try {
    await sql.query('CREATE EXTENSION IF NOT EXISTS vector');
  } catch (err) {
    const message = (err as Error).message;
    throw new DatabaseSetupError(
      `${sql.where} has no pgvector extension (${message}). Install pgvector on the server (packages are named ` +
        `postgresql-NN-pgvector) and run "CREATE EXTENSION vector;" once as a superuser in this database.`,
    );
  }
  await sql.query(
    'CREATE TABLE IF NOT EXISTS shapekin_schema (version integer PRIMARY KEY, applied_at timestamptz NOT NULL DEFAULT now())',
  );
  const applied: number[] = [];
  for (const m of MIGRATIONS) {
    const done = await sql.transaction(async (tx) => {
      // One process at a time past this point (a transaction-scoped lock; released at commit or on death).
      await tx.query('SELECT pg_advisory_xact_lock(5133704)');
      const has = await tx.query('SELECT 1 FROM shapekin_schema WHERE version = $1', [m.version]);
      if (has.rows.length) return false;
      await tx.exec(m.sql);
      await tx.query('INSERT INTO shapekin_schema (version) VALUES ($1)', [m.version]);
      return true;
    });
    if (done) applied.push(m.version);
  }
  const newest = await sql.query<{ v: number | null }>('SELECT max(version) AS v FROM shapekin_schema');
  const v = Number(newest.rows[0]?.v ?? 0);
  if (v > SCHEMA_VERSION)
    throw new DatabaseSetupError(
      `${sql.where} was written by a newer Shapekin (schema ${v}; this one knows up to ${SCHEMA_VERSION}): update Shapekin`,
    );
  return applied;
}
