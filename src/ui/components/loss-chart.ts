// <sk-loss-chart>: the training loss per step as an SVG line (raw and smoothed), with the held-out checks and,
// when a run trains two encoders one after the other, a mark where the second starts.

import { LitElement, css, html, svg } from 'lit';

export class SkLossChart extends LitElement {
  static override properties = {
    history: { attribute: false },
    checks: { attribute: false },
    totalSteps: { type: Number },
    starts: { attribute: false },
  };
  declare history: readonly { step: number; loss: number }[];
  declare checks: readonly { step: number; instanceTop1: number }[];
  declare totalSteps: number;
  /** Steps after which another encoder starts training (its loss starts high again). */
  declare starts: readonly { step: number; label: string }[];

  constructor() {
    super();
    this.history = [];
    this.checks = [];
    this.totalSteps = 0;
    this.starts = [];
  }

  static override styles = css`
    :host { display: block; background: #fff; border: 1px solid #d8d1c3; border-radius: 6px; }
    svg { width: 100%; height: 220px; display: block; }
    .axis { stroke: #8a8070; stroke-width: 1; }
    .raw { fill: none; stroke: #b9c9cb; stroke-width: 1; }
    .smooth { fill: none; stroke: #2f6f73; stroke-width: 2.2; }
    .check { fill: #c2571a; }
    .start { stroke: #8a8070; stroke-width: 1; stroke-dasharray: 4 3; }
    text { font: 11px system-ui, sans-serif; fill: #3d4b52; }
  `;

  protected override render() {
    const W = 640,
      H = 220,
      L = 44,
      R = 44,
      T = 12,
      B = 26;
    const h = this.history;
    const total = Math.max(this.totalSteps, h.length ? h[h.length - 1].step : 1, 1);
    const losses = h.map((p) => p.loss);
    const hi = losses.length ? Math.max(...losses) : 1,
      lo = losses.length ? Math.min(...losses) : 0;
    const span = hi - lo || 1;
    const x = (step: number) => L + ((W - L - R) * step) / total;
    const y = (loss: number) => T + (H - T - B) * (1 - (loss - lo) / span);
    const yCheck = (v: number) => T + (H - T - B) * (1 - v);
    let ema = losses[0] ?? 0;
    const restarts = new Set(this.starts.map((s) => s.step + 1));
    const smooth = h.map((p) => {
      ema = restarts.has(p.step) ? p.loss : 0.9 * ema + 0.1 * p.loss;
      return `${x(p.step).toFixed(1)},${y(ema).toFixed(1)}`;
    });
    return html`<svg viewBox="0 0 ${W} ${H}" role="img" aria-label="training loss by step${this.checks.length ? ' and held-out recognition' : ''}">
      ${svg`<line class="axis" x1=${L} y1=${H - B} x2=${W - R} y2=${H - B}></line><line class="axis" x1=${L} y1=${T} x2=${L} y2=${H - B}></line>`}
      ${svg`<text x=${L - 4} y=${T + 8} text-anchor="end">${hi.toFixed(2)}</text><text x=${L - 4} y=${H - B} text-anchor="end">${lo.toFixed(2)}</text>`}
      ${svg`<text x=${W - R} y=${H - 8} text-anchor="end">step ${total}</text><text x=${L} y=${H - 8}>loss each step (light), smoothed (teal)</text>`}
      ${h.length > 1 ? svg`<polyline class="raw" points=${h.map((p) => `${x(p.step).toFixed(1)},${y(p.loss).toFixed(1)}`).join(' ')}></polyline><polyline class="smooth" points=${smooth.join(' ')}></polyline>` : null}
      ${this.starts.map((s) => svg`<line class="start" x1=${x(s.step)} y1=${T} x2=${x(s.step)} y2=${H - B}></line><text x=${x(s.step) + 4} y=${H - B - 6}>${s.label}</text>`)}
      ${this.checks.map((c) => svg`<circle class="check" cx=${x(c.step)} cy=${yCheck(c.instanceTop1)} r="4"><title>held-out recognition ${(c.instanceTop1 * 100).toFixed(0)}% at step ${c.step}</title></circle>`)}
      ${this.checks.length ? svg`<text x=${W - R + 4} y=${T + 8}>100%</text><text x=${W - R + 4} y=${H - B}>0%</text><text x=${W - R} y=${T + 22} text-anchor="end" style="fill:#c2571a">held-out recognition (dots)</text>` : null}
    </svg>`;
  }
}
customElements.define('sk-loss-chart', SkLossChart);
