// <sk-map-panel>: every part as a dot at its embedding's two leading principal components, coloured by
// folder; hover names the part and shows its thumbnail, a click searches from it ('search-query').

import { unitsLabel } from '../../core/mesh/types';
import { LitElement, css, html, svg } from 'lit';
import type { LibraryPart } from '../../core/library';
import type { EmbeddingIndex } from '../../core/retrieval/index';
import { pca2d } from '../../core/retrieval/projection';

/** Distinct hues by the golden angle, in our own muted range. */
export function familyColour(i: number): string {
  return `hsl(${Math.round((i * 137.508) % 360)}, 55%, ${i % 2 ? 38 : 48}%)`;
}

export class SkMapPanel extends LitElement {
  static override properties = {
    parts: { attribute: false },
    index: { attribute: false },
    thumbnails: { attribute: false },
    hover: { state: true },
  };
  declare parts: readonly LibraryPart[];
  declare index: EmbeddingIndex | null;
  declare thumbnails: ReadonlyMap<string, string>;
  declare hover: number;
  private xy: Float32Array | null = null;

  constructor() {
    super();
    this.parts = [];
    this.index = null;
    this.thumbnails = new Map();
    this.hover = -1;
  }

  static override styles = css`
    :host { display: grid; grid-template-columns: 1fr 240px; gap: 14px; }
    svg { width: 100%; height: 620px; background: #fff; border: 1px solid #d8d1c3; border-radius: 6px; }
    circle { cursor: pointer; stroke: #fff; stroke-width: 1; }
    circle:focus-visible { outline: none; stroke: #1d2b33; stroke-width: 3; }
    .legend { font-size: 13px; }
    .legend div { display: flex; gap: 6px; align-items: center; margin: 2px 0; }
    .swatch { width: 12px; height: 12px; border-radius: 50%; display: inline-block; }
    .card { margin-top: 12px; background: #fff; border: 1px solid #d8d1c3; border-radius: 6px; padding: 6px; font-size: 12px; }
    .card img { width: 100%; border-radius: 4px; }
    .empty { color: #6b5d4d; padding: 20px; }
  `;

  protected override willUpdate(changed: Map<string, unknown>): void {
    if (changed.has('index') && this.index && this.index.count >= 3)
      this.xy = pca2d(this.index.vectors, this.index.dim, 60);
  }

  protected override render() {
    const idx = this.index;
    if (!idx || !this.xy || idx.count !== this.parts.length)
      return html`<div class="empty">The map appears once the library has embeddings.</div>`;
    const families = [...new Set(this.parts.map((p) => p.label))].sort();
    const W = 900,
      H = 620,
      pad = 24;
    let x0 = Infinity,
      x1 = -Infinity,
      y0 = Infinity,
      y1 = -Infinity;
    for (let i = 0; i < idx.count; i++) {
      const x = this.xy[i * 2],
        y = this.xy[i * 2 + 1];
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
        ${this.parts.map(
          (p, i) => svg`<circle cx=${sx(this.xy![i * 2])} cy=${sy(this.xy![i * 2 + 1])} r=${i === this.hover ? 9 : 6}
          fill=${familyColour(families.indexOf(p.label))} tabindex="0" aria-label=${p.name}
          @mouseenter=${() => (this.hover = i)} @focus=${() => (this.hover = i)}
          @click=${() => this.dispatchEvent(new CustomEvent('search-query', { detail: p.name, bubbles: true, composed: true }))}
          @keydown=${(e: KeyboardEvent) => {
            if (e.key === 'Enter')
              this.dispatchEvent(new CustomEvent('search-query', { detail: p.name, bubbles: true, composed: true }));
          }}><title>${p.name}</title></circle>`,
        )}
      </svg>
      <div>
        <div class="legend">${families.map((f, i) => html`<div><span class="swatch" style="background:${familyColour(i)}"></span>${f || '(top level)'}</div>`)}</div>
        ${
          h
            ? html`<div class="card">${this.thumbnails.get(h.name) ? html`<img src=${this.thumbnails.get(h.name)} alt="" />` : null}
          <div><strong>${h.name}</strong></div><div>${h.info.extents.map((v) => v.toPrecision(3)).join(' × ')} ${unitsLabel(h.info)}</div><div>click to find its look-alikes</div></div>`
            : html`<div class="card">Point at a dot to see the part; click it to search from it. Axes are the embedding's two main directions of spread.</div>`
        }
      </div>`;
  }
}
customElements.define('sk-map-panel', SkMapPanel);
