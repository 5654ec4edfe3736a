// <sk-train-panel>: training settings, start / pause / resume / stop, progress with ETA and speed, and the
// live loss curve. Renders what it is given; sends 'train-start' (config), 'train-pause', 'train-resume',
// 'train-stop' and 'train-continue' (resume a saved run) upward.

import { LitElement, css, html } from 'lit';
import { LOSS_NAMES, type LossName } from '../../core/model/losses/names';
import type { TrainConfig, TrainProgress, HeldOutCheck } from '../../core/model/train-config';
import { PRESETS } from '../../core/points/augment';
import {
  EDGE_WIDTH,
  SURFACE_GRID_CELLS,
  SURFACE_GRID_SHARE,
  INPUT_FEATURES,
  INPUT_LABELS,
  type InputFeatures,
} from '../../core/model/encoder-config';
import { memberPoses, POSE_LABELS, POSES } from '../../core/model/train-config';
import { DEFAULT_TRAIN, OPEN_LIBRARY_TEMPERATURE } from '../../core/model/defaults';
import { isBusy, type TrainingState } from '../state';
import { formatDuration } from '../words';
import './loss-chart';

export class SkTrainPanel extends LitElement {
  static override properties = {
    config: { attribute: false },
    status: { attribute: false },
    progress: { attribute: false },
    history: { attribute: false },
    checks: { attribute: false },
    backend: { type: String },
    stepMs: { type: Number },
    savedStep: { type: Number },
    savedTotal: { type: Number },
    partCount: { type: Number },
    hasLabels: { type: Boolean },
    inputsNote: { type: String },
    poseNote: { type: String },
  };
  declare config: TrainConfig;
  declare status: TrainingState['status'];
  declare progress: TrainProgress | null;
  declare history: readonly { step: number; loss: number }[];
  declare checks: readonly HeldOutCheck[];
  declare backend: string;
  /** One step timed in the worker with these settings (0: not yet): the estimate before Start. */
  declare stepMs: number;
  declare savedStep: number;
  declare savedTotal: number;
  declare partCount: number;
  declare hasLabels: boolean;
  /** Why the library's default inputs are what they are. */
  declare inputsNote: string;
  declare poseNote: string;

  constructor() {
    super();
    this.status = { kind: 'idle' };
    this.progress = null;
    this.history = [];
    this.checks = [];
    this.backend = '';
    this.stepMs = 0;
    this.savedStep = 0;
    this.savedTotal = 0;
    this.partCount = 0;
    this.hasLabels = false;
    this.inputsNote = '';
    this.poseNote = '';
  }

  static override styles = css`
    :host { display: block; }
    .grid { display: grid; grid-template-columns: 340px 1fr; gap: 16px; }
    form { background: #fff; border: 1px solid #d8d1c3; border-radius: 6px; padding: 10px 12px; display: grid; grid-template-columns: auto 1fr; gap: 6px 10px; align-items: center; }
    label { font-size: 13px; }
    input, select { font: inherit; padding: 3px 6px; border: 1px solid #b7ab96; border-radius: 4px; width: 100%; box-sizing: border-box; }
    .buttons { display: flex; gap: 6px; margin: 10px 0; flex-wrap: wrap; }
    .buttons button { padding: 6px 10px; white-space: nowrap; }
    button { font: inherit; padding: 6px 14px; border: 1px solid #1d2b33; background: #fff; border-radius: 4px; cursor: pointer; }
    button.primary { background: #1d2b33; color: #f4f1ea; }
    button:disabled { opacity: 0.45; cursor: default; }
    button:focus-visible, input:focus-visible, select:focus-visible { outline: 3px solid #c2571a; outline-offset: 1px; }
    progress { width: 100%; height: 12px; }
    .stats { font-size: 13px; margin: 6px 0 10px; color: #3d4b52; }
    .note { font-size: 12px; color: #6b5d4d; grid-column: 1 / -1; }
    details.expert { grid-column: 1 / -1; font-size: 13px; }
    .estimate { font-size: 13px; color: #3d4b52; margin: 8px 0 0; }
    details.expert summary { cursor: pointer; color: #3d4b52; margin: 4px 0; }
    details.expert .inner { display: grid; grid-template-columns: auto 1fr; gap: 6px 10px; align-items: center; }
    .error { color: #8c1d17; background: #fbeceb; padding: 6px 10px; border-radius: 4px; }
  `;

  private emit(name: string, detail?: unknown): void {
    this.dispatchEvent(new CustomEvent(name, { detail, bubbles: true, composed: true }));
  }

  private set<K extends keyof TrainConfig>(key: K, value: TrainConfig[K]): void {
    this.emit('config-change', { ...this.config, [key]: value });
  }

  private num(e: Event): number {
    return Number((e.target as HTMLInputElement).value);
  }

