// Augmentations of unit-sphere point clouds: each step has a strength in [0, 1] mapped to a documented
// physical range, and a probability. A pipeline is an ordered list of steps, serialisable to JSON; view
// pairs are two independent passes, as SimCLR (Chen et al. 2020) trains on.

import type { Rng } from '../rng';
import { assertValidCloud, makeCloud, type PointCloud } from './cloud';
import { PointIndex } from './kdtree';
import { axisAngle, quaternionToMatrix, transformPoints, type Mat3 } from './rotation';
import { SIGN_FLIPS } from './pca';
import { farthestPointSample, normaliseToUnitSphere } from './sample';

export const AUGMENT_KINDS = [
  'rotate-up',
  'rotate-any',
  'flip-axes',
  'scale',
  'translate',
  'jitter',
  'dropout',
  'occlude',
  'partial-view',
  'mirror',
  'local-warp',
] as const;
export type AugmentKind = (typeof AUGMENT_KINDS)[number];

export interface AugmentStep {
  readonly kind: AugmentKind;
  /** 0 = no change, 1 = the strongest setting (see STRENGTH_RANGES). */
  readonly strength: number;
  /** Chance the step is applied to a given view. */
  readonly probability: number;
}

export type UpAxis = 'x' | 'y' | 'z';

export interface Pipeline {
  readonly version: 1;
  readonly upAxis: UpAxis;
  readonly steps: readonly AugmentStep[];
}

/** What strength 1 means for each step (units are those of the unit-sphere cloud). */
export const STRENGTH_RANGES: Record<AugmentKind, string> = {
  'rotate-up': 'angle about the up axis uniform in [−180°·s, 180°·s]',
  'rotate-any': 'a Haar-uniform rotation (Shoemake 1992) slerped from the identity by s: s = 1 is fully uniform',
  scale: 'each axis multiplied by exp(u·s·ln 1.5), u ~ U(−1, 1): at s = 1 factors in [0.67, 1.5]',
  translate: 'offset per axis uniform in [−0.2·s, 0.2·s]',
  jitter: 'Gaussian noise σ = 0.02·s clipped at 5σ (s = 0.5 gives the common σ = 0.01, clip 0.05)',
  dropout: 'drops a fraction 0.8·s of the points, refilled by repeating random survivors',
  occlude:
    'removes the round(0.4·s·N) nearest neighbours (on the source surface) of a random seed point: a missing region',
  'partial-view':
    'keeps points whose normal n satisfies n·d ≥ s − 1 for a random view direction d (s = 1: the visible half)',
  mirror: 'reflects across a random coordinate plane through the centre, with probability scaled by s',
  'flip-axes':
    'turns by 180° about a random coordinate axis (the sign ambiguity of a principal-axes pose), with probability scaled by s',
  'local-warp':
    "PointWOLF (Kim et al. 2021): 4 farthest-point anchors, each with its own turn (±20°·s per axis), stretch (per axis in [1, 1 + 4s]) and shift (±0.5·s), blended by Gaussian weights (σ 0.5) on distances over a random subset of axes; then back into the unit sphere (s = 0.5 is the paper's setting)",
};

const AXIS: Record<UpAxis, [number, number, number]> = { x: [1, 0, 0], y: [0, 1, 0], z: [0, 0, 1] };

export function validateStep(step: AugmentStep): void {
  if (!(AUGMENT_KINDS as readonly string[]).includes(step.kind)) {
    throw new RangeError(`augmentation: unknown kind "${step.kind}" (expected one of ${AUGMENT_KINDS.join(', ')})`);
  }
  for (const key of ['strength', 'probability'] as const) {
    const v = step[key];
    if (typeof v !== 'number' || !(v >= 0 && v <= 1))
      throw new RangeError(`augmentation ${step.kind}: ${key} must be in [0, 1], got ${v}`);
  }
}

