// <sk-app>: the workbench shell. Owns the state (library, model, embeddings, training status), hands it to
// the panels and reacts to their events; workers do the heavy work.

import { FORMAT_NAMES } from '../../core/mesh/formats';
import { LitElement, css, html } from 'lit';
import { DEFAULT_SAMPLING, type LibraryPart } from '../../core/library';
import type { ImportFailure } from '../../core/mesh/import';
import { DEFAULT_TRAIN, POOL_POINTS, defaultEpochs, defaultInputs, defaultPose, inputsReason, libraryTraits, poseReason, type LibraryTraits } from '../../core/model/defaults';
import type { HeldOutCheck, TrainConfig, TrainProgress } from '../../core/model/train-config';
import type { Pipeline } from '../../core/points/augment';
import { EmbeddingIndex } from '../../core/retrieval/index';
import type { Hit } from '../../core/retrieval/topk';
import { LibraryClient } from '../controllers/library-client';
import { loadEmbeddings, loadLibrary as loadStoredLibrary, saveEmbeddings, saveLibrary } from '../controllers/store';
import { thumbnail } from '../controllers/thumbnails';
import { TrainClient } from '../controllers/train-client';
import { fetchDemoLibrary } from '../demo-library';
import { namedFromDrop, namedFromInput, readFiles, type NamedFile } from '../files';
import type { ImportStatus, TrainStatusView } from '../status';
import type { CheckpointMessage, FileInput } from '../../worker/protocol';
import { DEFAULT_FILTERS, type SearchFilters } from './search-panel';
import './library-panel';
import './augment-panel';
import './train-panel';
import './search-panel';
import './map-panel';
import './study-panel';
import type { EvaluationReport } from '../../core/quality/evaluate';
import type { StudyRow } from '../../core/quality/study';
import { writeNpyFloat32 } from '../../core/retrieval/npy';
import { crc32 } from '../../core/checksum';
import { checkWeightData } from '../../core/model/weights-check';

type Panel = 'library' | 'augment' | 'train' | 'search' | 'map' | 'study';

const PANELS: readonly { id: Panel; label: string }[] = [
  { id: 'library', label: 'Parts library' },
  { id: 'augment', label: 'Augmentations' },
  { id: 'train', label: 'Training' },
  { id: 'search', label: 'Look-alikes' },
  { id: 'map', label: 'Map' },
  { id: 'study', label: 'Quality' },
];

const SAMPLING = { ...DEFAULT_SAMPLING, points: POOL_POINTS };

export class SkApp extends LitElement {
  static override properties = {
    panel: { state: true }, parts: { state: true }, failures: { state: true }, status: { state: true }, thumbs: { state: true },
    selected: { state: true }, pipeline: { state: true }, config: { state: true }, trainStatus: { state: true },
    progress: { state: true }, history: { state: true }, checks: { state: true }, backend: { state: true },
    model: { state: true }, index: { state: true }, hits: { state: true }, query: { state: true }, filters: { state: true },
    embedding: { state: true }, notice: { state: true }, report: { state: true }, studyRows: { state: true }, studyProgress: { state: true }, measuring: { state: true },
  };
  declare report: EvaluationReport | null;
  declare studyRows: StudyRow[];
  declare studyProgress: { done: number; total: number; what: string } | null;
  declare measuring: boolean;

  declare panel: Panel;
  declare parts: LibraryPart[];
  declare failures: ImportFailure[];
  declare status: ImportStatus;
  declare thumbs: Map<string, string>;
  declare selected: string;
  declare pipeline: Pipeline;
  declare config: TrainConfig;
  private inputsChosen = false;
  private epochsChosen = false;
  private poseChosen = false;
  private traitsMemo: { parts: LibraryPart[]; traits: LibraryTraits } | null = null;
  declare trainStatus: TrainStatusView;
  declare progress: TrainProgress | null;
  declare history: { step: number; loss: number }[];
  declare checks: HeldOutCheck[];
  declare backend: string;
  declare model: CheckpointMessage | null;
  declare index: EmbeddingIndex | null;
  declare hits: Hit[];
  declare query: LibraryPart | null;
  declare filters: SearchFilters;
  declare embedding: boolean;
  declare notice: string;

