// The workbench's side of the parts database: the library as the page holds it (each part with its mesh for the
// views, the files that could not be read, where the library came from), the current model as a checkpoint,
// and embeddings keyed by the model that made them. The same tables as the command line's (parts-db.ts).

import type { LibraryPart } from '../library';
import type { ImportFailure } from '../mesh/import';
import type { ImportErrorCode, MeshInfo } from '../mesh/types';
import { measuredValues, type PartsDb } from './parts-db';
import { fileFrameBoxRatio } from '../points/pca';
import { bytesFloats, floatBytes, vectorLiteral } from './sql';
import { namedTable, type NamedTable, type NeighbourTable } from '../retrieval/neighbour-table';
import type { SizePrior } from '../retrieval/size-prior';

export interface WorkbenchLibrary {
  readonly parts: LibraryPart[];
  readonly failures: ImportFailure[];
  readonly source: 'demo' | 'user';
}

/** A part's mesh as the views draw it (positions x y z, triangle indices; no indices: a point list). */
export interface PartMesh {
  readonly name: string;
  readonly positions: Float32Array;
  readonly indices: Uint32Array;
}

/** A part's point pool as training and embedding read it (unit sphere, stride 3) with its normals. */
export interface PartClouds {
  readonly name: string;
  readonly points: Float32Array;
  readonly normals: Float32Array;
}

/** A part as the workbench hands it over: a library part and the SHA-256 of its file, when known. */
export type HashedPart = LibraryPart & { readonly contentHash?: string };

/** A part's cloud arrays when they were not asked for (one empty array, shared). */
const NO_FLOATS = new Float32Array(0);

/** The bytes of a 32-bit integer array, as they lie (little-endian on every host we run on). */
const u32Bytes = (a: Uint32Array | Int32Array): Uint8Array => new Uint8Array(a.buffer, a.byteOffset, a.byteLength);
function bytesU32(b: Uint8Array): Uint32Array {
  const out = new Uint32Array(b.byteLength / 4);
  new Uint8Array(out.buffer).set(b);
  return out;
}

/** A row's mesh columns as arrays (empty when the row has none, or they were not selected). */
function meshArrays(r: { mesh_positions: Uint8Array | null; mesh_indices: Uint8Array | null }) {
  return {
    meshPositions: r.mesh_positions ? bytesFloats(r.mesh_positions) : new Float32Array(0),
    meshIndices: r.mesh_indices ? bytesU32(r.mesh_indices) : new Uint32Array(0),
  };
}

/** Embeddings written per INSERT (measured: docs/log/2026-12-05-clouds-and-resamplings.md). */
export const EMBEDDINGS_PER_STATEMENT = 500;

/** The key under which the untrained encoder's embeddings are kept (it is a model too: its seed and settings). */
export const isUntrainedKey = (key: string): boolean => key.startsWith('untrained:');

export class WorkbenchStore {
  constructor(readonly db: PartsDb) {}

  private get sql() {
    return this.db.sql;
  }