export function validatePipeline(p: Pipeline): Pipeline {
  if (!p || p.version !== 1)
    throw new RangeError(`augmentation pipeline: version must be 1, got ${JSON.stringify(p?.version)}`);
  if (!(p.upAxis in AXIS))
    throw new RangeError(`augmentation pipeline: upAxis must be x, y or z, got ${JSON.stringify(p.upAxis)}`);
  if (!Array.isArray(p.steps)) throw new RangeError('augmentation pipeline: steps must be a list');
  p.steps.forEach(validateStep);
  return p;
}

export function pipelineToJson(p: Pipeline): string {
  return JSON.stringify(validatePipeline(p), null, 2);
}

export function pipelineFromJson(text: string): Pipeline {
  let parsed: unknown;
  try {
    parsed = JSON.parse(text);
  } catch (err) {
    throw new RangeError(`augmentation pipeline: not valid JSON (${(err as Error).message})`, { cause: err });
  }
  const p = parsed as Pipeline;
  return validatePipeline({
    version: p?.version,
    upAxis: p?.upAxis,
    steps: (p?.steps ?? []).map((s) => ({ kind: s.kind, strength: s.strength, probability: s.probability })),
  } as Pipeline);
}

const step = (kind: AugmentKind, strength: number, probability = 1): AugmentStep => ({ kind, strength, probability });

/** Named starting points, in plain words. */
export const PRESETS: Record<
  'gentle' | 'scan-like' | 'aggressive' | 'any-orientation' | 'principal-pose' | 'file-pose',
  Pipeline
> = {
  gentle: { version: 1, upAxis: 'z', steps: [step('rotate-up', 1), step('scale', 0.4), step('jitter', 0.5)] },
  'scan-like': {
    version: 1,
    upAxis: 'z',
    steps: [
      step('rotate-up', 1),
      step('scale', 0.4),
      step('partial-view', 0.7, 0.5),
      step('occlude', 0.4, 0.5),
      step('jitter', 0.6),
      step('dropout', 0.3, 0.5),
    ],
  },
  aggressive: {
    version: 1,
    upAxis: 'z',
    steps: [
      step('rotate-any', 1),
      step('scale', 0.8),
      step('translate', 0.5),
      step('occlude', 0.7, 0.7),
      step('dropout', 0.6, 0.7),
      step('jitter', 1),
      step('mirror', 1, 0.5),
    ],
  },
  'any-orientation': {
    version: 1,
    upAxis: 'z',
    steps: [step('rotate-any', 1), step('scale', 0.4), step('jitter', 0.5)],
  },
  /**
   * For parts put in a canonical pose first (principal axes, or their files' axes): the pose's sign ambiguity,
   * small pose errors, proportions that vary within a family (each axis stretched by up to 1.5×: on two real
   * sets this lifted mAP by 0.02–0.03 over 1.2×; docs/log/), scan damage.
   */
  'principal-pose': {
    version: 1,
    upAxis: 'z',
    steps: [
      step('flip-axes', 1),
      step('rotate-any', 0.1),
      step('scale', 1),
      step('occlude', 0.4, 0.5),
      step('dropout', 0.4, 0.5),
      step('jitter', 0.5),
    ],
  },
  /** For parts kept in their files' own frame (a library modelled in one frame): no turning at all. */
  'file-pose': { version: 1, upAxis: 'z', steps: [step('scale', 0.4), step('occlude', 0.4, 0.5), step('jitter', 0.5)] },
};
export type PresetName = keyof typeof PRESETS;

/** A mutable working copy: positions, optional normals, and which source point each one copies. */
interface Work {
  p: Float32Array;
  n: Float32Array | null;
  origin: Uint32Array;
  source: PointCloud;
}

// One kd-tree per source cloud, built on first use: neighbourhoods on the source surface do not change
// under rotation, translation or refill, so every view of a part shares the tree.
const sourceIndex = new WeakMap<Float32Array, PointIndex>();
function indexOf(cloud: PointCloud): PointIndex {
  let index = sourceIndex.get(cloud.positions);
  if (!index) {
    index = new PointIndex(cloud.positions);
    sourceIndex.set(cloud.positions, index);
  }
  return index;
}

