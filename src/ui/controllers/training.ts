// The training job: settings that follow the library until the user picks them, start / pause / resume / stop /
// continue in the training worker, progress, and the saved model (restore, import, export). The worker client
// is shared with the embedding and measurement jobs, which run in the same worker between training runs.

import {
  defaultEpochs,
  defaultInputs,
  defaultPose,
  defaultTemperature,
  type LibraryTraits,
} from '../../core/model/defaults';
import { modelJsonFor, readModelJson, WEIGHTS_FILE, type ModelJson } from '../../core/model/model-json';
import type { TrainConfig } from '../../core/model/train-config';
import type { LibraryPart } from '../../core/library';
import type { CheckpointMessage } from '../../worker/protocol';
import { say, STARTED, type AppState, type Store, type TrainingState } from '../state';
import { download } from './download';
import { loadModel, saveModel } from './library-db';
import { SAMPLING } from './library';
import { TrainClient } from './train-client';
import { boxRatioOf, cloudsToHand, hasBoxRatio, librarySource } from './clouds';
import { inSlices } from '../pace';

export interface TrainingEvents {
  /** The model changed (a run ended, a model was imported): embeddings must follow. */
  onModelChanged(): void;
}

export class TrainingController {
  readonly client = new TrainClient();
  private second: TrainClient | null = null;

  /**
   * A second worker for the models, beside the training worker (embedding the library, half of a study's views):
   * made on first use, where the machine has two cores; null where it has one.
   */
  helper(): TrainClient | null {
    return this.hasHelper() ? (this.second ??= new TrainClient()) : null;
  }

  /** Whether `helper` gives a second worker (the machine has two cores or more). */
  hasHelper(): boolean {
    return (typeof navigator !== 'undefined' ? (navigator.hardwareConcurrency ?? 1) : 1) >= 2;
  }
  private chosen = { inputs: false, epochs: false, pose: false, temperature: false };
  private traitsMemo: { parts: readonly LibraryPart[]; traits: LibraryTraits } | null = null;

  constructor(
    private readonly store: Store<AppState>,
    private readonly events: TrainingEvents,
  ) {
    this.client.on((msg) => {
      if (msg.id !== this.client.runId) return;
      const t = this.state;
      if (msg.type === 'backend') this.patch({ backend: msg.backend });
      else if (msg.type === 'progress') {
        this.patch({
          progress: msg.progress,
          status: {
            kind: 'running',
            progress: { done: msg.progress.step, total: msg.progress.totalSteps, what: 'training' },
          },
          history: [...t.history, { step: msg.progress.step, loss: msg.progress.loss }],
        });
      } else if (msg.type === 'check') this.patch({ checks: [...t.checks, msg.check] });
      else if (msg.type === 'status')
        this.patch({ status: msg.status === 'paused' ? { kind: 'paused' } : { kind: 'running', progress: null } });
      else if (msg.type === 'checkpoint') {
        this.patch({ model: msg.checkpoint, modelFingerprint: null });
        this.keeping = this.keep(msg.checkpoint);
      } else if (msg.type === 'done') {
        const r = msg.result;
        this.patch({
          status:
            r.status === 'failed'
              ? { kind: 'failed', message: r.message ?? 'training failed' }
              : r.status === 'cancelled'
                ? { kind: 'cancelled' }
                : { kind: 'done', early: r.status === 'stopped-early' },
        });
        // Once the last checkpoint is kept, so the new embeddings are kept under its fingerprint.
        void this.keeping.then(() => this.events.onModelChanged());
      } else if (msg.type === 'error') this.patch({ status: { kind: 'failed', message: msg.message } });
    });
  }

  get state(): TrainingState {
    return this.store.value.training;
  }

  private patch(p: Partial<TrainingState>): void {
    this.store.patch('training', p);
  }

  /** What the defaults read from the library (closed meshes, how square parts sit in their files), once per library. */
  traits(): LibraryTraits {
    const parts = this.store.value.library.parts;
    if (this.traitsMemo?.parts !== parts)
      this.traitsMemo = {
        parts,
        traits: { closed: parts.map((p) => p.info.closed), boxRatios: parts.map((p) => boxRatioOf(p)) },
      };
    return this.traitsMemo.traits;
  }

