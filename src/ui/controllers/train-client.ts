// The page's side of the training worker: start/pause/resume/stop, embeddings, the saved model.
// Replies for a superseded request id are dropped.

import type { TrainConfig } from '../../core/model/train-config';
import type { EvaluationReport } from '../../core/quality/evaluate';
import type { StudyRow } from '../../core/quality/study';
import type {
  CheckpointMessage,
  OrderingMessage,
  PartArrays,
  TableMessage,
  TrainReply,
  TrainRequest,
} from '../../worker/protocol';
import { yieldToPage } from '../pace';

type Listener = (msg: TrainReply) => void;

/** A number for each model object the page holds (a new checkpoint is a new object). */
const modelKeys = new WeakMap<CheckpointMessage, number>();
let lastModelKey = 0;
const keyOf = (c: CheckpointMessage): number => {
  let k = modelKeys.get(c);
  if (k === undefined) modelKeys.set(c, (k = ++lastModelKey));
  return k;
};

/** A copy of a part's clouds, to hand over (the page keeps its own). */
const copyCloud = (p: PartArrays): PartArrays => ({ points: p.points.slice(), normals: p.normals.slice() });

/** Parts handed to the training worker a message at a time: about 3 MB of clouds, a few ms of copying (measured). */
const STAGE_CHUNK = 64;

/**
 * The buffers a request may hand over instead of cloning: every request carries fresh copies made here (the
 * page keeps its own), so the clouds and the model's weights move to the worker without a second copy on the
 * page's thread (cloning them took 50–70 ms a request on the demo).
 */
function transfersOf(msg: TrainRequest): Transferable[] {
  const out: Transferable[] = [];
  const m = msg as Partial<{
    parts: readonly PartArrays[];
    a: PartArrays;
    b: PartArrays;
    checkpoint: CheckpointMessage | null;
    vectors: Float32Array;
    kept: TableMessage | null;
  }>;
  for (const p of [...(m.parts ?? []), ...(m.a ? [m.a] : []), ...(m.b ? [m.b] : [])])
    out.push(p.points.buffer as ArrayBuffer, p.normals.buffer as ArrayBuffer);
  if (m.checkpoint) out.push(m.checkpoint.weightData);
  if (m.vectors) out.push(m.vectors.buffer as ArrayBuffer);
  if (m.kept) out.push(...[m.kept.index, m.kept.score, m.kept.length].map((a) => a.buffer as ArrayBuffer));
  return [...new Set(out)];
}

export class TrainClient {
  private worker: Worker | null = null;
  private nextId = 1;
  private readonly listeners = new Set<Listener>();
  /** Rejecters of the requests still waiting for their reply. */
  private readonly pending = new Set<() => void>();
  runId = 0;
  /** The key of the model this worker keeps for embedding (0: none). */
  private modelSent = 0;

  private get w(): Worker {
    if (!this.worker) {
      this.worker = new Worker(new URL('../../worker/train.worker.ts', import.meta.url), { type: 'module' });
      this.worker.onmessage = (e: MessageEvent<TrainReply>) => this.listeners.forEach((l) => l(e.data));
      this.worker.onerror = (e) =>
        this.listeners.forEach((l) =>
          l({ type: 'error', id: this.runId, message: `training worker failed: ${e.message}` }),
        );
    }
    return this.worker;
  }

  on(listener: Listener): () => void {
    this.listeners.add(listener);
    return () => this.listeners.delete(listener);
  }

  private send(msg: TrainRequest, transfer: Transferable[] = []): void {
    this.w.postMessage(msg, transfer);
  }

  /**
   * Starts a run; returns its id. The clouds are copied (the page keeps its own) and handed over a chunk at a
   * time, each chunk a task of its own, so a library of thousands does not hold the page still while it is copied;
   * the run starts once all are there. A stop before then ends it before its first step.
   */
  start(
    parts: readonly PartArrays[],
    labels: readonly number[] | null,
    config: TrainConfig,
    sampling: { points: number; seed: number },
    resume?: CheckpointMessage,
  ): number {
    const id = this.nextId++;
    this.runId = id;
    void this.stageAndStart(id, parts, labels, config, sampling, resume);
    return id;
  }

  private async stageAndStart(
    id: number,
    parts: readonly PartArrays[],
    labels: readonly number[] | null,
    config: TrainConfig,
    sampling: { points: number; seed: number },
    resume?: CheckpointMessage,
  ): Promise<void> {
    for (let i = 0; i < parts.length; i += STAGE_CHUNK) {
      const msg: TrainRequest = { type: 'stage', id, parts: parts.slice(i, i + STAGE_CHUNK).map(copyCloud) };
      this.send(msg, transfersOf(msg));
      if (i + STAGE_CHUNK < parts.length) await yieldToPage();
    }
    this.send({
      type: 'start',
      id,
      labels,
      config,
      sampling,
      ...(resume ? { resume: { ...resume, weightData: resume.weightData.slice(0) } } : {}),
    });
  }

  pause(): void {
    this.send({ type: 'pause', id: this.runId });
  }
  resume(): void {
    this.send({ type: 'resume', id: this.runId });
  }
  cancel(): void {
    this.send({ type: 'cancel', id: this.runId });
  }

  private request<T extends TrainReply['type']>(
    msg: TrainRequest,
    expect: T,
  ): Promise<Extract<TrainReply, { type: T }>> {
    return new Promise((resolve, reject) => {
      const settle = (fn: () => void) => {
        off();
        this.pending.delete(abort);
        fn();
      };
      const abort = () => settle(() => reject(new Error('cancelled')));
      const off = this.on((reply) => {
        if (reply.id !== msg.id) return;
        if (reply.type === 'error') settle(() => reject(new Error(reply.message)));
        else if (reply.type === expect) settle(() => resolve(reply as Extract<TrainReply, { type: T }>));
      });
      this.pending.add(abort);
      this.send(msg, transfersOf(msg));
    });
  }

