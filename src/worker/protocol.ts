// The typed message protocol between the page and its workers. Every request carries an id; replies
// carry the same id, and the client drops replies to requests it no longer waits for.

import type { LibraryPart, SamplingSettings } from '../core/library';
import type { ImportFailure } from '../core/mesh/import';
import type { RunManifest, WeightSpec } from '../core/model/model-json';
import type { EvaluationReport } from '../core/quality/evaluate';
import type { StudyRow } from '../core/quality/study';
import type { AugmentKind } from '../core/points/augment';
import type { TrainConfig, TrainProgress, HeldOutCheck, TrainResult } from '../core/model/train-config';
import type { HashedPart, PartClouds, PartMesh } from '../core/db/workbench';
import type { GraphArrays, PackedLists } from '../core/retrieval/diffusion';
import type { TableArrays } from '../core/retrieval/neighbour-table';

/**
 * A file to read: its bytes, or the picked file itself (a Blob, read in the worker), so the page never holds a whole
 * library's bytes at once (KiCad's 6,225 models are 871 MB of OFF).
 */
export interface FileInput {
  readonly name: string;
  readonly bytes: ArrayBuffer | Blob;
}

/** How many bytes a file input holds. */
export const inputBytes = (f: FileInput): number => (f.bytes instanceof Blob ? f.bytes.size : f.bytes.byteLength);

export type LibraryRequest = {
  readonly type: 'import';
  readonly id: number;
  readonly files: readonly FileInput[];
  readonly sampling: SamplingSettings;
  readonly maxBytes?: number;
};

export type LibraryReply =
  /** The worker has begun reading the request's files (a file's time limit runs from here, not from start-up). */
  | { readonly type: 'reading'; readonly id: number }
  | { readonly type: 'part'; readonly id: number; readonly part: LibraryPart }
  | { readonly type: 'failed'; readonly id: number; readonly failure: ImportFailure }
  | { readonly type: 'done'; readonly id: number; readonly ms: number };

export { partTransfers } from '../core/library';

// ---- training worker ----

export interface PartArrays {
  readonly points: Float32Array;
  readonly normals: Float32Array;
}

/** A checkpoint as it crosses the boundary: the manifest as JSON and the weights as one transferable buffer. */
export interface CheckpointMessage {
  readonly manifest: RunManifest;
  readonly weightSpecs: WeightSpec[];
  readonly weightData: ArrayBuffer;
  readonly adamStep: number;
}

/** A neighbour table as it crosses a boundary: its rows' part names and its arrays (retrieval/neighbour-table.ts). */
export type TableMessage = TableArrays;

/** The ordering through the library an index takes over (`EmbeddingIndex.useOrdering`): its table and graph lists. */
export interface OrderingMessage {
  readonly table: TableMessage;
  readonly graph: PackedLists;
  /** The diffusion graph built from `graph` here, so the page need not build it (at 6,225 parts 57 ms of its CPU). */
  readonly built?: GraphArrays;
  /** Rows added to, and removed from, a kept table (0 and 0 when built afresh); rows scanned again for the graph. */
  readonly added: number;
  readonly removed: number;
  readonly fresh: boolean;
}

