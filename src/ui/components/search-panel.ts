// <sk-search-panel>: pick a library part (or drop a new file) and see the most similar parts with their
// scores and real sizes; choosing a result shows it beside the query in linked 3-D views.
// Sends 'search-query' (part name), 'search-file' (File), 'search-filters' upward.

import { partSize, sizeWords } from '../../core/units';
import { standingWords } from '../../core/retrieval/standing';
import { timeLeft } from '../words';
import { ACCEPT } from '../../core/mesh/formats';
import { LitElement, css, html } from 'lit';
import type { Object3D } from 'three';
import type { LibraryPart } from '../../core/library';
import type { PartClouds, PartMesh } from '../../core/db/workbench';
import { DEFAULT_FILTERS, IDLE, ORDERING, type JobStatus, type MatchExplanation, type SearchFilters } from '../state';
import type { Hit } from '../../core/retrieval/topk';
import { alignToFrame, meshObject, pointsObject, PALETTE, weightColours } from '../../render/scene';
import { principalFrame } from '../../core/points/pca';
import { CameraLink } from '../controllers/viewer';
import './viewer';

/** Names offered under the query box at a time. */
const SUGGESTIONS = 50;

export class SkSearchPanel extends LitElement {
  static override properties = {
    parts: { attribute: false },
    query: { attribute: false },
    hits: { attribute: false },
    standing: { attribute: false },
    thumbnails: { attribute: false },
    units: { attribute: false },
    filters: { attribute: false },
    families: { attribute: false },
    source: { type: String },
    chosen: { state: true },
    busy: { type: Boolean },
    embedding: { attribute: false },
    failure: { type: String },
    diffusionApplies: { type: Boolean },
    trained: { type: Boolean },
    explanation: { attribute: false },
    meshFor: { attribute: false },
    cloudFor: { attribute: false },
    meshVersion: { type: Number },
    why: { state: true },
    ownAxes: { state: true },
    typed: { state: true },
    pickNote: { state: true },
  };
  declare parts: readonly LibraryPart[];
  declare query: LibraryPart | null;
  declare hits: readonly Hit[];
  /** Each hit's share of the other parts less similar to the query (standing.ts). */
  declare standing: readonly number[];
  declare thumbnails: ReadonlyMap<string, string>;
  /** Millimetres per file unit by folder, for files whose format has no units. */
  declare units: Readonly<Record<string, number>>;
  declare filters: SearchFilters;
  declare families: readonly string[];
  declare source: string;
  declare chosen: number;
  declare busy: boolean;
  /** The library's embedding job (progress, stopped). */
  declare embedding: JobStatus;
  /** Why the library could not be embedded ('' : it could). */
  declare failure: string;
  /** The embedding is spread out enough to order results through the library (else they follow cosine). */
  declare diffusionApplies: boolean;
  /** A trained model made the embeddings (else the scores of a random encoder mean little). */
  declare trained: boolean;
  /** Why the chosen result matches (from the controller), shown when `why` is on. */
  declare explanation: MatchExplanation | null;
  /** A part's mesh if the page has it now, else null (the panel then asks for it with `need-mesh`). */
  declare meshFor: (p: LibraryPart) => PartMesh | null;
  /** A part's point cloud if the page has it now, else null (asked for with `need-mesh` too). */
  declare cloudFor: (p: LibraryPart) => PartClouds | null;
  /** Changes when fetched meshes arrive. */
  declare meshVersion: number;
  declare why: boolean;
  /** Show each part as its file has it, rather than both turned into their principal axes. */
  declare ownAxes: boolean;
  /** What is typed in the query box (the suggestions follow it). */
  declare typed: string;
  /** Why a typed name did not start a search ('' : it did, or nothing was typed). */
  declare pickNote: string;
  private readonly link = new CameraLink();
  private objects: { query: Object3D | null; result: Object3D | null } = { query: null, result: null };

