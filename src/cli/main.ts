// The `shapekin` command line: a thin shell over the core for batch work on a parts library.

import { writeFileSync } from 'node:fs';
import { extname, relative, sep } from 'node:path';
import { availableParallelism } from 'node:os';
import { parseArgs } from 'node:util';
import { initBackend, type BackendName } from '../core/model/backend';
import { encodersFromCheckpoint, resumeOptions, type Checkpoint } from '../core/model/checkpoint';
import {
  DEFAULT_TRAIN,
  POOL_POINTS,
  defaultTrainFor,
  inputsReason,
  temperatureReason,
  libraryTraits,
  poseReason,
} from '../core/model/defaults';
import { disposeEncoders, embedForRetrieval, encoderList, type Encoders } from '../core/model/embed';
import { EMBED_CHUNK, EmbedPool, embedInThreads } from './embed-pool';
import { POSE_LABELS, POSES } from '../core/model/train-config';
import { type ModelPart } from '../core/model/views';
import {
  EDGE_WIDTH,
  SURFACE_GRID_CELLS,
  INPUT_FEATURES,
  INPUT_LABELS,
  type InputFeatures,
} from '../core/model/encoder-config';
import { LOSS_NAMES, type LossName } from '../core/model/losses/names';
import { Trainer } from '../core/model/trainer';
import { type TrainConfig } from '../core/model/train-config';
import { AUGMENT_KINDS, pipelineFromJson, PRESETS, type AugmentKind, type Pipeline } from '../core/points/augment';
import { duplicateGroups } from '../core/retrieval/duplicates';
import { evaluateMethods, untrainedEncoders } from '../core/quality/evaluate';
import { DIFFUSION_DEFAULTS } from '../core/retrieval/diffusion';
import { TensorIndex } from '../core/retrieval/tensor-index';
import type { Ranking } from '../core/retrieval/index';
import { cosineSimilarity } from '../core/retrieval/metrics';
import { embeddingRow, embeddingsCsv, embeddingsJson, type EmbeddingRow } from '../core/retrieval/export';
import { writeNpyFloat32 } from '../core/retrieval/npy';
import { runStudy, STUDY_QUERIES } from '../core/quality/study';
import { failureOf, loadPart, type LibraryPart, type SamplingSettings } from '../core/library';
import { DEFAULT_MAX_BYTES, importMesh } from '../core/mesh/import';
import { FORMAT_NAMES } from '../core/mesh/formats';
import type { MeshInfo } from '../core/mesh/types';
import { diagonalMm, parseUnits, partSize, sizeWords } from '../core/units';
import { readFileSync, existsSync, statSync } from 'node:fs';
import { CliError } from './errors';
import { listFiles, loadLibrary, reportFailures, type LoadedLibrary } from './library-dir';
import { importInThreads } from './import-pool';
import { prepareToRead, readBytes } from './read-file';
import { duration, Progress, setProgressMode } from './progress';
import { loadRun, saveRun } from './run-dir';
import { checkpointOf, databaseSpec, isLibraryFile, openDatabase, runFiles, storedOrdering } from './db';
import { syncLibrary } from './sync';
import type { PartsDb, StoredPart } from '../core/db/parts-db';

const CAUTION =
  'Caution: geometric similarity is not interchangeability. Before substituting a part, a qualified person must check material, tolerances, loads and standards, following local codes and your engineering sign-off.';

const USAGE = `shapekin — find parts that look like a given part

usage:
  shapekin train <library-dir> --out <run-dir> [--epochs N] [--seed S] [--points N] [--augment <preset|file.json>]
                 (default epochs: 160, fewer on a large library so that training stays near 640 steps)
                 [--batch B] [--lr X] [--loss ${LOSS_NAMES.join('|')}] [--temperature T] [--resume]
                 [--inputs ${INPUT_FEATURES.join('|')}]   (default: normals only if most meshes are closed)
                 [--neighbours K]   (a first layer over each point's K nearest neighbours, EdgeConv; 0: off)
                 [--grid-share S]   (share of each similarity taken from the parts' surface grids, which need no
                 training; 0: the encoder alone)
                 [--pose principal-axes|file-axes|as-is|file-and-principal]
                 (default: file-and-principal, two encoders trained one after the other, when most parts sit square in
                 their files' axes; principal-axes otherwise)
                 (as-is also keeps each axis's sign; its augmentations default to file-pose)
  shapekin embed <library-dir> --model <run-dir> --out <file.csv|file.json|file.npy> [--json]
  shapekin sync <library-dir> --db <folder|postgres://user@host/db> [--model <run-dir>] [--batch 32] [--json]
                 (the parts database: files compared by content hash — new and changed ones read, removed ones
                 dropped — then whatever the model has not embedded is embedded; --model makes that run the
                 database's model. Without --db: library.db beside the --model run folder. --batch: parts
                 embedded per database transaction. Several syncs on one server share the work)
  shapekin query <mesh-file> --model <run-dir> --library <library-dir> [-k 10] [--size-ratio R] [--order diffusion|cosine] [--json]
  shapekin query <mesh-file> --db <folder|postgres://…> [--model <run-dir>] [-k 10] [--size-ratio R] [--folder F] [--order …]
                 (answers from the database, reading no library file; the database's model unless --model)
                 (diffusion: through the library — scores corrected for parts near everything, then diffused over its neighbour graph; cosine: by similarity to the query alone)
  shapekin eval <library-dir> [--model <run-dir>] [--json]
  shapekin embed|duplicates|eval --db <folder|postgres://…> [--model <run-dir>] …   (the library from the database)
                 (--db also takes a library file saved by the workbench, *.tar.gz, to read and query)
  shapekin study <library-dir> --model <run-dir> [--augmentations a,b,…] [--strengths 0,0.5,1] [--queries N] [--json]
                 (N parts augmented and looked up, a seeded sample; default ${STUDY_QUERIES})
  shapekin duplicates <library-dir> --model <run-dir> [--threshold 0.97] [--json]
  shapekin inspect <file-or-folder> [--json]   (format, bodies, triangles, closed, size and units of each file, or why it cannot be read)

every command: [--json] one JSON document on stdout and nothing else there (bad files under "failures")
               [--progress bar|json|none] progress on stderr: a bar on a terminal (default), JSON lines, or none
               [--threads N] read, sample and embed on N threads (default: one per core)
               [--max-file-mb N] refuse files larger than N MiB (default ${DEFAULT_MAX_BYTES / 2 ** 20})
               [--units mm|cm|m|inch|<factor>] what one unit of files without units (STL, OBJ, PLY, OFF, VRML, point
               lists) measures; sizes are then shown in mm (STEP and IGES are always mm)
presets for --augment: ${Object.keys(PRESETS).join(', ')}
`;

