// The workbench's state: one store that controllers write and the shell reads, and a closed status per long
// job (import, training, embedding, measurement, study), so a panel can only show what is true.

import type { LibraryPart } from '../core/library';
import type { ImportFailure } from '../core/mesh/import';
import type { TrainConfig, HeldOutCheck, TrainProgress } from '../core/model/train-config';
import type { Pipeline } from '../core/points/augment';
import type { EvaluationReport } from '../core/quality/evaluate';
import type { StudyRow } from '../core/quality/study';
import type { EmbeddingIndex, Ranking } from '../core/retrieval/index';
import type { Hit } from '../core/retrieval/topk';
import type { CheckpointMessage } from '../worker/protocol';

export interface Progress {
  readonly done: number;
  readonly total: number;
  /** What is being worked on, in plain words (a file name, an augmentation). */
  readonly what: string;
  /** When the job started (performance.now()), for the time left (words.ts timeLeft); absent when not timed. */
  readonly startedAt?: number;
}

/**
 * Where a long job is. `running` without progress: started, nothing reported yet. `done` carries what the job
 * wants to say about its end (e.g. how long an import took).
 */
export type JobStatus<Done extends object = object> =
  | { readonly kind: 'idle' }
  | { readonly kind: 'running'; readonly progress: Progress | null }
  | { readonly kind: 'paused' }
  | ({ readonly kind: 'done' } & Done)
  | { readonly kind: 'failed'; readonly message: string }
  | { readonly kind: 'cancelled' };

export const IDLE = { kind: 'idle' } as const;
export const STARTED = { kind: 'running', progress: null } as const;

export function isBusy(s: JobStatus): boolean {
  return s.kind === 'running' || s.kind === 'paused';
}

export type Panel = 'library' | 'augment' | 'train' | 'search' | 'map' | 'study';

export interface SearchFilters {
  readonly k: number;
  /** Keep results whose size is within this factor of the query's (null: any size). */
  readonly sizeRatio: number | null;
  /** Keep results from this folder only ('' : all folders). */
  readonly family: string;
  readonly ranking: Ranking;
}

export const DEFAULT_FILTERS: SearchFilters = { k: 10, sizeRatio: null, family: '', ranking: 'diffusion' };

export interface LibraryState {
  readonly parts: readonly LibraryPart[];
  readonly failures: readonly ImportFailure[];
  readonly status: JobStatus<{ readonly ms: number }>;
  readonly thumbnails: ReadonlyMap<string, string>;
  readonly selected: string;
  /** Counts meshes fetched back from the parts database for the views (meshes.ts); a view redraws when it moves. */
  readonly meshesFetched: number;
  /**
   * Millimetres per file unit by folder, for files whose format does not say its units (STL, OBJ, PLY, OFF, VRML,
   * point lists), as the person set them; folders not named stay in file units.
   */
  readonly units: Readonly<Record<string, number>>;
}

export interface TrainingState {
  readonly config: TrainConfig;
  readonly pipeline: Pipeline;
  /** `early`: stopped by the held-out check rather than at the last step. */
  readonly status: JobStatus<{ readonly early: boolean }>;
  readonly progress: TrainProgress | null;
  readonly history: readonly { step: number; loss: number }[];
  readonly checks: readonly HeldOutCheck[];
  readonly backend: string;
  /** The current model (kept in the parts database), or null before any training. */
  readonly model: CheckpointMessage | null;
  /** The kept model's fingerprint (its embeddings are kept under it), or null until it is stored. */
  readonly modelFingerprint: string | null;
  /** One training step timed with the current settings (for the estimate before Start), or null. */
  readonly stepMs: { readonly key: string; readonly ms: number } | null;
  /** Whether the saved model has been looked for yet: until then `model` null means "not known", not "none". */
  readonly modelKnown: boolean;
}

export interface SearchState {
  readonly index: EmbeddingIndex | null;
  readonly query: LibraryPart | null;
  readonly hits: readonly Hit[];
  /** Each hit's standing: the share of the other parts less similar to the query than it is (standing.ts). */
  readonly standing: readonly number[];
  readonly filters: SearchFilters;
  /** Embedding the library with the current model. */
  readonly status: JobStatus;
  /** Milliseconds a part took in the last embedding of the library here (for estimates), or null before one. */
  readonly embedPace: number | null;
  /** Why the chosen result matches the query: each part's first points weighted by their share of the similarity. */
  readonly explanation: MatchExplanation | null;
  /** The map: each part's place on the embeddings' two leading principal components, for the index's vectors `of`. */
  readonly map: { readonly xy: Float32Array; readonly of: Float32Array } | null;
}

export interface MatchExplanation {
  readonly query: string;
  readonly result: string;
  readonly a: Float32Array;
  readonly b: Float32Array;
}

export interface MeasureState {
  readonly report: EvaluationReport | null;
  readonly status: JobStatus;
  readonly rows: readonly StudyRow[];
  readonly study: JobStatus;
}

export interface AppState {
  readonly panel: Panel;
  /** One line for the user (a restored model, an import that failed); '' for none. */
  readonly notice: string;
  /** What the notice offers to do with one click (continue a run that a reload interrupted), if anything. */
  readonly noticeAction: 'continue-training' | null;
  readonly library: LibraryState;
  readonly training: TrainingState;
  readonly search: SearchState;
  readonly measure: MeasureState;
}

type Listener<S> = (state: S) => void;

/** A value replaced (never mutated) slice by slice; listeners hear every change. */
export class Store<S extends object> {
  private listeners = new Set<Listener<S>>();

  constructor(private state: S) {}

  get value(): S {
    return this.state;
  }

  /** Replace top-level fields of the state. */
  set(patch: Partial<S>): void {
    this.state = { ...this.state, ...patch };
    for (const l of this.listeners) l(this.state);
  }

  /** Replace fields of one slice (an object-valued field). */
  patch<K extends keyof S>(key: K, patch: Partial<S[K]>): void {
    this.set({ [key]: { ...this.state[key], ...patch } } as unknown as Partial<S>);
  }

  subscribe(listener: Listener<S>): () => void {
    this.listeners.add(listener);
    return () => this.listeners.delete(listener);
  }
}

/** Replace the notice (and whatever it offered). */
export function say(store: Store<AppState>, notice: string, action: AppState['noticeAction'] = null): void {
  store.set({ notice, noticeAction: action });
}

/** The library job's progress label while the kept library is opened (nothing to stop: it is already read). */
export const RESTORING = 'restoring the kept library';

/** The library job's progress label while the parts read are written to the parts database after reading. */
export const KEEPING = 'keeping the library on this computer';

/** The look-alike job's progress label while the library's neighbours are found (in a worker; seconds, not minutes). */
export const ORDERING = 'finding neighbours in the library';
