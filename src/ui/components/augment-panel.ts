// <sk-augment-panel>: compose augmentation steps on one part and see the original beside two views.
// Pure rendering of the pipeline it is given; edits are sent up as 'pipeline-change'.

import { LitElement, css, html } from 'lit';
import type { Object3D } from 'three';
import type { PartClouds } from '../../core/db/workbench';
import {
  AUGMENT_KINDS,
  PRESETS,
  STRENGTH_RANGES,
  viewPair,
  type AugmentKind,
  type AugmentStep,
  type Pipeline,
} from '../../core/points/augment';
import { makeCloud } from '../../core/points/cloud';
import { cloudDistances } from '../../core/points/distance';
import { createRng } from '../../core/rng';
import { alignToPrincipalAxes } from '../../core/points/pca';
import type { Pose } from '../../core/model/train-config';
import { pointsObject } from '../../render/scene';
import { CameraLink } from '../controllers/viewer';
import './viewer';

export class SkAugmentPanel extends LitElement {
  static override properties = {
    subject: { attribute: false },
    fetching: { type: Boolean },
    pipeline: { attribute: false },
    pose: { type: String },
    roll: { state: true },
  };

  /** The chosen part's point cloud (null: none chosen, or it is being fetched). */
  declare subject: PartClouds | null;
  /** A part is chosen and its points are on their way from the parts database. */
  declare fetching: boolean;
  declare pipeline: Pipeline;
  declare pose: Pose;
  declare roll: number;
  private readonly link = new CameraLink();
  private views: {
    original: Object3D;
    a: Object3D;
    b: Object3D;
    chamfer: [number, number];
    hausdorff: [number, number];
  } | null = null;

  constructor() {
    super();
    this.subject = null;
    this.fetching = false;
    this.pipeline = PRESETS['scan-like'];
    this.pose = 'as-is';
    this.roll = 1;
  }

  static override styles = css`
    :host { display: block; }
    .row { display: grid; grid-template-columns: 320px 1fr; gap: 14px; align-items: start; }
    .steps { max-height: 660px; overflow: auto; padding-right: 4px; }
    .top { display: flex; gap: 12px; align-items: center; margin-bottom: 8px; }
    .views { display: grid; grid-template-columns: repeat(3, 1fr); gap: 8px; }
    sk-viewer { height: 300px; }
    fieldset { border: 1px solid #d8d1c3; border-radius: 6px; margin: 0 0 8px; padding: 6px 10px; background: #fff; }
    legend { font-weight: 600; }
    .step { display: grid; grid-template-columns: 1fr auto; gap: 2px 8px; align-items: center; }
    .step label { font-size: 12px; color: #3d4b52; }
    .hint { font-size: 11px; color: #6b5d4d; grid-column: 1 / -1; }
    input[type=range] { width: 100%; }
    button, select { font: inherit; padding: 4px 10px; border: 1px solid #1d2b33; background: #fff; border-radius: 4px; cursor: pointer; }
    button:focus-visible, select:focus-visible, input:focus-visible { outline: 3px solid #c2571a; outline-offset: 1px; }
    .numbers { margin-top: 8px; font-size: 13px; }
    .empty { color: #6b5d4d; padding: 20px; }
  `;

  private emit(pipeline: Pipeline): void {
    this.dispatchEvent(new CustomEvent('pipeline-change', { detail: pipeline, bubbles: true, composed: true }));
  }

  private setStep(i: number, patch: Partial<AugmentStep>): void {
    const steps = this.pipeline.steps.map((s, k) => (k === i ? { ...s, ...patch } : s));
    this.emit({ ...this.pipeline, steps });
  }

  protected override willUpdate(changed: Map<string, unknown>): void {
    if (
      !this.subject ||
      !(changed.has('subject') || changed.has('pipeline') || changed.has('roll') || changed.has('pose'))
    )
      return;
    // Training sees parts in the model's pose, so the preview starts from the same pose.
    const raw = makeCloud(this.subject.points, this.subject.normals);
    const cloud = this.pose === 'principal-axes' ? alignToPrincipalAxes(raw) : raw;
    const [a, b] = viewPair(cloud, this.pipeline, createRng(this.roll));
    const da = cloudDistances(cloud, a),
      db = cloudDistances(cloud, b);
    this.views = {
      original: pointsObject(cloud.positions, 0.03),
      a: pointsObject(a.positions, 0.03),
      b: pointsObject(b.positions, 0.03),
      chamfer: [da.chamfer, db.chamfer],
      hausdorff: [da.hausdorff, db.hausdorff],
    };
  }

