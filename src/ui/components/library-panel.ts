// <sk-library-panel>: the parts grid, the import controls and the list of files that failed.
// Renders from properties and sends events up: 'add-files' (File[]), 'reload-demo', 'select-part' (name).

import { LitElement, css, html } from 'lit';
import { unitsLabel } from '../../core/mesh/types';
import { ACCEPT, FORMAT_NAMES } from '../../core/mesh/formats';
import type { LibraryPart } from '../../core/library';
import type { ImportFailure } from '../../core/mesh/import';
import { RESTORING, type LibraryState } from '../state';

export class SkLibraryPanel extends LitElement {
  static override properties = {
    parts: { attribute: false },
    failures: { attribute: false },
    status: { attribute: false },
    thumbnails: { attribute: false },
    selected: { type: String },
    filter: { state: true },
    limit: { state: true },
  };

  declare parts: readonly LibraryPart[];
  /** How many cards are drawn (more on request). */
  declare limit: number;
  declare failures: readonly ImportFailure[];
  declare status: LibraryState['status'];
  declare thumbnails: ReadonlyMap<string, string>;
  declare selected: string;
  declare filter: string;

  constructor() {
    super();
    this.parts = [];
    this.failures = [];
    this.status = { kind: 'idle' };
    this.thumbnails = new Map();
    this.selected = '';
    this.filter = '';
    this.limit = CARDS_PER_PAGE;
  }

  static override styles = css`
    :host { display: block; }
    .bar { display: flex; flex-wrap: wrap; gap: 8px; align-items: center; margin-bottom: 10px; }
    button, label.button { font: inherit; padding: 6px 12px; border: 1px solid #1d2b33; background: #fff; border-radius: 4px; cursor: pointer; }
    button:focus-visible, label.button:focus-within, input:focus-visible { outline: 3px solid #c2571a; outline-offset: 1px; }
    input[type=file] { position: absolute; opacity: 0; width: 1px; height: 1px; }
    .drop { border: 2px dashed #b7ab96; border-radius: 6px; padding: 8px 12px; color: #6b5d4d; flex: 1; min-width: 220px; text-align: center; }
    .drop.over { border-color: #c2571a; background: #fbeee4; }
    progress { width: 100%; height: 10px; }
    .summary { margin: 6px 0 10px; color: #3d4b52; }
    .failures { border-left: 4px solid #b3261e; background: #fbeceb; padding: 6px 12px; margin-bottom: 12px; border-radius: 0 4px 4px 0; }
    .failures h3 { margin: 2px 0 6px; font-size: 14px; color: #8c1d17; }
    .failures li { margin: 2px 0; }
    .failures code { font-weight: 600; }
    .grid { display: grid; grid-template-columns: repeat(auto-fill, minmax(180px, 1fr)); gap: 10px; }
    .card { background: #fff; border: 1px solid #d8d1c3; border-radius: 6px; padding: 4px; cursor: pointer; text-align: left; font: inherit; color: inherit; }
    .card[aria-pressed=true] { border-color: #c2571a; box-shadow: 0 0 0 2px #c2571a; }
    .card img, .card .ph { width: 100%; aspect-ratio: 4 / 3; display: block; border-radius: 4px; background: #f4f1ea; }
    .name { font-weight: 600; font-size: 13px; margin-top: 3px; word-break: break-all; }
    .meta { font-size: 12px; color: #5a6870; }
    .tag { display: inline-block; background: #e3eeee; color: #1f4f52; border-radius: 3px; padding: 0 5px; margin-right: 4px; font-size: 11px; }
    .open { background: #f6e7d2; color: #7a4a12; }
    input[type=search] { font: inherit; padding: 5px 8px; border: 1px solid #b7ab96; border-radius: 4px; min-width: 200px; }
  `;

  private emit(name: string, detail?: unknown): void {
    this.dispatchEvent(new CustomEvent(name, { detail, bubbles: true, composed: true }));
  }

  private onFiles(e: Event): void {
    const input = e.target as HTMLInputElement;
    if (input.files?.length) this.emit('add-files', Array.from(input.files));
    input.value = '';
  }

  private onDrop(e: DragEvent): void {
    e.preventDefault();
    (e.currentTarget as HTMLElement).classList.remove('over');
    this.emit('drop-items', e.dataTransfer);
  }