  protected override render() {
    const c = this.config;
    const s = this.status;
    const busy = isBusy(s);
    const p = this.progress;
    const stepsPerEpoch = Math.max(1, Math.floor(this.partCount / Math.max(2, Math.min(c.batchSize, this.partCount))));
    const members = memberPoses(c.pose).length;
    const chartTotal = p?.totalSteps ?? this.savedTotal;
    return html`<div class="grid">
      <div>
        <form @submit=${(e: Event) => e.preventDefault()} aria-label="training settings">
          <label for="pts" title="how many surface points of a part the model reads at a time (points per view); more sees smaller features and costs time">points read per part</label><input id="pts" type="number" min="64" max="4096" step="64" .value=${String(c.points)} ?disabled=${busy} @change=${(e: Event) => this.set('points', this.num(e))} />
          <label for="epochs" title="epochs: how many times training goes through the whole library">passes over the library</label><input id="epochs" type="number" min="1" max="10000" .value=${String(c.epochs)} ?disabled=${busy} @change=${(e: Event) => this.set('epochs', this.num(e))} />
          <label for="aug" title="augmentations: the changes training applies to parts, so that differences like these do not count (see the Augmentations tab)">differences to ignore</label><select id="aug" ?disabled=${busy} @change=${(e: Event) => this.set('pipeline', PRESETS[(e.target as HTMLSelectElement).value as keyof typeof PRESETS])}>
            ${Object.entries(PRESETS).map(([n, pipe]) => html`<option value=${n} ?selected=${JSON.stringify(pipe) === JSON.stringify(c.pipeline)}>${n}</option>`)}
            ${Object.values(PRESETS).some((pipe) => JSON.stringify(pipe) === JSON.stringify(c.pipeline)) ? null : html`<option selected>as composed on the Augmentations tab</option>`}
          </select>
          <details class="expert"><summary>Expert settings: batch, loss, learning rate, inputs, neighbour layer, surface grid, seed, checks</summary><div class="inner">
          <label for="batch" title="parts compared with each other in one training step">parts per batch</label><input id="batch" type="number" min="2" max="256" .value=${String(c.batchSize)} ?disabled=${busy} @change=${(e: Event) => this.set('batchSize', this.num(e))} />
          <label for="loss" title="what training optimises: NT-Xent pulls two altered copies of a part together and pushes other parts away">loss</label><select id="loss" ?disabled=${busy} @change=${(e: Event) => this.set('loss', { ...c.loss, name: (e.target as HTMLSelectElement).value as LossName })}>
            ${LOSS_NAMES.map((n) => html`<option value=${n} ?selected=${c.loss.name === n} ?disabled=${n === 'supervised-contrastive' && !this.hasLabels}>${n}</option>`)}
          </select>
          <label for="temp" title="how sharply the loss separates close parts (lower: sharper); by default ${OPEN_LIBRARY_TEMPERATURE} for a library of mostly open meshes, ${DEFAULT_TRAIN.loss.temperature} for one of mostly closed meshes">temperature</label><input id="temp" type="number" min="0.01" max="2" step="0.01" .value=${String(c.loss.temperature)} ?disabled=${busy} @change=${(e: Event) => this.set('loss', { ...c.loss, temperature: this.num(e) })} />
          <label for="lr" title="how far each step moves the weights">learning rate</label><input id="lr" type="number" min="0.00001" max="0.1" step="0.0001" .value=${String(c.learningRate)} ?disabled=${busy} @change=${(e: Event) => this.set('learningRate', this.num(e))} />
          <label for="inputs">per-point inputs</label><select id="inputs" title=${this.inputsNote} ?disabled=${busy} @change=${(e: Event) => this.set('encoder', { ...c.encoder, inputFeatures: (e.target as HTMLSelectElement).value as InputFeatures })}>
            ${INPUT_FEATURES.map((f) => html`<option value=${f} ?selected=${c.encoder.inputFeatures === f}>${INPUT_LABELS[f]}</option>`)}
          </select>
          <label for="pose" title="pose: how parts are turned before the model reads them">how parts are turned</label><select id="pose" title=${this.poseNote} ?disabled=${busy} @change=${(e: Event) => this.set('pose', (e.target as HTMLSelectElement).value as TrainConfig['pose'])}>
            ${POSES.map((p) => html`<option value=${p} ?selected=${c.pose === p}>${POSE_LABELS[p]}</option>`)}
          </select>
          <label for="nbrs" title="a first layer that looks at each point's nearest neighbours (EdgeConv); a step takes about 3× (16) to 5× (32) as long as without it">neighbour layer</label><select id="nbrs" ?disabled=${busy} @change=${(
            e: Event,
          ) => {
            const k = Number((e.target as HTMLSelectElement).value);
            const { edge: _edge, ...rest } = c.encoder;
            this.set('encoder', k > 0 ? { ...rest, edge: { k, width: EDGE_WIDTH } } : rest);
          }}>
            ${[0, 8, 16, 32].map((k) => html`<option value=${k} ?selected=${(c.encoder.edge?.k ?? 0) === k}>${k === 0 ? 'off' : `${k} neighbours`}</option>`)}
          </select>
          <label for="grid" title="a training-free description of each part: how much of its surface lies in each box of an ${SURFACE_GRID_CELLS}×${SURFACE_GRID_CELLS}×${SURFACE_GRID_CELLS} grid and which way it faces there. This share of every similarity comes from it, the rest from the trained model">share from the surface grid</label><select id="grid" ?disabled=${busy} @change=${(
            e: Event,
          ) => {
            const share = Number((e.target as HTMLSelectElement).value);
            const { surfaceGrid: _grid, ...rest } = c.encoder;
            this.set(
              'encoder',
              share > 0
                ? { ...rest, surfaceGrid: { cells: c.encoder.surfaceGrid?.cells ?? SURFACE_GRID_CELLS, share } }
                : rest,
            );
          }}>
            ${[...new Set([0, SURFACE_GRID_SHARE, 0.5, 0.7, c.encoder.surfaceGrid?.share ?? 0])].sort((a, b) => a - b).map((v) => html`<option value=${v} ?selected=${(c.encoder.surfaceGrid?.share ?? 0) === v}>${v === 0 ? 'none: the trained model alone' : `${Math.round(v * 100)} %`}</option>`)}
          </select>
          <label for="seed" title="the same seed on the same library trains the same model">seed</label><input id="seed" type="number" min="0" step="1" .value=${String(c.seed)} ?disabled=${busy} @change=${(e: Event) => this.set('seed', this.num(e))} />
          <label for="held" title="a share of parts kept out of training to check progress on (0: none)">parts kept for checks</label><input id="held" type="number" min="0" max="0.5" step="0.05" .value=${String(c.heldOutFraction)} ?disabled=${busy} @change=${(e: Event) => this.set('heldOutFraction', this.num(e))} />
          </div></details>
          <div class="note">${this.partCount} parts → ${stepsPerEpoch} steps an epoch, ${members > 1 ? `${stepsPerEpoch * c.epochs} steps for each of ${members} encoders, ${members * stepsPerEpoch * c.epochs} in all` : `${stepsPerEpoch * c.epochs} steps`}. Labels are never needed, except by the supervised-contrastive loss.${this.inputsNote ? html`<br />Default inputs for this library: ${this.inputsNote}.` : null}${this.poseNote ? html`<br />Default pose: ${this.poseNote}.` : null}</div>
        </form>
        <div class="estimate" data-testid="train-estimate">${
          busy
            ? null
            : this.stepMs > 0
              ? `Estimated training time: about ${formatDuration((this.stepMs * members * stepsPerEpoch * c.epochs) / 1000)} (one step timed on this machine: ${Math.round(this.stepMs)} ms), then the library is embedded again.`
              : this.partCount >= 2
                ? 'Timing one step to estimate the training time…'
                : ''
        }</div>
        <div class="buttons">
          <button class="primary" ?disabled=${busy || this.partCount < 2} @click=${() => this.emit('train-start', c)}>Start training</button>
          <button ?disabled=${s.kind !== 'running'} @click=${() => this.emit('train-pause')}>Pause</button>
          <button ?disabled=${s.kind !== 'paused'} @click=${() => this.emit('train-resume')}>Resume</button>
          <button ?disabled=${!busy} @click=${() => this.emit('train-stop')}>Stop</button>
          ${this.savedStep > 0 && this.savedStep < this.savedTotal && !busy ? html`<button @click=${() => this.emit('train-continue')}>Continue the saved run (step ${this.savedStep} of ${this.savedTotal})</button>` : null}
        </div>
      </div>
      <div>
        <progress max=${p?.totalSteps ?? 1} value=${p?.step ?? 0} aria-label="training progress"></progress>
        <div class="stats" data-testid="train-stats">
          ${statusLine(s, p !== null)}${p ? html` · step ${p.step} of ${p.totalSteps}${p.members > 1 ? ` (encoder ${p.member + 1} of ${p.members}: ${POSE_LABELS[memberPoses(c.pose)[p.member] ?? c.pose]})` : ''} · loss ${p.loss.toFixed(4)} · ${p.samplesPerSec.toFixed(1)} parts/s · ${p.msPerStep.toFixed(0)} ms a step · ${formatDuration(p.etaSec)} left · lr ${p.learningRate.toExponential(1)}` : ''}
          ${this.backend ? html` · backend ${this.backend}` : ''}
        </div>
        ${s.kind === 'failed' ? html`<div class="error" role="alert">${s.message}</div>` : null}
        <sk-loss-chart .history=${this.history} .checks=${this.checks} .totalSteps=${chartTotal}
          .starts=${
            chartTotal > 0
              ? memberPoses(c.pose)
                  .slice(1)
                  .map((pose, m) => ({
                    step: ((m + 1) * chartTotal) / members,
                    label: `${POSE_LABELS[pose]} encoder from here`,
                  }))
              : []
          }></sk-loss-chart>
      </div>
    </div>`;
  }
}

function statusLine(s: TrainingState['status'], stepped: boolean): string {
  switch (s.kind) {
    case 'idle':
      return 'no training running';
    case 'running':
      return s.progress || stepped ? 'training' : 'starting the worker…';
    case 'paused':
      return 'paused';
    case 'done':
      return s.early ? 'finished early: the held-out check stopped improving' : 'finished';
    case 'cancelled':
      return 'stopped';
    case 'failed':
      return 'stopped with an error';
  }
}

customElements.define('sk-train-panel', SkTrainPanel);
