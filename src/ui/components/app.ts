// <sk-app>: the workbench shell. It creates the store and the controllers, lays out the header, the tabs and the
// current panel from the store's state, and turns the panels' events into controller calls. It holds no state of
// its own beyond the store and does no I/O: the controllers (../controllers) act, the panels render.

import type { LibraryPart } from '../../core/library';
import { LitElement, css, html } from 'lit';
import { DEFAULT_TRAIN, inputsReason, poseReason, temperatureReason } from '../../core/model/defaults';
import type { TrainConfig } from '../../core/model/train-config';
import type { Pipeline } from '../../core/points/augment';
import { exportEmbeddings, type EmbeddingFormat } from '../controllers/exports';
import { LibraryController } from '../controllers/library';
import { meshNow } from '../controllers/meshes';
import { cloudNow, type PartClouds } from '../controllers/clouds';
import { MeasureController } from '../controllers/measure';
import { SearchController } from '../controllers/search';
import { TrainingController } from '../controllers/training';
import { namedFromDrop, namedFromInput } from '../files';
import { DEFAULT_FILTERS, IDLE, isBusy, STARTED, Store, type AppState, type Panel, type SearchFilters } from '../state';
import './library-panel';
import './augment-panel';
import './train-panel';
import './search-panel';
import './map-panel';
import './study-panel';
import { yieldToPage } from '../pace';

const PANELS: readonly { id: Panel; label: string }[] = [
  { id: 'library', label: 'Parts library' },
  { id: 'augment', label: 'Augmentations' },
  { id: 'train', label: 'Training' },
  { id: 'search', label: 'Look-alikes' },
  { id: 'map', label: 'Map' },
  { id: 'study', label: 'Quality' },
];

export function initialState(): AppState {
  return {
    panel: 'library',
    notice: '',
    noticeAction: null,
    library: {
      parts: [],
      failures: [],
      status: STARTED, // the kept library is being opened (restore ends it)
      thumbnails: new Map(),
      selected: '',
      units: {},
      meshesFetched: 0,
    },
    training: {
      config: DEFAULT_TRAIN,
      pipeline: DEFAULT_TRAIN.pipeline,
      status: IDLE,
      progress: null,
      history: [],
      checks: [],
      backend: '',
      model: null,
      modelFingerprint: null,
      modelKnown: false,
      stepMs: null,
    },
    search: {
      index: null,
      query: null,
      hits: [],
      standing: [],
      embedPace: null,
      map: null,
      filters: DEFAULT_FILTERS,
      status: IDLE,
      explanation: null,
    },
    measure: { report: null, status: IDLE, rows: [], study: IDLE },
  };
}

export class SkApp extends LitElement {
  static override properties = { state: { state: true }, shown: { state: true } };
  declare state: AppState;
  /**
   * The panel in the page: it follows `state.panel` one task later, so taking the old panel away and making the new
   * one are two tasks (pace.ts), not one long one; the tabs show the choice at once.
   */
  declare shown: Panel | null;

  private readonly store = new Store<AppState>(initialState());
  private readonly library: LibraryController;
  private readonly training: TrainingController;
  private readonly search: SearchController;
  private readonly measure: MeasureController;
  private unsubscribe: () => void = () => {};

