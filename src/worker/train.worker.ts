// The training worker owns every tensor: it trains, checkpoints and embeds; the page only receives
// progress, checkpoints (weights as a transferred buffer; the page keeps them in the parts database) and embeddings.

import * as tf from '@tensorflow/tfjs';
import wasmPlain from '@tensorflow/tfjs-backend-wasm/dist/tfjs-backend-wasm.wasm?url';
import wasmSimd from '@tensorflow/tfjs-backend-wasm/dist/tfjs-backend-wasm-simd.wasm?url';
import wasmThreaded from '@tensorflow/tfjs-backend-wasm/dist/tfjs-backend-wasm-threaded-simd.wasm?url';
import { initBackend } from '../core/model/backend';
import {
  encodersFromCheckpoint,
  fromArtifacts,
  resumeOptions,
  toArtifacts,
  type Checkpoint,
} from '../core/model/checkpoint';
import { disposeEncoders, embedForRetrieval, embedShared, type Encoders } from '../core/model/embed';
import type { ModelPart } from '../core/model/views';
import { explainMatch } from '../core/model/explain';
import { probeStepMs, Trainer } from '../core/model/trainer';
import type { TrainConfig } from '../core/model/train-config';
import { evaluateMethods, untrainedEncoders } from '../core/quality/evaluate';
import { DIFFUSION_DEFAULTS, DiffusionGraph } from '../core/retrieval/diffusion';
import { runStudy } from '../core/quality/study';
import { namedTable, tableArrays } from '../core/retrieval/neighbour-table';
import { buildOrdering } from '../core/retrieval/tensor-index';
import type { CheckpointMessage, PartArrays, TrainReply, TrainRequest } from './protocol';

/**
 * Where earlier versions kept the current model (tfjs's own IndexedDB handler). The parts database keeps it now;
 * the page moves a model found here into it once, then has it forgotten here.
 */
const SAVED = 'indexeddb://shapekin-current-model';

async function loadKept(): Promise<CheckpointMessage | null> {
  const list = await tf.io.listModels().catch(() => ({}) as Record<string, unknown>);
  if (!(SAVED in list)) return null;
  const [handler] = tf.io.getLoadHandlers(SAVED);
  const art = await handler.load!();
  const c = fromArtifacts(art, 'saved model');
  return toMessage(c);
}

type Post = (msg: TrainReply, transfer?: ArrayBuffer[]) => void;

/**
 * Where requests come from and replies go: the page, or a port from the other training worker (`serve`). Each keeps
 * its own model for embedding requests that name it by key, and the untrained encoders it last embedded with.
 */
interface Channel {
  readonly post: Post;
  kept: { key: number; enc: Encoders; cfg: TrainConfig } | null;
  untrained: { signature: string; enc: Encoders } | null;
}

const page: Channel = {
  post: (msg, transfer = []) => (self as unknown as Worker).postMessage(msg, transfer),
  kept: null,
  untrained: null,
};

/** The ports this worker serves (`serve`), by request id, until cancelled. */
const services = new Map<number, { port: MessagePort; channel: Channel }>();

function endService(id: number): void {
  const s = services.get(id);
  if (!s) return;
  services.delete(id);
  s.port.onmessage = null;
  s.port.close();
  if (s.channel.kept) disposeEncoders(s.channel.kept.enc);
  if (s.channel.untrained) disposeEncoders(s.channel.untrained.enc);
}

/** The untrained encoders for `cfg`, kept on the channel for its next requests (their weights are seeded). */
function untrainedFor(channel: Channel, cfg: TrainConfig): Encoders {
  const signature = JSON.stringify([cfg.encoder, cfg.pose, cfg.seed]);
  if (channel.untrained?.signature !== signature) {
    if (channel.untrained) disposeEncoders(channel.untrained.enc);
    channel.untrained = { signature, enc: untrainedEncoders(cfg.encoder, cfg.pose, cfg.seed) };
  }
  return channel.untrained.enc;
}

/**
 * Embedding on a worker serving `port`: the learned model handed over with the first request (then named by key),
 * untrained encoders from the config. Each request's parts are copies, moved over.
 */
