// `shapekin sync`: brings the parts database in line with a library folder. Files are compared by content hash
// (new, changed, removed, unchanged); new and changed files are read and sampled on all cores; what the current
// model has not embedded is embedded. Reading and embedding take their rows from the database batch by batch, so
// several processes syncing one server database share the work, and a stopped or killed sync loses only the
// batch it was on (rolled back, taken up by the next run or by another process).

import { readFileSync, statSync } from 'node:fs';
import { join, relative, sep } from 'node:path';
import { labelFromPath, type SamplingSettings } from '../core/library';
import { encodersFromCheckpoint, type Checkpoint } from '../core/model/checkpoint';
import { disposeEncoders, embedForRetrieval } from '../core/model/embed';
import { POOL_POINTS } from '../core/model/defaults';
import type { ListedFile, PartsDb, ReadOutcome } from '../core/db/parts-db';
import { checkpointOf, runFiles } from './db';
import { sha256Hex } from '../core/checksum';
import { initBackend } from '../core/model/backend';
import { CliError } from './errors';
import { ImportPool } from './import-pool';
import { listFiles, readLabelsCsv } from './library-dir';
import { Progress } from './progress';

export interface SyncOptions {
  readonly threads: number;
  readonly maxBytes: number;
  /** A run folder whose model becomes the database's current model. */
  readonly model?: string;
  /** Files read per database transaction (per thread). */
  readonly readBatchPerThread?: number;
  /** Parts embedded per database transaction. */
  readonly embedBatch?: number;
  /** Asked between batches: true stops the sync there (what is written stays). */
  readonly stopped?: () => boolean;
  /** The tfjs backend to embed with (default wasm). */
  readonly backend?: 'wasm' | 'cpu';
}

export interface SyncReport {
  readonly database: string;
  readonly files: number;
  readonly added: string[];
  readonly changed: string[];
  readonly removed: string[];
  readonly unchanged: number;
  /** Files this run read and sampled. */
  readonly read: number;
  /** Files this run could not read, with the reasons. */
  readonly failed: { file: string; reason: string }[];
  /** Files that had failed before and are unchanged (not read again). */
  readonly still_failing: number;
  readonly model: string | null;
  /** Parts this run embedded (each part is embedded by one process only). */
  readonly embedded: number;
  readonly parts: { ready: number; failed: number; pending: number; embedded: number };
  readonly stopped: boolean;
  readonly seconds: number;
}

export async function syncLibrary(root: string, db: PartsDb, options: SyncOptions): Promise<SyncReport> {
  const t0 = performance.now();
  const stopped = options.stopped ?? (() => false);
  const paths = listFiles(root);
  const csv = readLabelsCsv(root);
  const hashing = new Progress('hashing', paths.length);
  const files: ListedFile[] = [];
  for (const [i, path] of paths.entries()) {
    const name = relative(root, path).split(sep).join('/');
    const bytes = readFileSync(path);
    hashing.update(i + 1, name);
    files.push({
      path: name,
      hash: await sha256Hex(bytes),
      bytes: bytes.byteLength,
      label: csv?.get(name) ?? labelFromPath(name),
    });
  }
  hashing.done();

  // The model first: its pools must be sampled as the stored ones are.
  let checkpoint: Checkpoint | null = null;
  let modelId: number | null = null;
  let fingerprint: string | null = null;
  if (options.model) {
    const run = await runFiles(options.model);
    modelId = await db.putModel(run.fingerprint, run.modelJson, run.weights);
    await db.setCurrentModel(modelId);
  }
  const current = await db.currentModel();
  if (current) {
    checkpoint = checkpointOf(current);
    await initBackend({ prefer: options.backend ?? 'wasm' });
    modelId = current.id;
    fingerprint = current.fingerprint;
  }
  const wanted: SamplingSettings = checkpoint?.manifest.sampling ?? { points: POOL_POINTS, seed: 0 };
  const sampling = await db.useSampling(wanted);
  if (sampling.points !== wanted.points || sampling.seed !== wanted.seed)
    throw new CliError(
      `the database keeps point pools of ${sampling.points} points (seed ${sampling.seed}) but the model expects ` +
        `${wanted.points} (seed ${wanted.seed}); use a new database for this model`,
    );

  const changes = await db.reconcile(files);
  const failedBefore = (await db.failures()).length;

  // Read what is listed and not read yet, a batch per transaction.
  const pool = new ImportPool({ threads: options.threads, sampling, maxBytes: options.maxBytes });
  const failed: { file: string; reason: string }[] = [];
  let read = 0;
  const reading = new Progress('reading', await db.pendingCount());
  try {
    for (;;) {
      if (stopped()) break;
      const batch = await db.readPending(
        options.threads * (options.readBatchPerThread ?? 8),
        sampling,
        async (claimed) => {
          const outcomes: ReadOutcome[] = new Array(claimed.length);
          const named = claimed.map((c) => {
            const path = join(root, c.path);
            let bytes = 0;
            try {
              bytes = statSync(path).size;
            } catch {
              /* removed since it was listed: the reader says so */
            }
            return { path, name: c.path, bytes };
          });
          await pool.run(named, (i, r) => {
            outcomes[i] =
              r.kind === 'part'
                ? {
                    kind: 'part',
                    info: r.part.info,
                    points: r.part.points,
                    normals: r.part.normals,
                    diagonal: r.part.diagonal,
                  }
                : { kind: 'failed', reason: r.failure.reason };
          });
          return outcomes;
        },
        modelId,
      );
      if (batch.files.length === 0) break;
      batch.outcomes.forEach((o, i) => {
        if (o.kind === 'failed') failed.push({ file: batch.files[i].path, reason: o.reason });
        else read++;
      });
      reading.update(read + failed.length, batch.files[batch.files.length - 1].path);
    }
  } finally {
    await pool.close();
  }
  reading.done();

  // Embed what the current model has not.
  let embedded = 0;
  if (checkpoint && modelId !== null && !stopped()) {
    const queued = await db.queueEmbeddings(modelId);
    const embedding = new Progress('embedding', queued);
    const encoders = encodersFromCheckpoint(checkpoint);
    const { points, pose } = checkpoint.manifest.config;
    let taken = 0;
    try {
      for (;;) {
        if (stopped()) break;
        const r = await db.embedQueued(modelId, options.embedBatch ?? 32, (pools) =>
          embedForRetrieval(encoders, pools, points, pose),
        );
        if (r.taken === 0) break;
        taken += r.taken;
        embedded += r.embedded;
        embedding.update(Math.min(taken, queued), `${embedded} embedded`);
      }
    } finally {
      disposeEncoders(encoders);
    }
    embedding.done();
  }
  const counts = await db.counts(modelId);
  return {
    database: db.sql.where,
    files: files.length,
    ...changes,
    read,
    failed,
    still_failing: failedBefore,
    model: fingerprint,
    embedded,
    parts: counts,
    stopped: stopped(),
    seconds: (performance.now() - t0) / 1000,
  };
}
