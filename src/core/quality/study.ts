// The augmentation study: for each augmentation and strength, augment every part once, describe the view
// with each method, and measure whether the part is still recognised — as itself and as its family —
// how similar the view stays to the original, and how far the points moved (Chamfer).

import { embedForRetrieval, type Encoders } from '../model/embed';
import { type ModelPart } from '../model/views';
import { type Pose } from '../model/train-config';
import { AUGMENT_KINDS, augment, type AugmentKind, type UpAxis } from '../points/augment';
import { makeCloud } from '../points/cloud';
import { chamferDistance } from '../points/distance';
import { createRng, hashString } from '../rng';
import { d2Histogram, l1 } from '../retrieval/d2';
import type { MethodName } from './methods';
import { sampleQueries, STUDY_QUERIES, STUDY_STRENGTHS, wilsonInterval } from './sampling';

export { sampleQueries, STUDY_QUERIES, STUDY_STRENGTHS, wilsonInterval } from './sampling';

export interface StudyRow {
  readonly augmentation: AugmentKind;
  readonly strength: number;
  readonly method: MethodName;
  /** The source part is the top-1 neighbour of its augmented view. */
  readonly instance_top1: number;
  /** The top-1 neighbour other than the source part has the source's label. */
  readonly label_top1: number;
  /** Mean similarity of view and original (cosine; for D2, 1 − L1/2). */
  readonly mean_similarity: number;
  /** Mean Chamfer distance the augmentation moved the points (unit-sphere units²). */
  readonly mean_chamfer: number;
  /** Parts augmented and looked up (a seeded sample of the library, or all of it); the library searched is whole. */
  readonly queries: number;
  /** 95 % Wilson score intervals of instance_top1 and label_top1 over those queries. */
  readonly instance_top1_ci95: readonly [number, number];
  readonly label_top1_ci95: readonly [number, number];
}

export interface StudyInput {
  readonly parts: readonly ModelPart[];
  readonly labels: readonly string[];
  readonly points: number;
  readonly pose: Pose;
  readonly encoders: Partial<Record<'learned' | 'untrained', Encoders>>;
  readonly kinds?: readonly AugmentKind[];
  readonly strengths?: readonly number[];
  readonly upAxis?: UpAxis;
  readonly seed?: number;
  /** Parts to augment and look up (a seeded sample when fewer than the library); default STUDY_QUERIES. */
  readonly queries?: number;
  /**
   * Retrieval embeddings made elsewhere (the command line's threads), by method: the same vectors
   * `embedForRetrieval` gives with that method's encoders. Without one, the encoders embed here.
   */
  readonly embedWith?: Partial<Record<'learned' | 'untrained', (parts: readonly ModelPart[]) => Promise<Float32Array>>>;
  readonly onProgress?: (done: number, total: number, what: string) => void;
}

/** Descriptors of parts; `ids` are the library indices they stand for (a view is described as its part would be). */
type Describe = (
  parts: readonly ModelPart[],
  ids: readonly number[],
) => Promise<{ vectors: Float32Array; dim: number }> | { vectors: Float32Array; dim: number };

function nearestTwo(
  q: Float32Array,
  qo: number,
  lib: Float32Array,
  dim: number,
  n: number,
  sim: (a: Float32Array, ao: number, b: Float32Array, bo: number) => number,
  self: number,
) {
  let best = -Infinity,
    bestI = -1,
    other = -Infinity,
    otherI = -1;
  for (let j = 0; j < n; j++) {
    const s = sim(q, qo, lib, j * dim);
    if (s > best) {
      best = s;
      bestI = j;
    }
    if (j !== self && s > other) {
      other = s;
      otherI = j;
    }
  }
  return { bestI, otherI };
}

/** Whether two float arrays hold the same values bit for bit. */
function sameBits(a: Float32Array, b: Float32Array): boolean {
  if (a.length !== b.length) return false;
  const x = new Uint32Array(a.buffer, a.byteOffset, a.length);
  const y = new Uint32Array(b.buffer, b.byteOffset, b.length);
  for (let i = 0; i < x.length; i++) if (x[i] !== y[i]) return false;
  return true;
}