  private readonly library = new LibraryClient();
  private readonly trainer = new TrainClient();
  private thumbQueue: LibraryPart[] = [];
  private thumbTimer = 0;
  private embedVersion = 0;

  /** What the defaults read from the library (closed meshes, how square parts sit in their files), once per library. */
  private get traits(): LibraryTraits {
    if (this.traitsMemo?.parts !== this.parts) this.traitsMemo = { parts: this.parts, traits: libraryTraits(this.parts) };
    return this.traitsMemo.traits;
  }

  constructor() {
    super();
    this.panel = 'library';
    this.parts = [];
    this.failures = [];
    this.status = { kind: 'idle' };
    this.thumbs = new Map();
    this.selected = '';
    this.config = DEFAULT_TRAIN;
    this.pipeline = DEFAULT_TRAIN.pipeline;
    this.trainStatus = { kind: 'idle' };
    this.progress = null;
    this.history = [];
    this.checks = [];
    this.backend = '';
    this.model = null;
    this.index = null;
    this.hits = [];
    this.query = null;
    this.filters = DEFAULT_FILTERS;
    this.embedding = false;
    this.notice = '';
    this.report = null;
    this.studyRows = [];
    this.studyProgress = null;
    this.measuring = false;
    this.trainer.on((msg) => {
      if (msg.id !== this.trainer.runId) return;
      if (msg.type === 'backend') { this.backend = msg.backend; this.trainStatus = { kind: 'running' }; }
      else if (msg.type === 'progress') { this.progress = msg.progress; this.history = [...this.history, { step: msg.progress.step, loss: msg.progress.loss }]; }
      else if (msg.type === 'check') this.checks = [...this.checks, msg.check];
      else if (msg.type === 'status') this.trainStatus = { kind: msg.status };
      else if (msg.type === 'checkpoint') { this.model = msg.checkpoint; }
      else if (msg.type === 'done') {
        this.trainStatus = msg.result.status === 'failed' ? { kind: 'failed', message: msg.result.message ?? 'training failed' } : { kind: 'done', result: msg.result.status };
        void this.refreshEmbeddings();
      } else if (msg.type === 'error') this.trainStatus = { kind: 'failed', message: msg.message };
    });
  }

  static override styles = css`
    :host { display: block; min-height: 100%; }
    header { display: flex; align-items: baseline; gap: 16px; padding: 10px 18px 0; }
    h1 { margin: 0; font-size: 20px; letter-spacing: 0.02em; }
    h1 span { color: #c2571a; }
    .tagline { color: #5a6870; }
    .model { margin-left: auto; font-size: 12px; color: #3d4b52; display: flex; gap: 8px; align-items: center; white-space: nowrap; }
    .tagline { white-space: nowrap; overflow: hidden; text-overflow: ellipsis; min-width: 0; }
    .model label, .model button, .model select { font: inherit; border: 1px solid #1d2b33; background: #fff; border-radius: 4px; padding: 2px 8px; cursor: pointer; }
    .model input { position: absolute; opacity: 0; width: 1px; height: 1px; }
    nav { display: flex; gap: 4px; padding: 8px 18px 0; border-bottom: 2px solid #1d2b33; }
    nav button { font: inherit; border: 1px solid #1d2b33; border-bottom: none; background: #e9e3d6; padding: 6px 14px; border-radius: 6px 6px 0 0; cursor: pointer; }
    nav button[aria-selected=true] { background: #1d2b33; color: #f4f1ea; }
    :focus-visible { outline: 3px solid #c2571a; outline-offset: 1px; }
    main { padding: 14px 18px 40px; }
    .notice { margin: 8px 18px 0; padding: 6px 12px; background: #e3eeee; border-left: 4px solid #2f6f73; font-size: 13px; }
  `;

