// The page's side of the training worker: start/pause/resume/stop, embeddings, the saved model.
// Replies for a superseded request id are dropped.

import type { TrainConfig } from '../../core/model/train-config';
import type { EvaluationReport } from '../../core/quality/evaluate';
import type { StudyRow } from '../../core/quality/study';
import type { AugmentKind } from '../../core/points/augment';
import type {
  CheckpointMessage,
  OrderingMessage,
  PartArrays,
  TableMessage,
  TrainReply,
  TrainRequest,
} from '../../worker/protocol';
import { copyInSlices, yieldToPage } from '../pace';

type Listener = (msg: TrainReply) => void;

/** A number for each model object the page holds (a new checkpoint is a new object). */
const modelKeys = new WeakMap<CheckpointMessage, number>();
let lastModelKey = 0;
const keyOf = (c: CheckpointMessage): number => {
  let k = modelKeys.get(c);
  if (k === undefined) modelKeys.set(c, (k = ++lastModelKey));
  return k;
};

/**
 * Where a whole-library job's clouds come from, a chunk at a time: `read(from, to)` gives the clouds of parts
 * from..to-1 as arrays the client may hand over (copies of the page's, or fresh from the parts database).
 */
export interface CloudSource {
  readonly count: number;
  read(from: number, to: number): Promise<PartArrays[]>;
}

/** Parts handed to the training worker a message at a time: about 3 MB of clouds, a few ms of copying (measured). */
export const STAGE_CHUNK = 64;

