// A large procedural corpus for pre-training experiments (research/pretrain.ts, docs/results.md): thousands of
// varied solids, to learn geometry before a user's library arrives. (No pre-trained encoder ships: this corpus
// did not transfer to the real furniture set.) Five generic assembly kinds (stacks of
// round and square sections, slabs on posts, frames with bars, clusters of boxes, bent tubes) plus the demo
// part families at random parameters. Every solid is Z-up in its own frame and outward-wound; pieces may
// overlap (the corpus is only ever sampled as point clouds, never written as manifold files).

import {
  BoxGeometry,
  BufferGeometry,
  CylinderGeometry,
  LatheGeometry,
  Matrix4,
  SphereGeometry,
  TorusGeometry,
  Vector2,
} from 'three';
import type { Mesh } from '../src/core/mesh/types';
import type { Rng } from '../src/core/rng';
import { FAMILIES } from '../src/gen/families';

export const CORPUS_KINDS = ['stack', 'slab-on-posts', 'frame', 'box-cluster', 'bent-tube', 'family'] as const;
export type CorpusKind = (typeof CORPUS_KINDS)[number];

export interface CorpusPart {
  readonly kind: CorpusKind;
  /** A finer class: the kind plus the structural choice the generator made (e.g. "slab-on-posts/4/round"). */
  readonly label: string;
  readonly mesh: Mesh;
}

/** Collects transformed three.js geometries into one triangle mesh. */
class Assembly {
  private readonly positions: number[] = [];
  private readonly indices: number[] = [];

  add(geometry: BufferGeometry, matrix: Matrix4): this {
    const g = geometry.applyMatrix4(matrix); // three's solid geometries are all indexed
    const base = this.positions.length / 3;
    const pos = g.getAttribute('position');
    for (let i = 0; i < pos.count; i++) this.positions.push(pos.getX(i), pos.getY(i), pos.getZ(i));
    const idx = g.index!;
    for (let i = 0; i < idx.count; i++) this.indices.push(base + idx.getX(i));
    g.dispose();
    return this;
  }

  mesh(): Mesh {
    return { positions: Float32Array.from(this.positions), indices: Uint32Array.from(this.indices) };
  }
}

/** three's cylinders and lathes are built along +y; the corpus is Z-up, so `upright` turns them to +z. */
const Y_TO_Z = new Matrix4().makeRotationX(Math.PI / 2);
const at = (x: number, y: number, z: number, extra?: Matrix4): Matrix4 => {
  const m = new Matrix4().makeTranslation(x, y, z);
  if (extra) m.multiply(extra);
  return m;
};
const upright = (x: number, y: number, z: number): Matrix4 => at(x, y, z, Y_TO_Z);

/** A round or square section of height h centred at height zc. */
function section(rng: Rng, a: Assembly, r: number, h: number, zc: number, square: boolean): void {
  if (square) a.add(new BoxGeometry(2 * r, 2 * r, h), at(0, 0, zc));
  else {
    const taper = rng.next() < 0.4 ? rng.uniform(0.3, 1.2) : 1;
    a.add(new CylinderGeometry(r * taper, r, h, 24, 1, false), upright(0, 0, zc));
  }
}

function stack(rng: Rng, a: Assembly): string {
  const square = rng.next() < 0.3;
  if (rng.next() < 0.35) {
    // One revolved profile: a random monotone-in-height outline.
    const n = 3 + rng.int(5),
      pts: Vector2[] = [new Vector2(0, 0)];
    let z = 0;
    for (let i = 0; i < n; i++) {
      z += rng.uniform(0.1, 1);
      pts.push(new Vector2(rng.uniform(0.05, 1), z));
    }
    pts.push(new Vector2(0, z));
    a.add(new LatheGeometry(pts, 24), Y_TO_Z);
    return 'revolved';
  }
  let z = 0;
  for (let i = 0, n = 2 + rng.int(3); i < n; i++) {
    const r = rng.uniform(0.05, 1),
      h = rng.uniform(0.05, 1.5);
    if (rng.next() < 0.15) a.add(new SphereGeometry(r, 16, 12), at(0, 0, z + r));
    else section(rng, a, r, h, z + h / 2, square);
    z += rng.next() < 0.15 ? 2 * r : h;
  }
  return square ? 'square' : 'round';
}

function slabOnPosts(rng: Rng, a: Assembly): string {
  const w = rng.uniform(0.5, 2),
    d = rng.uniform(0.3, 2),
    t = rng.uniform(0.02, 0.25),
    h = rng.uniform(0.1, 2);
  const round = rng.next() < 0.5,
    post = rng.uniform(0.02, 0.15);
  a.add(
    round && rng.next() < 0.4 ? new CylinderGeometry(w / 2, w / 2, t, 32) : new BoxGeometry(w, d, t),
    round && rng.next() < 0.4 ? upright(0, 0, h + t / 2) : at(0, 0, h + t / 2),
  );
  const count = [1, 2, 3, 4, 4, 4, 6][rng.int(7)];
  const inset = rng.uniform(0, 0.2);
  const spots: [number, number][] =
    count === 1
      ? [[0, 0]]
      : count === 2
        ? [
            [-(w / 2 - inset * w), 0],
            [w / 2 - inset * w, 0],
          ]
        : count === 3
          ? [0, 1, 2].map(
              (k) =>
                [
                  Math.cos((2 * Math.PI * k) / 3) * (w / 2) * (1 - inset),
                  Math.sin((2 * Math.PI * k) / 3) * (d / 2) * (1 - inset),
                ] as [number, number],
            )
          : Array.from(
              { length: count },
              (_, k) =>
                [
                  ((k % (count / 2)) / (count / 2 - 1) - 0.5) * w * (1 - 2 * inset),
                  (k < count / 2 ? -0.5 : 0.5) * d * (1 - 2 * inset),
                ] as [number, number],
            );
  for (const [x, y] of spots) {
    if (round) a.add(new CylinderGeometry(post, post * rng.uniform(0.6, 1), h, 12), upright(x, y, h / 2));
    else a.add(new BoxGeometry(2 * post, 2 * post, h), at(x, y, h / 2));
  }
  if (rng.next() < 0.4)
    a.add(new BoxGeometry(w * (1 - inset), d * (1 - inset), t), at(0, 0, h * rng.uniform(0.1, 0.5)));
  const back = rng.next() < 0.3;
  if (back) a.add(new BoxGeometry(w, t, rng.uniform(0.2, 1.5)), at(0, -d / 2, h + t + 0.4));
  return `${count}${round ? '/round' : '/square'}${back ? '/back' : ''}`;
}