  /** Stores (or replaces) parts read by the workbench, with their meshes. */
  async putParts(parts: readonly HashedPart[]): Promise<void> {
    if (parts.length === 0) return;
    await this.sql.transaction(async (tx) => {
      // A part read again whose file changed (or is not known not to have): a kept ordering with it is no longer true.
      await tx.query(
        `DELETE FROM orderings o USING parts p, unnest($1::text[], $2::text[]) AS u(path, hash)
         WHERE p.path = u.path AND (p.content_hash = '' OR p.content_hash <> u.hash) AND u.path = ANY(o.part_paths)`,
        [parts.map((p) => p.name), parts.map((p) => p.contentHash ?? '')],
      );
      for (const p of parts) {
        await tx.query(
          `INSERT INTO parts (path, content_hash, file_bytes, label, state, failure, failure_code, format, units,
             triangles, closed, bodies, extents, diagonal, info, sample_points, sample_seed, points, normals, centre,
             radius, mesh_positions, mesh_indices, box_ratio, changed_at)
           VALUES ($1, $2, $3, $4, 'ready', NULL, NULL, $5, $6, $7, $8, $9, $10::double precision[], $11, $12::jsonb,
             $13, 0, $14, $15, $16::double precision[], $17, $18, $19, $20, now())
           ON CONFLICT (path) DO UPDATE SET content_hash = EXCLUDED.content_hash, file_bytes = EXCLUDED.file_bytes,
             label = EXCLUDED.label, state = 'ready', failure = NULL, failure_code = NULL, format = EXCLUDED.format,
             units = EXCLUDED.units, triangles = EXCLUDED.triangles, closed = EXCLUDED.closed,
             bodies = EXCLUDED.bodies, extents = EXCLUDED.extents, diagonal = EXCLUDED.diagonal, info = EXCLUDED.info,
             sample_points = EXCLUDED.sample_points, sample_seed = EXCLUDED.sample_seed, points = EXCLUDED.points,
             normals = EXCLUDED.normals, centre = EXCLUDED.centre, radius = EXCLUDED.radius,
             mesh_positions = EXCLUDED.mesh_positions, mesh_indices = EXCLUDED.mesh_indices,
             box_ratio = EXCLUDED.box_ratio, changed_at = now()`,
          [
            p.name,
            p.contentHash ?? '',
            p.info.fileBytes,
            p.label,
            ...measuredValues(p.info, p.diagonal),
            p.points.length / 3,
            floatBytes(p.points),
            floatBytes(p.normals),
            [...p.centre],
            p.radius,
            floatBytes(p.meshPositions),
            u32Bytes(p.meshIndices),
            fileFrameBoxRatio(p.points),
          ],
        );
        // A part read again drops the embeddings of its earlier version.
        await tx.query('DELETE FROM embeddings WHERE part_id = (SELECT id FROM parts WHERE path = $1)', [p.name]);
      }
    });
  }

  /**
   * Says what the library now is: the parts named (stored before with putParts) and the files that failed. Rows of
   * anything else go, with their embeddings.
   */
  async setContents(
    names: readonly string[],
    failures: readonly ImportFailure[],
    source: 'demo' | 'user',
  ): Promise<void> {
    await this.sql.transaction(async (tx) => {
      const keep = [...names, ...failures.map((f) => f.file)];
      await tx.query('DELETE FROM parts WHERE NOT (path = ANY($1::text[]))', [keep]);
      for (const f of failures)
        await tx.query(
          `INSERT INTO parts (path, content_hash, file_bytes, label, state, failure, failure_code)
           VALUES ($1, '', 0, '', 'failed', $2, $3)
           ON CONFLICT (path) DO UPDATE SET state = 'failed', failure = EXCLUDED.failure,
             failure_code = EXCLUDED.failure_code, points = NULL, normals = NULL, box_ratio = NULL,
             mesh_positions = NULL, mesh_indices = NULL, changed_at = now()`,
          [f.file, f.reason, f.code],
        );
      await tx.query(
        `INSERT INTO library_meta (key, value) VALUES ('workbench', $1::jsonb)
         ON CONFLICT (key) DO UPDATE SET value = EXCLUDED.value`,
        [JSON.stringify({ source, names })],
      );
    });
  }

  /**
   * Millimetres per file unit by folder, for files whose format has no units (what a person set); folders not
   * named stay in file units.
   */
  async folderUnits(): Promise<Record<string, number>> {
    const r = await this.sql.query<{ value: Record<string, number> }>(
      `SELECT value FROM library_meta WHERE key = 'folder_units'`,
    );
    const out: Record<string, number> = {};
    for (const [folder, mm] of Object.entries(r.rows[0]?.value ?? {}))
      if (typeof mm === 'number' && mm > 0 && Number.isFinite(mm)) out[folder] = mm;
    return out;
  }

  /** Replaces the folders' units (see folderUnits); a factor that is not a positive number is refused. */
  async setFolderUnits(units: Readonly<Record<string, number>>): Promise<void> {
    for (const [folder, mm] of Object.entries(units))
      if (!(mm > 0) || !Number.isFinite(mm))
        throw new RangeError(`the units of folder "${folder}" must be a positive number of mm, got ${mm}`);
    await this.sql.query(
      `INSERT INTO library_meta (key, value) VALUES ('folder_units', $1::jsonb)
       ON CONFLICT (key) DO UPDATE SET value = EXCLUDED.value`,
      [JSON.stringify(units)],
    );
  }

