import { beforeAll, describe, expect, it } from 'vitest';
import { Encoder } from '../../../src/core/model/encoder';
import { DEFAULT_ENCODER } from '../../../src/core/model/encoder-config';
import { embedForRetrieval, embedParts, RETRIEVAL_RESAMPLINGS } from '../../../src/core/model/embed';
import { resampled } from '../../../src/core/model/views';
import { makeCloud } from '../../../src/core/points/cloud';
import { defaultPose } from '../../../src/core/model/defaults';
import {
  alignToPrincipalAxes,
  boxVolume,
  fileFrameBoxRatio,
  principalFrame,
  symmetricEigen3,
} from '../../../src/core/points/pca';
import { axisAngle, randomRotation, transformPoints } from '../../../src/core/points/rotation';
import { createRng } from '../../../src/core/rng';
import { expectClose } from '../../helpers';
import { useBackend, guardTensorLeaks } from '../../tf-helpers';

guardTensorLeaks();

beforeAll(async () => {
  await useBackend('wasm');
});

/** Points spread unevenly along three axes (a skewed box), so the principal axes are well defined. */
function skewedCloud(n: number, seed: number): Float32Array {
  const rng = createRng(seed);
  const p = new Float32Array(n * 3);
  for (let i = 0; i < n; i++) {
    const u = rng.next();
    p.set([3 * u * u - 1, rng.uniform(-0.6, 0.6) * (0.5 + u), rng.uniform(-0.2, 0.2)], i * 3);
  }
  let cx = 0,
    cy = 0,
    cz = 0;
  for (let i = 0; i < n; i++) {
    cx += p[i * 3];
    cy += p[i * 3 + 1];
    cz += p[i * 3 + 2];
  }
  for (let i = 0; i < n; i++) {
    p[i * 3] -= cx / n;
    p[i * 3 + 1] -= cy / n;
    p[i * 3 + 2] -= cz / n;
  }
  return p;
}

describe('symmetric 3×3 eigen-decomposition (Jacobi)', () => {
  it('recovers the eigenvalues and eigenvectors of R·diag(5, 2, 0.5)·Rᵀ built from a known rotation', () => {
    const r = axisAngle([0.6, 0.8, 0], 0.7);
    const lam = [5, 2, 0.5];
    const m = new Float64Array(9);
    for (let i = 0; i < 3; i++)
      for (let j = 0; j < 3; j++) for (let k = 0; k < 3; k++) m[i * 3 + j] += r[i * 3 + k] * lam[k] * r[j * 3 + k];
    const { values, vectors } = symmetricEigen3(m);
    expectClose(values, lam, { atol: 1e-10 });
    for (let k = 0; k < 3; k++) {
      // Row k of `vectors` is ± column k of R.
      const dot = vectors[k * 3] * r[k] + vectors[k * 3 + 1] * r[3 + k] + vectors[k * 3 + 2] * r[6 + k];
      expectClose(Math.abs(dot), 1, { atol: 1e-10 });
    }
  });
});

describe('principal-axes pose', () => {
  it('is a proper rotation, and a rotated copy lands in the same pose', () => {
    const p = skewedCloud(3000, 1);
    const m = principalFrame(p);
    const det =
      m[0] * (m[4] * m[8] - m[5] * m[7]) - m[1] * (m[3] * m[8] - m[5] * m[6]) + m[2] * (m[3] * m[7] - m[4] * m[6]);
    expectClose(det, 1, { atol: 1e-9 });
    const a = alignToPrincipalAxes(makeCloud(p)).positions;
    const rng = createRng(2);
    for (let t = 0; t < 5; t++) {
      const b = alignToPrincipalAxes(makeCloud(transformPoints(randomRotation(rng), p))).positions;
      expectClose(b, a, { atol: 1e-4 });
    }
  });
  it('makes retrieval embeddings independent of the input orientation', () => {
    const enc = new Encoder(DEFAULT_ENCODER, createRng(3));
    const p = skewedCloud(512, 4);
    const part = { points: p, normals: new Float32Array(p.length) };
    const turned = transformPoints(randomRotation(createRng(5)), p);
    const e1 = embedForRetrieval(enc, [part], 512, 'principal-axes');
    const e2 = embedForRetrieval(enc, [{ points: turned, normals: part.normals }], 512, 'principal-axes');
    expectClose(e2, e1, { atol: 1e-3 });
    // Without the pose the same rotation moves the embedding.
    const f1 = embedForRetrieval(enc, [part], 512, 'as-is');
    const f2 = embedForRetrieval(enc, [{ points: turned, normals: part.normals }], 512, 'as-is');
    let cos = 0;
    for (let i = 0; i < f1.length; i++) cos += f1[i] * f2[i];
    expect(cos).toBeLessThan(0.999);
    enc.dispose();
  });
});

