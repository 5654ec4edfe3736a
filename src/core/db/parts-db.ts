// The parts database: a library's part files (by path and content hash), their sampled point pools, trained
// models and each model's embeddings, in PostgreSQL with pgvector (embedded PGlite or a server; see sql.ts).
//
// Work is shared through the database itself: reading a listed file and embedding a part are both taken with
// FOR UPDATE SKIP LOCKED inside the transaction that writes the result, so two processes never take the same
// row, and a process that dies mid-batch rolls back and leaves its rows to the others.

import type { SamplingSettings } from '../library';
import type { MeshInfo } from '../mesh/types';
import { fileFrameBoxRatio } from '../points/pca';
import { migrate } from './schema';
import { bytesFloats, floatBytes, vectorLiteral, type Sql } from './sql';

/** A file found in the library folder. */
export interface ListedFile {
  /** Path inside the library, '/'-separated. */
  readonly path: string;
  /** SHA-256 of the file's bytes, hex. */
  readonly hash: string;
  readonly bytes: number;
  readonly label: string;
}

export interface Reconciled {
  readonly added: string[];
  readonly changed: string[];
  readonly removed: string[];
  readonly unchanged: number;
}

/** What reading a claimed file gave. */
export type ReadOutcome =
  | {
      readonly kind: 'part';
      readonly info: MeshInfo;
      readonly points: Float32Array;
      readonly normals: Float32Array;
      readonly diagonal: number;
    }
  | { readonly kind: 'failed'; readonly reason: string };

export interface ClaimedFile {
  readonly id: number;
  readonly path: string;
}

/** A part as stored: its measurements and, when asked for, its point pool. */
export interface StoredPart {
  readonly id: number;
  readonly path: string;
  readonly label: string;
  readonly info: MeshInfo;
  readonly diagonal: number;
}

export interface StoredPool {
  readonly id: number;
  readonly points: Float32Array;
  readonly normals: Float32Array;
}

export interface StoredModel {
  readonly id: number;
  readonly fingerprint: string;
  /** The run folder's model.json, as parsed JSON. */
  readonly modelJson: unknown;
  readonly weights: Uint8Array;
}

export interface Neighbour extends StoredPart {
  /** Cosine similarity to the query, computed in double precision from the stored vector. */
  readonly score: number;
}

export interface SearchFilter {
  /** Keep parts whose diagonal (times `scaleFileUnits` for parts in file units) is within [d/r, d·r] of `queryDiagonal`. */
  readonly sizeRatio?: number;
  readonly queryDiagonal?: number;
  /** Millimetres per unit of parts stored in file units (1 when not known: compared as they are). */
  readonly scaleFileUnits?: number;
  /** Keep only these folders. */
  readonly labels?: readonly string[];
}

type PartRow = {
  id: number;
  path: string;
  label: string;
  info: MeshInfo;
  diagonal: number;
};

const toPart = (r: PartRow): StoredPart => ({
  id: Number(r.id),
  path: r.path,
  label: r.label,
  info: r.info,
  diagonal: Number(r.diagonal),
});

/**
 * A read part's measured columns, in the order both writers list them: format, units, triangles, closed, bodies,
 * extents, diagonal, info.
 */
export const measuredValues = (info: MeshInfo, diagonal: number): unknown[] => [
  info.format,
  info.units,
  info.triangleCount,
  info.closed,
  info.bodies,
  [...info.extents],
  diagonal,
  JSON.stringify(info),
];

export class PartsDb {
  private constructor(readonly sql: Sql) {}

  /** Opens a database, applying any migrations it lacks. */
  static async open(sql: Sql): Promise<PartsDb> {
    await migrate(sql);
    return new PartsDb(sql);
  }

  close(): Promise<void> {
    return this.sql.close();
  }