export type TrainRequest =
  /** Parts for the run `id`, handed over a chunk at a time before its start (each chunk a short task on the page). */
  | { readonly type: 'stage'; readonly id: number; readonly parts: readonly PartArrays[] }
  /** The parts staged under `id` go: the request that would read them will not come (a chunk could not be read). */
  | { readonly type: 'unstage'; readonly id: number }
  | {
      readonly type: 'start';
      readonly id: number;
      /** The run's parts; the ones staged under this id when absent. */
      readonly parts?: readonly PartArrays[];
      readonly labels: readonly number[] | null;
      readonly config: TrainConfig;
      readonly sampling: { points: number; seed: number };
      readonly resume?: CheckpointMessage;
    }
  | { readonly type: 'pause'; readonly id: number }
  | { readonly type: 'resume'; readonly id: number }
  | { readonly type: 'cancel'; readonly id: number }
  | {
      readonly type: 'embed';
      readonly id: number;
      readonly parts: readonly PartArrays[];
      /** The model; null with a `modelKey` means the one handed over earlier under that key (the worker keeps it). */
      readonly checkpoint: CheckpointMessage | null;
      /** Names the model so later requests need not carry it again. */
      readonly modelKey?: number;
      readonly config: TrainConfig;
    }
  /**
   * Build the ordering through the library from its embeddings (rows in `names` order, each part's diagonal in
   * `diagonals` for the size prior), carrying `kept` (a table for the same model) over where there is one.
   */
  | {
      readonly type: 'order';
      readonly id: number;
      readonly names: readonly string[];
      readonly vectors: Float32Array;
      readonly dim: number;
      readonly diagonals: Float64Array;
      readonly kept: TableMessage | null;
    }
  /** Time one training step with these settings on a sample of the parts (the estimate before Start). */
  | { readonly type: 'probe'; readonly id: number; readonly parts: readonly PartArrays[]; readonly config: TrainConfig }
  /** Which points of two parts carry their similarity (core/model/explain.ts). */
  | {
      readonly type: 'explain';
      readonly id: number;
      readonly a: PartArrays;
      readonly b: PartArrays;
      readonly checkpoint: CheckpointMessage | null;
      readonly config: TrainConfig;
    }
  /** The checkpoint earlier versions kept in IndexedDB (tfjs's browser handler), if any. */
  | { readonly type: 'load-saved'; readonly id: number }
  /** Forget that checkpoint (moved into the parts database). */
  | { readonly type: 'forget-saved'; readonly id: number }
  /** Leave-one-out retrieval quality of the model and the two baselines (needs labels). */
  | {
      readonly type: 'evaluate';
      readonly id: number;
      /** The parts; the ones staged under this id when absent. */
      readonly parts?: readonly PartArrays[];
      readonly labels: readonly string[];
      /** Each part's diagonal (mm where its units are known), for the size prior of the ordering through the library. */
      readonly diagonals: Float64Array;
      readonly checkpoint: CheckpointMessage | null;
      readonly config: TrainConfig;
    }
  /**
   * Serve embedding requests arriving on `port` (from the other training worker, for a study), as if from the page,
   * with their own kept model, until a `cancel` with this id.
   */
  | { readonly type: 'serve'; readonly id: number; readonly port: MessagePort }
  /** The augmentation study over the library. */
  | {
      readonly type: 'study';
      readonly id: number;
      /** A port to a worker serving embedding requests (`serve`): it embeds half of each set of views. */
      readonly helper?: MessagePort;
      /** The parts; the ones staged under this id when absent. */
      readonly parts?: readonly PartArrays[];
      readonly labels: readonly string[];
      readonly checkpoint: CheckpointMessage | null;
      readonly config: TrainConfig;
      readonly kinds?: readonly AugmentKind[];
      readonly strengths?: readonly number[];
    };

export type TrainReply =
  | { readonly type: 'backend'; readonly id: number; readonly backend: string }
  | { readonly type: 'progress'; readonly id: number; readonly progress: TrainProgress }
  | { readonly type: 'check'; readonly id: number; readonly check: HeldOutCheck }
  | { readonly type: 'status'; readonly id: number; readonly status: 'running' | 'paused' }
  | { readonly type: 'checkpoint'; readonly id: number; readonly checkpoint: CheckpointMessage }
  | {
      readonly type: 'done';
      readonly id: number;
      readonly result: Omit<TrainResult, 'history'> & { history: TrainResult['history'] };
    }
  | {
      readonly type: 'embeddings';
      readonly id: number;
      readonly vectors: Float32Array;
      readonly dim: number;
      readonly learned: boolean;
    }
  | { readonly type: 'saved'; readonly id: number; readonly checkpoint: CheckpointMessage | null }
  | { readonly type: 'probed'; readonly id: number; readonly msPerStep: number }
  | { readonly type: 'ordering'; readonly id: number; readonly ordering: OrderingMessage }
  | {
      readonly type: 'explanation';
      readonly id: number;
      readonly a: Float32Array;
      readonly b: Float32Array;
      readonly pooledCosine: number;
      /** How many of each part's first points the contributions cover. */
      readonly points: number;
    }
  | { readonly type: 'evaluation'; readonly id: number; readonly report: EvaluationReport }
  | {
      readonly type: 'study-progress';
      readonly id: number;
      readonly done: number;
      readonly total: number;
      readonly what: string;
    }
  /** The study's rows, and how many parts (views and the library) the second worker embedded of them. */
  | { readonly type: 'study'; readonly id: number; readonly rows: StudyRow[]; readonly shared: number }
  | { readonly type: 'error'; readonly id: number; readonly message: string };

