// The look-alike job: embeddings of the whole library with the current model (or the untrained encoder before
// any training), kept in IndexedDB and reused after a reload when model and parts are unchanged; the index over
// them; and the ranked results for a query from the library or from a file.

import type { LibraryPart } from '../../core/library';
import { EmbeddingIndex, type IndexEntry } from '../../core/retrieval/index';
import { diagonalMm } from '../../core/units';
import { shareBelow } from '../../core/retrieval/standing';
import {
  IDLE,
  ORDERING,
  say,
  STARTED,
  type AppState,
  type SearchFilters,
  type SearchState,
  type Store,
} from '../state';
import { loadEmbeddings, loadOrdering, saveEmbeddings, saveOrdering } from './library-db';
import { namedTable } from '../../core/retrieval/neighbour-table';
import type { LibraryController } from './library';
import type { TrainingController } from './training';
import { TrainClient } from './train-client';
import { cloudsToHand } from './clouds';
import { stepThrough, yieldToPage } from '../pace';
import type { MapReply, MapRequest } from '../../worker/map.worker';
import type { OrderingMessage } from '../../worker/protocol';

/**
 * Parts a request to the training worker embeds: a multiple of embedParts' batch (32), so the worker runs the same
 * batches as for one request over the whole library and the bytes are the same; small, so a stop waits at most
 * one request (a few seconds) and progress moves often.
 */
const EMBED_CHUNK = 32;

/** Parts scored against a query per task: 2,000 rows of 1,024 values are about 2 million multiply-adds. */
const SCORE_ROWS = 2000;

export class SearchController {
  private version = 0;
  private last: { vector: ArrayLike<number>; exclude: number } | null = null;

  constructor(
    private readonly store: Store<AppState>,
    private readonly training: TrainingController,
    private readonly library: LibraryController,
  ) {}

  private get state(): SearchState {
    return this.store.value.search;
  }

  private patch(p: Partial<SearchState>): void {
    this.store.patch('search', p);
  }

  /**
   * The model embeddings are kept under: the stored model's fingerprint, or the untrained encoder's settings and
   * seed (which make it); null while a trained model is not stored yet (its embeddings are then not kept).
   */
  private modelKey(): string | null {
    const { model, config, modelFingerprint } = this.training.state;
    if (model) return modelFingerprint;
    return `untrained:${JSON.stringify(config.encoder)}:${config.seed}`;
  }

  /** Share of each similarity the current model takes from the surface grid (the trained model's, or the settings'). */
  private gridShare(): number {
    const { model, config } = this.training.state;
    return (model ? model.manifest.config.encoder : config.encoder).surfaceGrid?.share ?? 0;
  }

  /** Re-embed the library (or reuse the stored embeddings), then repeat the current search. */
  async refresh(): Promise<void> {
    const parts = this.store.value.library.parts;
    const version = ++this.version;
    if (parts.length === 0) {
      this.patch({ index: null, hits: [], standing: [], query: null, status: IDLE });
      return;
    }
    this.patch({ status: STARTED });
    try {
      const key = this.modelKey();
      const names = parts.map((p) => p.name);
      const stored = key ? await loadEmbeddings(key, names).catch(() => null) : null;
      let vectors: Float32Array, dim: number;
      if (stored) {
        ({ vectors, dim } = stored);
      } else {
        const embedded = await this.embedLibrary(parts, version);
        if (!embedded) return; // stopped, or a newer refresh took over
        ({ vectors, dim } = embedded);
        await yieldToPage(); // the rows were put together in this task; their copy for the database in the next
        if (version !== this.version) return;
        if (key) await saveEmbeddings(key, names, vectors, dim).catch(() => false);
      }
      // Each step below is a task of its own (pace.ts), so the page never holds still for all of them at once.
      await yieldToPage();
      if (version !== this.version) return;
      const index = new EmbeddingIndex(vectors, dim, this.entries(parts), { gridShare: this.gridShare() });
      await yieldToPage();
      const spread = await stepThrough(index.diffusionAppliesSteps(), () => version !== this.version);
      if (spread) await this.order(index, vectors, key, names, version);
      await yieldToPage();
      if (version !== this.version) return;
      const selected = this.store.value.library.selected;
      const query = this.state.query ?? parts.find((p) => p.name === selected) ?? parts[0];
      const i = parts.findIndex((p) => p.name === query.name);
      const found = i >= 0 ? await this.ranking(index, query, index.vector(i), i) : { hits: [], standing: [] };
      await yieldToPage(); // the list renders in a task of its own
      if (version !== this.version) return;
      this.patch({ index, query, status: { kind: 'done' }, ...found });
      void this.project(index);
    } catch (err) {
      if (version === this.version)
        this.patch({ status: { kind: 'failed', message: `Embedding failed: ${(err as Error).message}` } });
    }
  }