function rotate(w: Work, m: Mat3): void {
  // A turn by no angle (strength 0) leaves the cloud as it was, bit for bit: multiplying by the identity would turn
  // −0 into +0 (−0 + 0 = +0 in IEEE 754), so the study would embed such views again instead of once.
  if (m.every((v, i) => v === (i % 4 === 0 ? 1 : 0))) return;
  transformPoints(m, w.p, w.p);
  if (w.n) transformPoints(m, w.n, w.n);
}

/** Slerp from the identity towards the unit quaternion q by t (angle scales by t). */
function partialRotation(rng: Rng, t: number): Mat3 {
  const u1 = rng.next(),
    u2 = rng.next(),
    u3 = rng.next();
  const a = Math.sqrt(1 - u1),
    b = Math.sqrt(u1);
  let x = a * Math.sin(2 * Math.PI * u2),
    y = a * Math.cos(2 * Math.PI * u2),
    z = b * Math.sin(2 * Math.PI * u3),
    w = b * Math.cos(2 * Math.PI * u3);
  if (t >= 1) return quaternionToMatrix(x, y, z, w);
  if (w < 0) {
    x = -x;
    y = -y;
    z = -z;
    w = -w;
  } // the shorter arc
  const half = Math.acos(Math.min(1, w));
  const s = Math.sin(half);
  if (s < 1e-12) return quaternionToMatrix(0, 0, 0, 1);
  const k = Math.sin(t * half) / s;
  return quaternionToMatrix(x * k, y * k, z * k, Math.cos(t * half));
}

/** Replace the removed points (keep[i] = 0) by copies of random kept ones, so the count stays N. */
function refill(w: Work, keep: Uint8Array, rng: Rng, where: string): void {
  const kept: number[] = [];
  for (let i = 0; i < keep.length; i++) if (keep[i]) kept.push(i);
  if (kept.length === 0) throw new RangeError(`${where}: every point was removed`);
  for (let i = 0; i < keep.length; i++) {
    if (keep[i]) continue;
    const s = kept[rng.int(kept.length)];
    w.p[i * 3] = w.p[s * 3];
    w.p[i * 3 + 1] = w.p[s * 3 + 1];
    w.p[i * 3 + 2] = w.p[s * 3 + 2];
    w.origin[i] = w.origin[s];
    if (w.n) {
      w.n[i * 3] = w.n[s * 3];
      w.n[i * 3 + 1] = w.n[s * 3 + 1];
      w.n[i * 3 + 2] = w.n[s * 3 + 2];
    }
  }
}

function randomUnitVector(rng: Rng): [number, number, number] {
  const z = rng.uniform(-1, 1),
    a = rng.uniform(0, 2 * Math.PI),
    r = Math.sqrt(1 - z * z);
  return [r * Math.cos(a), r * Math.sin(a), z];
}

export const JITTER_SIGMA_AT_FULL = 0.02;
export const JITTER_CLIP_SIGMAS = 5;