const OPTIONS = {
  out: { type: 'string' },
  db: { type: 'string' },
  folder: { type: 'string' },
  model: { type: 'string' },
  library: { type: 'string' },
  epochs: { type: 'string' },
  seed: { type: 'string' },
  points: { type: 'string' },
  augment: { type: 'string' },
  batch: { type: 'string' },
  lr: { type: 'string' },
  loss: { type: 'string' },
  temperature: { type: 'string' },
  k: { type: 'string', short: 'k' },
  'size-ratio': { type: 'string' },
  order: { type: 'string' },
  threshold: { type: 'string' },
  json: { type: 'boolean' },
  resume: { type: 'boolean' },
  quiet: { type: 'boolean', short: 'q' },
  help: { type: 'boolean', short: 'h' },
  backend: { type: 'string' },
  progress: { type: 'string' },
  'max-file-mb': { type: 'string' },
  threads: { type: 'string' },
  units: { type: 'string' },
  inputs: { type: 'string' },
  pose: { type: 'string' },
  neighbours: { type: 'string' },
  'grid-share': { type: 'string' },
  augmentations: { type: 'string' },
  strengths: { type: 'string' },
  queries: { type: 'string' },
} as const;

type Values = { [K in keyof typeof OPTIONS]?: (typeof OPTIONS)[K]['type'] extends 'boolean' ? boolean : string };

/** A numeric option, checked to be a number (whole when `integer`) within [min, max]. */
function num(
  values: Values,
  key: keyof Values,
  fallback: number,
  integer = true,
  min = -Infinity,
  max = Infinity,
): number {
  const raw = values[key];
  if (raw === undefined) return fallback;
  const v = Number(raw);
  const range =
    min > -Infinity && max < Infinity ? ` from ${min} to ${max}` : min > -Infinity ? ` of at least ${min}` : '';
  if (raw === '' || !Number.isFinite(v) || (integer && !Number.isInteger(v)) || v < min || v > max) {
    throw new CliError(`--${key} must be ${integer ? 'a whole number' : 'a number'}${range}, got "${raw}"`, 2);
  }
  return v;
}

/** The JSON list of files that could not be read, for every --json document. */
const failuresJson = (library: LoadedLibrary) => library.failures.map((f) => ({ file: f.file, reason: f.reason }));

/** Import threads (--threads; default one per core). */
const threads = (values: Values): number => num(values, 'threads', availableParallelism(), true, 1, 64);

/** The per-file size cap the user set (--max-file-mb), in bytes. */
const maxBytes = (values: Values): number =>
  Math.floor(num(values, 'max-file-mb', DEFAULT_MAX_BYTES / 2 ** 20, false, 0.001) * 2 ** 20);

function need(values: Values, key: 'out' | 'model' | 'library', command: string): string {
  const v = values[key];
  if (!v) throw new CliError(`${command} needs --${key} <${key === 'out' ? 'path' : 'dir'}>`, 2);
  return v as string;
}

function pipelineFrom(arg: string | undefined): Pipeline {
  if (!arg) return DEFAULT_TRAIN.pipeline;
  if (arg in PRESETS) return PRESETS[arg as keyof typeof PRESETS];
  if (!existsSync(arg))
    throw new CliError(`--augment: "${arg}" is neither a preset (${Object.keys(PRESETS).join(', ')}) nor a file`, 2);
  try {
    return pipelineFromJson(readFileSync(arg, 'utf8'));
  } catch (err) {
    throw new CliError(`--augment ${arg}: ${(err as Error).message}`, 2);
  }
}

/** How often a training run is saved after its first step. */
const CHECKPOINT_EVERY_MS = 30_000;

/** A remark for the person at the terminal: stderr, never in --json mode's stdout. */
function notice(values: Values, text: string): void {
  if (!values.quiet) process.stderr.write(`${text}\n`);
}

const asModelParts = (parts: readonly ModelPart[]): ModelPart[] =>
  parts.map((p) => ({ points: p.points, normals: p.normals }));

/** train's numeric options: whole or not, and the range each must lie in. */
const TRAIN_NUMBERS: Record<
  'epochs' | 'seed' | 'points' | 'batch' | 'lr' | 'temperature' | 'neighbours' | 'grid-share',
  [integer: boolean, min: number, max: number]
> = {
  epochs: [true, 1, Infinity],
  seed: [true, -Infinity, Infinity],
  points: [true, 16, POOL_POINTS],
  batch: [true, 2, Infinity],
  lr: [false, 1e-9, 1],
  temperature: [false, 1e-3, 100],
  neighbours: [true, 0, 64],
  'grid-share': [false, 0, 0.95],
};