  /**
   * Embeddings of the library with the current model, a few parts per request, with progress and the time left;
   * null when stopped or overtaken by a newer refresh (nothing is kept then).
   */
  private async embedLibrary(
    parts: readonly LibraryPart[],
    version: number,
  ): Promise<{ vectors: Float32Array; dim: number } | null> {
    const { model, config } = this.training.state;
    const total = parts.length;
    const startedAt = performance.now();
    const chunks = Math.ceil(total / EMBED_CHUNK);
    // Each chunk goes straight to its place in the library's rows (made when the first arrives, its width known
    // then): at 20,000 parts the rows are 80 MB, and keeping the chunks apart until the end held them twice.
    let vectors: Float32Array | null = null;
    let dim = 0,
      next = 0,
      done = 0;
    const progress = () =>
      this.patch({
        status: { kind: 'running', progress: { done, total, what: 'embedding the library', startedAt } },
      });
    progress();
    // Each worker's time and parts after its first chunk, which also pays for the model's hand-over and warm-up.
    let warmMs = 0,
      warmParts = 0;
    // Each worker takes the next chunk when it is free; the chunks go back in place, so the bytes are one worker's.
    const run = async (client: TrainClient) => {
      let warmFrom: number | null = null;
      while (next < chunks && version === this.version) {
        const c = next++;
        const slice = parts.slice(c * EMBED_CHUNK, (c + 1) * EMBED_CHUNK);
        // Each chunk's clouds are read (copied, or fetched from the parts database) just before they go.
        const r = await client.embed(await cloudsToHand(slice), model, config);
        dim = r.dim;
        vectors ??= new Float32Array(total * dim);
        vectors.set(r.vectors, c * EMBED_CHUNK * dim);
        done += slice.length;
        const now = performance.now();
        if (warmFrom !== null) {
          warmMs += now - warmFrom;
          warmParts += slice.length;
        }
        warmFrom = now;
        if (version === this.version) progress();
      }
    };
    const clients = this.embedders(chunks);
    await Promise.all(clients.map(run));
    if (version !== this.version) return null;
    // The pace of one worker, ms a part (the measurement runs on one, the study on as many as here: both estimated
    // from it), from the chunks after each worker's first; from the whole run when every worker had only one.
    const elapsed = ((performance.now() - startedAt) * clients.length) / total;
    this.patch({ embedPace: warmParts > 0 ? warmMs / warmParts : elapsed });
    if (!vectors) return null;
    return { vectors, dim };
  }

  private mapWorker: Worker | null = null;
  private mapId = 0;

  /** The map's coordinates, worked out in the map worker; kept in the state for the index's vectors. */
  private async project(index: EmbeddingIndex): Promise<void> {
    if (index.count < 3 || this.state.map?.of === index.vectors) return;
    if (typeof Worker === 'undefined') return;
    this.mapWorker ??= new Worker(new URL('../../worker/map.worker.ts', import.meta.url), { type: 'module' });
    const id = ++this.mapId;
    const worker = this.mapWorker;
    const vectors = index.vectors.slice();
    const xy = await new Promise<Float32Array>((resolve) => {
      const on = (e: MessageEvent<MapReply>) => {
        if (e.data.id !== id) return;
        worker.removeEventListener('message', on);
        resolve(e.data.xy);
      };
      worker.addEventListener('message', on);
      worker.postMessage({ id, vectors, dim: index.dim } satisfies MapRequest, [vectors.buffer]);
    });
    if (id === this.mapId && this.state.index?.vectors === index.vectors)
      this.patch({ map: { xy, of: index.vectors } });
  }