function remoteEmbedder(port: MessagePort, checkpoint: CheckpointMessage | null, config: TrainConfig) {
  let next = 1;
  let sent = false;
  const waiting = new Map<number, { resolve: (v: Float32Array) => void; reject: (e: Error) => void }>();
  port.onmessage = (e: MessageEvent<TrainReply>) => {
    const m = e.data;
    const w = waiting.get(m.id);
    if (!w) return;
    waiting.delete(m.id);
    if (m.type === 'embeddings') w.resolve(m.vectors);
    else if (m.type === 'error') w.reject(new Error(`the second worker: ${m.message}`));
  };
  return (learned: boolean, parts: readonly ModelPart[]): Promise<Float32Array> =>
    new Promise((resolve, reject) => {
      const id = next++;
      waiting.set(id, { resolve, reject });
      const copies = parts.map((p) => ({ points: p.points.slice(), normals: p.normals.slice() }));
      const model =
        learned && checkpoint
          ? sent
            ? { checkpoint: null, modelKey: 1 }
            : { checkpoint: { ...checkpoint, weightData: checkpoint.weightData.slice(0) }, modelKey: 1 }
          : { checkpoint: null };
      if (learned) sent = true;
      const msg: TrainRequest = { type: 'embed', id, parts: copies, config, ...model };
      port.postMessage(msg, [
        ...copies.flatMap((p) => [p.points.buffer as ArrayBuffer, p.normals.buffer as ArrayBuffer]),
        ...(model.checkpoint ? [model.checkpoint.weightData] : []),
      ]);
    });
}

let backend: Promise<string> | null = null;
function ready(): Promise<string> {
  backend ??= initBackend({
    prefer: 'wasm',
    wasmPaths: {
      'tfjs-backend-wasm.wasm': wasmPlain,
      'tfjs-backend-wasm-simd.wasm': wasmSimd,
      'tfjs-backend-wasm-threaded-simd.wasm': wasmThreaded,
    },
  });
  return backend;
}

let trainer: Trainer | null = null;
let trainerId = 0;

function toMessage(ckpt: Checkpoint): CheckpointMessage {
  const art = toArtifacts(ckpt);
  return {
    manifest: ckpt.manifest,
    weightSpecs: art.weightSpecs as CheckpointMessage['weightSpecs'],
    weightData: art.weightData as ArrayBuffer,
    adamStep: ckpt.adam?.step ?? 0,
  };
}

export function fromMessage(m: CheckpointMessage): Checkpoint {
  return fromArtifacts(
    {
      format: 'shapekin-encoder',
      modelTopology: { shapekin: m.manifest } as unknown as tf.io.ModelArtifacts['modelTopology'],
      weightSpecs: m.weightSpecs,
      weightData: m.weightData,
      userDefinedMetadata: { adamStep: m.adamStep },
    },
    'saved model',
  );
}

function snapshot(
  t: Trainer,
  sampling: { points: number; seed: number },
  status: Checkpoint['manifest']['status'],
  name: string,
): CheckpointMessage {
  return toMessage({
    manifest: {
      format: 'shapekin-encoder',
      version: 1,
      config: t.config,
      sampling,
      step: t.step,
      totalSteps: t.totalSteps,
      status,
      backend: name,
      history: t.history,
      checks: t.checks,
    },
    weights: t.weights(),
    adam: t.adamState(),
  });
}

/** The parts of each request being handed over (`stage` messages), until the request that reads them. */
const staged = new Map<number, { parts: PartArrays[]; cancelled: boolean }>();

/** The request's own parts, or those staged under its id (then forgotten here). */
function partsOf(req: { id: number; parts?: readonly PartArrays[] }): readonly PartArrays[] {
  const s = staged.get(req.id);
  staged.delete(req.id);
  return req.parts ?? s?.parts ?? [];
}

self.onmessage = (event: MessageEvent<TrainRequest>) => handle(event.data, page);