async function train(lib: string, values: Values): Promise<void> {
  const out = need(values, 'out', 'train');
  const loss = (values.loss ?? DEFAULT_TRAIN.loss.name) as LossName;
  if (!LOSS_NAMES.includes(loss))
    throw new CliError(`--loss must be one of ${LOSS_NAMES.join(', ')}, got "${loss}"`, 2);
  // Every option is checked before the library is read, so a typo costs no wait.
  const trainNum = (key: keyof typeof TRAIN_NUMBERS, fallback: number) =>
    num(values, key, fallback, ...TRAIN_NUMBERS[key]);
  for (const key of Object.keys(TRAIN_NUMBERS) as (keyof typeof TRAIN_NUMBERS)[]) trainNum(key, 0);
  if (values.inputs !== undefined && !INPUT_FEATURES.includes(values.inputs as InputFeatures))
    throw new CliError(`--inputs must be one of ${INPUT_FEATURES.join(', ')}, got "${values.inputs}"`, 2);
  if (values.pose !== undefined && !POSES.includes(values.pose as TrainConfig['pose']))
    throw new CliError(`--pose must be one of ${POSES.join(', ')}, got "${values.pose}"`, 2);
  const pipeline = values.augment ? pipelineFrom(values.augment) : null;
  maxBytes(values);
  const backend = await initBackend({ prefer: (values.backend as 'wasm' | 'cpu') ?? 'wasm' });
  const library = await loadLibrary(lib, { maxBytes: maxBytes(values), threads: threads(values), points: POOL_POINTS });
  reportFailures(library.failures, Boolean(values.json));
  const traits = libraryTraits(library.parts);
  const closed = traits.closed;
  const base = defaultTrainFor(traits);
  const inputs = (values.inputs ?? base.encoder.inputFeatures) as InputFeatures;
  const pose = (values.pose ?? base.pose) as TrainConfig['pose'];
  const neighbours = trainNum('neighbours', base.encoder.edge?.k ?? 0);
  const gridShare = trainNum('grid-share', base.encoder.surfaceGrid?.share ?? 0);
  const { edge: _edge, surfaceGrid: _grid, ...plainEncoder } = base.encoder;
  const config: TrainConfig = {
    ...base,
    pose,
    encoder: {
      ...plainEncoder,
      inputFeatures: inputs,
      ...(neighbours > 0 ? { edge: { k: neighbours, width: base.encoder.edge?.width ?? EDGE_WIDTH } } : {}),
      ...(gridShare > 0
        ? { surfaceGrid: { cells: base.encoder.surfaceGrid?.cells ?? SURFACE_GRID_CELLS, share: gridShare } }
        : {}),
    },
    epochs: trainNum('epochs', base.epochs),
    seed: trainNum('seed', DEFAULT_TRAIN.seed),
    points: trainNum('points', DEFAULT_TRAIN.points),
    batchSize: trainNum('batch', DEFAULT_TRAIN.batchSize),
    learningRate: trainNum('lr', DEFAULT_TRAIN.learningRate),
    loss: { ...base.loss, name: loss, temperature: trainNum('temperature', base.loss.temperature) },
    // Without --augment, a pose kept exactly as in the files (signs included) gets the preset that does not turn the parts.
    pipeline: pipeline ?? (pose !== 'as-is' ? DEFAULT_TRAIN.pipeline : PRESETS['file-pose']),
  };
  const labelNames = [...new Set(library.labels)].sort();
  const labelIds = library.labels.map((l) => labelNames.indexOf(l));
  let resume: Checkpoint | null = null;
  if (values.resume && existsSync(`${out}/model.json`)) resume = await loadRun(out);
  else if (values.resume)
    notice(values, `--resume: nothing has been saved in ${out} yet, so training starts from step 0`);
  const trainer = new Trainer(asModelParts(library.parts), resume ? resume.manifest.config : config, {
    labels: loss === 'supervised-contrastive' ? labelIds : null,
    ...(resume ? resumeOptions(resume) : {}),
  });
  const cfg = trainer.config;
  if (!values.json) {
    process.stderr.write(
      `training on ${library.parts.length} parts, ${trainer.totalSteps} steps (${trainer.encoders.length > 1 ? `${trainer.encoders.length} encoders × ` : ''}${cfg.epochs} epochs × ${trainer.stepsPerEpoch}), backend ${backend}\n`,
    );
    process.stderr.write(
      `inputs: ${values.inputs || resume ? INPUT_LABELS[cfg.encoder.inputFeatures] + (resume ? ' (from the saved run)' : ' (--inputs)') : inputsReason(closed)}\n`,
    );
    process.stderr.write(
      `temperature: ${values.temperature || resume ? `${cfg.loss.temperature}${resume ? ' (from the saved run)' : ' (--temperature)'}` : temperatureReason(closed)}\n`,
    );
    process.stderr.write(
      `pose: ${values.pose || resume ? `${POSE_LABELS[cfg.pose]}${resume ? ' (from the saved run)' : ' (--pose)'}` : poseReason(traits.boxRatios)}\n`,
    );
  }
  const progress = new Progress('training', trainer.totalSteps);
  const checkpoint = (status: Checkpoint['manifest']['status']) =>
    saveRun(out, {
      manifest: {
        format: 'shapekin-encoder',
        version: 1,
        config: cfg,
        sampling: { points: POOL_POINTS, seed: 0 },
        step: trainer.step,
        totalSteps: trainer.totalSteps,
        status,
        backend,
        history: trainer.history,
        checks: trainer.checks,
        labelNames,
      },
      weights: trainer.weights(),
      adam: trainer.adamState(),
    });
  // The first checkpoint follows the first step, then one every CHECKPOINT_EVERY_MS: a kill loses at most that.
  let lastSave = -Infinity;
  const t0 = Date.now();
  const stop = () => trainer.cancel();
  process.once('SIGINT', stop);
  process.once('SIGTERM', stop);
  const result = await trainer.run({
    yieldEvery: 1,
    onProgress: (p) => {
      progress.update(
        p.step,
        `${p.members > 1 ? `encoder ${p.member + 1} of ${p.members} · ` : ''}loss ${p.loss.toFixed(3)} · ${p.samplesPerSec.toFixed(0)} parts/s · ${duration(p.etaSec)} left`,
      );
      if (Date.now() - lastSave > CHECKPOINT_EVERY_MS) {
        void checkpoint('running');
        lastSave = Date.now();
      }
    },
  });
  process.off('SIGINT', stop);
  process.off('SIGTERM', stop);
  progress.done();
  await checkpoint(result.status);
  trainer.dispose();
  const summary = {
    status: result.status,
    steps: result.steps,
    final_loss: result.finalLoss,
    seconds: (Date.now() - t0) / 1000,
    backend,
    out,
    resumed_from: resume ? resume.manifest.step : null,
    ...(result.message ? { message: result.message } : {}),
    failures: failuresJson(library),
  };
  if (values.json) emit(summary);
  else
    console.log(
      `${result.status}: ${result.steps} steps in ${duration(summary.seconds)}, final loss ${result.finalLoss.toFixed(4)} → ${out}${result.message ? ` (${result.message})` : ''}`,
    );
  if (result.status === 'failed') throw new CliError(result.message ?? 'training failed');
}

