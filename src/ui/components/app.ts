// <sk-app>: the workbench shell. Owns the library state, hands it to the panels, and reacts to their events.

import { LitElement, css, html } from 'lit';
import { DEFAULT_SAMPLING, type LibraryPart } from '../../core/library';
import type { ImportFailure } from '../../core/mesh/import';
import { PRESETS, type Pipeline } from '../../core/points/augment';
import { LibraryClient } from '../controllers/library-client';
import { thumbnail } from '../controllers/thumbnails';
import { fetchDemoLibrary } from '../demo-library';
import { namedFromDrop, namedFromInput, readFiles, type NamedFile } from '../files';
import type { ImportStatus } from '../status';
import type { FileInput } from '../../worker/protocol';
import './library-panel';
import './augment-panel';

type Panel = 'library' | 'augment';

const PANELS: readonly { id: Panel; label: string }[] = [
  { id: 'library', label: 'Parts library' },
  { id: 'augment', label: 'Augmentations' },
];

export class SkApp extends LitElement {
  static override properties = {
    panel: { state: true },
    parts: { state: true },
    failures: { state: true },
    status: { state: true },
    thumbs: { state: true },
    selected: { state: true },
    pipeline: { state: true },
  };

  declare panel: Panel;
  declare parts: LibraryPart[];
  declare failures: ImportFailure[];
  declare status: ImportStatus;
  declare thumbs: Map<string, string>;
  declare selected: string;
  declare pipeline: Pipeline;

  private readonly library = new LibraryClient();
  private thumbQueue: LibraryPart[] = [];
  private thumbTimer = 0;

  constructor() {
    super();
    this.panel = 'library';
    this.parts = [];
    this.failures = [];
    this.status = { kind: 'idle' };
    this.thumbs = new Map();
    this.selected = '';
    this.pipeline = PRESETS['scan-like'];
  }

  static override styles = css`
    :host { display: block; min-height: 100%; }
    header { display: flex; align-items: baseline; gap: 16px; padding: 10px 18px 0; }
    h1 { margin: 0; font-size: 20px; letter-spacing: 0.02em; }
    h1 span { color: #c2571a; }
    .tagline { color: #5a6870; }
    nav { display: flex; gap: 4px; padding: 8px 18px 0; border-bottom: 2px solid #1d2b33; }
    nav button { font: inherit; border: 1px solid #1d2b33; border-bottom: none; background: #e9e3d6; padding: 6px 14px; border-radius: 6px 6px 0 0; cursor: pointer; }
    nav button[aria-selected=true] { background: #1d2b33; color: #f4f1ea; }
    nav button:focus-visible { outline: 3px solid #c2571a; outline-offset: 1px; }
    main { padding: 14px 18px 40px; }
    .caution { margin: 10px 18px 0; padding: 6px 12px; background: #fff6df; border-left: 4px solid #d9a21b; font-size: 13px; }
  `;

  override connectedCallback(): void {
    super.connectedCallback();
    void this.loadDemo();
  }

  override disconnectedCallback(): void {
    super.disconnectedCallback();
    this.library.dispose();
    clearTimeout(this.thumbTimer);
  }

  private async loadDemo(): Promise<void> {
    this.parts = [];
    this.failures = [];
    this.thumbs = new Map();
    this.status = { kind: 'importing', done: 0, total: 1, file: 'fetching the demo library' };
    try {
      await this.importInputs(await fetchDemoLibrary(), []);
    } catch (err) {
      this.status = { kind: 'failed', message: `The demo library could not be loaded: ${(err as Error).message}` };
    }
  }

  private async addNamed(named: NamedFile[]): Promise<void> {
    const { inputs, skipped } = await readFiles(named);
    await this.importInputs(inputs, skipped.map((file) => ({ file, code: 'unsupported-type', reason: 'not a mesh or point file Shapekin reads (STL, OBJ, PLY, OFF, XYZ/CSV)' })));
  }

  private async importInputs(inputs: FileInput[], extraFailures: ImportFailure[]): Promise<void> {
    // A re-imported name replaces the old part.
    const incoming = new Set(inputs.map((f) => f.name));
    this.parts = this.parts.filter((p) => !incoming.has(p.name));
    this.failures = [...this.failures.filter((f) => !incoming.has(f.file)), ...extraFailures];
    if (inputs.length === 0) { this.status = { kind: 'ready', ms: 0 }; return; }
    this.status = { kind: 'importing', done: 0, total: inputs.length, file: inputs[0].name };
    try {
      const ms = await this.library.importFiles(inputs, DEFAULT_SAMPLING, {
        onPart: (part) => { this.parts = [...this.parts, part]; this.queueThumbnail(part); if (!this.selected) this.selected = part.name; },
        onFailure: (failure) => { this.failures = [...this.failures, failure]; },
        onProgress: (done, total, file) => { this.status = { kind: 'importing', done, total, file }; },
      });
      this.status = { kind: 'ready', ms };
    } catch (err) {
      if ((err as Error).message !== 'superseded') this.status = { kind: 'failed', message: (err as Error).message };
    }
  }

  /** Thumbnails one per frame, so the page never holds the main thread for long. */
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

  protected override render() {
    const part = this.parts.find((p) => p.name === this.selected) ?? null;
    return html`
      <header><h1>Shape<span>kin</span></h1><div class="tagline">find parts that look like a given part — everything stays on this machine</div></header>
      <nav role="tablist">
        ${PANELS.map((p) => html`<button role="tab" aria-selected=${this.panel === p.id} @click=${() => (this.panel = p.id)}>${p.label}</button>`)}
      </nav>
      <div class="caution" role="note">Geometric similarity is not interchangeability: before substituting a part, a qualified person must check material, tolerances, loads and standards, following local codes and your organisation's engineering sign-off.</div>
      <main>
        ${this.panel === 'library'
          ? html`<sk-library-panel .parts=${this.parts} .failures=${this.failures} .status=${this.status} .thumbnails=${this.thumbs} .selected=${this.selected}
              @select-part=${(e: CustomEvent<string>) => (this.selected = e.detail)}
              @add-files=${(e: CustomEvent<File[]>) => void this.addNamed(namedFromInput(e.detail))}
              @drop-items=${async (e: CustomEvent<DataTransfer>) => void this.addNamed(await namedFromDrop(e.detail))}
              @reload-demo=${() => void this.loadDemo()}
              @clear-library=${() => { this.parts = []; this.failures = []; this.thumbs = new Map(); this.selected = ''; this.status = { kind: 'idle' }; }}></sk-library-panel>`
          : html`<sk-augment-panel .subject=${part} .pipeline=${this.pipeline} @pipeline-change=${(e: CustomEvent<Pipeline>) => (this.pipeline = e.detail)}></sk-augment-panel>`}
      </main>`;
  }
}
customElements.define('sk-app', SkApp);