  constructor() {
    super();
    this.parts = [];
    this.query = null;
    this.hits = [];
    this.standing = [];
    this.thumbnails = new Map();
    this.units = {};
    this.filters = DEFAULT_FILTERS;
    this.families = [];
    this.source = '';
    this.chosen = 0;
    this.busy = false;
    this.embedding = IDLE;
    this.failure = '';
    this.diffusionApplies = true;
    this.trained = false;
    this.explanation = null;
    this.meshFor = (p) => ({ name: p.name, positions: p.meshPositions, indices: p.meshIndices });
    this.cloudFor = (p) => ({ name: p.name, points: p.points, normals: p.normals });
    this.meshVersion = 0;
    this.why = false;
    this.ownAxes = false;
    this.typed = '';
    this.pickNote = '';
  }

  /**
   * Parts offered under the query box: those whose name or folder holds what is typed, at most SUGGESTIONS (a list
   * of every part would cost the page a long task per render on a library of thousands).
   */
  private suggestions(): LibraryPart[] {
    const t = this.typed.trim().toLowerCase();
    const out: LibraryPart[] = [];
    for (const p of this.parts) {
      if (out.length >= SUGGESTIONS) break;
      if (!t || p.name.toLowerCase().includes(t)) out.push(p);
    }
    return out;
  }

  /** A name typed or chosen in the query box: the part of that name, or the only part whose name holds it. */
  private pick(value: string): void {
    const v = value.trim();
    if (!v || (this.query && (v === this.query.name || v === `${this.query.name} (dropped file)`))) return;
    const exact = this.parts.find((p) => p.name === v);
    const t = v.toLowerCase();
    const matches = exact ? [exact] : this.parts.filter((p) => p.name.toLowerCase().includes(t)).slice(0, 2);
    if (matches.length === 1) {
      this.pickNote = '';
      this.typed = '';
      this.emit('search-query', matches[0].name);
    } else
      this.pickNote =
        matches.length === 0
          ? `No part’s name holds “${v}”.`
          : `Several parts’ names hold “${v}”: choose one from the list.`;
  }

  static override styles = css`
    :host { display: block; }
    .error { color: #9b2c1f; }
    .bar { display: flex; gap: 12px; align-items: center; flex-wrap: wrap; margin-bottom: 10px; }
    input.query { width: 300px; }
    select, input { font: inherit; padding: 4px 6px; border: 1px solid #b7ab96; border-radius: 4px; }
    label.button { font: inherit; padding: 5px 12px; border: 1px solid #1d2b33; background: #fff; border-radius: 4px; cursor: pointer; }
    input[type=file] { position: absolute; opacity: 0; width: 1px; height: 1px; }
    :focus-visible { outline: 3px solid #c2571a; outline-offset: 1px; }
    .main { display: grid; grid-template-columns: 360px 1fr; gap: 14px; }
    .order-explained { margin: 0 0 8px; max-width: 900px; }
    ol { list-style: none; margin: 0; padding: 0; max-height: 560px; overflow: auto; }
    li button > span:last-child { min-width: 0; }
    .name { overflow-wrap: anywhere; }
    li button { display: grid; grid-template-columns: 28px 88px 1fr; gap: 8px; align-items: center; width: 100%; text-align: left; font: inherit; color: inherit; background: #fff; border: 1px solid #d8d1c3; border-radius: 6px; padding: 4px; margin-bottom: 6px; cursor: pointer; }
    li button[aria-pressed=true] { border-color: #c2571a; box-shadow: 0 0 0 2px #c2571a; }
    img { width: 88px; border-radius: 4px; }
    .rank { font-weight: 700; text-align: center; }
    .score { font-weight: 600; }
    .bar-score { height: 5px; background: #2f6f73; border-radius: 3px; margin-top: 2px; }
    .small { font-size: 12px; color: #5a6870; }
    .views { display: grid; grid-template-columns: 1fr 1fr; gap: 8px; }
    sk-viewer { height: 360px; }
    .embedding { flex-basis: 100%; font-size: 13px; color: #3d4b52; display: flex; gap: 8px; align-items: center; flex-wrap: wrap; }
    .embedding progress { width: 180px; }
    .caution { background: #fff6df; border-left: 4px solid #d9a21b; padding: 6px 10px; font-size: 13px; margin-bottom: 10px; }
    .empty { color: #6b5d4d; padding: 20px; }
    .drop { border: 2px dashed #b7ab96; border-radius: 6px; padding: 4px 10px; color: #6b5d4d; }
    .drop.over { border-color: #c2571a; background: #fbeee4; }
  `;