  /**
   * The point sampling every stored pool uses: set by the first caller, checked against by the rest (pools sampled
   * differently would not embed alike).
   */
  async useSampling(wanted: SamplingSettings): Promise<SamplingSettings> {
    await this.sql.query(
      `INSERT INTO library_meta (key, value) VALUES ('sampling', $1::jsonb) ON CONFLICT (key) DO NOTHING`,
      [JSON.stringify(wanted)],
    );
    const r = await this.sql.query<{ value: SamplingSettings }>(
      `SELECT value FROM library_meta WHERE key = 'sampling'`,
    );
    return r.rows[0].value;
  }

  /**
   * Brings the list of parts in line with the folder's files: new paths are added (to be read), paths whose content
   * changed go back to be read (their embeddings dropped), paths no longer there are removed with their embeddings.
   * Counts are what this call changed (another process syncing at once counts the rest).
   */
  async reconcile(files: readonly ListedFile[]): Promise<Reconciled> {
    const paths = files.map((f) => f.path),
      hashes = files.map((f) => f.hash),
      bytes = files.map((f) => f.bytes),
      labels = files.map((f) => f.label);
    return this.sql.transaction(async (tx) => {
      const listed = `unnest($1::text[], $2::text[], $3::bigint[], $4::text[]) AS u(path, hash, bytes, label)`;
      const added = await tx.query<{ path: string }>(
        `INSERT INTO parts (path, content_hash, file_bytes, label)
         SELECT u.path, u.hash, u.bytes, u.label FROM ${listed}
         ON CONFLICT (path) DO NOTHING RETURNING path`,
        [paths, hashes, bytes, labels],
      );
      const changed = await tx.query<{ path: string; id: number }>(
        `UPDATE parts SET content_hash = u.hash, file_bytes = u.bytes, label = u.label, state = 'pending',
           failure = NULL, format = NULL, units = NULL, triangles = NULL, closed = NULL, bodies = NULL, extents = NULL,
           diagonal = NULL, info = NULL, sample_points = NULL, sample_seed = NULL, points = NULL, normals = NULL,
           box_ratio = NULL, changed_at = now()
         FROM ${listed} WHERE parts.path = u.path AND parts.content_hash <> u.hash RETURNING parts.path, parts.id`,
        [paths, hashes, bytes, labels],
      );
      if (changed.rows.length) {
        const ids = changed.rows.map((r) => Number(r.id));
        await tx.query('DELETE FROM embeddings WHERE part_id = ANY($1::int[])', [ids]);
        await tx.query('DELETE FROM embedding_queue WHERE part_id = ANY($1::int[])', [ids]);
      }
      // A labels.csv edit moves a part to another folder label without touching its file.
      await tx.query(
        `UPDATE parts SET label = u.label FROM ${listed} WHERE parts.path = u.path AND parts.label <> u.label`,
        [paths, hashes, bytes, labels],
      );
      const removed = await tx.query<{ path: string }>(
        'DELETE FROM parts WHERE NOT (path = ANY($1::text[])) RETURNING path',
        [paths],
      );
      const sorted = (rows: { path: string }[]) => rows.map((r) => r.path).sort();
      return {
        added: sorted(added.rows),
        changed: sorted(changed.rows),
        removed: sorted(removed.rows),
        unchanged: files.length - added.rows.length - changed.rows.length,
      };
    });
  }

  /** Files listed but not read yet. */
  async pendingCount(): Promise<number> {
    const r = await this.sql.query<{ n: number }>(`SELECT count(*) AS n FROM parts WHERE state = 'pending'`);
    return Number(r.rows[0].n);
  }