  override connectedCallback(): void {
    super.connectedCallback();
    // `?bench` (used by npm run bench:ratio) leaves the cores to the benchmark: no library, no workers.
    if (new URLSearchParams(location.search).has('bench')) { this.notice = 'Benchmark page: the library is not loaded.'; return; }
    void this.startUp();
  }

  override disconnectedCallback(): void {
    super.disconnectedCallback();
    this.library.dispose();
    this.trainer.dispose();
    clearTimeout(this.thumbTimer);
  }

  /** Restore the saved library and model, or load the demo library on first start. */
  private async startUp(): Promise<void> {
    const stored = await loadStoredLibrary();
    if (stored && stored.parts.length > 0) {
      this.parts = stored.parts;
      this.failures = stored.failures;
      this.selected = stored.parts[0].name;
      this.status = { kind: 'ready', ms: 0 };
      stored.parts.forEach((p) => this.queueThumbnail(p));
      this.applyLibraryDefaults();
    } else {
      await this.loadDemo();
    }
    try {
      const saved = await this.trainer.loadSaved();
      if (saved) {
        this.model = saved;
        this.config = saved.manifest.config;
        this.history = saved.manifest.history.map((h) => ({ step: h.step, loss: h.loss }));
        this.checks = [...saved.manifest.checks];
        this.notice = `Restored the saved model (${saved.manifest.status}, step ${saved.manifest.step} of ${saved.manifest.totalSteps}).`;
      }
    } catch (err) {
      this.notice = `The saved model could not be read: ${(err as Error).message}`;
    }
    void this.refreshEmbeddings();
  }

  /**
   * Until a model exists or the user picks them, inputs, pose and epochs follow the library: normals only if mostly
   * closed, the files' own frame if most parts sit square in it, and fewer epochs on a large library (a step budget).
   */
  private applyLibraryDefaults(): void {
    if (this.model || this.parts.length === 0) return;
    const inputFeatures = defaultInputs(this.traits.closed);
    const pose = defaultPose(this.traits.boxRatios);
    if (!this.poseChosen && pose !== this.config.pose) this.config = { ...this.config, pose };
    if (!this.inputsChosen && inputFeatures !== this.config.encoder.inputFeatures) this.config = { ...this.config, encoder: { ...this.config.encoder, inputFeatures } };
    const epochs = defaultEpochs(this.parts.length, this.config.batchSize);
    if (!this.epochsChosen && epochs !== this.config.epochs) this.config = { ...this.config, epochs };
  }

  private async loadDemo(): Promise<void> {
    this.parts = [];
    this.failures = [];
    this.thumbs = new Map();
    this.status = { kind: 'importing', done: 0, total: 1, file: 'fetching the demo library' };
    try {
      await this.importInputs(await fetchDemoLibrary(), [], 'demo');
    } catch (err) {
      this.status = { kind: 'failed', message: `The demo library could not be loaded: ${(err as Error).message}` };
    }
  }

  private async addNamed(named: NamedFile[]): Promise<void> {
    const { inputs, skipped } = await readFiles(named);
    await this.importInputs(inputs, skipped.map((file) => ({ file, code: 'unsupported-type', reason: `not a file Shapekin reads (${FORMAT_NAMES})` })), 'user');
  }

  private async importInputs(inputs: FileInput[], extraFailures: ImportFailure[], source: 'demo' | 'user'): Promise<void> {
    const incoming = new Set(inputs.map((f) => f.name));
    this.parts = this.parts.filter((p) => !incoming.has(p.name));
    this.failures = [...this.failures.filter((f) => !incoming.has(f.file)), ...extraFailures];
    if (inputs.length === 0) { this.status = { kind: 'ready', ms: 0 }; return; }
    this.status = { kind: 'importing', done: 0, total: inputs.length, file: inputs[0].name };
    try {
      const ms = await this.library.importFiles(inputs, SAMPLING, {
        onPart: (part) => { this.parts = [...this.parts, part]; this.queueThumbnail(part); if (!this.selected) this.selected = part.name; },
        onFailure: (failure) => { this.failures = [...this.failures, failure]; },
        onProgress: (done, total, file) => { this.status = { kind: 'importing', done, total, file }; },
      });
      this.status = { kind: 'ready', ms };
      this.applyLibraryDefaults();
      await saveLibrary({ parts: this.parts, failures: this.failures, source });
      void this.refreshEmbeddings();
    } catch (err) {
      if ((err as Error).message !== 'superseded') this.status = { kind: 'failed', message: (err as Error).message };
    }
  }