async function withModel<T>(
  values: Values,
  command: string,
  fn: (enc: Encoders, ckpt: Checkpoint) => Promise<T> | T,
): Promise<T> {
  const ckpt = await loadRun(need(values, 'model', command));
  await initBackend({ prefer: (values.backend as 'wasm' | 'cpu') ?? 'wasm' });
  const enc = encodersFromCheckpoint(ckpt);
  try {
    return await fn(enc, ckpt);
  } finally {
    disposeEncoders(enc);
  }
}

/**
 * Retrieval embeddings of library parts: on the embedding threads (--threads, one per core) when there is more than
 * one request's worth, else here; the bytes are the same either way (test/cli/embed-pool.test.ts).
 */
async function embedLibrary(
  enc: Encoders,
  ckpt: Checkpoint,
  parts: readonly ModelPart[],
  values: Values,
): Promise<Float32Array> {
  const { points, pose } = ckpt.manifest.config;
  const n = threads(values);
  if (n === 1 || parts.length <= EMBED_CHUNK) return embedForRetrieval(enc, asModelParts(parts), points, pose);
  return embedInThreads(ckpt, asModelParts(parts), n, undefined, (values.backend as BackendName) ?? 'wasm');
}

/** A library's retrieval embeddings with each part's description: from --db's stored vectors, or read and embedded now. */
interface EmbeddedLibrary {
  readonly rows: EmbeddingRow[];
  readonly vectors: Float32Array;
  readonly dim: number;
  readonly failures: { file: string; reason: string }[];
}

async function embeddedLibrary(lib: string, values: Values, command: string): Promise<EmbeddedLibrary> {
  const mmPerUnit = unitsOption(values);
  if (values.db) {
    const db = await openDatabase(values.db);
    try {
      const { id } = await databaseModel(db, values);
      await notEmbedded(db, id, values);
      const all = await db.embeddings(id);
      if (all.parts.length === 0)
        throw new CliError(`the database ${db.sql.where} has no embedded parts for this model`);
      return {
        rows: all.parts.map((p) => embeddingRow(p.path, p.label, p.info, p.diagonal, mmPerUnit)),
        vectors: all.vectors,
        dim: all.dim,
        failures: (await db.failures()).map((f) => ({ file: f.path, reason: f.reason })),
      };
    } finally {
      await db.close();
    }
  }
  return withModel(values, command, async (enc, ckpt) => {
    const library = await loadLibrary(lib, {
      maxBytes: maxBytes(values),
      threads: threads(values),
      ...ckpt.manifest.sampling,
    });
    reportFailures(library.failures, Boolean(values.json));
    const vectors = await embedLibrary(enc, ckpt, library.parts, values);
    return {
      rows: library.parts.map((p, i) => embeddingRow(p.name, library.labels[i], p.info, p.diagonal, mmPerUnit)),
      vectors,
      dim: vectors.length / library.parts.length,
      failures: failuresJson(library),
    };
  });
}

async function embed(lib: string, values: Values): Promise<void> {
  const out = need(values, 'out', 'embed');
  const ext = extname(out).toLowerCase();
  if (!['.csv', '.json', '.npy'].includes(ext))
    throw new CliError(`--out must end in .csv, .json or .npy, got "${out}"`, 2);
  const { rows, vectors, dim: D, failures } = await embeddedLibrary(lib, values, 'embed');
  if (ext === '.npy') writeFileSync(out, writeNpyFloat32(vectors, rows.length, D));
  else writeFileSync(out, ext === '.json' ? embeddingsJson(rows, vectors, D) : embeddingsCsv(rows, vectors, D));
  if (values.json) emit({ out, parts: rows.length, dim: D, failures });
  else console.error(`${rows.length} embeddings of ${D} values → ${out}`);
}

async function query(file: string, values: Values): Promise<void> {
  if (!values.db && !values.library)
    throw new CliError('query needs --library <library-dir> or --db <folder|postgres://…>', 2);
  const lib = values.library ?? '';
  const k = num(values, 'k', 10, true, 1);
  const mmPerUnit = unitsOption(values);
  const ratio = values['size-ratio'] !== undefined ? num(values, 'size-ratio', 2, false, 1) : undefined;
  if (!existsSync(file)) throw new CliError(`query file not found: ${file}`, 2);
  const ranking = (values.order ?? 'diffusion') as Ranking;
  if (ranking !== 'diffusion' && ranking !== 'cosine')
    throw new CliError(`--order must be diffusion or cosine, got "${values.order}"`, 2);
  if (values.db) return queryDatabase(file, values, { k, mmPerUnit, ratio, ranking });
  await withModel(values, 'query', async (enc, ckpt) => {
    const q = await readQueryPart(file, values, ckpt.manifest.sampling);
    const library = await loadLibrary(lib, {
      maxBytes: maxBytes(values),
      threads: threads(values),
      points: ckpt.manifest.sampling.points,
      seed: ckpt.manifest.sampling.seed,
    });
    reportFailures(library.failures, Boolean(values.json));
    const points = ckpt.manifest.config.points;
    const vectors = await embedLibrary(enc, ckpt, library.parts, values);
    const D = vectors.length / library.parts.length;
    // Sizes compare in mm where units are known (STEP/IGES, or --units), so a part exported in inches still passes the size filter.
    const sizes = library.parts.map((p) => partSize(p.info, mmPerUnit));
    const qSize = partSize(q.info, mmPerUnit);
    const index = new TensorIndex(
      vectors,
      D,
      library.parts.map((p, i) => ({ name: p.name, label: library.labels[i], diagonal: p.diagonal * sizes[i].scale })),
      { gridShare: ckpt.manifest.config.encoder.surfaceGrid?.share ?? 0 },
    );
    const qv = embedForRetrieval(enc, [{ points: q.points, normals: q.normals }], points, ckpt.manifest.config.pose);
    if (!qv.every(Number.isFinite)) {
      index.dispose();
      throw new CliError(`the model gives no usable embedding for ${file} (non-finite values)`);
    }
    const order: Ranking = ranking === 'diffusion' && !index.diffusionApplies() ? 'cosine' : ranking; // ranked() falls back the same way
    // The query's size serves the size filter and the ordering's size prior.
    const hits = index.ranked(order, qv, k, {
      queryDiagonal: q.diagonal * qSize.scale,
      ...(ratio !== undefined ? { sizeRatio: ratio } : {}),
    });
    index.dispose();
    const rows = hits.map((h, r) => {
      const p = library.parts[h.index];
      const size = sizes[h.index];
      return {
        rank: r + 1,
        score: h.score,
        file: p.name,
        label: library.labels[h.index],
        extents: size.size,
        units: size.units,
        size_ratio: (p.diagonal * size.scale) / (q.diagonal * qSize.scale),
      };
    });
    printQuery(values, {
      query: file,
      querySize: qSize,
      order,
      asked: ranking,
      meanPairCosine: index.meanPairCosine(),
      rows,
      extra: { failures: failuresJson(library) },
    });
  });
}