  /** The library as the workbench last set it (parts in its order), or null when there is none. */
  async contents(): Promise<WorkbenchLibrary | null> {
    const outline = await this.outline();
    if (!outline) return null;
    return { parts: await this.parts(outline.names), failures: outline.failures, source: outline.source };
  }

  /** What the library holds without the parts' data: their names in the workbench's order, and the failures. */
  async outline(): Promise<{ names: string[]; failures: ImportFailure[]; source: 'demo' | 'user' } | null> {
    const meta = await this.sql.query<{ value: { source: 'demo' | 'user'; names: string[] } }>(
      `SELECT value FROM library_meta WHERE key = 'workbench'`,
    );
    const rows = await this.sql.query<{
      path: string;
      state: string;
      failure: string | null;
      failure_code: string | null;
    }>(`SELECT path, state, failure, failure_code FROM parts WHERE state <> 'pending' ORDER BY id`);
    if (!meta.rows[0] && rows.rows.length === 0) return null;
    const names: string[] = [];
    const failures: ImportFailure[] = [];
    for (const r of rows.rows) {
      if (r.state === 'ready') names.push(r.path);
      else
        failures.push({
          file: r.path,
          code: (r.failure_code ?? 'parse-failed') as ImportErrorCode,
          reason: r.failure ?? '',
        });
    }
    // The library the workbench last said, in its order: parts stored by a save that did not finish (a tab closed
    // half-way) are not part of it (the next save removes them).
    const order = meta.rows[0]?.value.names;
    if (!order) return { names, failures, source: 'user' };
    const held = new Set(names);
    return { names: order.filter((n) => held.has(n)), failures, source: meta.rows[0].value.source };
  }

  /**
   * The named parts with their data, in the order named (names not held are left out). Without `meshes`, each
   * part's mesh arrays are left empty (fetch them with `meshes` when a view needs them).
   */
  async parts(names: readonly string[], options: { meshes?: boolean } = {}): Promise<LibraryPart[]> {
    return (await this.partsAndRatios(names, { ...options, clouds: true })).parts;
  }

  /**
   * As `parts`, with each part's file-frame box ratio; without `clouds`, each part's point arrays are left empty
   * and its clouds are read only where the ratio was never kept (rows written before it was), which are then
   * given it.
   */
  async partsAndRatios(
    names: readonly string[],
    options: { meshes?: boolean; clouds?: boolean } = {},
  ): Promise<{ parts: LibraryPart[]; boxRatios: number[] }> {
    const withMeshes = options.meshes ?? true;
    const withClouds = options.clouds ?? true;
    const cloud = (column: string) =>
      withClouds ? column : `CASE WHEN box_ratio IS NULL THEN ${column} END AS ${column}`;
    const rows = await this.sql.query<{
      path: string;
      label: string;
      info: MeshInfo;
      diagonal: number;
      points: Uint8Array | null;
      normals: Uint8Array | null;
      centre: number[] | null;
      radius: number | null;
      mesh_positions: Uint8Array | null;
      mesh_indices: Uint8Array | null;
      box_ratio: number | null;
    }>(
      `SELECT path, label, info, diagonal, ${cloud('points')}, ${cloud('normals')}, centre, radius, box_ratio,
         ${withMeshes ? 'mesh_positions, mesh_indices' : 'NULL AS mesh_positions, NULL AS mesh_indices'}
       FROM parts WHERE state = 'ready' AND info IS NOT NULL AND points IS NOT NULL AND normals IS NOT NULL
         AND path = ANY($1::text[])`,
      [[...names]],
    );
    const byName = new Map(rows.rows.map((r) => [r.path, r]));
    const parts: LibraryPart[] = [];
    const boxRatios: number[] = [];
    const worked: { path: string; ratio: number }[] = [];
    for (const n of names) {
      const r = byName.get(n);
      if (!r) continue;
      const c = r.centre ?? [0, 0, 0];
      const points = r.points ? bytesFloats(r.points) : NO_FLOATS;
      let ratio = r.box_ratio;
      if (ratio === null) {
        ratio = fileFrameBoxRatio(points);
        worked.push({ path: r.path, ratio });
      }
      boxRatios.push(Number(ratio));
      parts.push({
        name: r.path,
        label: r.label,
        info: r.info,
        points: withClouds ? points : NO_FLOATS,
        normals: withClouds && r.normals ? bytesFloats(r.normals) : NO_FLOATS,
        centre: [c[0], c[1], c[2]],
        radius: Number(r.radius ?? 1),
        diagonal: Number(r.diagonal),
        ...meshArrays(r),
      });
    }
    if (worked.length > 0)
      await this.sql.query(
        `UPDATE parts SET box_ratio = u.ratio FROM unnest($1::text[], $2::double precision[]) AS u(path, ratio)
         WHERE parts.path = u.path`,
        [worked.map((w) => w.path), worked.map((w) => w.ratio)],
      );
    return { parts, boxRatios };
  }