  async embed(
    parts: readonly PartArrays[],
    checkpoint: CheckpointMessage | null,
    config: TrainConfig,
  ): Promise<{ vectors: Float32Array; dim: number }> {
    const copies = parts.map(copyCloud);
    const id = this.nextId++;
    // The model goes over once; the worker keeps it under its key for the chunks after.
    const modelKey = checkpoint ? keyOf(checkpoint) : undefined;
    const carry = checkpoint !== null && this.modelSent !== modelKey;
    if (carry) this.modelSent = modelKey!;
    try {
      const reply = await this.request(
        {
          type: 'embed',
          id,
          parts: copies,
          checkpoint: carry ? { ...checkpoint, weightData: checkpoint.weightData.slice(0) } : null,
          ...(modelKey !== undefined ? { modelKey } : {}),
          config,
        },
        'embeddings',
      );
      return { vectors: reply.vectors, dim: reply.dim };
    } catch (err) {
      this.modelSent = 0; // the worker may not hold the model: the next request carries it again
      throw err;
    }
  }

  /**
   * The ordering through the library for embeddings whose rows are the parts `names`, carrying a kept table over
   * (built in the worker, which has tfjs's matrix products; the page gets arrays).
   */
  async order(
    names: readonly string[],
    vectors: Float32Array,
    dim: number,
    kept: TableMessage | null,
  ): Promise<OrderingMessage> {
    const copy = vectors.slice();
    const keptCopy = kept
      ? { ...kept, index: kept.index.slice(), score: kept.score.slice(), length: kept.length.slice() }
      : null;
    const reply = await this.request(
      { type: 'order', id: this.nextId++, names, vectors: copy, dim, kept: keptCopy },
      'ordering',
    );
    return reply.ordering;
  }

  /** Milliseconds of one training step with `config` (timed in the worker on `parts`, a batch-sized sample). */
  async probe(parts: readonly PartArrays[], config: TrainConfig): Promise<number> {
    const copies = parts.map(copyCloud);
    return (await this.request({ type: 'probe', id: this.nextId++, parts: copies, config }, 'probed')).msPerStep;
  }

  /** Contributions of the first `points` points of a and b to their similarity. */
  async explain(
    a: PartArrays,
    b: PartArrays,
    checkpoint: CheckpointMessage | null,
    config: TrainConfig,
  ): Promise<{ a: Float32Array; b: Float32Array; pooledCosine: number; points: number }> {
    const r = await this.request(
      {
        type: 'explain',
        id: this.nextId++,
        a: copyCloud(a),
        b: copyCloud(b),
        checkpoint: checkpoint ? { ...checkpoint, weightData: checkpoint.weightData.slice(0) } : null,
        config,
      },
      'explanation',
    );
    return { a: r.a, b: r.b, pooledCosine: r.pooledCosine, points: r.points };
  }

  /** The checkpoint earlier versions kept in the training worker's IndexedDB, if any. */
  async loadSaved(): Promise<CheckpointMessage | null> {
    return (await this.request({ type: 'load-saved', id: this.nextId++ }, 'saved')).checkpoint;
  }

  /** Forgets the checkpoint earlier versions kept (once it is in the parts database). */
  async forgetSaved(): Promise<void> {
    await this.request({ type: 'forget-saved', id: this.nextId++ }, 'saved');
  }

  async evaluate(
    parts: readonly PartArrays[],
    labels: readonly string[],
    checkpoint: CheckpointMessage | null,
    config: TrainConfig,
  ): Promise<EvaluationReport> {
    const copies = parts.map(copyCloud);
    const r = await this.request(
      {
        type: 'evaluate',
        id: this.nextId++,
        parts: copies,
        labels,
        checkpoint: checkpoint ? { ...checkpoint, weightData: checkpoint.weightData.slice(0) } : null,
        config,
      },
      'evaluation',
    );
    return r.report;
  }

  async study(
    parts: readonly PartArrays[],
    labels: readonly string[],
    checkpoint: CheckpointMessage | null,
    config: TrainConfig,
    onProgress: (done: number, total: number, what: string) => void,
    strengths?: readonly number[],
  ): Promise<StudyRow[]> {
    const id = this.nextId++;
    const off = this.on((m) => {
      if (m.id === id && m.type === 'study-progress') onProgress(m.done, m.total, m.what);
    });
    try {
      const copies = parts.map(copyCloud);
      return (
        await this.request(
          {
            type: 'study',
            id,
            parts: copies,
            labels,
            checkpoint: checkpoint ? { ...checkpoint, weightData: checkpoint.weightData.slice(0) } : null,
            config,
            ...(strengths ? { strengths } : {}),
          },
          'study',
        )
      ).rows;
    } finally {
      off();
    }
  }

  /**
   * Stops whatever the worker is doing (a measurement or a study runs as one long call, so the worker itself is
   * ended); waiting requests fail with "cancelled". The next request starts a fresh worker; the saved model stays
   * in IndexedDB and every request carries what it needs, so nothing is lost.
   */
  abort(): void {
    this.worker?.terminate();
    this.worker = null;
    this.modelSent = 0;
    for (const abort of [...this.pending]) abort();
  }

  dispose(): void {
    this.worker?.terminate();
    this.worker = null;
    this.modelSent = 0;
  }
}