function frame(rng: Rng, a: Assembly): string {
  const w = rng.uniform(0.3, 2),
    h = rng.uniform(0.3, 2.5),
    bar = rng.uniform(0.02, 0.15),
    depth = rng.uniform(0.02, 0.4);
  a.add(new BoxGeometry(w, depth, bar), at(0, 0, bar / 2));
  a.add(new BoxGeometry(w, depth, bar), at(0, 0, h - bar / 2));
  a.add(new BoxGeometry(bar, depth, h), at(-w / 2 + bar / 2, 0, h / 2));
  a.add(new BoxGeometry(bar, depth, h), at(w / 2 - bar / 2, 0, h / 2));
  const inner = rng.int(4);
  for (let i = 1; i <= inner; i++) {
    if (rng.next() < 0.5) a.add(new BoxGeometry(w, depth * 0.8, bar * 0.7), at(0, 0, (h * i) / (inner + 1)));
    else a.add(new BoxGeometry(bar * 0.7, depth * 0.8, h), at(-w / 2 + (w * i) / (inner + 1), 0, h / 2));
  }
  const panel = rng.next() < 0.4;
  if (panel) a.add(new BoxGeometry(w - 2 * bar, depth * 0.2, h - 2 * bar), at(0, 0, h / 2));
  return panel ? 'panel' : inner > 0 ? 'bars' : 'open';
}

function boxCluster(rng: Rng, a: Assembly): string {
  const W = rng.uniform(0.3, 2),
    D = rng.uniform(0.3, 2),
    H = rng.uniform(0.1, 2);
  a.add(new BoxGeometry(W, D, H), at(0, 0, H / 2));
  const n = rng.int(5);
  for (let i = 0; i < n; i++) {
    const w = W * rng.uniform(0.1, 1),
      d = D * rng.uniform(0.1, 1),
      h = H * rng.uniform(0.1, 1.5);
    const face = rng.int(5);
    const x = face === 0 ? W / 2 + w / 2 : face === 1 ? -W / 2 - w / 2 : rng.uniform(-W, W) / 2;
    const y = face === 2 ? D / 2 + d / 2 : face === 3 ? -D / 2 - d / 2 : rng.uniform(-D, D) / 2;
    const z = face === 4 ? H + h / 2 : h / 2;
    a.add(new BoxGeometry(w, d, h), at(x, y, z));
  }
  const rod = rng.next() < 0.3;
  if (rod) a.add(new CylinderGeometry(W * 0.2, W * 0.2, D * 1.1, 16), at(0, 0, H * 0.5));
  return `${Math.min(n, 2)}${rod ? '/rod' : ''}`;
}

function bentTube(rng: Rng, a: Assembly): string {
  const R = rng.uniform(0.3, 1.5),
    r = R * rng.uniform(0.05, 0.3),
    arcAngle = rng.uniform(Math.PI / 3, 2 * Math.PI);
  a.add(
    new TorusGeometry(R, r, 12, 32, arcAngle),
    at(0, 0, 0, new Matrix4().makeRotationX(rng.next() < 0.5 ? 0 : Math.PI / 2)),
  );
  if (rng.next() < 0.5 && arcAngle < 1.9 * Math.PI) {
    const leg = rng.uniform(0.2, 2);
    a.add(new CylinderGeometry(r, r, leg, 12), at(R, -leg / 2, 0));
    return 'leg';
  }
  return arcAngle > 1.9 * Math.PI ? 'ring' : 'arc';
}

/** One corpus solid: kind chosen uniformly, parameters from the Rng. */
export function corpusPart(rng: Rng): CorpusPart {
  const kind = CORPUS_KINDS[rng.int(CORPUS_KINDS.length)];
  if (kind === 'family') {
    const family = FAMILIES[rng.int(FAMILIES.length)];
    const solid = family.make(rng, rng.int(8)).solid;
    return {
      kind,
      label: `family/${family.name}`,
      mesh: { positions: Float32Array.from(solid.positions), indices: Uint32Array.from(solid.indices) },
    };
  }
  const a = new Assembly();
  const detail = { stack, 'slab-on-posts': slabOnPosts, frame, 'box-cluster': boxCluster, 'bent-tube': bentTube }[kind](
    rng,
    a,
  );
  return { kind, label: `${kind}/${detail}`, mesh: a.mesh() };
}
