// <sk-study-panel>: retrieval quality against the baselines (table), and the augmentation study drawn as
// small charts — instance recognition against strength, one chart per augmentation, one line per method.
// Sends 'run-evaluation', 'run-study' and 'export-study' upward.

import { LitElement, css, html, svg } from 'lit';
import type { EvaluationReport } from '../../core/quality/evaluate';
import type { StudyRow } from '../../core/quality/study';
import { formatDuration, METRIC_HELP, qualitySummary, timeLeft } from '../words';
import type { Progress } from '../state';

const COLUMNS = [
  ['nn', 'NN'],
  ['first_tier', '1st tier'],
  ['second_tier', '2nd tier'],
  ['dcg', 'DCG'],
  ['map', 'mAP'],
  ['p_at_5', 'P@5'],
] as const;

const METHOD_COLOUR: Record<string, string> = { learned: '#c2571a', untrained: '#2f6f73', d2: '#7a6a55' };

export class SkStudyPanel extends LitElement {
  static override properties = {
    report: { attribute: false },
    rows: { attribute: false },
    progress: { attribute: false },
    busy: { type: Boolean },
    measuring: { type: Boolean },
    failure: { type: String },
    hasModel: { type: Boolean },
    estimates: { attribute: false },
    partCount: { type: Number },
    measure: { state: true },
  };
  declare report: EvaluationReport | null;
  declare rows: readonly StudyRow[];
  declare progress: Progress | null;
  declare busy: boolean;
  /** The quality measurement is running (it reports no progress of its own). */
  declare measuring: boolean;
  /** Why the last measurement or study failed ('' : it did not). */
  declare failure: string;
  declare hasModel: boolean;
  /** Seconds each job should take, from the library's last embedding pace (parts/s), or nulls. */
  declare estimates: { measure: number | null; study: number | null; pace: number | null };
  declare measure: 'instance_top1' | 'label_top1' | 'mean_similarity';
  /** Parts in the library (the study may look up a sample of them). */
  declare partCount: number;

  constructor() {
    super();
    this.report = null;
    this.rows = [];
    this.progress = null;
    this.busy = false;
    this.measuring = false;
    this.failure = '';
    this.hasModel = false;
    this.estimates = { measure: null, study: null, pace: null };
    this.measure = 'instance_top1';
    this.partCount = 0;
  }

  static override styles = css`
    :host { display: block; }
    .bar { display: flex; gap: 10px; align-items: center; flex-wrap: wrap; margin-bottom: 10px; }
    button, select { font: inherit; padding: 5px 12px; border: 1px solid #1d2b33; background: #fff; border-radius: 4px; cursor: pointer; }
    button:disabled { opacity: 0.45; }
    :focus-visible { outline: 3px solid #c2571a; outline-offset: 1px; }
    table { border-collapse: collapse; background: #fff; margin-bottom: 16px; }
    th, td { border: 1px solid #d8d1c3; padding: 4px 10px; text-align: right; font-variant-numeric: tabular-nums; }
    th:first-child, td:first-child { text-align: left; }
    .charts { display: grid; grid-template-columns: repeat(auto-fill, minmax(230px, 1fr)); gap: 10px; }
    .chart { background: #fff; border: 1px solid #d8d1c3; border-radius: 6px; padding: 4px 6px; }
    .chart h4 { margin: 2px 0; font-size: 13px; }
    svg { width: 100%; height: 130px; }
    .key span { display: inline-flex; align-items: center; gap: 4px; margin-right: 12px; font-size: 13px; }
    .key i { width: 14px; height: 3px; display: inline-block; }
    progress { width: 260px; }
    .error { color: #9b2c1f; margin: 0 0 10px; }
    .verdict { max-width: 900px; margin: 0 0 10px; }
    .verdict p { margin: 0 0 4px; }
    .small { font-size: 12px; color: #5a6870; }
  `;

  private emit(name: string): void {
    this.dispatchEvent(new CustomEvent(name, { bubbles: true, composed: true }));
  }