  /** The workers that embed the library: the training worker, and the second one when there is work for two. */
  private embedders(chunks: number): TrainClient[] {
    const helper = chunks < 2 ? null : this.training.helper();
    return helper ? [this.training.client, helper] : [this.training.client];
  }

  /**
   * The ordering through the library, built in a worker of its own (a matrix product over all pairs, off the page)
   * or carried over from the table kept for this model (only new parts' rows are scored), then kept with the
   * embeddings. If the worker cannot, the index builds it itself on the first ordered query.
   */
  private async order(
    index: EmbeddingIndex,
    vectors: Float32Array,
    key: string | null,
    names: readonly string[],
    version: number,
  ): Promise<void> {
    this.patch({
      status: {
        kind: 'running',
        progress: { done: 0, total: names.length, what: ORDERING, startedAt: performance.now() },
      },
    });
    try {
      const kept = key ? await loadOrdering(key) : null;
      const diagonals = Float64Array.from(index.entries, (e) => e.diagonal);
      // A worker of its own, ended once it has answered: the build's matrix products grow a worker's WebAssembly
      // memory (to about 110 MB at 20,000 parts of 1,024 values, Node), which only ending the worker gives back. Made
      // again for each build, which pays for loading the worker; the build at that size took about 2 minutes.
      this.builder?.abort();
      const builder = (this.builder = new TrainClient());
      let o: OrderingMessage;
      try {
        o = await builder.order(names, vectors, index.dim, diagonals, kept);
      } finally {
        builder.dispose();
        if (this.builder === builder) this.builder = null;
      }
      if (version !== this.version) return;
      const { table, sizes } = namedTable(o.table);
      index.useOrdering({ table, sizes, graph: o.graph, ...(o.built ? { built: o.built } : {}) });
      if (key && (o.fresh || o.added > 0 || o.removed > 0)) await saveOrdering(key, o.table).catch(() => false);
    } catch {
      // ordered queries then build it here on first use
    }
  }

  /** The worker building the ordering through the library now, if one is. */
  private builder: TrainClient | null = null;

  /** Stops embedding the library: look-alikes wait until it is embedded again (`refresh`); nothing half is kept. */
  cancel(): void {
    if (this.state.status.kind !== 'running') return;
    this.builder?.abort();
    this.version++; // the embedding under way ends after the request in hand, and keeps nothing
    this.patch({ status: { kind: 'cancelled' }, index: null, hits: [], standing: [] });
  }

  /** Results for a part: from the library (its stored embedding) or from elsewhere (embedded now). */
  async searchFor(part: LibraryPart): Promise<void> {
    this.patch({ query: part });
    const parts = this.store.value.library.parts;
    if (parts.some((p) => p.name === part.name)) return this.searchLibraryPart(part);
    if (!this.state.index) return;
    const { model, config } = this.training.state;
    const { vectors } = await this.training.client.embed(await cloudsToHand([part]), model, config);
    await this.rank(vectors, -1);
  }

  /** A file from outside the library as the query; a file that cannot be read says why in the notice. */
  async searchFile(file: File): Promise<void> {
    const part = await this.library.readOne(file, (f) => say(this.store, `${f.file}: ${f.reason}`));
    if (part) {
      say(this.store, '');
      await this.searchFor(part);
    }
  }

  /** Which points of the query and of library part `resultIndex` carry their similarity (in the training worker). */
  async explain(resultIndex: number): Promise<void> {
    const query = this.state.query;
    const result = this.store.value.library.parts[resultIndex];
    if (!query || !result) return;
    const { model, config } = this.training.state;
    try {
      const [a, b] = await cloudsToHand([query, result]);
      const e = await this.training.client.explain(a, b, model, config);
      if (this.state.query === query)
        this.patch({ explanation: { query: query.name, result: result.name, a: e.a, b: e.b } });
    } catch (err) {
      if ((err as Error).message !== 'cancelled')
        say(this.store, `Could not show why they match: ${(err as Error).message}`);
    }
  }

