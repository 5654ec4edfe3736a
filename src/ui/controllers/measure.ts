// The measurement jobs: retrieval quality against the baselines, and the augmentation study, both in the
// training worker; and the study's CSV export.

import { csvField } from '../../core/csv';
import { diagonalMm } from '../../core/units';
import { AUGMENT_KINDS, type AugmentKind } from '../../core/points/augment';
import { STUDY_QUERIES, STUDY_STRENGTHS } from '../../core/quality/sampling';
import { STARTED, type AppState, type MeasureState, type Store } from '../state';
import { download } from './download';
import { librarySource } from './clouds';
import type { TrainingController } from './training';

export class MeasureController {
  constructor(
    private readonly store: Store<AppState>,
    private readonly training: TrainingController,
  ) {}

  /** The augmentations the study covers: all unless set (the browser tests set one, to keep to seconds). */
  studyKinds: readonly AugmentKind[] | null = null;
  /** Whether the study shares each set of views with the second worker, where there is one (tests turn it off). */
  studyOnTwoWorkers = true;
  /** Parts the second worker embedded in the last study (0: it ran on the training worker alone). */
  lastStudyShared = 0;

  private patch(p: Partial<MeasureState>): void {
    this.store.patch('measure', p);
  }

  private inputs() {
    const { parts, units } = this.store.value.library;
    return {
      parts: librarySource(parts),
      labels: parts.map((p) => p.label),
      diagonals: Float64Array.from(parts, (p) => diagonalMm(p, units[p.label])),
      model: this.training.state.model,
      config: this.training.state.config,
    };
  }

  /**
   * Seconds each job should take, from the pace of the library's last embedding here (null before one): the
   * measurement embeds the library once per encoder (learned, untrained), on one worker; the study once per encoder
   * on the clean library and once more per augmentation and strength, on two workers where there are two. D2 and the
   * distances add a little; "about" covers it.
   */
  estimates(): { measure: number | null; study: number | null; pace: number | null } {
    const pace = this.store.value.search.embedPace;
    const parts = this.store.value.library.parts.length;
    if (pace === null || parts === 0) return { measure: null, study: null, pace: null };
    const encoders = this.training.state.model ? 2 : 1;
    const library = (pace * parts) / 1000;
    const views = (pace * Math.min(parts, STUDY_QUERIES)) / 1000; // the study augments a sample of the parts
    // Views at strength 0 are the parts themselves, whatever the augmentation: embedded once.
    const changed = STUDY_STRENGTHS.filter((s) => s > 0).length;
    const sets = (this.studyKinds ?? AUGMENT_KINDS).length * changed + (changed < STUDY_STRENGTHS.length ? 1 : 0);
    const workers = this.studyOnTwoWorkers && this.training.hasHelper() ? 2 : 1;
    return {
      measure: encoders * library,
      study: (encoders * (library + sets * views)) / workers,
      pace: 1000 / pace,
    };
  }

  /** Stops a running measurement or study; what was measured before stays. */
  cancel(): void {
    if (this.store.value.training.status.kind === 'running') return; // the worker is training: nothing of ours runs
    const m = this.store.value.measure;
    if (m.status.kind === 'running') this.patch({ status: { kind: 'cancelled' } });
    if (m.study.kind === 'running') this.patch({ study: { kind: 'cancelled' } });
    this.training.client.abort();
  }

  private failed(err: unknown): boolean {
    return (err as Error).message !== 'cancelled';
  }

  async measureQuality(): Promise<void> {
    this.patch({ status: STARTED });
    try {
      const { parts, labels, diagonals, model, config } = this.inputs();
      this.patch({
        report: await this.training.client.evaluate(parts, labels, diagonals, model, config),
        status: { kind: 'done' },
      });
    } catch (err) {
      if (this.failed(err))
        this.patch({ status: { kind: 'failed', message: `Quality not measured: ${(err as Error).message}` } });
    }
  }

  async runStudy(): Promise<void> {
    const startedAt = performance.now();
    this.patch({ study: { kind: 'running', progress: { done: 0, total: 1, what: 'starting', startedAt } } });
    try {
      const { parts, labels, model, config } = this.inputs();
      const { rows, shared } = await this.training.client.study(
        parts,
        labels,
        model,
        config,
        (done, total, what) => this.patch({ study: { kind: 'running', progress: { done, total, what, startedAt } } }),
        {
          strengths: STUDY_STRENGTHS,
          ...(this.studyKinds ? { kinds: this.studyKinds } : {}),
          helper: this.studyOnTwoWorkers ? this.training.helper() : null,
        },
      );
      this.lastStudyShared = shared;
      this.patch({ rows, study: { kind: 'done' } });
    } catch (err) {
      if (this.failed(err))
        this.patch({ study: { kind: 'failed', message: `Study not run: ${(err as Error).message}` } });
    }
  }

  exportStudy(): void {
    const keys = [
      'augmentation',
      'strength',
      'method',
      'instance_top1',
      'label_top1',
      'mean_similarity',
      'mean_chamfer',
      'queries',
    ] as const;
    const rows = this.store.value.measure.rows;
    const lines = [keys.join(','), ...rows.map((r) => keys.map((k) => csvField(String(r[k]))).join(','))];
    download(new Blob([lines.join('\n') + '\n'], { type: 'text/csv' }), 'augmentation-study.csv');
  }
}