  private queueThumbnail(part: LibraryPart): void {
    this.thumbQueue.push(part);
    if (this.thumbTimer) return;
    const step = () => {
      const next = this.thumbQueue.shift();
      if (!next) { this.thumbTimer = 0; return; }
      this.thumbs = new Map(this.thumbs).set(next.name, thumbnail(next));
      this.thumbTimer = window.setTimeout(step, 0);
    };
    this.thumbTimer = window.setTimeout(step, 0);
  }

  private labelIds(): number[] {
    const names = [...new Set(this.parts.map((p) => p.label))].sort();
    return this.parts.map((p) => names.indexOf(p.label));
  }

  private startTraining(config: TrainConfig, resume?: CheckpointMessage): void {
    this.config = config;
    this.trainStatus = { kind: 'starting' };
    this.progress = null;
    if (!resume) { this.history = []; this.checks = []; }
    const labels = config.loss.name === 'supervised-contrastive' ? this.labelIds() : null;
    this.trainer.start(this.parts.map((p) => ({ points: p.points, normals: p.normals })), labels, config, SAMPLING, resume);
  }

  private modelKey(): string {
    const m = this.model?.manifest;
    return m ? `run ${m.step}/${m.totalSteps} ${m.status} loss ${m.history[m.history.length - 1]?.loss ?? ''}` : `untrained ${JSON.stringify(this.config.encoder)} ${this.config.seed}`;
  }

  /** Embeddings of the whole library with the current model (or the untrained encoder before any training);
   *  kept in IndexedDB, and reused after a reload when model and parts are unchanged. */
  private async refreshEmbeddings(): Promise<void> {
    if (this.parts.length === 0) return;
    const version = ++this.embedVersion;
    this.embedding = true;
    try {
      const parts = this.parts;
      const key = this.modelKey();
      const stored = await loadEmbeddings();
      let vectors: Float32Array, dim: number;
      if (stored && stored.model === key && stored.names.length === parts.length && stored.names.every((n, i) => n === parts[i].name)) {
        ({ vectors, dim } = stored);
      } else {
        ({ vectors, dim } = await this.trainer.embed(parts.map((p) => ({ points: p.points, normals: p.normals })), this.model, this.config));
        if (version === this.embedVersion) await saveEmbeddings({ model: key, names: parts.map((p) => p.name), vectors, dim });
      }
      if (version !== this.embedVersion) return;
      this.index = new EmbeddingIndex(vectors, dim, parts.map((p) => ({ name: p.name, label: p.label, diagonal: p.diagonal })));
      if (!this.query && parts.length) this.query = parts.find((p) => p.name === this.selected) ?? parts[0];
      this.runSearch();
    } catch (err) {
      this.notice = `Embedding failed: ${(err as Error).message}`;
    } finally {
      if (version === this.embedVersion) this.embedding = false;
    }
  }

  private async runSearchFor(part: LibraryPart): Promise<void> {
    this.query = part;
    const inLibrary = this.parts.findIndex((p) => p.name === part.name);
    if (inLibrary < 0 && this.index) {
      const { vectors } = await this.trainer.embed([{ points: part.points, normals: part.normals }], this.model, this.config);
      this.search(vectors, -1);
    } else this.runSearch();
  }

  private runSearch(): void {
    if (!this.index || !this.query) return;
    const i = this.parts.findIndex((p) => p.name === this.query!.name);
    if (i >= 0) this.search(this.index.vector(i), i);
  }