export async function runStudy(input: StudyInput): Promise<StudyRow[]> {
  const { parts, labels, points } = input;
  const kinds = input.kinds ?? AUGMENT_KINDS;
  const strengths = input.strengths ?? STUDY_STRENGTHS;
  const seed = input.seed ?? 0;
  const methods: [
    MethodName,
    Describe,
    (a: Float32Array, ao: number, b: Float32Array, bo: number, dim: number) => number,
  ][] = [];
  const cosine = (a: Float32Array, ao: number, b: Float32Array, bo: number, dim: number) => {
    let s = 0;
    for (let d = 0; d < dim; d++) s += a[ao + d] * b[bo + d];
    return s;
  };
  for (const name of ['learned', 'untrained'] as const) {
    const enc = input.encoders[name];
    const elsewhere = input.embedWith?.[name];
    if (enc)
      methods.push([
        name,
        async (ps) => {
          const v = elsewhere ? await elsewhere(ps) : embedForRetrieval(enc, ps, points, input.pose);
          return { vectors: v, dim: v.length / ps.length };
        },
        cosine,
      ]);
  }
  methods.push([
    'd2',
    (ps, ids) => {
      const dim = 64;
      const v = new Float32Array(ps.length * dim);
      ps.forEach((p, i) => v.set(d2Histogram(p.points, createRng(hashString(`d2:${ids[i]}`, seed))), i * dim));
      return { vectors: v, dim };
    },
    (a, ao, b, bo, dim) => 1 - l1(a, b, ao, bo, dim) / 2,
  ]);

  const everyone = parts.map((_, i) => i);
  const clean: { vectors: Float32Array; dim: number }[] = [];
  for (const [, describe] of methods) clean.push(await describe(parts, everyone));
  const asked = sampleQueries(parts.length, input.queries ?? STUDY_QUERIES, seed);
  const q = asked.length;
  const settings = kinds.flatMap((kind) => strengths.map((strength) => ({ kind, strength })));
  /** One setting's views of the asked parts, and how far the points moved (done on this thread). */
  const prepare = ({ kind, strength }: { kind: AugmentKind; strength: number }) => {
    const pipeline = { version: 1 as const, upAxis: input.upAxis ?? 'z', steps: [{ kind, strength, probability: 1 }] };
    const rng = createRng(hashString(`study:${kind}:${strength}`, seed));
    let chamfer = 0;
    const views: ModelPart[] = asked.map((i) => {
      const p = parts[i];
      const src = makeCloud(p.points, p.normals);
      const v = augment(src, pipeline, rng);
      chamfer += chamferDistance(src, v);
      return { points: v.positions, normals: v.normals ?? p.normals };
    });
    // Views that are the parts themselves (every augmentation at strength 0) are measured once for all settings.
    const unchanged = views.every(
      (v, j) => sameBits(v.points, parts[asked[j]].points) && sameBits(v.normals, parts[asked[j]].normals),
    );
    return { views, chamfer, key: unchanged ? 'unchanged' : `${kind}:${strength}` };
  };
  /** Each method's figures for one setting's views; the embedding threads work while the next views are made. */
  const measure = (views: readonly ModelPart[]) =>
    Promise.all(
      methods.map(async ([, describe, sim], m) => {
        const { vectors, dim } = await describe(views, asked);
        const lib = clean[m].vectors;
        let inst = 0,
          lab = 0,
          simSum = 0;
        asked.forEach((i, v) => {
          const { bestI, otherI } = nearestTwo(
            vectors,
            v * dim,
            lib,
            dim,
            parts.length,
            (a, ao, b, bo) => sim(a, ao, b, bo, dim),
            i,
          );
          if (bestI === i) inst++;
          if (otherI >= 0 && labels[otherI] === labels[i]) lab++;
          simSum += sim(vectors, v * dim, lib, i * dim, dim);
        });
        return { inst, lab, simSum };
      }),
    );
  // Describing is deterministic, so the same views give the same figures: unchanged views are measured once.
  const measured = new Map<string, Promise<{ inst: number; lab: number; simSum: number }[]>>();
  const rows: StudyRow[] = [];
  // Two settings are handed to the describers before the first is read, so threads that embed elsewhere always
  // have the next setting's views waiting (with one, they sat idle while this thread read results and made views).
  const pending: { current: ReturnType<typeof prepare>; figures: ReturnType<typeof measure> }[] = [];
  const launch = (k: number) => {
    const current = prepare(settings[k]);
    let figures = measured.get(current.key);
    if (!figures) {
      figures = measure(current.views);
      measured.set(current.key, figures);
    }
    pending.push({ current, figures });
  };
  if (settings.length > 0) launch(0);
  for (let k = 0; k < settings.length; k++) {
    const { kind, strength } = settings[k];
    if (k + 1 < settings.length) launch(k + 1);
    const { current, figures } = pending.shift()!;
    const results = await figures;
    results.forEach(({ inst, lab, simSum }, m) =>
      rows.push({
        augmentation: kind,
        strength,
        method: methods[m][0],
        instance_top1: inst / q,
        label_top1: lab / q,
        mean_similarity: simSum / q,
        mean_chamfer: current.chamfer / q,
        queries: q,
        instance_top1_ci95: wilsonInterval(inst, q),
        label_top1_ci95: wilsonInterval(lab, q),
      }),
    );
    input.onProgress?.(k + 1, settings.length, `${kind} at ${strength}`);
  }
  return rows;
}