  /**
   * Takes up to `limit` listed files no other process holds, reads them with `read` (one outcome per file, in
   * order) and stores the parts or the reasons they failed, in one transaction. With `modelId`, each part read is
   * queued for that model's embedding in the same transaction. Returns the files taken (none: nothing left).
   */
  async readPending(
    limit: number,
    sampling: SamplingSettings,
    read: (files: readonly ClaimedFile[]) => Promise<readonly ReadOutcome[]>,
    modelId: number | null = null,
  ): Promise<{ files: ClaimedFile[]; outcomes: readonly ReadOutcome[] }> {
    return this.sql.transaction(async (tx) => {
      const claimed = await tx.query<ClaimedFile>(
        `SELECT id, path FROM parts WHERE state = 'pending' ORDER BY id LIMIT $1 FOR UPDATE SKIP LOCKED`,
        [limit],
      );
      const files = claimed.rows.map((r) => ({ id: Number(r.id), path: r.path }));
      if (files.length === 0) return { files, outcomes: [] };
      const outcomes = await read(files);
      if (outcomes.length !== files.length)
        throw new Error(`readPending: ${files.length} files taken, ${outcomes.length} outcomes`);
      for (const [i, o] of outcomes.entries()) {
        if (o.kind === 'failed') {
          await tx.query(`UPDATE parts SET state = 'failed', failure = $2, changed_at = now() WHERE id = $1`, [
            files[i].id,
            o.reason,
          ]);
          continue;
        }
        await tx.query(
          `UPDATE parts SET state = 'ready', failure = NULL, format = $2, units = $3, triangles = $4, closed = $5,
             bodies = $6, extents = $7::double precision[], diagonal = $8, info = $9::jsonb, sample_points = $10,
             sample_seed = $11, points = $12, normals = $13, box_ratio = $14, changed_at = now()
           WHERE id = $1`,
          [
            files[i].id,
            ...measuredValues(o.info, o.diagonal),
            sampling.points,
            sampling.seed,
            floatBytes(o.points),
            floatBytes(o.normals),
            fileFrameBoxRatio(o.points),
          ],
        );
      }
      if (modelId !== null) {
        const ready = files.filter((_, i) => outcomes[i].kind === 'part').map((f) => f.id);
        await tx.query(
          `INSERT INTO embedding_queue (model_id, part_id) SELECT $1, unnest($2::int[]) ON CONFLICT DO NOTHING`,
          [modelId, ready],
        );
      }
      return { files, outcomes };
    });
  }

  /** Stores a model (once per fingerprint) and returns its id. */
  async putModel(fingerprint: string, modelJson: unknown, weights: Uint8Array): Promise<number> {
    const r = await this.sql.query<{ id: number }>(
      `INSERT INTO models (fingerprint, model_json, weights) VALUES ($1, $2::jsonb, $3)
       ON CONFLICT (fingerprint) DO UPDATE SET fingerprint = EXCLUDED.fingerprint RETURNING id`,
      [fingerprint, JSON.stringify(modelJson), weights],
    );
    return Number(r.rows[0].id);
  }

  /** Makes a stored model the one queries and syncs use. */
  async setCurrentModel(id: number): Promise<void> {
    await this.sql.query(
      `INSERT INTO library_meta (key, value) VALUES ('current_model', $1::jsonb)
       ON CONFLICT (key) DO UPDATE SET value = EXCLUDED.value`,
      [JSON.stringify({ id })],
    );
  }

  async currentModel(): Promise<StoredModel | null> {
    return this.oneModel(
      `SELECT m.id, m.fingerprint, m.model_json, m.weights FROM library_meta k
       JOIN models m ON m.id = (k.value->>'id')::int WHERE k.key = 'current_model'`,
    );
  }

  async modelByFingerprint(fingerprint: string): Promise<StoredModel | null> {
    return this.oneModel('SELECT id, fingerprint, model_json, weights FROM models WHERE fingerprint = $1', [
      fingerprint,
    ]);
  }

  private async oneModel(text: string, params?: unknown[]): Promise<StoredModel | null> {
    const r = await this.sql.query<{ id: number; fingerprint: string; model_json: unknown; weights: Uint8Array }>(
      text,
      params,
    );
    const row = r.rows[0];
    if (!row) return null;
    return {
      id: Number(row.id),
      fingerprint: row.fingerprint,
      modelJson: row.model_json,
      weights: new Uint8Array(row.weights),
    };
  }