  private lastQueryVector: ArrayLike<number> | null = null;
  private lastExclude = -1;
  private search(vector: ArrayLike<number>, exclude: number): void {
    if (!this.index || !this.query) return;
    this.lastQueryVector = Array.from(vector);
    this.lastExclude = exclude;
    const f = this.filters;
    // ranked() orders by cosine instead where the embedding is too concentrated for diffusion (e.g. untrained).
    this.hits = this.index.ranked(f.ranking, vector, f.k, {
      exclude,
      ...(f.sizeRatio ? { sizeRatio: f.sizeRatio, queryDiagonal: this.query.diagonal } : {}),
      ...(f.family ? { labels: [f.family] } : {}),
    });
  }

  private async queryFile(file: File): Promise<void> {
    const buffer = await file.arrayBuffer();
    let found: LibraryPart | null = null;
    await this.library.importFiles([{ name: file.name, buffer }], SAMPLING, {
      onPart: (p) => { found = p; },
      onFailure: (f) => { this.notice = `${f.file}: ${f.reason}`; },
      onProgress: () => {},
    });
    if (found) { this.queueThumbnail(found); await this.runSearchFor(found); }
  }

  private async importModel(files: File[]): Promise<void> {
    try {
      const jsonFile = files.find((f) => f.name.endsWith('.json'));
      const binFile = files.find((f) => f.name.endsWith('.bin'));
      if (!jsonFile || !binFile) throw new Error('choose both model.json and weights.bin from a run folder');
      const json = JSON.parse(await jsonFile.text());
      const manifest = json?.modelTopology?.shapekin;
      if (json?.format !== 'shapekin-encoder' || !manifest) throw new Error(`${jsonFile.name} is not a Shapekin model`);
      const weightData = await binFile.arrayBuffer();
      checkWeightData(weightData, json.userDefinedMetadata, binFile.name);
      const ckpt: CheckpointMessage = {
        manifest, weightSpecs: json.weightsManifest.flatMap((g: { weights: unknown[] }) => g.weights),
        weightData, adamStep: Number(json.userDefinedMetadata?.adamStep ?? 0),
      };
      await this.trainer.save(ckpt);
      this.model = ckpt;
      this.config = manifest.config;
      this.history = manifest.history.map((h: { step: number; loss: number }) => ({ step: h.step, loss: h.loss }));
      this.notice = `Imported a model trained elsewhere (${manifest.step} steps, backend ${manifest.backend}).`;
      void this.refreshEmbeddings();
    } catch (err) {
      this.notice = `Model not imported: ${(err as Error).message}`;
    }
  }

  private exportModel(): void {
    const m = this.model;
    if (!m) return;
    const json = { format: 'shapekin-encoder', generatedBy: 'Shapekin', convertedBy: null, modelTopology: { shapekin: m.manifest }, userDefinedMetadata: { adamStep: m.adamStep, weightsCrc32: crc32(new Uint8Array(m.weightData)) }, weightsManifest: [{ paths: ['weights.bin'], weights: m.weightSpecs }] };
    download(new Blob([JSON.stringify(json)], { type: 'application/json' }), 'model.json');
    download(new Blob([m.weightData.slice(0)]), 'weights.bin');
  }

  private async measureQuality(): Promise<void> {
    this.measuring = true;
    try {
      this.report = await this.trainer.evaluate(this.parts.map((p) => ({ points: p.points, normals: p.normals })), this.parts.map((p) => p.label), this.model, this.config);
    } catch (err) {
      this.notice = `Quality not measured: ${(err as Error).message}`;
    } finally {
      this.measuring = false;
    }
  }

  private async runStudy(): Promise<void> {
    this.measuring = true;
    this.studyProgress = { done: 0, total: 1, what: 'starting' };
    try {
      // Three strengths keep the browser study to a few minutes; `shapekin study` runs five.
      this.studyRows = await this.trainer.study(this.parts.map((p) => ({ points: p.points, normals: p.normals })), this.parts.map((p) => p.label), this.model, this.config,
        (done, total, what) => { this.studyProgress = { done, total, what }; }, [0, 0.5, 1]);
    } catch (err) {
      this.notice = `Study not run: ${(err as Error).message}`;
    } finally {
      this.measuring = false;
      this.studyProgress = null;
    }
  }