interface QueryRow {
  rank: number;
  score: number;
  file: string;
  label: string;
  extents: number[];
  units: string;
  size_ratio: number;
}

/** The query's part file, read and sampled as the model's pools were. */
async function readQueryPart(file: string, values: Values, sampling: SamplingSettings): Promise<LibraryPart> {
  try {
    await prepareToRead(file, file, maxBytes(values));
    return loadPart(readBytes(file), file, sampling, maxBytes(values));
  } catch (err) {
    throw new CliError((err as Error).message);
  }
}

/** A query's answer: one JSON document, or the table. */
function printQuery(
  values: Values,
  a: {
    query: string;
    querySize: { size: number[]; units: string };
    order: Ranking;
    asked: Ranking;
    meanPairCosine: number | null;
    rows: QueryRow[];
    extra: Record<string, unknown>;
  },
): void {
  if (values.json) {
    emit({
      query: a.query,
      query_extents: a.querySize.size,
      query_units: a.querySize.units,
      order: a.order,
      mean_pair_cosine: a.meanPairCosine,
      results: a.rows,
      ...a.extra,
      caution: CAUTION,
    });
    return;
  }
  console.log(`query ${a.query}  (${fmtSize(a.querySize)})`);
  if (a.order !== a.asked)
    console.log(
      `ordered by cosine similarity: this model's embedding is too concentrated (mean pair cosine ${a.meanPairCosine?.toFixed(2)}) to order through the library`,
    );
  else
    console.log(
      a.order === 'diffusion'
        ? 'ordered through the library (scores corrected for parts near everything, then diffused over its neighbour graph); score: cosine similarity to the query'
        : 'ordered by cosine similarity to the query',
    );
  console.log('rank  score   size×   folder            file');
  for (const r of a.rows)
    console.log(
      `${String(r.rank).padStart(4)}  ${r.score.toFixed(3)}  ${r.size_ratio.toFixed(2).padStart(5)}   ${r.label.padEnd(17)} ${r.file}  (${fmtSize({ size: r.extents, units: r.units })})`,
    );
  console.log(`\n${CAUTION}`);
}

/** The model a database command uses: --model's run (which must be stored there), else the database's own. */
async function databaseModel(db: PartsDb, values: Values): Promise<{ id: number; ckpt: Checkpoint }> {
  if (values.model) {
    const run = await runFiles(values.model);
    const stored = await db.modelByFingerprint(run.fingerprint);
    if (!stored)
      throw new CliError(
        `the model in ${values.model} has not embedded this database's parts yet: run "shapekin sync <library-dir> --db ${values.db} --model ${values.model}"`,
      );
    return { id: stored.id, ckpt: checkpointOf(stored) };
  }
  const current = await db.currentModel();
  if (!current)
    throw new CliError(
      `the database ${db.sql.where} holds no model yet: run "shapekin sync <library-dir> --db … --model <run-dir>"`,
    );
  return { id: current.id, ckpt: checkpointOf(current) };
}

/** How many parts the model has not embedded yet (said on stderr: they are left out of the answer). */
async function notEmbedded(db: PartsDb, modelId: number, values: Values) {
  const counts = await db.counts(modelId);
  const waiting = counts.ready - counts.embedded + counts.pending;
  if (waiting > 0) notice(values, `${waiting} parts are not embedded yet (run "shapekin sync"); they are left out`);
  return { counts, waiting };
}

/** query --db: the part file is read and embedded here; the library comes from the database. */
async function queryDatabase(
  file: string,
  values: Values,
  o: { k: number; mmPerUnit: number | null; ratio: number | undefined; ranking: Ranking },
): Promise<void> {
  const db = await openDatabase(values.db!);
  try {
    const { id, ckpt } = await databaseModel(db, values);
    await initBackend({ prefer: (values.backend as 'wasm' | 'cpu') ?? 'wasm' });
    const q = await readQueryPart(file, values, ckpt.manifest.sampling);
    const enc = encodersFromCheckpoint(ckpt);
    let qv: Float32Array;
    try {
      qv = embedForRetrieval(
        enc,
        [{ points: q.points, normals: q.normals }],
        ckpt.manifest.config.points,
        ckpt.manifest.config.pose,
      );
    } finally {
      disposeEncoders(enc);
    }
    if (!qv.every(Number.isFinite))
      throw new CliError(`the model gives no usable embedding for ${file} (non-finite values)`);
    const qSize = partSize(q.info, o.mmPerUnit);
    const { counts, waiting } = await notEmbedded(db, id, values);
    if (counts.embedded === 0)
      throw new CliError(`the database ${db.sql.where} has no embedded parts for this model: run "shapekin sync"`);
    const folders = values.folder ? values.folder.split(',').map((f) => f.trim()) : undefined;
    const sizeFilter =
      o.ratio !== undefined
        ? { sizeRatio: o.ratio, queryDiagonal: q.diagonal * qSize.scale, scaleFileUnits: o.mmPerUnit ?? 1 }
        : {};
    const rowOf = (r: number, p: StoredPart, score: number): QueryRow => {
      const size = partSize(p.info, o.mmPerUnit);
      return {
        rank: r + 1,
        score,
        file: p.path,
        label: p.label,
        extents: size.size,
        units: size.units,
        size_ratio: (p.diagonal * size.scale) / (q.diagonal * qSize.scale),
      };
    };
    let rows: QueryRow[];
    let order: Ranking = o.ranking;
    let meanPair: number | null = null;
    if (o.ranking === 'cosine') {
      const hits = await db.nearest(id, qv, o.k, { ...sizeFilter, ...(folders ? { labels: folders } : {}) });
      rows = hits.map((h, r) => rowOf(r, h, h.score));
    } else {
      // Ordering through the library needs every vector: read from the database, none of the library's files.
      const all = await db.embeddings(id);
      const index = new TensorIndex(
        all.vectors,
        all.dim,
        all.parts.map((p) => ({
          name: p.path,
          label: p.label,
          diagonal: p.diagonal * partSize(p.info, o.mmPerUnit).scale,
        })),
        { gridShare: ckpt.manifest.config.encoder.surfaceGrid?.share ?? 0 },
      );
      try {
        meanPair = index.meanPairCosine();
        if (!index.diffusionApplies()) order = 'cosine';
        else await storedOrdering(db, id, all, index);
        const hits = index.ranked(order, qv, o.k, {
          queryDiagonal: q.diagonal * qSize.scale,
          ...(o.ratio !== undefined ? { sizeRatio: o.ratio } : {}),
          ...(folders ? { labels: folders } : {}),
        });
        rows = hits.map((h, r) => rowOf(r, all.parts[h.index], h.score));
      } finally {
        index.dispose();
      }
    }
    printQuery(values, {
      query: file,
      querySize: qSize,
      order,
      asked: o.ranking,
      meanPairCosine: meanPair,
      rows,
      extra: { database: db.sql.where, not_embedded: waiting },
    });
  } finally {
    await db.close();
  }
}