// Test-time augmentation: averaging a model's outputs over several versions of one input is common practice
// (Krizhevsky, Sutskever & Hinton 2012 averaged over ten crops; from memory).
describe('how square a part sits in its file (file-frame box over principal box)', () => {
  /** A centred lattice filling a cuboid with half-extents a: symmetric, so its principal axes are the cuboid's. */
  function cuboidLattice(a: readonly [number, number, number], steps = 8): Float32Array {
    const out: number[] = [];
    for (let i = 0; i <= steps; i++)
      for (let j = 0; j <= steps; j++)
        for (let k = 0; k <= steps; k++) {
          out.push(a[0] * ((2 * i) / steps - 1), a[1] * ((2 * j) / steps - 1), a[2] * ((2 * k) / steps - 1));
        }
    return Float32Array.from(out);
  }
  const a: [number, number, number] = [1, 0.5, 0.25];

  it('is 1 for a cuboid square to its file axes, in any order of its sides', () => {
    expectClose(fileFrameBoxRatio(cuboidLattice(a)), 1, { atol: 1e-6 });
    expectClose(fileFrameBoxRatio(cuboidLattice([0.25, 1, 0.5])), 1, { atol: 1e-6 });
  });

  it('matches the box of a turned box, half-extent Σⱼ |Rᵢⱼ| aⱼ on axis i (Ericson, Real-Time Collision Detection, 2004, §4.2.6)', () => {
    // Worked by hand: 2 × 1 × 0.5 turned 45° about z has half-extents 1.5/√2, 1.5/√2, 0.25 → volume ratio 2.25.
    const r45 = axisAngle([0, 0, 1], Math.PI / 4);
    expectClose(fileFrameBoxRatio(transformPoints(r45, cuboidLattice(a))), 2.25, { atol: 1e-5 });
    const rng = createRng(11);
    for (let t = 0; t < 5; t++) {
      const r = randomRotation(rng);
      let expected = 1;
      for (let i = 0; i < 3; i++)
        expected *= (Math.abs(r[i * 3]) * a[0] + Math.abs(r[i * 3 + 1]) * a[1] + Math.abs(r[i * 3 + 2]) * a[2]) / a[i];
      expectClose(fileFrameBoxRatio(transformPoints(r, cuboidLattice(a))), expected, { rtol: 1e-5 });
    }
  });

  it('sends a library of parts turned at random to the principal-axes pose, and the same parts square to the file axes', () => {
    const rng = createRng(12);
    const parts = Array.from({ length: 20 }, (_, i) => cuboidLattice([1, 0.4 + 0.02 * i, 0.2], 5));
    expect(defaultPose(parts.map((p) => fileFrameBoxRatio(p)))).toBe('file-and-principal');
    expect(defaultPose(parts.map((p) => fileFrameBoxRatio(transformPoints(randomRotation(rng), p))))).toBe(
      'principal-axes',
    );
  });

  it('gives a flat part a thin box instead of a zero one', () => {
    const flat = Float32Array.from([-1, -1, 0, 1, -1, 0, 1, 1, 0, -1, 1, 0]);
    expectClose(boxVolume(flat), 4e-3, { rtol: 1e-9 });
    expect(Number.isFinite(fileFrameBoxRatio(flat))).toBe(true);
  });
});

describe('retrieval embedding averaged over resamplings', () => {
  it('subset r is the n pool points from r·n on, wrapping; the subsets of a 4n pool are disjoint and cover it', () => {
    const p = skewedCloud(64, 6);
    const part = { points: p, normals: p.map((v) => -v) };
    expect(resampled(part, 0, 16)).toBe(part);
    const seen = new Set<number>();
    for (let r = 0; r < 4; r++) {
      const s = resampled(part, r, 16);
      for (let k = 0; k < 16; k++) {
        expect([s.points[3 * k], s.points[3 * k + 2]]).toEqual([p[3 * (16 * r + k)], p[3 * (16 * r + k) + 2]]);
        expect(s.normals[3 * k + 1]).toBe(-p[3 * (16 * r + k) + 1]);
        seen.add(16 * r + k);
      }
    }
    expect(seen.size).toBe(64);
    expect(resampled(part, 5, 16).points.subarray(0, 3)).toEqual(p.subarray(16 * 3, 16 * 3 + 3)); // 80 mod 64
  });
  it('a pool of four copies of one subset embeds as that subset does, four different subsets do not', () => {
    const enc = new Encoder({ ...DEFAULT_ENCODER, surfaceGrid: null }, createRng(7)); // the encoder's rows alone
    const p = skewedCloud(128, 8);
    const tiled = new Float32Array(512 * 3);
    for (let r = 0; r < 4; r++) tiled.set(p, r * 128 * 3);
    const zeros = new Float32Array(512 * 3);
    const one = embedForRetrieval(enc, [{ points: tiled, normals: zeros }], 128, 'as-is', 1);
    expectClose(embedForRetrieval(enc, [{ points: tiled, normals: zeros }], 128, 'as-is', 4), one, { atol: 1e-5 });
    expectClose(one, embedParts(enc, [{ points: p, normals: zeros.subarray(0, 384) }], 128), { atol: 1e-6 });
    const other = skewedCloud(512, 9);
    const a = embedForRetrieval(enc, [{ points: other, normals: zeros }], 128, 'as-is', 1);
    const b = embedForRetrieval(enc, [{ points: other, normals: zeros }], 128, 'as-is', RETRIEVAL_RESAMPLINGS);
    let cos = 0,
      len = 0;
    for (let i = 0; i < a.length; i++) {
      cos += a[i] * b[i];
      len += b[i] * b[i];
    }
    expect(cos).toBeLessThan(0.99999);
    expectClose(len, 1, { atol: 1e-5 });
    expect(() => embedForRetrieval(enc, [{ points: other, normals: zeros }], 128, 'as-is', 0)).toThrow(
      /resamplings must be a whole number/,
    );
    enc.dispose();
  });
});
