// <sk-map-panel>: every part as a dot at its embedding's two leading principal components, coloured by
// folder; hover names the part and shows its thumbnail, a click searches from it ('search-query').

import { partSize, sizeWords } from '../../core/units';
import { LitElement, css, html, svg } from 'lit';
import type { LibraryPart } from '../../core/library';
import type { EmbeddingIndex } from '../../core/retrieval/index';

/**
 * Folder marks that stay apart for 32 folders and under the common colour-vision deficiencies: the eight colours
 * of the Okabe–Ito palette (Okabe & Ito 2008, "Color Universal Design"; black swapped for a dark slate to sit on
 * white), then, past eight folders, the same colours in another shape (circle, square, triangle, diamond).
 */
export const FOLDER_COLOURS = ['#E69F00', '#56B4E9', '#009E73', '#F0E442', '#0072B2', '#D55E00', '#CC79A7', '#3d4b52'];
export const FOLDER_SHAPES = ['circle', 'square', 'triangle', 'diamond'] as const;

export function folderMark(i: number): { colour: string; shape: (typeof FOLDER_SHAPES)[number] } {
  return { colour: FOLDER_COLOURS[i % 8], shape: FOLDER_SHAPES[Math.floor(i / 8) % 4] };
}

/** SVG path of a mark of radius r centred at (x, y). */
export function markPath(shape: (typeof FOLDER_SHAPES)[number], x: number, y: number, r: number): string {
  switch (shape) {
    case 'circle':
      return `M${x - r},${y}a${r},${r} 0 1,0 ${2 * r},0a${r},${r} 0 1,0 ${-2 * r},0`;
    case 'square':
      return `M${x - r * 0.9},${y - r * 0.9}h${1.8 * r}v${1.8 * r}h${-1.8 * r}z`;
    case 'triangle':
      return `M${x},${y - 1.15 * r}L${x + r},${y + 0.75 * r}L${x - r},${y + 0.75 * r}z`;
    case 'diamond':
      return `M${x},${y - 1.2 * r}L${x + 1.2 * r},${y}L${x},${y + 1.2 * r}L${x - 1.2 * r},${y}z`;
  }
}

export class SkMapPanel extends LitElement {
  static override properties = {
    parts: { attribute: false },
    index: { attribute: false },
    thumbnails: { attribute: false },
    units: { attribute: false },
    map: { attribute: false },
    hover: { state: true },
  };
  declare parts: readonly LibraryPart[];
  declare index: EmbeddingIndex | null;
  declare thumbnails: ReadonlyMap<string, string>;
  /** Millimetres per file unit by folder, for files whose format has no units. */
  declare units: Readonly<Record<string, number>>;
  declare hover: number;
  /** Each part's place on the map (the search's `map`, worked out in the map worker), for the index's vectors. */
  declare map: { readonly xy: Float32Array; readonly of: Float32Array } | null;

  constructor() {
    super();
    this.parts = [];
    this.index = null;
    this.thumbnails = new Map();
    this.units = {};
    this.hover = -1;
    this.map = null;
  }

  static override styles = css`
    :host { display: grid; grid-template-columns: 1fr 240px; gap: 14px; }
    svg { width: 100%; height: 620px; background: #fff; border: 1px solid #d8d1c3; border-radius: 6px; }
    .dot { cursor: pointer; stroke: #1d2b33; stroke-width: 0.6; }
    .dot:focus-visible { outline: none; stroke: #1d2b33; stroke-width: 3; }
    .legend { font-size: 13px; }
    .legend div { display: flex; gap: 6px; align-items: center; margin: 2px 0; }
    .swatch { width: 14px; height: 14px; display: inline-block; vertical-align: middle; margin-right: 4px; }
    .card { margin-top: 12px; background: #fff; border: 1px solid #d8d1c3; border-radius: 6px; padding: 6px; font-size: 12px; }
    .card img { width: 100%; border-radius: 4px; }
    .empty { color: #6b5d4d; padding: 20px; }
  `;

  protected override render() {
    const idx = this.index;
    const xy = this.map && idx && this.map.of === idx.vectors ? this.map.xy : null;
    if (!idx || idx.count !== this.parts.length)
      return html`<div class="empty">The map appears once the library has embeddings.</div>`;
    if (!xy) return html`<div class="empty" role="status">Laying out the map…</div>`;
    const families = [...new Set(this.parts.map((p) => p.label))].sort();
    const W = 900,
      H = 620,
      pad = 24;
    let x0 = Infinity,
      x1 = -Infinity,
      y0 = Infinity,
      y1 = -Infinity;
    for (let i = 0; i < idx.count; i++) {
      const x = xy[i * 2],
        y = xy[i * 2 + 1];
      x0 = Math.min(x0, x);
      x1 = Math.max(x1, x);
      y0 = Math.min(y0, y);
      y1 = Math.max(y1, y);
    }
    const sx = (x: number) => pad + ((W - 2 * pad) * (x - x0)) / (x1 - x0 || 1);
    const sy = (y: number) => H - pad - ((H - 2 * pad) * (y - y0)) / (y1 - y0 || 1);
    const h = this.hover >= 0 ? this.parts[this.hover] : null;
    return html`
      <svg viewBox="0 0 ${W} ${H}" role="img" aria-label="map of the library by embedding">
        ${this.parts.map((p, i) => {
          const mark = folderMark(families.indexOf(p.label));
          return svg`<path class="dot" d=${markPath(mark.shape, sx(xy[i * 2]), sy(xy[i * 2 + 1]), i === this.hover ? 9 : 6)}
          fill=${mark.colour} tabindex="0" aria-label=${`${p.name} (folder ${p.label || 'top level'})`}
          @mouseenter=${() => (this.hover = i)} @focus=${() => (this.hover = i)}
          @click=${() => this.dispatchEvent(new CustomEvent('search-query', { detail: p.name, bubbles: true, composed: true }))}
          @keydown=${(e: KeyboardEvent) => {
            if (e.key === 'Enter')
              this.dispatchEvent(new CustomEvent('search-query', { detail: p.name, bubbles: true, composed: true }));
          }}><title>${p.name} — folder ${p.label || 'top level'}</title></path>`;
        })}
      </svg>
      <div>
        <div class="legend">${families.map((f, i) => {
          const mark = folderMark(i);
          return html`<div><svg class="swatch" viewBox="0 0 16 16" aria-hidden="true"><path d=${markPath(mark.shape, 8, 8, 6)} fill=${mark.colour}></path></svg>${f || '(top level)'}</div>`;
        })}</div>
        ${
          h
            ? html`<div class="card">${this.thumbnails.get(h.name) ? html`<img src=${this.thumbnails.get(h.name)} alt="" />` : null}
          <div><strong>${h.name}</strong></div><div>${sizeWords(partSize(h.info, this.units[h.label]))}</div><div>click to find its look-alikes</div></div>`
            : html`<div class="card">Point at a dot to see the part; click it to search from it. Axes are the embedding's two main directions of spread.</div>`
        }
      </div>`;
  }
}
customElements.define('sk-map-panel', SkMapPanel);