async function sync(lib: string, values: Values): Promise<void> {
  const spec = databaseSpec(values.db, values.model, 'sync');
  if (isLibraryFile(spec))
    throw new CliError(
      `${spec} is a library file saved by the workbench: it can be queried (--db ${spec}) but not synced; sync into a folder or a server`,
      2,
    );
  const cap = maxBytes(values);
  const db = await openDatabase(spec);
  let stop = false;
  const onSignal = () => {
    stop = true;
    notice(values, 'stopping after the batch in hand (what is written stays)…');
  };
  process.once('SIGINT', onSignal);
  process.once('SIGTERM', onSignal);
  try {
    const report = await syncLibrary(lib, db, {
      threads: threads(values),
      maxBytes: cap,
      ...(values.model ? { model: values.model } : {}),
      embedBatch: num(values, 'batch', 32, true, 1, 4096),
      ...(values.backend ? { backend: values.backend as 'wasm' | 'cpu' } : {}),
      stopped: () => stop,
    });
    if (values.json) {
      emit(report);
      return;
    }
    for (const f of report.failed) process.stderr.write(`could not read ${f.file}: ${f.reason}\n`);
    console.log(
      `${report.database}: ${report.files} files — ${report.added.length} added, ${report.changed.length} changed, ${report.removed.length} removed, ${report.unchanged} unchanged`,
    );
    console.log(
      `read ${report.read}, could not read ${report.failed.length}${report.still_failing ? ` (and ${report.still_failing} unchanged files that failed before)` : ''}; ` +
        (report.model
          ? `embedded ${report.embedded} (model ${report.model.slice(0, 12)}: ${report.parts.embedded} of ${report.parts.ready} parts)`
          : 'no model yet, so nothing embedded (give --model <run-dir>)'),
    );
    if (report.stopped) console.log('stopped before the end: run sync again to finish');
    console.log(`${duration(report.seconds)}`);
  } finally {
    process.off('SIGINT', onSignal);
    process.off('SIGTERM', onSignal);
    await db.close();
  }
}

/** The parts to measure on, with their folder labels: read from --db's stored pools, or from the folder now. */
async function measuredLibrary(
  lib: string,
  values: Values,
): Promise<{
  parts: (ModelPart & { diagonal: number; info: { closed: boolean; units: MeshInfo['units'] } })[];
  labels: string[];
  failures: { file: string; reason: string }[];
  ckpt: Checkpoint | null;
}> {
  if (values.db) {
    const db = await openDatabase(values.db);
    try {
      const model = values.model || (await db.currentModel()) ? await databaseModel(db, values) : null;
      const parts = await db.readyParts();
      if (parts.length === 0)
        throw new CliError(`the database ${db.sql.where} holds no parts yet: run "shapekin sync"`);
      return {
        parts,
        labels: parts.map((p) => p.label),
        failures: (await db.failures()).map((f) => ({ file: f.path, reason: f.reason })),
        ckpt: model?.ckpt ?? null,
      };
    } finally {
      await db.close();
    }
  }
  const ckpt = values.model ? await loadRun(values.model) : null;
  const sampling = ckpt?.manifest.sampling ?? { points: POOL_POINTS, seed: 0 };
  const library = await loadLibrary(lib, { maxBytes: maxBytes(values), threads: threads(values), ...sampling });
  reportFailures(library.failures, Boolean(values.json));
  return { parts: library.parts, labels: library.labels, failures: failuresJson(library), ckpt };
}

async function evaluate(lib: string, values: Values): Promise<void> {
  await initBackend({ prefer: (values.backend as 'wasm' | 'cpu') ?? 'wasm' });
  const library = await measuredLibrary(lib, values);
  const mmPerUnit = unitsOption(values);
  const ckpt = library.ckpt;
  const learned = ckpt ? encodersFromCheckpoint(ckpt) : undefined;
  const config = ckpt?.manifest.config ?? defaultTrainFor(libraryTraits(library.parts));
  const report = evaluateMethods({
    parts: asModelParts(library.parts),
    labels: library.labels,
    points: config.points,
    pose: config.pose,
    ...(learned ? { learned } : {}),
    untrainedConfig: config.encoder,
    seed: config.seed,
    diffusion: DIFFUSION_DEFAULTS,
    diagonals: library.parts.map((p) => diagonalMm(p, mmPerUnit)),
  });
  if (learned) disposeEncoders(learned);
  if (values.json) {
    emit({ ...report, failures: library.failures });
    return;
  }
  console.log(
    `${report.parts} parts, ${report.labels} labels (leave-one-out; "+diffusion": ordered through the library, as queries are by default: scores corrected for parts near everything, then diffused over the neighbour graph)`,
  );
  console.log('method              NN     1st tier  2nd tier  DCG    mAP    P@5');
  for (const [m, r] of Object.entries(report.methods)) {
    console.log(
      `${m.padEnd(18)}  ${r.nn.toFixed(3)}  ${r.first_tier.toFixed(3)}     ${r.second_tier.toFixed(3)}     ${r.dcg.toFixed(3)}  ${r.map.toFixed(3)}  ${r.p_at_5.toFixed(3)}`,
    );
  }
}