// ---- database worker ----

/** What the database worker is asked (each answered by one DbReply with the same id). */
export type DbRequest =
  /** The library's outline: part names in order, failures, source. */
  | { readonly type: 'load-library'; readonly id: number }
  /**
   * Some of its parts with their data: without their meshes when `meshes` is false, without their point clouds
   * when `clouds` is false; with each part's file-frame box ratio (worked out here, from its cloud).
   */
  | {
      readonly type: 'load-parts';
      readonly id: number;
      readonly names: readonly string[];
      readonly meshes?: boolean;
      readonly clouds?: boolean;
    }
  /** The point clouds of some of its parts, for training, embedding and the views. */
  | { readonly type: 'load-clouds'; readonly id: number; readonly names: readonly string[] }
  /** The meshes of some of its parts, for the views. */
  | { readonly type: 'load-meshes'; readonly id: number; readonly names: readonly string[] }
  | { readonly type: 'put-parts'; readonly id: number; readonly parts: readonly HashedPart[] }
  | {
      readonly type: 'set-contents';
      readonly id: number;
      readonly names: readonly string[];
      readonly failures: readonly ImportFailure[];
      readonly source: 'demo' | 'user';
    }
  /** Millimetres per file unit by folder (files whose format has no units). */
  | { readonly type: 'load-units'; readonly id: number }
  | { readonly type: 'put-units'; readonly id: number; readonly units: Readonly<Record<string, number>> }
  | { readonly type: 'load-model'; readonly id: number }
  | { readonly type: 'put-model'; readonly id: number; readonly checkpoint: CheckpointMessage }
  | {
      readonly type: 'put-embeddings';
      readonly id: number;
      readonly key: string;
      readonly names: readonly string[];
      readonly vectors: Float32Array;
      readonly dim: number;
    }
  | { readonly type: 'load-embeddings'; readonly id: number; readonly key: string; readonly names: readonly string[] }
  /** A model's neighbour table (ordering through the library), kept with the names of its rows. */
  | { readonly type: 'put-ordering'; readonly id: number; readonly key: string; readonly table: TableMessage }
  | { readonly type: 'load-ordering'; readonly id: number; readonly key: string }
  /** The whole database as one file (PGlite's dump, a gzipped tar of its data folder). */
  | { readonly type: 'export'; readonly id: number }
  /** Replace the database with a dump. */
  | { readonly type: 'import'; readonly id: number; readonly dump: Blob };

/** What each request answers with. */
export interface DbAnswers {
  'load-library': { names: string[]; failures: ImportFailure[]; source: 'demo' | 'user' } | null;
  'load-parts': { parts: LibraryPart[]; boxRatios: number[] };
  'load-clouds': PartClouds[];
  'load-meshes': PartMesh[];
  'put-parts': null;
  'set-contents': null;
  'load-units': Record<string, number>;
  'put-units': null;
  'load-model': { checkpoint: CheckpointMessage; fingerprint: string } | null;
  'put-model': string;
  'put-embeddings': boolean;
  'load-embeddings': { vectors: Float32Array; dim: number } | null;
  'put-ordering': boolean;
  'load-ordering': TableMessage | null;
  export: Blob;
  import: null;
}

export type DbReply =
  | { readonly id: number; readonly ok: true; readonly value: unknown }
  | { readonly id: number; readonly ok: false; readonly message: string };