  /**
   * The index's entries: sizes in mm where the part's units are known (its format's, or its folder's as set), so
   * the size filter compares a part drawn in inches with one in mm; otherwise in file units.
   */
  private entries(parts: readonly LibraryPart[]): IndexEntry[] {
    const units = this.store.value.library.units;
    return parts.map((p) => ({ name: p.name, label: p.label, diagonal: diagonalMm(p, units[p.label]) }));
  }

  /** A folder's units changed: the same embeddings with sizes in the new units, and the search again. */
  async unitsChanged(): Promise<void> {
    const index = this.state.index;
    if (!index) return;
    const parts = this.store.value.library.parts;
    const next = index.withEntries(this.entries(parts));
    this.patch({ index: next });
    if (index.ordered && !next.ordered) {
      // The ordering holds the parts' sizes (its size prior): built again in the worker, the kept table's rows of
      // parts whose size stayed carried over.
      const version = this.version;
      const names = parts.map((p) => p.name);
      await this.order(next, next.vectors, this.modelKey(), names, version);
      if (version !== this.version || this.state.index !== next) return;
      this.patch({ status: { kind: 'done' } });
    }
    if (this.last) void this.rank(this.last.vector, this.last.exclude);
  }

  setFilters(filters: SearchFilters): void {
    this.patch({ filters });
    if (this.last) void this.rank(this.last.vector, this.last.exclude);
  }

  private searchLibraryPart(part: LibraryPart): void {
    const index = this.state.index;
    if (!index) return;
    const i = this.store.value.library.parts.findIndex((p) => p.name === part.name);
    if (i >= 0) void this.rank(index.vector(i), i);
  }

  /** Counts rankings: one overtaken by a newer one (another query, filter or index) shows nothing. */
  private rankings = 0;

  private async rank(vector: ArrayLike<number>, exclude: number): Promise<void> {
    const { index, query } = this.state;
    if (!index || !query) return;
    const found = await this.ranking(index, query, vector, exclude);
    if (found && this.state.index === index) this.patch(found);
  }

  /**
   * The results for a query vector under the current filters, and where each stands in the library; null when a
   * newer ranking began meanwhile. The cosines to every part are worked out SCORE_ROWS parts a task (at 20,000
   * parts of 1,024 values the whole ranking held the page for 86 ms of its CPU in one task) and serve both.
   */
  private async ranking(
    index: EmbeddingIndex,
    query: LibraryPart,
    vector: ArrayLike<number>,
    exclude: number,
  ): Promise<Pick<SearchState, 'hits' | 'standing'> | null> {
    const own = ++this.rankings;
    const f = this.state.filters;
    this.last = { vector: Array.from(vector), exclude };
    const cosine = new Float32Array(index.count);
    for (let from = 0; from < index.count; from += SCORE_ROWS) {
      if (from > 0) {
        await yieldToPage();
        if (own !== this.rankings) return null;
      }
      index.scores(vector, cosine, from, Math.min(index.count, from + SCORE_ROWS));
    }
    // Ordered by cosine instead where the embedding is too concentrated for diffusion (e.g. untrained). Ordering
    // through the library goes a few of its steps a task: at 20,000 parts it is tens of milliseconds. The query's
    // size serves the size filter and, for a part from outside the library, the size prior.
    const queryDiagonal = diagonalMm(query, this.store.value.library.units[query.label]);
    const hits = await stepThrough(
      index.rankedSteps(
        f.ranking,
        vector,
        f.k,
        {
          exclude,
          queryDiagonal,
          ...(f.sizeRatio ? { sizeRatio: f.sizeRatio } : {}),
          ...(f.family ? { labels: [f.family] } : {}),
        },
        cosine,
      ),
      () => own !== this.rankings,
    );
    if (!hits) return null;
    const standing = shareBelow(
      cosine,
      hits.map((h) => h.index),
      exclude,
    );
    return { hits, standing };
  }
}