  protected override render() {
    const r = this.report;
    const left = this.progress ? timeLeft(this.progress, performance.now()) : '';
    const kinds = [...new Set(this.rows.map((x) => x.augmentation))];
    const methods = [...new Set(this.rows.map((x) => x.method))];
    return html`
      <div class="bar">
        <button ?disabled=${this.busy} @click=${() => this.emit('run-evaluation')}>Measure retrieval quality</button>
        <button ?disabled=${this.busy} @click=${() => this.emit('run-study')}>Run the augmentation study</button>
        <button ?disabled=${this.rows.length === 0} @click=${() => this.emit('export-study')}>Export the study table (CSV)</button>
        ${this.progress ? html`<progress max=${this.progress.total} value=${this.progress.done}></progress><span class="small">${this.progress.what}${left ? ` · ${left}` : ''}</span>` : null}
        ${this.measuring || this.progress ? html`<button data-testid="cancel-measure" @click=${() => this.emit('cancel-measure')}>Cancel</button>` : null}
        ${this.measuring ? html`<span class="small" role="status">Measuring retrieval quality: every part against every other, for each method…</span>` : null}
        ${this.hasModel ? null : html`<span class="small">No trained model yet: only the baselines are measured.</span>`}
        ${
          !this.busy && this.estimates.pace !== null
            ? html`<span class="small" data-testid="measure-estimate">Estimated: measuring about ${formatDuration(this.estimates.measure!)}, the study about ${formatDuration(this.estimates.study!)} (at this library's last embedding pace, ${this.estimates.pace.toFixed(1)} parts/s).</span>`
            : null
        }
      </div>
      ${this.failure ? html`<div class="error" role="alert">${this.failure}</div>` : null}
      ${
        r
          ? html`<div class="verdict" data-testid="quality-words">${qualitySummary(r).map((line) => html`<p>${line}</p>`)}</div>
          <table data-testid="metrics-table" aria-label="retrieval quality, leave-one-out">
          <tr><th>method (${r.parts} parts, ${r.labels} folders)</th>${COLUMNS.map(([k, label]) => html`<th title=${METRIC_HELP[k]}>${label}</th>`)}</tr>
          ${Object.entries(r.methods).map(([m, v]) => html`<tr><td>${m.replace('+diffusion', ', ordered through the library')}</td>${[v.nn, v.first_tier, v.second_tier, v.dcg, v.map, v.p_at_5].map((x) => html`<td>${x.toFixed(3)}</td>`)}</tr>`)}
        </table>
        <details class="small"><summary>What the columns mean (1 is perfect)</summary><ul>${COLUMNS.map(([k, label]) => html`<li><b>${label}</b>: ${METRIC_HELP[k]}</li>`)}</ul></details>
        <div class="small">Labels are the folders; each part queries all the others (leave-one-out). "Ordered through the library": as the search orders results by default — similarities corrected for parts that are near everything, then spread over the library's neighbour graph.</div>`
          : null
      }
      ${
        this.rows.length
          ? html`
        <div class="bar"><label>measure <select @change=${(e: Event) => (this.measure = (e.target as HTMLSelectElement).value as SkStudyPanel['measure'])}>
          <option value="instance_top1">recognised as itself</option><option value="label_top1">nearest other part in the same folder</option><option value="mean_similarity">similarity to the original</option>
        </select></label>
        <span class="key">${methods.map((m) => html`<span><i style="background:${METHOD_COLOUR[m]}"></i>${m}</span>`)}</span></div>
        <div class="small" data-testid="study-sample">${studySampleWords(this.rows, this.partCount)}</div>
        <div class="charts" data-testid="study-charts">${kinds.map((k) => this.chart(k, methods))}</div>`
          : null
      }`;
  }

  private chart(kind: string, methods: string[]) {
    const W = 230,
      H = 130,
      L = 28,
      B = 18,
      T = 6,
      R = 6;
    const x = (s: number) => L + (W - L - R) * s;
    const y = (v: number) => T + (H - T - B) * (1 - v);
    return html`<div class="chart"><h4>${kind}</h4>
      <svg viewBox="0 0 ${W} ${H}" role="img" aria-label="${kind}: ${this.measure} against strength">
        ${svg`<line x1=${L} y1=${H - B} x2=${W - R} y2=${H - B} stroke="#8a8070"></line><line x1=${L} y1=${T} x2=${L} y2=${H - B} stroke="#8a8070"></line>
          <text x=${L - 3} y=${T + 8} text-anchor="end" font-size="10">1</text><text x=${L - 3} y=${H - B} text-anchor="end" font-size="10">0</text>
          <text x=${L} y=${H - 4} font-size="10">strength 0</text><text x=${W - R} y=${H - 4} text-anchor="end" font-size="10">1</text>`}
        ${methods.map((m) => {
          const pts = this.rows
            .filter((r) => r.augmentation === kind && r.method === m)
            .sort((a, b) => a.strength - b.strength);
          return svg`<polyline fill="none" stroke=${METHOD_COLOUR[m]} stroke-width="2" points=${pts.map((p) => `${x(p.strength).toFixed(1)},${y(Math.max(0, Math.min(1, p[this.measure]))).toFixed(1)}`).join(' ')}></polyline>`;
        })}
      </svg></div>`;
  }
}
customElements.define('sk-study-panel', SkStudyPanel);

/** How many parts the study looked up, and how far its rates may be off (the widest 95 % interval it found). */
export function studySampleWords(rows: readonly StudyRow[], parts: number): string {
  const q = rows[0]?.queries ?? 0;
  if (!q) return '';
  let widest = 0;
  for (const r of rows)
    for (const [lo, hi] of [r.instance_top1_ci95, r.label_top1_ci95]) widest = Math.max(widest, (hi - lo) / 2);
  const who = parts > q ? `${q} of the ${parts} parts, chosen at random,` : `all ${q} parts`;
  return `Each view was made from ${who} and looked up in the whole library; the rates are within ±${widest.toFixed(2)} (95 %).`;
}