async function study(lib: string, values: Values): Promise<void> {
  await withModel(values, 'study', async (enc, ckpt) => {
    const library = await loadLibrary(lib, {
      maxBytes: maxBytes(values),
      threads: threads(values),
      ...ckpt.manifest.sampling,
    });
    reportFailures(library.failures, Boolean(values.json));
    const kinds = values.augmentations ? values.augmentations.split(',').map((k) => k.trim()) : undefined;
    for (const k of kinds ?? [])
      if (!(AUGMENT_KINDS as readonly string[]).includes(k))
        throw new CliError(`--augmentations: unknown "${k}" (one of ${AUGMENT_KINDS.join(', ')})`, 2);
    const strengths = values.strengths ? values.strengths.split(',').map(Number) : undefined;
    if (strengths?.some((s) => !(s >= 0 && s <= 1)))
      throw new CliError(`--strengths must be numbers in [0, 1], got "${values.strengths}"`, 2);
    const untrained = untrainedEncoders(
      ckpt.manifest.config.encoder,
      ckpt.manifest.config.pose,
      ckpt.manifest.config.seed,
    );
    const progress = new Progress('study', 1);
    // Both encoders embed on the threads (one per core), as the library's embedding does.
    const n = threads(values);
    const pools =
      n > 1
        ? {
            learned: new EmbedPool(ckpt, n, (values.backend as BackendName) ?? 'wasm'),
            untrained: new EmbedPool(
              {
                ...ckpt,
                weights: encoderList(untrained).flatMap((e) => e.variables.map((v) => v.dataSync() as Float32Array)),
                adam: null,
              },
              n,
              (values.backend as BackendName) ?? 'wasm',
            ),
          }
        : null;
    const rows = await runStudy({
      ...(pools
        ? {
            embedWith: {
              learned: (ps: readonly ModelPart[]) => pools.learned.embed(ps),
              untrained: (ps: readonly ModelPart[]) => pools.untrained.embed(ps),
            },
          }
        : {}),
      parts: asModelParts(library.parts),
      labels: library.labels,
      points: ckpt.manifest.config.points,
      pose: ckpt.manifest.config.pose,
      encoders: { learned: enc, untrained },
      ...(kinds ? { kinds: kinds as AugmentKind[] } : {}),
      ...(strengths ? { strengths } : {}),
      upAxis: ckpt.manifest.config.pipeline.upAxis,
      seed: ckpt.manifest.config.seed,
      queries: num(values, 'queries', STUDY_QUERIES, true, 1),
      onProgress: (done, total, what) => {
        progress.total = total;
        progress.update(done, what);
      },
    });
    progress.done();
    await Promise.all([pools?.learned.close(), pools?.untrained.close()]);
    disposeEncoders(untrained);
    if (values.json) {
      emit({ parts: library.parts.length, rows, failures: failuresJson(library) });
      return;
    }
    const q = rows[0]?.queries ?? 0;
    const widest = Math.max(0, ...rows.map((r) => (r.instance_top1_ci95[1] - r.instance_top1_ci95[0]) / 2));
    console.log(
      `${q} of ${library.parts.length} parts augmented and looked up in the whole library${q < library.parts.length ? ' (a seeded sample)' : ''}; rates within ±${widest.toFixed(3)} (95 %, Wilson)`,
    );
    console.log('augmentation   strength  method     instance  label   similarity  chamfer');
    for (const r of rows)
      console.log(
        `${r.augmentation.padEnd(14)} ${r.strength.toFixed(2).padStart(8)}  ${r.method.padEnd(9)}  ${r.instance_top1.toFixed(3).padStart(8)}  ${r.label_top1.toFixed(3)}   ${r.mean_similarity.toFixed(3).padStart(10)}  ${r.mean_chamfer.toFixed(4)}`,
      );
  });
}

/** Millimetres per unit of files whose format has no units, from --units (null when not given). */
function unitsOption(values: Values): number | null {
  const raw = values.units;
  if (raw === undefined) return null;
  const factor = parseUnits(raw);
  if (factor === null)
    throw new CliError(`--units must be mm, cm, m, inch or a positive number of mm per unit, got "${raw}"`, 2);
  return factor;
}

const fmtSize = (s: { size: readonly number[]; units: string }) => sizeWords(s, 4);