function applyStep(w: Work, s: AugmentStep, upAxis: UpAxis, rng: Rng): void {
  const N = w.p.length / 3;
  const k = s.strength;
  switch (s.kind) {
    case 'rotate-up':
      rotate(w, axisAngle(AXIS[upAxis], rng.uniform(-Math.PI, Math.PI) * k));
      return;
    case 'rotate-any':
      rotate(w, partialRotation(rng, k));
      return;
    case 'scale': {
      const f = [0, 1, 2].map(() => Math.exp(rng.uniform(-1, 1) * k * Math.log(1.5)));
      for (let i = 0; i < w.p.length; i++) w.p[i] *= f[i % 3];
      // (Factors of exactly 1, at strength 0, leave the normals as they were: renormalising would round them.)
      if (w.n && f.some((v) => v !== 1)) {
        // Normals transform by the inverse transpose of the scaling, then are renormalised.
        for (let i = 0; i < N; i++) {
          const x = w.n[i * 3] / f[0],
            y = w.n[i * 3 + 1] / f[1],
            z = w.n[i * 3 + 2] / f[2];
          const len = Math.hypot(x, y, z) || 1;
          w.n[i * 3] = x / len;
          w.n[i * 3 + 1] = y / len;
          w.n[i * 3 + 2] = z / len;
        }
      }
      return;
    }
    case 'translate': {
      const t = [0, 1, 2].map(() => rng.uniform(-0.2, 0.2) * k);
      // Adding 0 is skipped, here and in jitter: −0 + 0 is +0, and strength 0 must leave the cloud bit for bit.
      for (let i = 0; i < w.p.length; i++) if (t[i % 3] !== 0) w.p[i] += t[i % 3];
      return;
    }
    case 'jitter': {
      const sigma = JITTER_SIGMA_AT_FULL * k;
      const clip = JITTER_CLIP_SIGMAS * sigma;
      for (let i = 0; i < w.p.length; i++) {
        const d = Math.max(-clip, Math.min(clip, sigma * rng.normal()));
        if (d !== 0) w.p[i] += d;
      }
      return;
    }
    case 'dropout': {
      const keep = new Uint8Array(N);
      const ratio = 0.8 * k;
      for (let i = 0; i < N; i++) keep[i] = rng.next() >= ratio ? 1 : 0;
      if (!keep.includes(1)) keep[rng.int(N)] = 1;
      refill(w, keep, rng, 'dropout');
      return;
    }
    case 'occlude': {
      // The region is found on the source surface around the source point of a random view point,
      // and covers the same fraction 0.4·s of the source as of the view.
      const src = w.source;
      const remove = Math.round(0.4 * k * src.count);
      if (remove === 0) return;
      const seed = w.origin[rng.int(N)];
      const gone = new Uint8Array(src.count);
      const sp = src.positions;
      for (const nb of indexOf(src).nearest(
        sp[seed * 3],
        sp[seed * 3 + 1],
        sp[seed * 3 + 2],
        Math.min(remove, src.count - 1),
      ))
        gone[nb.index] = 1;
      const keep = new Uint8Array(N);
      for (let i = 0; i < N; i++) keep[i] = gone[w.origin[i]] ? 0 : 1;
      refill(w, keep, rng, 'occlude');
      return;
    }
    case 'partial-view': {
      const d = randomUnitVector(rng);
      const tau = k - 1;
      const keep = new Uint8Array(N);
      for (let i = 0; i < N; i++) {
        // Without normals a single scan is approximated by the half-space facing the viewer.
        const dot = w.n
          ? w.n[i * 3] * d[0] + w.n[i * 3 + 1] * d[1] + w.n[i * 3 + 2] * d[2]
          : w.p[i * 3] * d[0] + w.p[i * 3 + 1] * d[1] + w.p[i * 3 + 2] * d[2];
        keep[i] = dot >= tau ? 1 : 0;
      }
      if (!keep.includes(1)) return; // nothing faces this way (a flat cloud seen edge-on): leave the view whole
      refill(w, keep, rng, 'partial-view');
      return;
    }
    case 'local-warp':
      localWarp(w, k, rng);
      return;
    case 'flip-axes': {
      if (rng.next() >= k) return;
      rotate(w, SIGN_FLIPS[1 + rng.int(3)]);
      return;
    }
    case 'mirror': {
      if (rng.next() >= k) return;
      const axis = rng.int(3);
      for (let i = axis; i < w.p.length; i += 3) w.p[i] = -w.p[i];
      if (w.n) for (let i = axis; i < w.n.length; i += 3) w.n[i] = -w.n[i];
      return;
    }
  }
}

const WARP_ANCHORS = 4;
/** Bandwidth of the Gaussian kernel that blends the local transforms (unit-sphere units; the paper's 0.5). */
export const WARP_SIGMA = 0.5;

/** One local transform of a warp: p ↦ linear·(p − centre) + centre + shift near its anchor. */
export interface LocalTransform {
  readonly centre: readonly [number, number, number];
  readonly linear: Mat3;
  readonly shift: readonly [number, number, number];
}

