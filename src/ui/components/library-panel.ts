// <sk-library-panel>: the parts grid, the import controls and the list of files that failed.
// Renders from properties and sends events up: 'add-files' (File[]), 'reload-demo', 'select-part' (name).

import { LitElement, css, html } from 'lit';
import { partSize, UNIT_CHOICES } from '../../core/units';
import { ACCEPT, FORMAT_NAMES } from '../../core/mesh/formats';
import type { LibraryPart } from '../../core/library';
import type { ImportFailure } from '../../core/mesh/import';
import { KEEPING, RESTORING, type LibraryState } from '../state';
import { timeLeft } from '../words';

export class SkLibraryPanel extends LitElement {
  static override properties = {
    parts: { attribute: false },
    failures: { attribute: false },
    status: { attribute: false },
    thumbnails: { attribute: false },
    selected: { type: String },
    units: { attribute: false },
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
  /** Millimetres per file unit by folder, for files whose format has no units. */
  declare units: Readonly<Record<string, number>>;
  declare filter: string;

  constructor() {
    super();
    this.parts = [];
    this.failures = [];
    this.status = { kind: 'idle' };
    this.thumbnails = new Map();
    this.selected = '';
    this.units = {};
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
    /* Cards out of sight are not laid out or painted (painting 120 cards with pictures took 26 ms of the page). */
    .card { content-visibility: auto; contain-intrinsic-size: auto 220px; }
    .card[aria-pressed=true] { border-color: #c2571a; box-shadow: 0 0 0 2px #c2571a; }
    .card img, .card .ph { width: 100%; aspect-ratio: 4 / 3; display: block; border-radius: 4px; background: #f4f1ea; }
    .name { font-weight: 600; font-size: 13px; margin-top: 3px; word-break: break-all; }
    .meta { font-size: 12px; color: #5a6870; }
    .tag { display: inline-block; background: #e3eeee; color: #1f4f52; border-radius: 3px; padding: 0 5px; margin-right: 4px; font-size: 11px; }
    .open { background: #f6e7d2; color: #7a4a12; }
    details.units { margin: 0 0 10px; }
    details.units summary { cursor: pointer; color: #3d4b52; }
    details.units table { border-collapse: collapse; margin: 6px 0; }
    details.units td, details.units th { padding: 3px 10px 3px 0; text-align: left; font-weight: normal; }
    details.units th { color: #5a6870; font-size: 12px; }
    details.units select, details.units input { font: inherit; padding: 2px 4px; }
    details.units input { width: 7em; }
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
    const left = s.kind === 'running' && s.progress ? timeLeft(s.progress, performance.now()) : '';
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
            ? html`<div class="summary">Opening the kept library: ${s.progress.done} of ${s.progress.total} parts${left ? ` · ${left}` : ''}</div>`
            : s.progress.what === KEEPING
              ? html`<div class="summary" data-testid="keeping">All files read. Keeping the parts on this computer so a reload finds them: ${count(s.progress.total - s.progress.done, 'part')} still to write${left ? ` (${left})` : ''}</div>`
              : html`<div class="summary">Reading ${s.progress.done} of ${s.progress.total}${left ? ` (${left})` : ''}: ${s.progress.what}
          <button data-testid="cancel-import" @click=${() => this.emit('cancel-import')}>Stop reading</button></div>`
        }`
          : null
      }
      ${s.kind === 'running' && !s.progress ? html`<div class="summary" role="status">Opening the kept library…</div>` : null}
      ${this.parts.length === 0 && s.kind !== 'running' ? html`<div class="summary" data-testid="empty-library">The library is empty. Add part files or a folder above, or reload the demo library.</div>` : null}
      ${s.kind === 'cancelled' ? html`<div class="summary" role="status">Reading was stopped: the parts read before it are in the library.</div>` : null}
      ${s.kind === 'failed' ? html`<div class="failures" role="alert">${s.message}</div>` : null}
      <div class="summary" data-testid="library-summary">
        ${count(this.parts.length, 'part')} in ${count(families, 'folder')}${this.failures.length ? html`, <strong>${count(this.failures.length, 'file')} could not be read</strong>` : ''}
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
      ${this.renderUnits()}
      <div class="grid">
        ${shown.slice(0, this.limit).map((p) => {
          const thumb = this.thumbnails.get(p.name);
          const size = partSize(p.info, this.units[p.label]);
          const [x, y, z] = size.size;
          return html`<button class="card" aria-pressed=${this.selected === p.name} @click=${() => this.emit('select-part', p.name)} title=${p.name}>
            ${thumb ? html`<img src=${thumb} alt="" />` : html`<div class="ph"></div>`}
            <div class="name">${p.name.split('/').pop()}</div>
            <div class="meta"><span class="tag">${p.label || '(top level)'}</span>${p.info.format}</div>
            <div class="meta">${fmt(x)} × ${fmt(y)} × ${fmt(z)} ${size.units}</div>
            <div class="meta">${p.info.triangleCount ? `${p.info.triangleCount} triangles` : `${p.info.vertexCount} points`}
              ${p.info.triangleCount ? (p.info.closed ? html`· closed` : html`· <span class="tag open">open</span>`) : ''}</div>
          </button>`;
        })}
      </div>
      ${
        shown.length > this.limit
          ? html`<div class="summary" data-testid="more-parts">Showing ${this.limit} of ${shown.length} parts (the filter above finds any part by name or folder).
          <button @click=${() => (this.limit += CARDS_PER_PAGE)}>Show ${Math.min(CARDS_PER_PAGE, shown.length - this.limit)} more</button></div>`
          : null
      }`;
  }

  /** Per folder with files that do not say their units: what one unit is (kept with the library). */
  private renderUnits() {
    const unitless = new Map<string, number>();
    for (const p of this.parts) if (p.info.units !== 'mm') unitless.set(p.label, (unitless.get(p.label) ?? 0) + 1);
    if (unitless.size === 0) return null;
    const folders = [...unitless].sort(([a], [b]) => a.localeCompare(b));
    const unset = folders.filter(([f]) => !this.units[f]).length;
    const set = (folder: string, mm: number | null) => this.emit('set-units', { folders: [folder], mm });
    return html`<details class="units" data-testid="units">
      <summary>Sizes: ${unset ? `${unset} of ${folders.length} folders shown in file units` : 'every folder in mm'} — say what one unit is</summary>
      <div class="summary">STEP, IGES, glTF and 3MF files state their units, so their sizes are in millimetres. STL, OBJ, PLY, OFF and
        VRML files and point lists do not: say what one unit measures in each folder, and their sizes, the size filter, the
        preference for parts of a similar size when results are ordered through the library, and exported embeddings
        use millimetres too.</div>
      <table>
        <tr><th>Folder</th><th>Parts without units</th><th>One unit is</th><th>or mm per unit</th></tr>
        ${
          folders.length > 1
            ? html`<tr><td><em>every folder below</em></td><td>${folders.reduce((n, [, c]) => n + c, 0)}</td>
            <td><select aria-label="Units of every folder" @change=${(e: Event) => {
              const c = UNIT_CHOICES.find((u) => u.name === (e.target as HTMLSelectElement).value);
              this.emit('set-units', { folders: folders.map(([f]) => f), mm: c ? c.mm : null });
              (e.target as HTMLSelectElement).value = 'choose';
            }}>
              <option value="choose" selected disabled>set all…</option>
              <option value="">not known (file units)</option>
              ${UNIT_CHOICES.map((c) => html`<option value=${c.name}>${c.name}</option>`)}
            </select></td><td></td></tr>`
            : null
        }
        ${folders.map(([folder, n]) => {
          const mm = this.units[folder];
          const named = UNIT_CHOICES.find((c) => c.mm === mm);
          const choice = mm === undefined ? '' : named ? named.name : 'other';
          return html`<tr>
            <td>${folder || '(top level)'}</td><td>${n}</td>
            <td><select aria-label=${`Units of ${folder || 'the top level'}`} @change=${(e: Event) => {
              const v = (e.target as HTMLSelectElement).value;
              const c = UNIT_CHOICES.find((u) => u.name === v);
              if (v === '') set(folder, null);
              else if (c) set(folder, c.mm);
            }}>
              <option value="" ?selected=${choice === ''}>not known (file units)</option>
              ${UNIT_CHOICES.map((c) => html`<option value=${c.name} ?selected=${choice === c.name}>${c.name}</option>`)}
              <option value="other" ?disabled=${choice !== 'other'} ?selected=${choice === 'other'}>other factor</option>
            </select></td>
            <td><input type="number" min="0" step="any" aria-label=${`Millimetres per unit in ${folder || 'the top level'}`}
              .value=${mm === undefined ? '' : String(mm)} @change=${(e: Event) => {
                const v = Number((e.target as HTMLInputElement).value);
                set(
                  folder,
                  (e.target as HTMLInputElement).value === '' ? null : v > 0 && Number.isFinite(v) ? v : (mm ?? null),
                );
                if (!(v > 0)) (e.target as HTMLInputElement).value = mm === undefined ? '' : String(mm);
              }} /></td>
          </tr>`;
        })}
      </table>
    </details>`;
  }
}

/**
 * Cards drawn at first, and added per "show more": each card with its picture costs the page about 0.1 ms to make
 * and again to take away when another tab opens (336 cards: 30–40 ms tasks), so a page holds the demo's 112 and
 * the filter finds the rest.
 */
const CARDS_PER_PAGE = 120;

/** "1 part", "2 parts". */
const count = (n: number, noun: string) => `${n} ${noun}${n === 1 ? '' : 's'}`;

function fmt(v: number): string {
  return v >= 100 ? v.toFixed(0) : v >= 10 ? v.toFixed(1) : v.toFixed(2);
}

customElements.define('sk-library-panel', SkLibraryPanel);