  /** Queues every read part the model has not embedded; returns how many are waiting for it in all. */
  async queueEmbeddings(modelId: number): Promise<number> {
    await this.sql.query(
      `INSERT INTO embedding_queue (model_id, part_id)
       SELECT $1, p.id FROM parts p WHERE p.state = 'ready'
         AND NOT EXISTS (SELECT 1 FROM embeddings e WHERE e.model_id = $1 AND e.part_id = p.id)
       ON CONFLICT DO NOTHING`,
      [modelId],
    );
    const r = await this.sql.query<{ n: number }>('SELECT count(*) AS n FROM embedding_queue WHERE model_id = $1', [
      modelId,
    ]);
    return Number(r.rows[0].n);
  }

  /**
   * Takes up to `limit` queued parts of a model that no other process holds, embeds their pools with `embed`
   * (count × D values, row-major, in the order given) and writes the embeddings, in one transaction. Returns how
   * many queued parts were taken (0: the queue is empty), how many were embedded here (a part removed meanwhile is
   * not) and how many embeddings were written (fewer only if another process had already written one).
   */
  async embedQueued(
    modelId: number,
    limit: number,
    embed: (pools: readonly StoredPool[]) => Promise<Float32Array> | Float32Array,
  ): Promise<{ taken: number; embedded: number; written: number }> {
    return this.sql.transaction(async (tx) => {
      const queued = await tx.query<{ part_id: number }>(
        `SELECT part_id FROM embedding_queue WHERE model_id = $1 ORDER BY part_id LIMIT $2 FOR UPDATE SKIP LOCKED`,
        [modelId, limit],
      );
      const ids = queued.rows.map((r) => Number(r.part_id));
      if (ids.length === 0) return { taken: 0, embedded: 0, written: 0 };
      const pools = await tx.query<{ id: number; points: Uint8Array; normals: Uint8Array }>(
        `SELECT id, points, normals FROM parts WHERE id = ANY($1::int[]) AND state = 'ready' ORDER BY id`,
        [ids],
      );
      const stored = pools.rows.map((r) => ({
        id: Number(r.id),
        points: bytesFloats(r.points),
        normals: bytesFloats(r.normals),
      }));
      let written = 0;
      if (stored.length) {
        const vectors = await embed(stored);
        const D = vectors.length / stored.length;
        if (!Number.isInteger(D) || D === 0)
          throw new Error(`embedQueued: ${vectors.length} values for ${stored.length} parts`);
        const literals = stored.map((_, i) => vectorLiteral(vectors.subarray(i * D, (i + 1) * D)));
        const w = await tx.query(
          `INSERT INTO embeddings (model_id, part_id, embedding)
           SELECT $1, u.id, u.e::vector FROM unnest($2::int[], $3::text[]) AS u(id, e) ON CONFLICT DO NOTHING`,
          [modelId, stored.map((p) => p.id), literals],
        );
        written = w.affected;
      }
      await tx.query('DELETE FROM embedding_queue WHERE model_id = $1 AND part_id = ANY($2::int[])', [modelId, ids]);
      return { taken: ids.length, embedded: stored.length, written };
    });
  }