/**
 * Points (and normals) moved by the Nadaraya–Watson blend of local transforms (PointWOLF; Kim, Lee, Hwang &
 * Kim 2021, "Point Cloud Augmentation with Weighted Local Transformations"): p' = Σ_j w_j T_j(p) / Σ_j w_j with
 * w_j = exp(−d_j² / 2σ²), d_j the distance to anchor j over the axes set in `axes` (bit 0 x, 1 y, 2 z). Normals
 * follow the blended linear part L = Σ_j w_j·linear_j / Σ_j w_j as n' ∝ (Lᵀ)⁻¹n = cof(L)·n (the weights' own
 * gradient is ignored). In place; returns nothing.
 */
export function blendLocalTransforms(
  p: Float32Array,
  n: Float32Array | null,
  transforms: readonly LocalTransform[],
  axes: number,
  sigma = WARP_SIGMA,
): void {
  const M = transforms.length;
  const weight = new Float64Array(M);
  const blended = new Float64Array(9);
  for (let i = 0; i < p.length / 3; i++) {
    const x = p[i * 3],
      y = p[i * 3 + 1],
      z = p[i * 3 + 2];
    let total = 0;
    for (let j = 0; j < M; j++) {
      const [cx, cy, cz] = transforms[j].centre;
      const d2 = (axes & 1 ? (x - cx) ** 2 : 0) + (axes & 2 ? (y - cy) ** 2 : 0) + (axes & 4 ? (z - cz) ** 2 : 0);
      weight[j] = Math.exp(-d2 / (2 * sigma * sigma)) + 1e-12; // never all zero far from every anchor
      total += weight[j];
    }
    let ox = 0,
      oy = 0,
      oz = 0;
    blended.fill(0);
    for (let j = 0; j < M; j++) {
      const a = weight[j] / total,
        {
          linear: m,
          centre: [cx, cy, cz],
          shift: t,
        } = transforms[j];
      const u = x - cx,
        v = y - cy,
        q = z - cz;
      ox += a * (m[0] * u + m[1] * v + m[2] * q + cx + t[0]);
      oy += a * (m[3] * u + m[4] * v + m[5] * q + cy + t[1]);
      oz += a * (m[6] * u + m[7] * v + m[8] * q + cz + t[2]);
      for (let e = 0; e < 9; e++) blended[e] += a * m[e];
    }
    p[i * 3] = ox;
    p[i * 3 + 1] = oy;
    p[i * 3 + 2] = oz;
    if (!n) continue;
    const m = blended,
      nx = n[i * 3],
      ny = n[i * 3 + 1],
      nz = n[i * 3 + 2];
    // Rows of the cofactor matrix of L times n.
    const ax = (m[4] * m[8] - m[5] * m[7]) * nx + (m[5] * m[6] - m[3] * m[8]) * ny + (m[3] * m[7] - m[4] * m[6]) * nz;
    const ay = (m[2] * m[7] - m[1] * m[8]) * nx + (m[0] * m[8] - m[2] * m[6]) * ny + (m[1] * m[6] - m[0] * m[7]) * nz;
    const az = (m[1] * m[5] - m[2] * m[4]) * nx + (m[2] * m[3] - m[0] * m[5]) * ny + (m[0] * m[4] - m[1] * m[3]) * nz;
    const len = Math.hypot(ax, ay, az) || 1;
    n[i * 3] = ax / len;
    n[i * 3 + 1] = ay / len;
    n[i * 3 + 2] = az / len;
  }
}

/**
 * PointWOLF's random draw at strength s: anchors by farthest-point sampling from a random start, each with a turn
 * of up to ±20°·s about every axis, a stretch per axis in [1, 1 + 4s] and a shift per axis in ±0.5·s (s = 0.5
 * gives the paper's ±10°, [1, 3] and ±0.25), distances over a random non-empty subset of the axes; then the view
 * goes back into the unit sphere about its centroid.
 */