  /** The meshes of the named parts that are held, in the order named. */
  async meshes(names: readonly string[]): Promise<PartMesh[]> {
    const rows = await this.sql.query<{
      path: string;
      mesh_positions: Uint8Array | null;
      mesh_indices: Uint8Array | null;
    }>(`SELECT path, mesh_positions, mesh_indices FROM parts WHERE state = 'ready' AND path = ANY($1::text[])`, [
      [...names],
    ]);
    const byName = new Map(rows.rows.map((r) => [r.path, r]));
    return names.flatMap((name) => {
      const r = byName.get(name);
      if (!r) return [];
      const { meshPositions: positions, meshIndices: indices } = meshArrays(r);
      return [{ name, positions, indices }];
    });
  }

  /** The point clouds (unit-sphere pools with normals) of the named parts that are held, in the order named. */
  async clouds(names: readonly string[]): Promise<PartClouds[]> {
    const rows = await this.sql.query<{ path: string; points: Uint8Array | null; normals: Uint8Array | null }>(
      `SELECT path, points, normals FROM parts WHERE state = 'ready' AND path = ANY($1::text[])`,
      [[...names]],
    );
    const byName = new Map(rows.rows.map((r) => [r.path, r]));
    return names.flatMap((name) => {
      const r = byName.get(name);
      if (!r?.points || !r.normals) return [];
      return [{ name, points: bytesFloats(r.points), normals: bytesFloats(r.normals) }];
    });
  }

  /**
   * Makes a model the current one (stored once per fingerprint); trained models that are no longer current go,
   * with their embeddings (a checkpoint every half minute would otherwise pile up).
   */
  async putCurrentModel(fingerprint: string, modelJson: unknown, weights: Uint8Array): Promise<number> {
    const id = await this.db.putModel(fingerprint, modelJson, weights);
    await this.db.setCurrentModel(id);
    await this.sql.query(`DELETE FROM models WHERE id <> $1 AND fingerprint NOT LIKE 'untrained:%'`, [id]);
    return id;
  }

  /** Keeps a model's embeddings of the named parts (rows of `dim` values in the names' order). */
  async putEmbeddings(key: string, names: readonly string[], vectors: Float32Array, dim: number): Promise<boolean> {
    return this.sql.transaction(async (tx) => {
      let model = (await tx.query<{ id: number }>('SELECT id FROM models WHERE fingerprint = $1', [key])).rows[0]?.id;
      if (model === undefined && isUntrainedKey(key)) {
        // One untrained encoder's embeddings kept at a time.
        await tx.query(`DELETE FROM models WHERE fingerprint LIKE 'untrained:%'`);
        model = (
          await tx.query<{ id: number }>(
            `INSERT INTO models (fingerprint, model_json, weights) VALUES ($1, $2::jsonb, $3) RETURNING id`,
            [key, JSON.stringify({ untrained: true }), new Uint8Array(0)],
          )
        ).rows[0].id;
      }
      if (model === undefined) return false; // the model was replaced meanwhile: these embeddings are stale
      await tx.query('DELETE FROM embeddings WHERE model_id = $1', [model]);
      // A few hundred rows a statement: all 20,000 rows of 1,024 values in one grew the database's memory by 3 GB
      // (PGlite in Node), which WebAssembly memory never gives back.
      for (let from = 0; from < names.length; from += EMBEDDINGS_PER_STATEMENT) {
        const to = Math.min(names.length, from + EMBEDDINGS_PER_STATEMENT);
        const literals: string[] = [];
        for (let i = from; i < to; i++) literals.push(vectorLiteral(vectors.subarray(i * dim, (i + 1) * dim)));
        await tx.query(
          `INSERT INTO embeddings (model_id, part_id, embedding)
           SELECT $1, p.id, u.e::vector FROM unnest($2::text[], $3::text[]) AS u(path, e) JOIN parts p ON p.path = u.path`,
          [model, names.slice(from, to), literals],
        );
      }
      return true;
    });
  }