  private exportStudy(): void {
    const keys = ['augmentation', 'strength', 'method', 'instance_top1', 'label_top1', 'mean_similarity', 'mean_chamfer'] as const;
    const lines = [keys.join(','), ...this.studyRows.map((r) => keys.map((k) => String(r[k])).join(','))];
    download(new Blob([lines.join('\n') + '\n'], { type: 'text/csv' }), 'augmentation-study.csv');
  }

  /** Embeddings in the same three formats as `shapekin embed`. */
  private exportEmbeddings(kind: 'csv' | 'json' | 'npy'): void {
    const idx = this.index;
    if (!idx) return;
    const D = idx.dim;
    if (kind === 'npy') { download(new Blob([writeNpyFloat32(idx.vectors, idx.count, D) as Uint8Array<ArrayBuffer>]), "embeddings.npy"); return; }
    if (kind === 'json') {
      download(new Blob([JSON.stringify({ dim: D, parts: this.parts.map((p, i) => ({ file: p.name, label: p.label, extents: p.info.extents, diagonal: p.diagonal, embedding: Array.from(idx.vector(i)) })) })], { type: 'application/json' }), 'embeddings.json');
      return;
    }
    const q = (s: string) => (/[",\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s);
    const head = ['file', 'label', 'extent_x', 'extent_y', 'extent_z', ...Array.from({ length: D }, (_, d) => `e${d}`)].join(',');
    const rows = this.parts.map((p, i) => [q(p.name), q(p.label), ...p.info.extents.map((v) => v.toPrecision(6)), ...Array.from(idx.vector(i), (v) => v.toPrecision(6))].join(','));
    download(new Blob([[head, ...rows].join('\n') + '\n'], { type: 'text/csv' }), 'embeddings.csv');
  }

  protected override render() {
    const part = this.parts.find((p) => p.name === this.selected) ?? null;
    const families = [...new Set(this.parts.map((p) => p.label))].sort();
    const m = this.model?.manifest;
    return html`
      <header><h1>Shape<span>kin</span></h1><div class="tagline">find parts that look like a given part — everything stays on this machine</div>
        <div class="model" data-testid="model-status">${m ? `model: ${m.step} of ${m.totalSteps} steps (${m.status})` : 'no model yet: searching with the untrained encoder'}
          <label>Import model…<input type="file" multiple accept=".json,.bin" @change=${(e: Event) => { const t = e.target as HTMLInputElement; if (t.files) void this.importModel(Array.from(t.files)); t.value = ''; }} /></label>
          <button ?disabled=${!m} @click=${() => this.exportModel()}>Export model</button>
          <select aria-label="Export embeddings" ?disabled=${!this.index} @change=${(e: Event) => { const t = e.target as HTMLSelectElement; if (t.value) this.exportEmbeddings(t.value as 'csv' | 'json' | 'npy'); t.value = ''; }}>
            <option value="">Export embeddings…</option><option value="csv">as CSV</option><option value="json">as JSON</option><option value="npy">as .npy</option>
          </select>
        </div>
      </header>
      <nav role="tablist">
        ${PANELS.map((p) => html`<button role="tab" aria-selected=${this.panel === p.id} @click=${() => (this.panel = p.id)}>${p.label}</button>`)}
      </nav>
      ${this.notice ? html`<div class="notice" role="status">${this.notice}</div>` : null}
      <main>${this.renderPanel(part, families)}</main>`;
  }

  private renderPanel(part: LibraryPart | null, families: string[]) {
    switch (this.panel) {
      case 'library':
        return html`<sk-library-panel .parts=${this.parts} .failures=${this.failures} .status=${this.status} .thumbnails=${this.thumbs} .selected=${this.selected}
          @select-part=${(e: CustomEvent<string>) => { this.selected = e.detail; const p = this.parts.find((x) => x.name === e.detail); if (p) void this.runSearchFor(p); }}
          @add-files=${(e: CustomEvent<File[]>) => void this.addNamed(namedFromInput(e.detail))}
          @drop-items=${async (e: CustomEvent<DataTransfer>) => void this.addNamed(await namedFromDrop(e.detail))}
          @reload-demo=${() => void this.loadDemo()}
          @clear-library=${() => { this.parts = []; this.failures = []; this.thumbs = new Map(); this.selected = ''; this.index = null; this.hits = []; this.query = null; this.status = { kind: 'idle' }; void saveLibrary({ parts: [], failures: [], source: 'user' }); }}></sk-library-panel>`;
      case 'augment':
        return html`<sk-augment-panel .subject=${part} .pipeline=${this.pipeline} .pose=${this.config.pose} @pipeline-change=${(e: CustomEvent<Pipeline>) => { this.pipeline = e.detail; this.config = { ...this.config, pipeline: e.detail }; }}></sk-augment-panel>`;
      case 'train':
        return html`<sk-train-panel .config=${this.config} .status=${this.trainStatus} .progress=${this.progress} .history=${this.history} .checks=${this.checks}
          .backend=${this.backend} .partCount=${this.parts.length} .hasLabels=${new Set(this.parts.map((p) => p.label)).size > 1}
          .savedStep=${this.model?.manifest.step ?? 0} .savedTotal=${this.model?.manifest.totalSteps ?? 0}
          .inputsNote=${this.parts.length ? inputsReason(this.traits.closed) : ''} .poseNote=${this.parts.length ? poseReason(this.traits.boxRatios) : ''}
          @config-change=${(e: CustomEvent<TrainConfig>) => {
            if (e.detail.encoder.inputFeatures !== this.config.encoder.inputFeatures) this.inputsChosen = true;
            if (e.detail.epochs !== this.config.epochs) this.epochsChosen = true;
            if (e.detail.pose !== this.config.pose) this.poseChosen = true;
            this.config = e.detail; this.pipeline = e.detail.pipeline;
          }}
          @train-start=${(e: CustomEvent<TrainConfig>) => this.startTraining(e.detail)}
          @train-continue=${() => this.model && this.startTraining(this.model.manifest.config, this.model)}
          @train-pause=${() => this.trainer.pause()} @train-resume=${() => this.trainer.resume()} @train-stop=${() => this.trainer.cancel()}></sk-train-panel>`;
      case 'search':
        return html`<sk-search-panel .diffusionApplies=${this.index?.diffusionApplies() ?? true} .parts=${this.parts} .query=${this.query} .hits=${this.hits} .thumbnails=${this.thumbs} .filters=${this.filters} .families=${families} .busy=${this.embedding}
          .source=${this.model ? `learned encoder, step ${this.model.manifest.step}` : 'untrained encoder (train one on the Training tab)'}
          @search-query=${(e: CustomEvent<string>) => { const p = this.parts.find((x) => x.name === e.detail); if (p) void this.runSearchFor(p); }}
          @search-file=${(e: CustomEvent<File>) => void this.queryFile(e.detail)}
          @search-filters=${(e: CustomEvent<SearchFilters>) => { this.filters = e.detail; if (this.lastQueryVector) this.search(this.lastQueryVector, this.lastExclude); }}></sk-search-panel>`;
      case 'study':
        return html`<sk-study-panel .report=${this.report} .rows=${this.studyRows} .progress=${this.studyProgress} .busy=${this.measuring || this.trainStatus.kind === 'running'} .hasModel=${Boolean(this.model)}
          @run-evaluation=${() => void this.measureQuality()} @run-study=${() => void this.runStudy()} @export-study=${() => this.exportStudy()}></sk-study-panel>`;
      case 'map':
        return html`<sk-map-panel .parts=${this.parts} .index=${this.index} .thumbnails=${this.thumbs}
          @search-query=${(e: CustomEvent<string>) => { const p = this.parts.find((x) => x.name === e.detail); if (p) { this.panel = 'search'; void this.runSearchFor(p); } }}></sk-map-panel>`;
    }
  }
}

function download(blob: Blob, name: string): void {
  const a = document.createElement('a');
  a.href = URL.createObjectURL(blob);
  a.download = name;
  a.click();
  setTimeout(() => URL.revokeObjectURL(a.href), 1000);
}

customElements.define('sk-app', SkApp);