  private emit(name: string, detail?: unknown): void {
    this.dispatchEvent(new CustomEvent(name, { detail, bubbles: true, composed: true }));
  }

  protected override willUpdate(changed: Map<string, unknown>): void {
    if (changed.has('hits') || changed.has('query')) this.chosen = 0;
    if (['hits', 'query', 'chosen', 'why', 'explanation', 'ownAxes', 'meshVersion'].some((k) => changed.has(k))) {
      const q = this.query;
      const hit = this.hits[this.chosen];
      const r = hit ? this.parts[hit.index] : null;
      const e = this.explanation;
      const qc = q ? this.cloudOrAsk(q) : null;
      const rc = r ? this.cloudOrAsk(r) : null;
      if (this.why && q && r && qc && rc && e && e.query === q.name && e.result === r.name) {
        // The points that carry the similarity, on the same scale in both views.
        const max = Math.max(...e.a, ...e.b);
        const n = e.a.length;
        this.objects.query = this.posed(
          qc,
          pointsObject(qc.points.subarray(0, 3 * n), 0.07, undefined, weightColours(e.a, max)),
        );
        this.objects.result = this.posed(
          rc,
          pointsObject(rc.points.subarray(0, 3 * n), 0.07, undefined, weightColours(e.b, max)),
        );
      } else {
        this.objects.query = q && qc ? this.posed(qc, this.objectFor(q, qc, PALETTE.teal)) : null;
        this.objects.result = r && rc ? this.posed(rc, this.objectFor(r, rc, PALETTE.rust)) : null;
      }
    }
  }

  /** The part's point cloud, or null until it is fetched (asked for here). */
  private cloudOrAsk(p: LibraryPart): PartClouds | null {
    const c = this.cloudFor(p);
    if (!c) this.emit('need-mesh', p);
    return c;
  }

  /** The part's mesh, or its points until the mesh is fetched (asked for here) or when it has none. */
  private objectFor(p: LibraryPart, cloud: PartClouds, colour: number): Object3D {
    const mesh = this.meshFor(p);
    if (!mesh) this.emit('need-mesh', p);
    return mesh && mesh.indices.length > 0
      ? meshObject(mesh.positions, mesh.indices, p.centre, p.radius, colour)
      : pointsObject(cloud.points, 0.03);
  }

  /** Both parts in their principal axes (computed from the sampled points), unless the files' own axes are asked for. */
  private posed(cloud: PartClouds, obj: Object3D): Object3D {
    return this.ownAxes ? obj : alignToFrame(obj, principalFrame(cloud.points));
  }

  protected override updated(changed: Map<string, unknown>): void {
    if (!this.why || !['hits', 'query', 'chosen', 'why'].some((k) => changed.has(k))) return;
    const hit = this.hits[this.chosen];
    if (hit) this.emit('explain-match', hit.index);
  }

  /** Embedding the library: progress, the time left and Stop; once stopped, a way to start again. */
  private renderEmbedding() {
    const e = this.embedding;
    const emit = (name: string) => this.dispatchEvent(new CustomEvent(name, { bubbles: true, composed: true }));
    if (e.kind === 'running' && e.progress?.what === ORDERING)
      return html`<div class="embedding" data-testid="order-progress" role="status">
        <progress aria-label="ordering progress"></progress>
        Linking each of the ${e.progress.total} parts to its nearest neighbours, so results can be ordered through
        the library…</div>`;
    if (e.kind === 'running' && e.progress) {
      const p = e.progress;
      const left = timeLeft(p, performance.now());
      return html`<div class="embedding" data-testid="embed-progress">
        <progress max=${p.total} value=${p.done} aria-label="embedding progress"></progress>
        Embedding the library with the current model: ${p.done} of ${p.total} parts${left ? ` · ${left}` : ''}
        <button @click=${() => emit('cancel-embedding')}>Stop embedding</button></div>`;
    }
    if (e.kind === 'cancelled')
      return html`<div class="embedding" role="status">Embedding was stopped, and nothing of it was kept: look-alikes need
        every part embedded. <button @click=${() => emit('embed-library')}>Embed the library</button></div>`;
    return null;
  }