async function handle(req: TrainRequest, channel: Channel): Promise<void> {
  const { post } = channel;
  try {
    const name = await ready();
    switch (req.type) {
      case 'stage': {
        let s = staged.get(req.id);
        if (!s) staged.set(req.id, (s = { parts: [], cancelled: false }));
        s.parts.push(...req.parts);
        return;
      }
      case 'unstage':
        staged.delete(req.id);
        return;
      case 'start': {
        const cancelled = staged.get(req.id)?.cancelled ?? false;
        const parts = partsOf(req);
        if (cancelled) {
          // Stopped while its parts were still being handed over: it ends before its first step.
          post({
            type: 'done',
            id: req.id,
            result: { status: 'cancelled', steps: 0, finalLoss: NaN, history: [], checks: [] },
          });
          return;
        }
        if (trainer) throw new Error('a training run is already in progress');
        post({ type: 'backend', id: req.id, backend: name });
        const resume = req.resume ? fromMessage(req.resume) : null;
        trainer = new Trainer(parts, resume ? resume.manifest.config : req.config, {
          labels: req.labels,
          ...(resume ? resumeOptions(resume) : {}),
        });
        trainerId = req.id;
        const t = trainer;
        // Kept after the first step, then every 20 s: a closed tab or a crash loses at most that.
        let lastSave = -Infinity;
        const result = await t.run({
          onProgress: (progress) => {
            post({ type: 'progress', id: req.id, progress });
            if (performance.now() - lastSave > 20_000) {
              const c = snapshot(t, req.sampling, 'running', name);
              post({ type: 'checkpoint', id: req.id, checkpoint: c }, [c.weightData]);
              lastSave = performance.now();
            }
          },
          onCheck: (check) => post({ type: 'check', id: req.id, check }),
        });
        const c = snapshot(t, req.sampling, result.status, name);
        post({ type: 'checkpoint', id: req.id, checkpoint: c }, [c.weightData]);
        post({ type: 'done', id: req.id, result });
        t.dispose();
        trainer = null;
        return;
      }
      case 'pause':
        if (trainer && req.id === trainerId) {
          trainer.pause();
          post({ type: 'status', id: req.id, status: 'paused' });
        }
        return;
      case 'resume':
        if (trainer && req.id === trainerId) {
          trainer.resume();
          post({ type: 'status', id: req.id, status: 'running' });
        }
        return;
      case 'cancel':
        if (trainer && req.id === trainerId) trainer.cancel();
        if (staged.has(req.id)) staged.get(req.id)!.cancelled = true;
        endService(req.id);
        return;
      case 'serve': {
        const served: Channel = {
          post: (msg, transfer = []) => req.port.postMessage(msg, transfer),
          kept: null,
          untrained: null,
        };
        services.set(req.id, { port: req.port, channel: served });
        req.port.onmessage = (e: MessageEvent<TrainRequest>) => void handle(e.data, served);
        return;
      }
      case 'evaluate': {
        const ckpt = req.checkpoint ? fromMessage(req.checkpoint) : null;
        const cfg = ckpt ? ckpt.manifest.config : req.config;
        const learned = ckpt ? encodersFromCheckpoint(ckpt) : undefined;
        try {
          const report = evaluateMethods({
            parts: partsOf(req),
            labels: req.labels,
            points: cfg.points,
            pose: cfg.pose,
            ...(learned ? { learned } : {}),
            untrainedConfig: cfg.encoder,
            seed: cfg.seed,
            diffusion: DIFFUSION_DEFAULTS,
            diagonals: req.diagonals,
          });
          post({ type: 'evaluation', id: req.id, report });
        } finally {
          if (learned) disposeEncoders(learned);
        }
        return;
      }
      case 'study': {
        const ckpt = req.checkpoint ? fromMessage(req.checkpoint) : null;
        const cfg = ckpt ? ckpt.manifest.config : req.config;
        const learned = ckpt ? encodersFromCheckpoint(ckpt) : undefined;
        const untrained = untrainedEncoders(cfg.encoder, cfg.pose, cfg.seed);
        // With a second worker, each set of views is shared out: about half its batches are embedded there.
        const remote = req.helper ? remoteEmbedder(req.helper, req.checkpoint, cfg) : null;
        let sharedParts = 0;
        const shared = (learnedOnes: boolean, enc: Encoders) => (ps: readonly ModelPart[]) =>
          embedShared(
            ps,
            (mine) => embedForRetrieval(enc, mine, cfg.points, cfg.pose),
            (theirs) => {
              sharedParts += theirs.length;
              return remote!(learnedOnes, theirs);
            },
          );
        try {
          const rows = await runStudy({
            ...(remote
              ? {
                  embedWith: {
                    ...(learned ? { learned: shared(true, learned) } : {}),
                    untrained: shared(false, untrained),
                  },
                }
              : {}),
            parts: partsOf(req),
            labels: req.labels,
            points: cfg.points,
            pose: cfg.pose,
            upAxis: cfg.pipeline.upAxis,
            seed: cfg.seed,
            encoders: { ...(learned ? { learned } : {}), untrained },
            ...(req.kinds ? { kinds: req.kinds } : {}),
            ...(req.strengths ? { strengths: req.strengths } : {}),
            onProgress: (done, total, what) => post({ type: 'study-progress', id: req.id, done, total, what }),
          });
          post({ type: 'study', id: req.id, rows, shared: sharedParts });
        } finally {
          if (learned) disposeEncoders(learned);
          disposeEncoders(untrained);
          req.helper?.close();
        }
        return;
      }
      case 'load-saved': {
        const c = await loadKept();
        post({ type: 'saved', id: req.id, checkpoint: c }, c ? [c.weightData] : []);
        return;
      }
      case 'forget-saved': {
        await tf.io.removeModel(SAVED).catch(() => {});
        post({ type: 'saved', id: req.id, checkpoint: null });
        return;
      }
      case 'order': {
        const kept = req.kept ? namedTable(req.kept) : null;
        const o = buildOrdering(req.names, req.vectors, req.dim, kept, req.diagonals);
        const table = tableArrays({ names: req.names, table: o.table, sizes: o.sizes });
        const built = DiffusionGraph.fromPacked(o.graph, DIFFUSION_DEFAULTS).arrays();
        post(
          {
            type: 'ordering',
            id: req.id,
            ordering: {
              table,
              graph: o.graph,
              built,
              added: o.added,
              removed: o.removed,
              fresh: o.fresh,
            },
          },
          [
            ...[table.index, table.score, table.length, table.logSize, o.graph.index, o.graph.score, o.graph.length],
            ...[built.from, built.to, built.w, built.kthSimilarity, built.rowStart, built.cols, built.weights],
            built.invSqrtDegree,
          ].map((a) => a.buffer as ArrayBuffer),
        );
        return;
      }
      case 'probe': {
        post({ type: 'probed', id: req.id, msPerStep: probeStepMs(req.parts, req.config) });
        return;
      }
      case 'explain': {
        const ckpt = req.checkpoint ? fromMessage(req.checkpoint) : null;
        const cfg = ckpt ? ckpt.manifest.config : req.config;
        const enc = ckpt ? encodersFromCheckpoint(ckpt) : untrainedEncoders(cfg.encoder, cfg.pose, cfg.seed);
        try {
          const e = explainMatch(enc, req.a, req.b, cfg.points, cfg.pose);
          post({ type: 'explanation', id: req.id, a: e.a, b: e.b, pooledCosine: e.pooledCosine, points: cfg.points }, [
            e.a.buffer as ArrayBuffer,
            e.b.buffer as ArrayBuffer,
          ]);
        } finally {
          disposeEncoders(enc);
        }
        return;
      }
      case 'embed': {
        // A model handed over with a key is kept for the next requests (a library is embedded a chunk at a time).
        let enc: Encoders, cfg: TrainConfig;
        let own = true;
        if (req.checkpoint) {
          const c = fromMessage(req.checkpoint);
          enc = encodersFromCheckpoint(c);
          cfg = c.manifest.config;
          if (req.modelKey !== undefined) {
            if (channel.kept) disposeEncoders(channel.kept.enc);
            channel.kept = { key: req.modelKey, enc, cfg };
            own = false;
          }
        } else if (req.modelKey !== undefined) {
          const kept = channel.kept;
          if (kept?.key !== req.modelKey) throw new Error('the model for these embeddings was not handed over');
          ({ enc, cfg } = kept);
          own = false;
        } else {
          enc = untrainedFor(channel, req.config);
          cfg = req.config;
          own = false;
        }
        try {
          const vectors = embedForRetrieval(enc, req.parts, cfg.points, cfg.pose);
          post(
            {
              type: 'embeddings',
              id: req.id,
              vectors,
              dim: vectors.length / Math.max(1, req.parts.length),
              learned: Boolean(req.checkpoint) || req.modelKey !== undefined,
            },
            [vectors.buffer as ArrayBuffer],
          );
        } finally {
          if (own) disposeEncoders(enc);
        }
        return;
      }
    }
  } catch (err) {
    if (req.type === 'start') {
      trainer?.dispose();
      trainer = null;
    }
    post({ type: 'error', id: req.id, message: (err as Error).message });
  }
}