  protected override render() {
    const p = this.pipeline;
    return html`<div class="row">
      <div class="steps">
        <fieldset>
          <legend>Start from</legend>
          <select aria-label="Preset" @change=${(e: Event) => this.emit(PRESETS[(e.target as HTMLSelectElement).value as keyof typeof PRESETS])}>
            <option value="">choose a preset…</option>
            ${Object.keys(PRESETS).map((name) => html`<option value=${name}>${name}</option>`)}
          </select>
          <label>up axis <select aria-label="Up axis" @change=${(e: Event) => this.emit({ ...p, upAxis: (e.target as HTMLSelectElement).value as Pipeline['upAxis'] })}>
            ${(['z', 'y', 'x'] as const).map((a) => html`<option ?selected=${p.upAxis === a}>${a}</option>`)}
          </select></label>
        </fieldset>
        ${p.steps.map(
          (s, i) => html`<fieldset>
          <legend>${i + 1}. ${s.kind}</legend>
          <div class="step">
            <label>strength ${s.strength.toFixed(2)}<input type="range" min="0" max="1" step="0.05" .value=${String(s.strength)} aria-label="${s.kind} strength"
              @input=${(e: Event) => this.setStep(i, { strength: Number((e.target as HTMLInputElement).value) })} /></label>
            <button aria-label="remove ${s.kind}" @click=${() => this.emit({ ...p, steps: p.steps.filter((_, k) => k !== i) })}>remove</button>
            <label>chance ${s.probability.toFixed(2)}<input type="range" min="0" max="1" step="0.05" .value=${String(s.probability)} aria-label="${s.kind} chance"
              @input=${(e: Event) => this.setStep(i, { probability: Number((e.target as HTMLInputElement).value) })} /></label>
            <span></span>
            <div class="hint">${STRENGTH_RANGES[s.kind]}</div>
          </div>
        </fieldset>`,
        )}
        <select aria-label="Add a step" @change=${(e: Event) => {
          const kind = (e.target as HTMLSelectElement).value as AugmentKind;
          (e.target as HTMLSelectElement).value = '';
          if (kind) this.emit({ ...p, steps: [...p.steps, { kind, strength: 0.5, probability: 1 }] });
        }}>
          <option value="">add a step…</option>
          ${AUGMENT_KINDS.map((k) => html`<option value=${k}>${k}</option>`)}
        </select>
      </div>
      <div>
        <div class="top"><button @click=${() => (this.roll += 1)}>Roll new views</button><span>each roll draws two fresh views of the same part</span></div>
        ${
          this.subject && this.views
            ? html`
          <div class="views">
            <sk-viewer .object=${this.views.original} .link=${this.link} caption="original${this.pose === 'principal-axes' ? ' (principal-axes pose)' : ''}: ${this.subject.name}"></sk-viewer>
            <sk-viewer .object=${this.views.a} .link=${this.link} caption="view A"></sk-viewer>
            <sk-viewer .object=${this.views.b} .link=${this.link} caption="view B"></sk-viewer>
          </div>
          <div class="numbers" data-testid="augment-distances">
            Moved from the original — view A: Chamfer ${this.views.chamfer[0].toFixed(4)}, Hausdorff ${this.views.hausdorff[0].toFixed(3)};
            view B: Chamfer ${this.views.chamfer[1].toFixed(4)}, Hausdorff ${this.views.hausdorff[1].toFixed(3)}
            (unit-sphere units; roll ${this.roll}). Drag any view to turn all three.
          </div>`
            : html`<div class="empty">${this.fetching ? 'Reading the part’s points from the library…' : 'Pick a part in the library to preview its augmentations.'}</div>`
        }
      </div>
    </div>`;
  }
}
customElements.define('sk-augment-panel', SkAugmentPanel);
