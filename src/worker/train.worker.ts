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
import { disposeEncoders, embedForRetrieval, type Encoders } from '../core/model/embed';
import { explainMatch } from '../core/model/explain';
import { Trainer } from '../core/model/trainer';
import type { TrainConfig } from '../core/model/train-config';
import { evaluateMethods, untrainedEncoders } from '../core/quality/evaluate';
import { DIFFUSION_DEFAULTS } from '../core/retrieval/diffusion';
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

const post = (msg: TrainReply, transfer: ArrayBuffer[] = []) => (self as unknown as Worker).postMessage(msg, transfer);

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

/** The model embedding requests name by key (the latest handed over). */
let keptModel: { key: number; enc: Encoders; cfg: TrainConfig } | null = null;

/** The parts of each request being handed over (`stage` messages), until the request that reads them. */
const staged = new Map<number, { parts: PartArrays[]; cancelled: boolean }>();

/** The request's own parts, or those staged under its id (then forgotten here). */
function partsOf(req: { id: number; parts?: readonly PartArrays[] }): readonly PartArrays[] {
  const s = staged.get(req.id);
  staged.delete(req.id);
  return req.parts ?? s?.parts ?? [];
}

self.onmessage = async (event: MessageEvent<TrainRequest>) => {
  const req = event.data;
  try {
    const name = await ready();
    switch (req.type) {
      case 'stage': {
        let s = staged.get(req.id);
        if (!s) staged.set(req.id, (s = { parts: [], cancelled: false }));
        s.parts.push(...req.parts);
        return;
      }
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
        return;
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
        try {
          const rows = await runStudy({
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
          post({ type: 'study', id: req.id, rows });
        } finally {
          if (learned) disposeEncoders(learned);
          disposeEncoders(untrained);
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
        const o = buildOrdering(req.names, req.vectors, req.dim, kept);
        const table = tableArrays({ names: req.names, table: o.table });
        post(
          {
            type: 'ordering',
            id: req.id,
            ordering: {
              table,
              graph: o.graph,
              added: o.added,
              removed: o.removed,
              fresh: o.fresh,
            },
          },
          [table.index, table.score, table.length, o.graph.index, o.graph.score, o.graph.length].map(
            (a) => a.buffer as ArrayBuffer,
          ),
        );
        return;
      }
      case 'probe': {
        // Two steps on a sample the size of a batch: the first pays for warm-up, the second is timed.
        const t = new Trainer(req.parts, { ...req.config, epochs: 1, heldOutFraction: 0, patience: 0 });
        try {
          t.trainStep();
          const t0 = performance.now();
          t.trainStep();
          post({ type: 'probed', id: req.id, msPerStep: performance.now() - t0 });
        } finally {
          t.dispose();
        }
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
            if (keptModel) disposeEncoders(keptModel.enc);
            keptModel = { key: req.modelKey, enc, cfg };
            own = false;
          }
        } else if (req.modelKey !== undefined) {
          if (keptModel?.key !== req.modelKey) throw new Error('the model for these embeddings was not handed over');
          ({ enc, cfg } = keptModel);
          own = false;
        } else {
          enc = untrainedEncoders(req.config.encoder, req.config.pose, req.config.seed);
          cfg = req.config;
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
};