  /**
   * Each part's box ratio (a principal-axes fit of its cloud, 0.25–1 ms a part), worked out in slices between the
   * page's other work (pace.ts): all at once, 990 KiCad parts held the page for 285 ms. A library replaced meanwhile
   * stops it (its own call measures the new one).
   */
  private async measureParts(parts: readonly LibraryPart[]): Promise<void> {
    await inSlices(
      parts.filter((p) => !hasBoxRatio(p)),
      (p) => boxRatioOf(p),
      undefined,
      () => this.store.value.library.parts !== parts,
    );
  }

  /** A model (restored or imported) becomes the current one, with its settings and its training's history. */
  private adopt(ckpt: CheckpointMessage): void {
    const m = ckpt.manifest;
    this.patch({
      model: ckpt,
      config: m.config,
      pipeline: m.config.pipeline,
      history: m.history.map((h) => ({ step: h.step, loss: h.loss })),
      checks: [...m.checks],
    });
  }

  /** The last checkpoint's save to the parts database. */
  private keeping: Promise<string | null> = Promise.resolve(null);

  /** Keeps a checkpoint as the current model in the parts database; its fingerprint then keys its embeddings. */
  private async keep(ckpt: CheckpointMessage): Promise<string | null> {
    try {
      const fingerprint = await saveModel(ckpt);
      if (this.state.model === ckpt) this.patch({ modelFingerprint: fingerprint });
      return fingerprint;
    } catch (err) {
      say(this.store, `The model could not be kept for the next visit: ${(err as Error).message}`);
      return null;
    }
  }

  /** The model kept in the parts database (or, once, where earlier versions kept it), if any; a notice says so. */
  async restore(): Promise<void> {
    try {
      const kept = await loadModel();
      let saved = kept?.checkpoint ?? null;
      let fingerprint = kept?.fingerprint ?? null;
      if (!saved) {
        // Once: a model where earlier versions kept it moves into the database.
        saved = await this.client.loadSaved().catch(() => null);
        if (saved && (fingerprint = await this.keep(saved))) await this.client.forgetSaved();
      }
      this.patch({ modelKnown: true });
      if (!saved) return;
      const m = saved.manifest;
      this.adopt(saved);
      this.patch({ modelFingerprint: fingerprint });
      const unfinished = m.step < m.totalSteps && m.status !== 'done' && m.status !== 'stopped-early';
      this.store.set({
        notice: unfinished
          ? `Restored the saved model: training stopped at step ${m.step} of ${m.totalSteps} (the page was closed or reloaded).`
          : `Restored the saved model (${m.step} training steps).`,
        noticeAction: unfinished ? 'continue-training' : null,
      });
    } catch (err) {
      this.patch({ modelKnown: true });
      say(this.store, `The saved model could not be read: ${(err as Error).message}`);
    }
  }

  /**
   * Until a model exists or the user picks them, inputs, temperature, pose and epochs follow the library: normals
   * and τ = 0.1 only if mostly closed (else x y z and τ = 0.07), the files' own frame if most parts sit square in it,
   * and fewer epochs on a large library (a step budget).
   */
  async followLibrary(): Promise<void> {
    const parts = this.store.value.library.parts;
    if (this.state.model || parts.length === 0) return;
    await this.measureParts(parts);
    if (this.store.value.library.parts !== parts) return; // the library changed meanwhile: its own call follows it
    const traits = this.traits();
    let config = this.state.config;
    const inputFeatures = defaultInputs(traits.closed);
    const pose = defaultPose(traits.boxRatios);
    if (!this.chosen.pose && pose !== config.pose) config = { ...config, pose };
    if (!this.chosen.inputs && inputFeatures !== config.encoder.inputFeatures)
      config = { ...config, encoder: { ...config.encoder, inputFeatures } };
    const temperature = defaultTemperature(traits.closed);
    if (!this.chosen.temperature && temperature !== config.loss.temperature)
      config = { ...config, loss: { ...config.loss, temperature } };
    const epochs = defaultEpochs(parts.length, config.batchSize);
    if (!this.chosen.epochs && epochs !== config.epochs) config = { ...config, epochs };
    if (config !== this.state.config) this.patch({ config });
  }

  private probing = '';

  private estimateKey(): string {
    return `${this.store.value.library.parts.length} ${JSON.stringify(this.state.config)}`;
  }

  /** The timed step for the current settings and library, in ms (0: not timed yet). */
  stepMsNow(): number {
    const s = this.state.stepMs;
    return s && s.key === this.estimateKey() ? s.ms : 0;
  }

