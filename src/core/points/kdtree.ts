// A typed wrapper over kd-tree-javascript, so nothing else touches the untyped library. Distances are
// squared Euclidean (the library prunes with the same metric, so squared distances stay consistent).

import kd from 'kd-tree-javascript'; // CommonJS/UMD: only the default import works in plain Node ESM

interface Node3 {
  x: number;
  y: number;
  z: number;
  i: number; // index into the source cloud
}

const distanceSq = (a: Node3, b: Node3): number => (a.x - b.x) ** 2 + (a.y - b.y) ** 2 + (a.z - b.z) ** 2;

export interface Neighbour {
  readonly index: number;
  readonly distanceSq: number;
}

export class PointIndex {
  private readonly tree: InstanceType<typeof kd.kdTree<Node3>>;
  private readonly probe: Node3 = { x: 0, y: 0, z: 0, i: -1 };
  readonly count: number;

  /** Build over a flat stride-3 array of `count` points. */
  constructor(positions: Float32Array) {
    if (positions.length === 0 || positions.length % 3 !== 0) {
      throw new RangeError(`PointIndex: need a non-empty stride-3 array, got length ${positions.length}`);
    }
    this.count = positions.length / 3;
    const nodes: Node3[] = new Array(this.count);
    for (let i = 0; i < this.count; i++)
      nodes[i] = { x: positions[i * 3], y: positions[i * 3 + 1], z: positions[i * 3 + 2], i };
    this.tree = new kd.kdTree<Node3>(nodes, distanceSq, ['x', 'y', 'z']);
  }

  /** The k nearest points to (x, y, z), nearest first. */
  nearest(x: number, y: number, z: number, k: number): Neighbour[] {
    if (!(k >= 1) || k > this.count) throw new RangeError(`PointIndex.nearest: k = ${k} with ${this.count} points`);
    this.probe.x = x;
    this.probe.y = y;
    this.probe.z = z;
    const found = this.tree.nearest(this.probe, k);
    return found
      .map(([node, d]) => ({ index: node.i, distanceSq: d }))
      .sort((a, b) => a.distanceSq - b.distanceSq || a.index - b.index);
  }

  /** Squared distance to the nearest point. */
  nearestDistanceSq(x: number, y: number, z: number): number {
    this.probe.x = x;
    this.probe.y = y;
    this.probe.z = z;
    return this.tree.nearest(this.probe, 1)[0][1];
  }
}
