// Rotations as row-major 3×3 matrices (Float64Array(9)); uniform random rotations by Shoemake's method.

import type { Rng } from '../rng';

export type Mat3 = Float64Array; // row-major: m[r*3 + c]

/** Rotation matrix of the unit quaternion (x, y, z, w). */
export function quaternionToMatrix(x: number, y: number, z: number, w: number, out: Mat3 = new Float64Array(9)): Mat3 {
  out[0] = 1 - 2 * (y * y + z * z);
  out[1] = 2 * (x * y - z * w);
  out[2] = 2 * (x * z + y * w);
  out[3] = 2 * (x * y + z * w);
  out[4] = 1 - 2 * (x * x + z * z);
  out[5] = 2 * (y * z - x * w);
  out[6] = 2 * (x * z - y * w);
  out[7] = 2 * (y * z + x * w);
  out[8] = 1 - 2 * (x * x + y * y);
  return out;
}

/**
 * Haar-uniform random rotation from a uniform unit quaternion (Shoemake 1992, "Uniform random rotations",
 * Graphics Gems III): with u1, u2, u3 ~ U(0, 1),
 * q = (√(1−u1)·sin 2πu2, √(1−u1)·cos 2πu2, √u1·sin 2πu3, √u1·cos 2πu3).
 */
export function randomRotation(rng: Rng, out: Mat3 = new Float64Array(9)): Mat3 {
  const u1 = rng.next(),
    u2 = rng.next(),
    u3 = rng.next();
  const a = Math.sqrt(1 - u1),
    b = Math.sqrt(u1);
  return quaternionToMatrix(
    a * Math.sin(2 * Math.PI * u2),
    a * Math.cos(2 * Math.PI * u2),
    b * Math.sin(2 * Math.PI * u3),
    b * Math.cos(2 * Math.PI * u3),
    out,
  );
}

/** Rotation by angleRad about a unit axis (Rodrigues' formula). */
export function axisAngle(
  axis: readonly [number, number, number],
  angleRad: number,
  out: Mat3 = new Float64Array(9),
): Mat3 {
  const [x, y, z] = axis;
  const s = Math.sin(angleRad / 2);
  return quaternionToMatrix(x * s, y * s, z * s, Math.cos(angleRad / 2), out);
}

/** out = M · p for every point (stride 3); out may be the input. */
export function transformPoints(
  m: Mat3,
  src: Float32Array,
  out: Float32Array = new Float32Array(src.length),
): Float32Array {
  for (let i = 0; i < src.length; i += 3) {
    const x = src[i],
      y = src[i + 1],
      z = src[i + 2];
    out[i] = m[0] * x + m[1] * y + m[2] * z;
    out[i + 1] = m[3] * x + m[4] * y + m[5] * z;
    out[i + 2] = m[6] * x + m[7] * y + m[8] * z;
  }
  return out;
}

/** Rotation angle θ of a rotation matrix: cos θ = (trace − 1) / 2. */
export function rotationAngle(m: Mat3): number {
  return Math.acos(Math.max(-1, Math.min(1, (m[0] + m[4] + m[8] - 1) / 2)));
}