  protected override render() {
    const q = this.query;
    const f = this.filters;
    return html`
      <div class="caution" role="note">Similar shape is not the same part: material, tolerances, loads and standards must be checked by a qualified person, following local codes and your engineering sign-off, before any substitution.</div>
      <div class="bar">
        <label>Find parts like
          <input type="search" class="query" list="query-names" aria-label="Query part" placeholder="type a part’s name or folder"
            .value=${q ? (this.parts.some((p) => p.name === q.name) ? q.name : `${q.name} (dropped file)`) : ''}
            @input=${(e: Event) => (this.typed = (e.target as HTMLInputElement).value)}
            @change=${(e: Event) => this.pick((e.target as HTMLInputElement).value)} /></label>
        <datalist id="query-names">${this.suggestions().map((p) => html`<option value=${p.name}></option>`)}</datalist>
        ${this.pickNote ? html`<span class="small" data-testid="pick-note">${this.pickNote}</span>` : null}
        <label class="button">…or a new file<input type="file" accept=${ACCEPT} @change=${(e: Event) => {
          const file = (e.target as HTMLInputElement).files?.[0];
          if (file) this.emit('search-file', file);
        }} /></label>
        <span class="drop" @dragover=${(e: DragEvent) => {
          e.preventDefault();
          (e.currentTarget as HTMLElement).classList.add('over');
        }}
          @dragleave=${(e: DragEvent) => (e.currentTarget as HTMLElement).classList.remove('over')}
          @drop=${(e: DragEvent) => {
            e.preventDefault();
            (e.currentTarget as HTMLElement).classList.remove('over');
            const file = e.dataTransfer?.files?.[0];
            if (file) this.emit('search-file', file);
          }}>or drop one here</span>
        <label>results <input type="number" min="1" max="100" .value=${String(f.k)} aria-label="number of results" @change=${(e: Event) => this.emit('search-filters', { ...f, k: Number((e.target as HTMLInputElement).value) })} style="width:60px" /></label>
        <label>size within
          <select aria-label="Size filter" @change=${(e: Event) => {
            const v = (e.target as HTMLSelectElement).value;
            this.emit('search-filters', { ...f, sizeRatio: v ? Number(v) : null });
          }}>
            ${[
              ['', 'any size'],
              ['1.25', '±25%'],
              ['1.5', '×1.5'],
              ['2', '×2'],
              ['5', '×5'],
            ].map(([v, t]) => html`<option value=${v} ?selected=${String(f.sizeRatio ?? '') === v}>${t}</option>`)}
          </select></label>
        <label>folder
          <select aria-label="Folder filter" @change=${(e: Event) => this.emit('search-filters', { ...f, family: (e.target as HTMLSelectElement).value })}>
            <option value="">all folders</option>
            ${this.families.map((fam) => html`<option value=${fam} ?selected=${f.family === fam}>${fam}</option>`)}
          </select></label>
        <label title="through the library: parts reached by chains of close neighbours come first (diffusion), nearer sizes a little ahead; or by similarity to the query alone">order
          <select aria-label="Result order" @change=${(e: Event) => this.emit('search-filters', { ...f, ranking: (e.target as HTMLSelectElement).value as SearchFilters['ranking'] })}>
            ${(
              [
                ['diffusion', 'through the library'],
                ['cosine', 'by similarity alone'],
              ] as const
            ).map(([v, t]) => html`<option value=${v} ?selected=${f.ranking === v}>${t}</option>`)}
          </select></label>
        ${f.ranking === 'diffusion' && !this.diffusionApplies ? html`<span class="small" data-testid="order-note">${this.trained ? 'ordered by similarity alone: this model still finds most parts alike, so ordering through the library would mislead (train it longer)' : 'ordered by similarity alone until a model is trained: an untrained encoder finds most parts alike'}</span>` : null}
        <span class="small" data-testid="search-source">${this.busy ? (this.embedding.kind === 'running' && this.embedding.progress ? '' : 'embedding the library…') : this.source}</span>
        ${this.renderEmbedding()}
        ${this.failure ? html`<span class="small error" role="alert">${this.failure}</span>` : null}
      </div>
      ${
        q
          ? html`        <p class="small order-explained" data-testid="order-explained">${
              this.trained
                ? f.ranking === 'diffusion' && this.diffusionApplies
                  ? 'Ordered through the library: a part that the query’s close look-alikes also resemble moves up, and of two equally close shapes the one nearer the query’s size comes first. The number beside each is its direct similarity to the query (1 = the same shape), so it need not fall down the list; “closer than … %” says how much of the library is less similar.'
                  : 'Ordered by direct similarity to the query (1 = the same shape); “closer than … %” says how much of the library is less similar.'
                : 'Not trained yet: the encoder has random weights, so every part scores near 1 and the order is rough (“closer than … %” ranks a result within the library, no more). Train a model on the Training tab for look-alikes you can rely on.'
            }</p>
        <div class="main">
        <ol data-testid="search-results" aria-label="most similar parts">
          ${this.hits.map((h, i) => {
            const p = this.parts[h.index];
            const size = partSize(p.info, this.units[p.label]);
            const qScale = partSize(q.info, this.units[q.label]).scale;
            const ratio = q.diagonal > 0 ? (p.diagonal * size.scale) / (q.diagonal * qScale) : 1;
            return html`<li><button aria-pressed=${i === this.chosen} @click=${() => (this.chosen = i)}>
              <span class="rank">${i + 1}</span>
              ${this.thumbnails.get(p.name) ? html`<img src=${this.thumbnails.get(p.name)} alt="" />` : html`<span></span>`}
              <span><span class="score" title="direct similarity to the query (cosine of the embeddings)">${this.trained ? h.score.toFixed(3) : '—'}</span> <span class="small">${p.label}</span>
                ${this.trained ? html`<div class="bar-score" style="width:${Math.max(2, Math.round(Math.max(0, h.score) * 100))}%"></div>` : null}
                ${this.standing[i] !== undefined ? html`<div class="small standing" title="the share of the other parts in the library that are less similar to the query than this one">${standingWords(this.standing[i])}</div>` : null}
                <div class="small name" title=${p.name}>${p.name.split('/').pop()}</div>
                <div class="small">${sizeWords(size)} · size ×${ratio.toFixed(2)}</div></span>
            </button></li>`;
          })}
          ${this.hits.length === 0 && !this.busy && this.embedding.kind !== 'cancelled' ? html`<li class="empty">No part passes the filters.</li>` : null}
        </ol>
        <div>
          <div class="views">
            <sk-viewer .object=${this.objects.query} .link=${this.link} caption="query: ${q.name}"></sk-viewer>
            <sk-viewer .object=${this.objects.result} .link=${this.link} caption=${this.hits[this.chosen] ? `#${this.chosen + 1}: ${this.parts[this.hits[this.chosen].index].name}` : ''}></sk-viewer>
          </div>
          <label class="small"><input type="checkbox" data-testid="why-toggle" .checked=${this.why} @change=${(e: Event) => (this.why = (e.target as HTMLInputElement).checked)} />
            show why they match: the points that carry the likeness, darker the more they carry (the sampled points each part is read from)</label>
          <label class="small"><input type="checkbox" data-testid="own-axes" .checked=${this.ownAxes} @change=${(e: Event) => (this.ownAxes = (e.target as HTMLInputElement).checked)} />
            show each part as its file has it (otherwise both are turned into their principal axes, so they sit alike)</label>
          <div class="small">Both views are scaled to the unit sphere and linked: drag either to turn both. Real sizes are listed beside each result.</div>
        </div>
      </div>`
          : html`<div class="empty">Choose a part or a file to search with.</div>`
      }`;
  }
}

customElements.define('sk-search-panel', SkSearchPanel);