function localWarp(w: Work, s: number, rng: Rng): void {
  if (s <= 0) return;
  const p = w.p;
  const anchors = farthestPointSample(makeCloud(p), Math.min(WARP_ANCHORS, p.length / 3), rng).positions;
  const maxAngle = ((20 * Math.PI) / 180) * s;
  const transforms: LocalTransform[] = [];
  for (let a = 0; a < anchors.length; a += 3) {
    const turn = mul3(
      axisAngle([0, 0, 1], rng.uniform(-maxAngle, maxAngle)),
      mul3(
        axisAngle([0, 1, 0], rng.uniform(-maxAngle, maxAngle)),
        axisAngle([1, 0, 0], rng.uniform(-maxAngle, maxAngle)),
      ),
    );
    const stretch = [0, 1, 2].map(() => rng.uniform(1, 1 + 4 * s));
    const linear = turn.map((v, e) => v * stretch[e % 3]) as Mat3; // turn · diag(stretch)
    transforms.push({
      centre: [anchors[a], anchors[a + 1], anchors[a + 2]],
      linear,
      shift: [rng.uniform(-0.5, 0.5) * s, rng.uniform(-0.5, 0.5) * s, rng.uniform(-0.5, 0.5) * s],
    });
  }
  blendLocalTransforms(p, w.n, transforms, 1 + rng.int(7));
  p.set(normaliseToUnitSphere(makeCloud(p)).cloud.positions);
}

function mul3(a: Mat3, b: Mat3): Mat3 {
  const out = new Float64Array(9);
  for (let r = 0; r < 3; r++)
    for (let c = 0; c < 3; c++) out[r * 3 + c] = a[r * 3] * b[c] + a[r * 3 + 1] * b[3 + c] + a[r * 3 + 2] * b[6 + c];
  return out;
}

/** One augmented view. The input is not modified. */
export function augment(cloud: PointCloud, pipeline: Pipeline, rng: Rng): PointCloud {
  const all = new Uint32Array(cloud.count);
  for (let i = 0; i < all.length; i++) all[i] = i;
  return augmentSubset(cloud, all, pipeline, rng);
}

/**
 * One augmented view of some points of a larger pool (the training path: draw N of the pool's points,
 * then augment only those). Occlusion still finds its region on the whole pool, whose kd-tree is cached.
 * `originOut` (length indices.length), when given, receives the pool index each view point copies.
 */
export function augmentSubset(
  pool: PointCloud,
  indices: Uint32Array,
  pipeline: Pipeline,
  rng: Rng,
  originOut?: Uint32Array,
): PointCloud {
  validatePipeline(pipeline);
  assertValidCloud(pool, 'augment');
  const n = indices.length;
  if (n === 0) throw new RangeError('augment: no points selected');
  const p = new Float32Array(n * 3);
  const nn = pool.normals ? new Float32Array(n * 3) : null;
  for (let i = 0; i < n; i++) {
    const s = indices[i] * 3;
    if (!(indices[i] < pool.count))
      throw new RangeError(`augment: point index ${indices[i]} outside a pool of ${pool.count}`);
    p[i * 3] = pool.positions[s];
    p[i * 3 + 1] = pool.positions[s + 1];
    p[i * 3 + 2] = pool.positions[s + 2];
    if (nn) {
      nn[i * 3] = pool.normals![s];
      nn[i * 3 + 1] = pool.normals![s + 1];
      nn[i * 3 + 2] = pool.normals![s + 2];
    }
  }
  const w: Work = { p, n: nn, origin: indices.slice(), source: pool };
  for (const s of pipeline.steps) {
    if (s.probability < 1 && rng.next() >= s.probability) continue;
    applyStep(w, s, pipeline.upAxis, rng);
  }
  originOut?.set(w.origin); // which pool point each view point copies
  return makeCloud(w.p, w.n);
}

/** Two independent views of one part, for contrastive training. */
export function viewPair(cloud: PointCloud, pipeline: Pipeline, rng: Rng): [PointCloud, PointCloud] {
  return [augment(cloud, pipeline, rng), augment(cloud, pipeline, rng)];
}