  /**
   * Times one step with the current settings in the worker (a batch-sized sample of the library), once per
   * settings and library size, while nothing else runs there; the panel turns it into an estimate before Start.
   */
  async estimate(): Promise<void> {
    const parts = this.store.value.library.parts;
    const { config, status, stepMs } = this.state;
    const key = this.estimateKey();
    const measure = this.store.value.measure;
    if (parts.length < 2 || stepMs?.key === key || this.probing === key) return;
    if (
      status.kind === 'running' ||
      status.kind === 'paused' ||
      measure.status.kind === 'running' ||
      measure.study.kind === 'running'
    )
      return;
    this.probing = key;
    try {
      const sample = parts.slice(0, Math.min(parts.length, config.batchSize));
      const ms = await this.client.probe(await cloudsToHand(sample), {
        ...config,
        batchSize: Math.min(config.batchSize, sample.length),
      });
      if (this.probing === key) this.patch({ stepMs: { key, ms } });
    } catch {
      // no estimate: the panel says nothing rather than a guess
    } finally {
      if (this.probing === key) this.probing = '';
    }
  }

  /** The user changed the settings: what they set no longer follows the library. */
  configure(config: TrainConfig): void {
    const old = this.state.config;
    if (config.encoder.inputFeatures !== old.encoder.inputFeatures) this.chosen.inputs = true;
    if (config.epochs !== old.epochs) this.chosen.epochs = true;
    if (config.pose !== old.pose) this.chosen.pose = true;
    if (config.loss.temperature !== old.loss.temperature) this.chosen.temperature = true;
    this.patch({ config, pipeline: config.pipeline });
    void this.estimate();
  }

  start(config: TrainConfig, resume?: CheckpointMessage): void {
    const parts = this.store.value.library.parts;
    this.patch({ config, status: STARTED, progress: null, ...(resume ? {} : { history: [], checks: [] }) });
    say(this.store, '');
    const labels = config.loss.name === 'supervised-contrastive' ? labelIds(parts) : null;
    this.client.start(librarySource(parts), labels, config, SAMPLING, resume);
  }

  continueSaved(): void {
    const m = this.state.model;
    if (m) this.start(m.manifest.config, m);
  }

  pause(): void {
    this.client.pause();
  }
  resume(): void {
    this.client.resume();
  }
  stop(): void {
    this.client.cancel();
  }

  /** A model exported elsewhere (model.json + weights.bin), checked, kept as the current model. */
  async importModel(files: File[]): Promise<void> {
    try {
      const jsonFile = files.find((f) => f.name.endsWith('.json'));
      const binFile = files.find((f) => f.name.endsWith('.bin'));
      if (!jsonFile || !binFile) throw new Error('choose both model.json and weights.bin from a run folder');
      let json: ModelJson;
      try {
        json = JSON.parse(await jsonFile.text());
      } catch (err) {
        throw new Error(`${jsonFile.name} is not valid JSON (${(err as Error).message})`, { cause: err });
      }
      const weightData = await binFile.arrayBuffer();
      const { manifest, weightSpecs, adamStep } = readModelJson(json, weightData, jsonFile.name);
      const ckpt: CheckpointMessage = { manifest, weightSpecs, weightData, adamStep };
      this.adopt(ckpt);
      if (!(await this.keep(ckpt))) return;
      say(this.store, `Imported a model trained elsewhere (${manifest.step} steps, backend ${manifest.backend}).`);
      this.events.onModelChanged();
    } catch (err) {
      say(this.store, `Model not imported: ${(err as Error).message}`);
    }
  }

  exportModel(): void {
    const m = this.state.model;
    if (!m) return;
    const json = modelJsonFor(m.manifest, m.weightSpecs, m.weightData, m.adamStep);
    download(new Blob([JSON.stringify(json)], { type: 'application/json' }), 'model.json');
    download(new Blob([m.weightData.slice(0)]), WEIGHTS_FILE);
  }

  dispose(): void {
    this.client.dispose();
  }
}

/** Folder labels as small whole numbers (sorted names), for the supervised loss. */
function labelIds(parts: readonly LibraryPart[]): number[] {
  const names = [...new Set(parts.map((p) => p.label))].sort();
  return parts.map((p) => names.indexOf(p.label));
}
