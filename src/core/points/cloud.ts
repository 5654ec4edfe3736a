// The flat point-cloud type used everywhere: Float32Array with stride 3, plus optional per-point normals.

export interface PointCloud {
  readonly count: number;
  readonly positions: Float32Array; // (count*3)
  readonly normals: Float32Array | null; // (count*3) unit vectors, or null when unknown
}

export function makeCloud(positions: Float32Array, normals: Float32Array | null = null): PointCloud {
  if (positions.length % 3 !== 0)
    throw new RangeError(`makeCloud: positions length ${positions.length} is not a multiple of 3`);
  if (normals && normals.length !== positions.length) {
    throw new RangeError(
      `makeCloud: normals length ${normals.length} differs from positions length ${positions.length}`,
    );
  }
  return { count: positions.length / 3, positions, normals };
}

/** Throws a clear error for an empty cloud or any non-finite coordinate. */
export function assertValidCloud(cloud: PointCloud, where: string): void {
  if (cloud.count === 0) throw new RangeError(`${where}: the point cloud is empty`);
  const p = cloud.positions;
  for (let i = 0; i < p.length; i++) {
    if (!Number.isFinite(p[i]))
      throw new RangeError(`${where}: point ${Math.floor(i / 3)} has a non-finite coordinate (${p[i]})`);
  }
}

export function centroid(cloud: PointCloud): [number, number, number] {
  let x = 0,
    y = 0,
    z = 0;
  const p = cloud.positions;
  for (let i = 0; i < p.length; i += 3) {
    x += p[i];
    y += p[i + 1];
    z += p[i + 2];
  }
  const n = cloud.count || 1;
  return [x / n, y / n, z / n];
}