async function inspect(target: string, values: Values): Promise<void> {
  const mmPerUnit = unitsOption(values);
  const cap = maxBytes(values);
  if (!existsSync(target)) throw new CliError(`not found: ${target}`, 2);
  const single = !statSync(target).isDirectory();
  const files = single ? [target] : listFiles(target);
  if (files.length === 0) throw new CliError(`no part files (${FORMAT_NAMES}) under ${target}`);
  const progress = new Progress('inspecting', files.length);
  type Row =
    | {
        file: string;
        format: string;
        bodies: number | null;
        triangles: number;
        closed: boolean;
        size: number[];
        units: string;
      }
    | { file: string; error: string };
  const rows: Row[] = [];
  const rowOf = (name: string, info: MeshInfo): Row => {
    const s = partSize(info, mmPerUnit);
    return {
      file: name,
      format: info.format,
      bodies: info.bodies,
      triangles: info.triangleCount,
      closed: info.closed,
      size: s.size,
      units: s.units,
    };
  };
  const t0 = performance.now();
  const named = files.map((path) => ({
    path,
    name: single ? path : relative(target, path).split(sep).join('/'),
    bytes: statSync(path).size,
  }));
  const pool = threads(values);
  if (pool > 1 && files.length >= 16) {
    // The threads also sample each part (as a library import does): a little more work, the same measurements.
    await importInThreads(named, { threads: pool, sampling: { points: 64, seed: 0 }, maxBytes: cap }, (i, r) => {
      rows.push(
        r.kind === 'part' ? rowOf(named[i].name, r.part.info) : { file: named[i].name, error: r.failure.reason },
      );
      progress.update(i + 1, named[i].name);
    });
  } else {
    for (const [i, { path, name }] of named.entries()) {
      try {
        await prepareToRead(path, name, cap);
        rows.push(rowOf(name, importMesh(readBytes(path), name, { maxBytes: cap }).info));
      } catch (err) {
        rows.push({ file: name, error: failureOf(name, err).reason });
      }
      progress.update(i + 1, name);
    }
  }
  progress.done();
  const seconds = (performance.now() - t0) / 1000;
  if (values.json) {
    emit(rows);
    return;
  }
  for (const r of rows) {
    if ('error' in r) console.log(`${r.file}: cannot be read: ${r.error}`);
    else
      console.log(
        `${r.file}: ${r.format}${r.bodies !== null ? `, ${r.bodies} ${r.bodies === 1 ? 'body' : 'bodies'}` : ''}, ${r.triangles} triangles, ${r.closed ? 'closed' : 'open'}, ${fmtSize(r)}`,
      );
  }
  const bad = rows.filter((r) => 'error' in r).length;
  process.stderr.write(
    `${rows.length} files in ${duration(seconds)} (${(rows.length / Math.max(seconds, 1e-9)).toFixed(1)} files/s): ${rows.length - bad} readable, ${bad} not\n`,
  );
}

async function duplicates(lib: string, values: Values): Promise<void> {
  const threshold = num(values, 'threshold', 0.97, false, -1, 1);
  const { rows, vectors, dim, failures } = await embeddedLibrary(lib, values, 'duplicates');
  const groups = duplicateGroups(rows.length, cosineSimilarity(vectors, dim), threshold);
  const described = groups.map((g) => ({
    parts: g.members.map((i) => ({
      file: rows[i].file,
      label: rows[i].label,
      extents: rows[i].extents,
      diagonal: rows[i].diagonal,
    })),
    closest: Math.max(...g.pairs.map((p) => p.similarity)),
  }));
  if (values.json) {
    emit({ threshold, groups: described, failures, caution: CAUTION });
    return;
  }
  console.log(`${groups.length} groups of look-alike parts at similarity ≥ ${threshold}`);
  described.forEach((g, n) => {
    console.log(`\ngroup ${n + 1} (closest pair ${g.closest.toFixed(3)})`);
    for (const p of g.parts)
      console.log(`  ${p.file.padEnd(40)} ${p.label.padEnd(16)} ${p.extents.map((v) => v.toPrecision(4)).join(' × ')}`);
  });
  console.log(`\n${CAUTION}`);
}

/** Writes the one JSON document of a --json run to stdout; set per run by main. */
let emit: (doc: unknown) => void = () => {
  throw new Error('emit called outside main');
};

export async function main(argv: string[]): Promise<number> {
  let parsed;
  try {
    parsed = parseArgs({ args: argv, options: OPTIONS, allowPositionals: true, strict: true });
  } catch (err) {
    process.stderr.write(`shapekin: ${(err as Error).message}\n\n${USAGE}`);
    return 2;
  }
  const values = parsed.values as Values;
  const [command, target, ...extra] = parsed.positionals;
  if (values.help || !command) {
    process.stdout.write(USAGE);
    return command || values.help ? 0 : 2;
  }
  const commands: Record<string, (t: string, v: Values) => Promise<void>> = {
    train,
    embed,
    query,
    sync,
    eval: evaluate,
    study,
    duplicates,
    inspect,
  };
  const run = commands[command];
  // With --json, stdout carries exactly one JSON document: the command's result, or {"error"} when it fails.
  // Anything else that would print there (a library's warning) goes to stderr, and only on a terminal.
  const json = Boolean(values.json);
  const consoleWas = { log: console.log, info: console.info, warn: console.warn, debug: console.debug };
  let emitted = false;
  emit = (doc) => {
    if (emitted) throw new Error('a second JSON document');
    emitted = true;
    consoleWas.log(JSON.stringify(doc));
  };
  if (json) {
    const aside = (...a: unknown[]) => {
      if (process.stderr.isTTY) process.stderr.write(`${a.map(String).join(' ')}\n`);
    };
    console.log = console.info = console.warn = console.debug = aside;
  }
  try {
    if (values.progress !== undefined && !['bar', 'json', 'none'].includes(values.progress))
      throw new CliError(`--progress must be bar, json or none, got "${values.progress}"`, 2);
    setProgressMode(
      (values.progress as 'bar' | 'json' | 'none' | undefined) ?? (values.quiet || json ? 'none' : 'bar'),
    );
    if (!run) throw new CliError(`unknown command "${command}" (one of ${Object.keys(commands).join(', ')})`, 2);
    const fromDb = Boolean(values.db) && ['embed', 'duplicates', 'eval'].includes(command);
    if (!target && !fromDb)
      throw new CliError(
        `${command} needs a ${command === 'query' ? 'part file' : command === 'inspect' ? 'file or folder' : 'library folder'}`,
        2,
      );
    if (extra.length) throw new CliError(`unexpected argument "${extra[0]}"`, 2);
    if (target && fromDb) throw new CliError(`${command} --db reads the library from the database: give no folder`, 2);
    await run(target ?? '', values);
    return 0;
  } catch (err) {
    const known = err instanceof CliError;
    const message = known ? err.message : `internal error: ${(err as Error)?.message ?? String(err)}`;
    const code = known ? err.exitCode : 1;
    process.stderr.write(`shapekin: ${message}\n`);
    if (!known && process.env.SHAPEKIN_DEBUG) process.stderr.write(`${(err as Error)?.stack ?? ''}\n`);
    if (json && !emitted) emit({ error: message, exit_code: code });
    return code;
  } finally {
    Object.assign(console, consoleWas);
  }
}