  constructor() {
    super();
    this.state = this.store.value;
    this.shown = this.state.panel;
    this.library = new LibraryController(this.store, {
      onChanged: () => {
        // the library's default settings first: the untrained encoder embeds with them
        void this.training.followLibrary().then(() => this.search.refresh());
      },
      onUnitsChanged: () => void this.search.unitsChanged(),
    });
    this.training = new TrainingController(this.store, { onModelChanged: () => void this.search.refresh() });
    this.search = new SearchController(this.store, this.training, this.library);
    this.measure = new MeasureController(this.store, this.training);
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
    .notice button { font: inherit; margin-left: 10px; border: 1px solid #1d2b33; background: #fff; border-radius: 4px; padding: 2px 10px; cursor: pointer; }
  `;

  override connectedCallback(): void {
    super.connectedCallback();
    this.unsubscribe = this.store.subscribe((s) => (this.state = s));
    void this.startUp();
  }

  override disconnectedCallback(): void {
    super.disconnectedCallback();
    this.unsubscribe();
    this.library.dispose();
    this.training.dispose();
  }

  /** The saved model first (so the library's defaults do not override its settings), then the library. */
  private async startUp(): Promise<void> {
    await this.training.restore();
    await this.library.restore();
  }

  private showPanel(panel: Panel): void {
    this.store.set({ panel });
    if (panel === 'train') void this.training.estimate();
  }

  private showSearch(name: string, panel?: Panel): void {
    const part = this.library.select(name);
    if (!part) return;
    if (panel) this.store.set({ panel });
    void this.search.searchFor(part);
  }

  protected override willUpdate(): void {
    if (this.shown === null || this.shown === this.state.panel) return;
    this.shown = null;
    void yieldToPage().then(() => (this.shown = this.state.panel));
  }

  protected override render() {
    const { training, search } = this.state;
    const m = training.model?.manifest;
    return html`
      <header><h1>Shape<span>kin</span></h1><div class="tagline">find parts that look like a given part — everything stays on this machine</div>
        <div class="model" data-testid="model-status">${modelLine(training)}
          <label>Import model…<input type="file" multiple accept=".json,.bin" @change=${(e: Event) => {
            const t = e.target as HTMLInputElement;
            if (t.files) void this.training.importModel(Array.from(t.files));
            t.value = '';
          }} /></label>
          <button ?disabled=${!m} @click=${() => this.training.exportModel()}>Export model</button>
          <select aria-label="Export embeddings" ?disabled=${!search.index} @change=${(e: Event) => {
            const t = e.target as HTMLSelectElement;
            if (t.value && search.index)
              exportEmbeddings(
                t.value as EmbeddingFormat,
                this.state.library.parts,
                search.index,
                this.state.library.units,
              );
            t.value = '';
          }}>
            <option value="">Export embeddings…</option><option value="csv">as CSV</option><option value="json">as JSON</option><option value="npy">as .npy</option>
          </select>
        </div>
      </header>
      <nav role="tablist">
        ${PANELS.map((p) => html`<button role="tab" aria-selected=${this.state.panel === p.id} @click=${() => this.showPanel(p.id)}>${p.label}</button>`)}
      </nav>
      ${
        this.state.notice
          ? html`<div class="notice" role="status">${this.state.notice}
              ${this.state.noticeAction === 'continue-training' && !isBusy(training.status) && this.state.library.parts.length >= 2 ? html`<button data-testid="continue-now" @click=${() => this.training.continueSaved()}>Continue training now</button>` : null}</div>`
          : null
      }
      <main>${this.renderPanel()}</main>`;
  }

  /** The part's point cloud if the page has it, else null and it is fetched (the page draws again when it comes). */
  private cloudOrFetch(part: LibraryPart): PartClouds | null {
    const c = cloudNow(part);
    if (!c) this.library.fetchMesh(part);
    return c;
  }

  private renderPanel() {
    const { library, training, search, measure } = this.state;
    const part = library.parts.find((p) => p.name === library.selected) ?? null;
    const families = [...new Set(library.parts.map((p) => p.label))].sort();
    switch (this.shown) {
      case 'library':
        return html`<sk-library-panel .parts=${library.parts} .failures=${library.failures} .status=${library.status} .thumbnails=${library.thumbnails} .selected=${library.selected} .units=${library.units}
          @set-units=${(e: CustomEvent<{ folders: string[]; mm: number | null }>) => void this.library.setUnits(e.detail.folders, e.detail.mm)}
          @select-part=${(e: CustomEvent<string>) => this.showSearch(e.detail)}
          @add-files=${(e: CustomEvent<File[]>) => void this.library.add(namedFromInput(e.detail))}
          @drop-items=${async (e: CustomEvent<DataTransfer>) => void this.library.add(await namedFromDrop(e.detail))}
          @reload-demo=${() => void this.library.loadDemo()}
          @clear-library=${() => this.library.clear()}
          @export-database=${() => void this.library.exportDatabase()}
          @import-database=${(e: CustomEvent<File>) => void this.library.importDatabase(e.detail)}
          @cancel-import=${() => this.library.cancel()}></sk-library-panel>`;
      case 'augment':
        return html`<sk-augment-panel .subject=${part ? this.cloudOrFetch(part) : null} .fetching=${part !== null} .pipeline=${training.pipeline} .pose=${training.config.pose}
          @pipeline-change=${(e: CustomEvent<Pipeline>) => this.training.configure({ ...training.config, pipeline: e.detail })}></sk-augment-panel>`;
      case 'train': {
        const traits = library.parts.length ? this.training.traits() : null;
        return html`<sk-train-panel .config=${training.config} .status=${training.status} .progress=${training.progress} .history=${training.history} .checks=${training.checks}
          .backend=${training.backend} .partCount=${library.parts.length} .hasLabels=${families.length > 1}
          .stepMs=${this.training.stepMsNow()}
          .savedStep=${training.model?.manifest.step ?? 0} .savedTotal=${training.model?.manifest.totalSteps ?? 0}
          .inputsNote=${traits ? `${inputsReason(traits.closed)}; temperature ${temperatureReason(traits.closed)}` : ''} .poseNote=${traits ? poseReason(traits.boxRatios) : ''}
          @config-change=${(e: CustomEvent<TrainConfig>) => this.training.configure(e.detail)}
          @train-start=${(e: CustomEvent<TrainConfig>) => this.training.start(e.detail)}
          @train-continue=${() => this.training.continueSaved()}
          @train-pause=${() => this.training.pause()} @train-resume=${() => this.training.resume()} @train-stop=${() => this.training.stop()}></sk-train-panel>`;
      }
      case 'search':
        return html`<sk-search-panel .diffusionApplies=${search.index?.diffusionApplies() ?? true} .parts=${library.parts} .query=${search.query} .hits=${search.hits} .standing=${search.standing} .thumbnails=${library.thumbnails} .units=${library.units}
          .filters=${search.filters} .families=${families} .busy=${isBusy(search.status)} .embedding=${search.status} .failure=${search.status.kind === 'failed' ? search.status.message : ''}
          .trained=${Boolean(training.model)}
          .source=${training.model ? `learned encoder, step ${training.model.manifest.step}` : 'untrained encoder (train one on the Training tab)'}
          @search-query=${(e: CustomEvent<string>) => this.showSearch(e.detail)}
          @search-file=${(e: CustomEvent<File>) => void this.search.searchFile(e.detail)}
          @search-filters=${(e: CustomEvent<SearchFilters>) => this.search.setFilters(e.detail)}
          @cancel-embedding=${() => this.search.cancel()} @embed-library=${() => void this.search.refresh()}
          .meshFor=${meshNow} .cloudFor=${cloudNow} .meshVersion=${library.meshesFetched} @need-mesh=${(e: CustomEvent<LibraryPart>) => this.library.fetchMesh(e.detail)}
          .explanation=${search.explanation} @explain-match=${(e: CustomEvent<number>) => void this.search.explain(e.detail)}></sk-search-panel>`;
      case 'study':
        return html`<sk-study-panel .partCount=${library.parts.length} .report=${measure.report} .rows=${measure.rows} .progress=${measure.study.kind === 'running' ? measure.study.progress : null}
          .busy=${isBusy(measure.status) || isBusy(measure.study) || isBusy(training.status)} .hasModel=${Boolean(training.model)}
          .estimates=${this.measure.estimates()}
          .measuring=${isBusy(measure.status)} .failure=${measure.status.kind === 'failed' ? measure.status.message : measure.study.kind === 'failed' ? measure.study.message : ''}
          @run-evaluation=${() => void this.measure.measureQuality()} @run-study=${() => void this.measure.runStudy()} @cancel-measure=${() => this.measure.cancel()} @export-study=${() => this.measure.exportStudy()}></sk-study-panel>`;
      case 'map':
        return html`<sk-map-panel .parts=${library.parts} .index=${search.index} .map=${search.map} .thumbnails=${library.thumbnails} .units=${library.units}
          @search-query=${(e: CustomEvent<string>) => this.showSearch(e.detail, 'search')}></sk-map-panel>`;
    }
  }
}

/** The header's one line about the model, from the training job's status (the same numbers as its panel). */
export function modelLine(t: AppState['training']): string {
  const p = t.progress;
  if (t.status.kind === 'running') return p ? `training: step ${p.step} of ${p.totalSteps}` : 'training: starting';
  if (t.status.kind === 'paused') return p ? `training paused at step ${p.step} of ${p.totalSteps}` : 'training paused';
  if (!t.modelKnown) return 'looking for a saved model…';
  const m = t.model?.manifest;
  if (!m) return 'no model yet: searching with the untrained encoder';
  return m.step < m.totalSteps
    ? `model: stopped at step ${m.step} of ${m.totalSteps}`
    : `model: trained (${m.step} steps)`;
}

customElements.define('sk-app', SkApp);
