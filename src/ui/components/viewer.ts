// <sk-viewer>: an interactive 3-D view of a point cloud or a mesh. Renders only; the controller acts.

import { LitElement, css, html } from 'lit';
import type { Object3D } from 'three';
import { CameraLink, ViewerController } from '../controllers/viewer';

export class SkViewer extends LitElement {
  static override properties = {
    object: { attribute: false },
    link: { attribute: false },
    caption: { type: String },
  };

  declare object: Object3D | null;
  declare link: CameraLink | null;
  declare caption: string;

  private readonly view = new ViewerController(this, () => this.renderRoot.querySelector('.stage'));

  constructor() {
    super();
    this.object = null;
    this.link = null;
    this.caption = '';
  }

  static override styles = css`
    :host { display: block; position: relative; min-height: 200px; background: #f4f1ea; border: 1px solid #d8d1c3; border-radius: 6px; overflow: hidden; }
    .stage { position: absolute; inset: 0; }
    canvas { width: 100%; height: 100%; display: block; outline: none; }
    .caption { position: absolute; left: 8px; top: 6px; font-size: 12px; color: #1d2b33; background: rgba(244,241,234,0.85); padding: 1px 6px; border-radius: 3px; pointer-events: none; }
    .missing { position: absolute; inset: 0; display: grid; place-items: center; color: #6b5d4d; padding: 12px; text-align: center; }
  `;

  protected override updated(changed: Map<string, unknown>): void {
    if (changed.has('object')) this.view.setObject(this.object);
    if (changed.has('link')) this.view.setLink(this.link);
  }

  protected override render() {
    return html`<div class="stage"></div>
      ${this.caption ? html`<div class="caption">${this.caption}</div>` : null}
      ${this.view.webglMissing ? html`<div class="missing">This browser cannot draw 3-D views here (it needs WebGL in a worker), so the view is off. Thumbnails and results still work.</div>` : null}`;
  }
}
customElements.define('sk-viewer', SkViewer);