  protected override render() {
    const s = this.status;
    const q = this.filter.toLowerCase();
    const shown = q
      ? this.parts.filter((p) => p.name.toLowerCase().includes(q) || p.label.toLowerCase().includes(q))
      : this.parts;
    const families = new Set(this.parts.map((p) => p.label)).size;
    return html`
      <div class="bar">
        <label class="button">Add files…<input type="file" multiple accept=${ACCEPT} @change=${this.onFiles} /></label>
        <label class="button">Add a folder…<input type="file" webkitdirectory @change=${this.onFiles} /></label>
        <button @click=${() => this.emit('reload-demo')}>Reload the demo library</button>
        <button @click=${() => this.emit('clear-library')}>Empty the library</button>
        <button title="The whole library with its model and embeddings, as one file a colleague can open" @click=${() => this.emit('export-database')}>Save the library as a file</button>
        <label class="button" title="Replaces this library with one saved as a file (here or on another machine)">Open a library file…<input type="file" accept=".gz,.tgz,.tar" @change=${(
          e: Event,
        ) => {
          const input = e.target as HTMLInputElement;
          if (input.files?.[0]) this.emit('import-database', input.files[0]);
          input.value = '';
        }} /></label>
        <div class="drop" @dragover=${(e: DragEvent) => {
          e.preventDefault();
          (e.currentTarget as HTMLElement).classList.add('over');
        }}
             @dragleave=${(e: DragEvent) => (e.currentTarget as HTMLElement).classList.remove('over')} @drop=${this.onDrop}>
          Drop part files or whole folders here (${FORMAT_NAMES})
        </div>
      </div>
      ${
        s.kind === 'running' && s.progress
          ? html`<progress max=${s.progress.total} value=${s.progress.done} aria-label="import progress"></progress>
        ${
          s.progress.what === RESTORING
            ? html`<div class="summary">Opening the kept library: ${s.progress.done} of ${s.progress.total} parts</div>`
            : html`<div class="summary">Reading ${s.progress.done} of ${s.progress.total}: ${s.progress.what}
          <button data-testid="cancel-import" @click=${() => this.emit('cancel-import')}>Stop reading</button></div>`
        }`
          : null
      }
      ${s.kind === 'cancelled' ? html`<div class="summary" role="status">Reading was stopped: the parts read before it are in the library.</div>` : null}
      ${s.kind === 'failed' ? html`<div class="failures" role="alert">${s.message}</div>` : null}
      <div class="summary" data-testid="library-summary">
        ${this.parts.length} parts in ${families} folders${this.failures.length ? html`, <strong>${this.failures.length} files could not be read</strong>` : ''}
        ${s.kind === 'done' && s.ms > 0 ? html` · read in ${(s.ms / 1000).toFixed(1)} s` : ''}
        <input type="search" placeholder="Filter by name or folder" aria-label="Filter parts" .value=${this.filter} @input=${(e: Event) => (this.filter = (e.target as HTMLInputElement).value)} />
      </div>
      ${
        this.failures.length
          ? html`<div class="failures" data-testid="failures">
          <h3>Files not imported (the rest of the library is unaffected)</h3>
          <ul>${this.failures.map((f) => html`<li><code>${f.file}</code>: ${f.reason}</li>`)}</ul>
        </div>`
          : null
      }
      <div class="grid">
        ${shown.slice(0, this.limit).map((p) => {
          const thumb = this.thumbnails.get(p.name);
          const [x, y, z] = p.info.extents;
          return html`<button class="card" aria-pressed=${this.selected === p.name} @click=${() => this.emit('select-part', p.name)} title=${p.name}>
            ${thumb ? html`<img src=${thumb} alt="" />` : html`<div class="ph"></div>`}
            <div class="name">${p.name.split('/').pop()}</div>
            <div class="meta"><span class="tag">${p.label || '(top level)'}</span>${p.info.format}</div>
            <div class="meta">${fmt(x)} × ${fmt(y)} × ${fmt(z)} ${unitsLabel(p.info)}</div>
            <div class="meta">${p.info.triangleCount ? `${p.info.triangleCount} triangles` : `${p.info.vertexCount} points`}
              ${p.info.triangleCount ? (p.info.closed ? html`· closed` : html`· <span class="tag open">open</span>`) : ''}</div>
          </button>`;
        })}
      </div>
      ${
        shown.length > this.limit
          ? html`<div class="summary" data-testid="more-parts">Showing ${this.limit} of ${shown.length} parts (a page holds a few hundred cards comfortably; the filter finds the rest).
          <button @click=${() => (this.limit += CARDS_PER_PAGE)}>Show ${Math.min(CARDS_PER_PAGE, shown.length - this.limit)} more</button></div>`
          : null
      }`;
  }
}

/** Cards drawn at first, and added per "show more": hundreds of cards with pictures take the page a while to lay out. */
const CARDS_PER_PAGE = 240;

function fmt(v: number): string {
  return v >= 100 ? v.toFixed(0) : v >= 10 ? v.toFixed(1) : v.toFixed(2);
}

customElements.define('sk-library-panel', SkLibraryPanel);