/**
 * The buffers a request hands over instead of cloning: clouds come to the client as arrays it owns (clouds.ts
 * copies the page's own or fetches them), the model's weights are copied here, so they move to the worker without
 * a second copy on the page's thread (cloning them took 50–70 ms a request on the demo).
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
    port: MessagePort;
    helper: MessagePort;
  }>;
  for (const p of [...(m.parts ?? []), ...(m.a ? [m.a] : []), ...(m.b ? [m.b] : [])])
    out.push(p.points.buffer as ArrayBuffer, p.normals.buffer as ArrayBuffer);
  if (m.checkpoint) out.push(m.checkpoint.weightData);
  if (m.vectors) out.push(m.vectors.buffer as ArrayBuffer);
  if (m.kept) out.push(...[m.kept.index, m.kept.score, m.kept.length].map((a) => a.buffer as ArrayBuffer));
  if (m.port) out.push(m.port);
  if (m.helper) out.push(m.helper);
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
  /** Counts the ends of the worker (abort, dispose): a hand-over under way stops at the next chunk. */
  private epoch = 0;

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
   * Starts a run; returns its id. The clouds are read from `source` and handed over a chunk at a time, each chunk
   * a task of its own, so a library of thousands does not hold the page still (nor all its clouds on the page at
   * once); the run starts once all are there. A stop before then ends it before its first step; a chunk that
   * cannot be read ends it with an error.
   */
  start(
    source: CloudSource,
    labels: readonly number[] | null,
    config: TrainConfig,
    sampling: { points: number; seed: number },
    resume?: CheckpointMessage,
  ): number {
    const id = this.nextId++;
    this.runId = id;
    const weights = resume ? { ...resume, weightData: resume.weightData.slice(0) } : null;
    void this.stage(id, source).then(
      () => this.send({ type: 'start', id, labels, config, sampling, ...(weights ? { resume: weights } : {}) }),
      (err: Error) => this.listeners.forEach((l) => l({ type: 'error', id, message: err.message })),
    );
    return id;
  }

  /** Hands the source's clouds to the worker under `id`, a chunk a message, each read and sent in a task of its own. */
  private async stage(id: number, source: CloudSource): Promise<void> {
    const epoch = this.epoch;
    for (let i = 0; i < source.count; i += STAGE_CHUNK) {
      if (epoch !== this.epoch) throw new Error('cancelled'); // the worker was ended meanwhile
      let parts: PartArrays[];
      try {
        parts = await source.read(i, Math.min(source.count, i + STAGE_CHUNK));
      } catch (err) {
        // The request will never come: the chunks handed over so far go (a worker ended meanwhile has none).
        if (i > 0 && epoch === this.epoch) this.send({ type: 'unstage', id });
        throw err;
      }
      // Ended while this chunk was read: sent now, it (and the request after it) would go to a fresh worker, and a
      // stopped study would run there to the end (seen in the browser test, where a stop came during the last read).
      if (epoch !== this.epoch) throw new Error('cancelled');
      const msg: TrainRequest = { type: 'stage', id, parts };
      this.send(msg, transfersOf(msg));
      if (i + STAGE_CHUNK < source.count) await yieldToPage();
    }
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

  /** Embeddings of `parts` (handed over: the caller owns them and lets them go). */
  async embed(
    parts: readonly PartArrays[],
    checkpoint: CheckpointMessage | null,
    config: TrainConfig,
  ): Promise<{ vectors: Float32Array; dim: number }> {
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
          parts,
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
   * (built in the worker, which has tfjs's matrix products; the page gets arrays). The vectors are copied a slice
   * at a time (in one task, 6,225 rows of 1,024 values held the page 80 ms of its CPU); `kept` is handed over.
   */
  async order(
    names: readonly string[],
    vectors: Float32Array,
    dim: number,
    diagonals: Float64Array,
    kept: TableMessage | null,
  ): Promise<OrderingMessage> {
    const copy = await copyInSlices(vectors);
    const reply = await this.request(
      { type: 'order', id: this.nextId++, names, vectors: copy, dim, diagonals, kept },
      'ordering',
    );
    return reply.ordering;
  }

  /**
   * Milliseconds of one training step with `config` (timed in the worker on `parts`, a batch-sized sample, handed
   * over).
   */
  async probe(parts: readonly PartArrays[], config: TrainConfig): Promise<number> {
    return (await this.request({ type: 'probe', id: this.nextId++, parts, config }, 'probed')).msPerStep;
  }

  /** Contributions of the first `points` points of a and b (handed over) to their similarity. */
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
        a,
        b,
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

  /** Retrieval quality against the baselines, on the clouds of `source` (handed over a chunk at a time first). */
  async evaluate(
    source: CloudSource,
    labels: readonly string[],
    diagonals: Float64Array,
    checkpoint: CheckpointMessage | null,
    config: TrainConfig,
  ): Promise<EvaluationReport> {
    const id = this.nextId++;
    await this.stage(id, source);
    const r = await this.request(
      {
        type: 'evaluate',
        id,
        labels,
        diagonals,
        checkpoint: checkpoint ? { ...checkpoint, weightData: checkpoint.weightData.slice(0) } : null,
        config,
      },
      'evaluation',
    );
    return r.report;
  }

  /**
   * Has this worker serve embedding requests arriving on `port` (another worker's study) until `endService` with the
   * id returned.
   */
  serve(port: MessagePort): number {
    const id = this.nextId++;
    const msg: TrainRequest = { type: 'serve', id, port };
    this.send(msg, transfersOf(msg));
    return id;
  }

  endService(id: number): void {
    if (this.worker) this.send({ type: 'cancel', id });
  }

  /**
   * The augmentation study on the clouds of `source` (handed over a chunk at a time first). With `helper`, that
   * worker embeds about half of each set of views, over a channel of their own.
   */
  async study(
    source: CloudSource,
    labels: readonly string[],
    checkpoint: CheckpointMessage | null,
    config: TrainConfig,
    onProgress: (done: number, total: number, what: string) => void,
    options: {
      readonly strengths?: readonly number[];
      readonly kinds?: readonly AugmentKind[];
      readonly helper?: TrainClient | null;
    } = {},
  ): Promise<{ rows: StudyRow[]; shared: number }> {
    const { strengths, kinds, helper } = options;
    const id = this.nextId++;
    const off = this.on((m) => {
      if (m.id === id && m.type === 'study-progress') onProgress(m.done, m.total, m.what);
    });
    const channel = helper ? new MessageChannel() : null;
    const service = helper && channel ? helper.serve(channel.port1) : 0;
    try {
      await this.stage(id, source);
      const { rows, shared } = await this.request(
        {
          type: 'study',
          id,
          labels,
          checkpoint: checkpoint ? { ...checkpoint, weightData: checkpoint.weightData.slice(0) } : null,
          config,
          ...(strengths ? { strengths } : {}),
          ...(kinds ? { kinds } : {}),
          ...(channel ? { helper: channel.port2 } : {}),
        },
        'study',
      );
      return { rows, shared };
    } finally {
      off();
      if (helper) helper.endService(service);
    }
  }

  /**
   * Stops whatever the worker is doing (a measurement or a study runs as one long call, so the worker itself is
   * ended); waiting requests fail with "cancelled". The next request starts a fresh worker; the saved model stays
   * in IndexedDB and every request carries what it needs, so nothing is lost.
   */
  abort(): void {
    this.epoch++;
    this.worker?.terminate();
    this.worker = null;
    this.modelSent = 0;
    for (const abort of [...this.pending]) abort();
  }

  dispose(): void {
    this.epoch++;
    this.worker?.terminate();
    this.worker = null;
    this.modelSent = 0;
  }
}
