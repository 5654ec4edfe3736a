// Canonical pose by principal axes: rotate a centred cloud so its axes of largest, middle and smallest
// spread lie on x, y, z. Eigenvectors of the 3×3 covariance by the cyclic Jacobi method (Golub & Van Loan,
// "Matrix Computations", §8.5). Each axis keeps the sign that makes the third moment along it positive;
// symmetric parts leave that sign unsettled, which training (sign flips) and embedding (averaging over the
// four proper sign choices) absorb.

import { makeCloud, type PointCloud } from './cloud';
import { transformPoints, type Mat3 } from './rotation';

/** Eigen-decomposition of a symmetric 3×3 matrix (row-major). Returns eigenvalues descending and the
 *  eigenvectors as the rows of a rotation matrix (so R·p expresses p in the eigenbasis). */
export function symmetricEigen3(m: ArrayLike<number>): { values: [number, number, number]; vectors: Mat3 } {
  const a = Float64Array.from(m);
  const v = Float64Array.from([1, 0, 0, 0, 1, 0, 0, 0, 1]); // columns become eigenvectors
  for (let sweep = 0; sweep < 50; sweep++) {
    const off = a[1] * a[1] + a[2] * a[2] + a[5] * a[5];
    if (off < 1e-30) break;
    for (const [p, q] of [
      [0, 1],
      [0, 2],
      [1, 2],
    ] as const) {
      const apq = a[p * 3 + q];
      if (Math.abs(apq) < 1e-300) continue;
      const theta = (a[q * 3 + q] - a[p * 3 + p]) / (2 * apq);
      const t = Math.sign(theta || 1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
      const c = 1 / Math.sqrt(t * t + 1),
        s = t * c;
      for (let k = 0; k < 3; k++) {
        // A ← Jᵀ A J
        const akp = a[k * 3 + p],
          akq = a[k * 3 + q];
        a[k * 3 + p] = c * akp - s * akq;
        a[k * 3 + q] = s * akp + c * akq;
      }
      for (let k = 0; k < 3; k++) {
        const apk = a[p * 3 + k],
          aqk = a[q * 3 + k];
        a[p * 3 + k] = c * apk - s * aqk;
        a[q * 3 + k] = s * apk + c * aqk;
      }
      for (let k = 0; k < 3; k++) {
        const vkp = v[k * 3 + p],
          vkq = v[k * 3 + q];
        v[k * 3 + p] = c * vkp - s * vkq;
        v[k * 3 + q] = s * vkp + c * vkq;
      }
    }
  }
  const order = [0, 1, 2].sort((i, j) => a[j * 4] - a[i * 4]);
  const vectors = new Float64Array(9);
  order.forEach((col, row) => {
    for (let k = 0; k < 3; k++) vectors[row * 3 + k] = v[k * 3 + col];
  });
  return { values: [a[order[0] * 4], a[order[1] * 4], a[order[2] * 4]], vectors };
}

/** The rotation that takes a cloud (already centred) into its principal frame, signs set by skewness. */
export function principalFrame(points: Float32Array): Mat3 {
  const n = points.length / 3;
  const c = new Float64Array(9);
  for (let i = 0; i < n; i++) {
    const x = points[i * 3],
      y = points[i * 3 + 1],
      z = points[i * 3 + 2];
    c[0] += x * x;
    c[1] += x * y;
    c[2] += x * z;
    c[4] += y * y;
    c[5] += y * z;
    c[8] += z * z;
  }
  c[3] = c[1];
  c[6] = c[2];
  c[7] = c[5];
  for (let k = 0; k < 9; k++) c[k] /= n;
  const { vectors: r } = symmetricEigen3(c);
  for (let axis = 0; axis < 2; axis++) {
    let third = 0;
    for (let i = 0; i < n; i++) {
      const u = r[axis * 3] * points[i * 3] + r[axis * 3 + 1] * points[i * 3 + 1] + r[axis * 3 + 2] * points[i * 3 + 2];
      third += u * u * u;
    }
    if (third < 0) for (let k = 0; k < 3; k++) r[axis * 3 + k] = -r[axis * 3 + k];
  }
  // The third axis completes a right-handed frame: a proper rotation, never a mirror.
  r[6] = r[1] * r[5] - r[2] * r[4];
  r[7] = r[2] * r[3] - r[0] * r[5];
  r[8] = r[0] * r[4] - r[1] * r[3];
  return r;
}

/** The cloud (and its normals) rotated into its principal frame. */
export function alignToPrincipalAxes(cloud: PointCloud): PointCloud {
  const r = principalFrame(cloud.positions);
  return makeCloud(transformPoints(r, cloud.positions), cloud.normals ? transformPoints(r, cloud.normals) : null);
}

/** The four proper sign choices of a principal frame: identity and the three 180° turns about x, y, z. */
export const SIGN_FLIPS: readonly Mat3[] = [
  [1, 1, 1],
  [1, -1, -1],
  [-1, 1, -1],
  [-1, -1, 1],
].map(([a, b, c]) => Float64Array.from([a, 0, 0, 0, b, 0, 0, 0, c]));

/** Volume of a cloud's axis-aligned bounding box, each side at least `floor` (a flat part is not a zero box). */
export function boxVolume(points: Float32Array, floor = 1e-3): number {
  const lo = [Infinity, Infinity, Infinity],
    hi = [-Infinity, -Infinity, -Infinity];
  for (let i = 0; i < points.length; i += 3) {
    for (let a = 0; a < 3; a++) {
      const v = points[i + a];
      if (v < lo[a]) lo[a] = v;
      if (v > hi[a]) hi[a] = v;
    }
  }
  let volume = 1;
  for (let a = 0; a < 3; a++) volume *= Math.max(floor, hi[a] - lo[a]);
  return volume;
}

/**
 * How square a part sits in its file's own axes: the volume of its bounding box in those axes over the volume in
 * its principal axes (cloud centred). Parts modelled square to their axes, as most CAD and furniture exports are,
 * give about 1 or less (principal axes of an L-shaped or asymmetric part are tilted, so its principal box is
 * larger); a part turned arbitrarily in its file gives more (a cube turned 45° about one axis gives 2).
 */
export function fileFrameBoxRatio(points: Float32Array): number {
  return boxVolume(points) / boxVolume(transformPoints(principalFrame(points), points));
}