  /** The k parts nearest a query vector by cosine (pgvector's <=>), with the filters as SQL predicates. */
  async nearest(modelId: number, query: Float32Array, k: number, filter: SearchFilter = {}): Promise<Neighbour[]> {
    const params: unknown[] = [modelId, vectorLiteral(query), k];
    const where: string[] = ['e.model_id = $1'];
    const r = filter.sizeRatio,
      d0 = filter.queryDiagonal;
    if (r !== undefined && !(r >= 1)) throw new RangeError(`size ratio must be ≥ 1, got ${r}`);
    if (r !== undefined && d0 !== undefined && d0 > 0) {
      params.push(filter.scaleFileUnits ?? 1, d0 / r, d0 * r);
      const n = params.length;
      where.push(
        `p.diagonal * (CASE WHEN p.units = 'mm' THEN 1 ELSE $${n - 2}::double precision END) BETWEEN $${n - 1} AND $${n}`,
      );
    }
    if (filter.labels) {
      params.push([...filter.labels]);
      where.push(`p.label = ANY($${params.length}::text[])`);
    }
    // The k nearest first, carrying nothing but ids and vectors (and joined to the parts only to filter); the
    // parts' details for those k only. A target list with the details is evaluated for every row before the sort,
    // and an unneeded join costs as much again: 110 ms against 13 ms at 20,000 parts.
    const rows = await this.sql.query<PartRow & { v: number[] }>(
      `WITH top AS (
         SELECT e.part_id, e.embedding, e.embedding <=> $2::vector AS distance
         FROM embeddings e ${where.length > 1 ? 'JOIN parts p ON p.id = e.part_id' : ''}
         WHERE ${where.join(' AND ')}
         ORDER BY distance, e.part_id LIMIT $3)
       SELECT p.id, p.path, p.label, p.info, p.diagonal, top.embedding::real[] AS v
       FROM top JOIN parts p ON p.id = top.part_id ORDER BY top.distance, top.part_id`,
      params,
    );
    return rows.rows.map((row) => ({ ...toPart(row), score: cosine(query, row.v) }));
  }

  /** Every embedding of a model with its part, ordered by path: the in-memory index's input. */
  async embeddings(modelId: number): Promise<{ parts: StoredPart[]; vectors: Float32Array; dim: number }> {
    const rows = await this.sql.query<PartRow & { v: number[] }>(
      `SELECT p.id, p.path, p.label, p.info, p.diagonal, e.embedding::real[] AS v
       FROM embeddings e JOIN parts p ON p.id = e.part_id WHERE e.model_id = $1 ORDER BY p.path`,
      [modelId],
    );
    const dim = rows.rows[0]?.v.length ?? 0;
    const vectors = new Float32Array(rows.rows.length * dim);
    rows.rows.forEach((r, i) => vectors.set(r.v, i * dim));
    return { parts: rows.rows.map(toPart), vectors, dim };
  }

  /** Every part read, ordered by path, with its point pool. */
  async readyParts(): Promise<(StoredPart & StoredPool)[]> {
    const rows = await this.sql.query<PartRow & { points: Uint8Array; normals: Uint8Array }>(
      `SELECT id, path, label, info, diagonal, points, normals FROM parts WHERE state = 'ready' ORDER BY path`,
    );
    return rows.rows.map((r) => ({ ...toPart(r), points: bytesFloats(r.points), normals: bytesFloats(r.normals) }));
  }

  /** Files that could not be read, with the reasons. */
  async failures(): Promise<{ path: string; reason: string }[]> {
    const r = await this.sql.query<{ path: string; failure: string }>(
      `SELECT path, failure FROM parts WHERE state = 'failed' ORDER BY path`,
    );
    return r.rows.map((x) => ({ path: x.path, reason: x.failure }));
  }

  /** Parts by state, and embeddings of a model. */
  async counts(
    modelId: number | null = null,
  ): Promise<{ pending: number; ready: number; failed: number; embedded: number }> {
    const r = await this.sql.query<{ state: string; n: number }>(
      'SELECT state, count(*) AS n FROM parts GROUP BY state',
    );
    const by = Object.fromEntries(r.rows.map((x) => [x.state, Number(x.n)]));
    let embedded = 0;
    if (modelId !== null) {
      const e = await this.sql.query<{ n: number }>('SELECT count(*) AS n FROM embeddings WHERE model_id = $1', [
        modelId,
      ]);
      embedded = Number(e.rows[0].n);
    }
    return { pending: by.pending ?? 0, ready: by.ready ?? 0, failed: by.failed ?? 0, embedded };
  }
}

/** Cosine of two vectors, accumulated in double precision. */
function cosine(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let dot = 0,
    na = 0,
    nb = 0;
  for (let i = 0; i < a.length; i++) {
    dot += a[i] * b[i];
    na += a[i] * a[i];
    nb += b[i] * b[i];
  }
  return na > 0 && nb > 0 ? dot / Math.sqrt(na * nb) : 0;
}