  /** A model's embeddings of the named parts in that order, or null unless every one is kept. */
  async embeddings(key: string, names: readonly string[]): Promise<{ vectors: Float32Array; dim: number } | null> {
    // Read a few hundred at a time, as they are written: one read of 20,000 rows grew the memory by 0.8 GB.
    let vectors: Float32Array | null = null;
    let dim = 0;
    for (let from = 0; from < names.length; from += EMBEDDINGS_PER_STATEMENT) {
      const chunk = names.slice(from, from + EMBEDDINGS_PER_STATEMENT);
      const r = await this.sql.query<{ path: string; v: number[] }>(
        `SELECT p.path, e.embedding::real[] AS v FROM embeddings e JOIN parts p ON p.id = e.part_id
         JOIN models m ON m.id = e.model_id WHERE m.fingerprint = $1 AND p.path = ANY($2::text[])`,
        [key, chunk],
      );
      if (r.rows.length === 0) return null;
      if (!vectors) {
        dim = r.rows[0].v.length;
        vectors = new Float32Array(names.length * dim);
      }
      const byName = new Map(r.rows.map((x) => [x.path, x.v]));
      for (const [j, n] of chunk.entries()) {
        const v = byName.get(n);
        if (!v) return null;
        vectors.set(v, (from + j) * dim);
      }
    }
    return vectors ? { vectors, dim } : null;
  }

  /**
   * Keeps a model's neighbour table (rows in the order of `names`) with the size prior in its scores; false when
   * that model is no longer kept. One table a model: the next replaces it.
   */
  async putOrdering(key: string, names: readonly string[], t: NeighbourTable, sizes: SizePrior): Promise<boolean> {
    if (names.length !== t.size || sizes.logSize.length !== t.size)
      throw new RangeError(
        `putOrdering: ${names.length} names and ${sizes.logSize.length} sizes for a table of ${t.size}`,
      );
    return this.sql.transaction(async (tx) => {
      const model = (await tx.query<{ id: number }>('SELECT id FROM models WHERE fingerprint = $1', [key])).rows[0]?.id;
      if (model === undefined) return false;
      await tx.query(
        `INSERT INTO orderings (model_id, part_paths, width, neighbours, scores, lengths, size_weight, log_sizes)
         VALUES ($1, $2, $3, $4, $5, $6, $7, $8)
         ON CONFLICT (model_id) DO UPDATE SET part_paths = EXCLUDED.part_paths, width = EXCLUDED.width,
           neighbours = EXCLUDED.neighbours, scores = EXCLUDED.scores, lengths = EXCLUDED.lengths,
           size_weight = EXCLUDED.size_weight, log_sizes = EXCLUDED.log_sizes, built_at = now()`,
        [
          model,
          [...names],
          t.width,
          u32Bytes(t.index),
          floatBytes(t.score),
          u32Bytes(t.length),
          sizes.weight,
          floatBytes(sizes.logSize),
        ],
      );
      return true;
    });
  }

  /** A model's kept neighbour table with the names of its rows, or null. */
  async ordering(key: string): Promise<NamedTable | null> {
    const r = await this.sql.query<{
      part_paths: string[];
      width: number;
      neighbours: Uint8Array;
      scores: Uint8Array;
      lengths: Uint8Array;
      size_weight: number;
      log_sizes: Uint8Array;
    }>(
      `SELECT o.part_paths, o.width, o.neighbours, o.scores, o.lengths, o.size_weight, o.log_sizes
       FROM orderings o JOIN models m ON m.id = o.model_id WHERE m.fingerprint = $1`,
      [key],
    );
    const row = r.rows[0];
    if (!row) return null;
    const asInt = (b: Uint8Array) => new Int32Array(bytesU32(b).buffer);
    return namedTable({
      names: row.part_paths,
      width: row.width,
      index: asInt(row.neighbours),
      score: bytesFloats(row.scores),
      length: asInt(row.lengths),
      sizeWeight: row.size_weight,
      logSize: bytesFloats(row.log_sizes),
    });
  }
}
