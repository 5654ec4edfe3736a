import { describe, expect, it } from 'vitest';
import { shapeGrid, shapeGridLength, type ShapeGridOptions } from '../../../src/core/descriptors/shape-grid';
import { SIGN_FLIPS } from '../../../src/core/points/pca';
import { createRng } from '../../../src/core/rng';

const dot = (a: Float32Array, b: Float32Array) => a.reduce((s, v, i) => s + v * b[i], 0);

function randomCloud(seed: number, n = 300) {
  const rng = createRng(seed);
  const points = new Float32Array(n * 3),
    normals = new Float32Array(n * 3);
  for (let i = 0; i < n; i++) {
    for (let d = 0; d < 3; d++) points[3 * i + d] = rng.next() * 1.4 - 0.7;
    const v = [rng.next() - 0.5, rng.next() - 0.5, rng.next() - 0.5];
    const len = Math.hypot(...v);
    for (let d = 0; d < 3; d++) normals[3 * i + d] = v[d] / len;
  }
  return { points, normals };
}

/** The cloud with its three turned copies (the four proper sign choices): its plain histogram is sign-free by construction. */
function withTurns(c: { points: Float32Array; normals: Float32Array }) {
  const n = c.points.length;
  const points = new Float32Array(4 * n),
    normals = new Float32Array(4 * n);
  SIGN_FLIPS.forEach((m, f) => {
    for (let i = 0; i < n; i += 3)
      for (let d = 0; d < 3; d++) {
        points[f * n + i + d] = c.points[i + d] * m[4 * d];
        normals[f * n + i + d] = c.normals[i + d] * m[4 * d];
      }
  });
  return { points, normals };
}

describe('shape grid', () => {
  // Worked example (trilinear weights): a point at the centre of a G = 8 grid over [−1, 1]³ lies halfway between
  // cell centres 3 and 4 on every axis, so each of the eight cells gets 1/8; √(1/8) in each, zero elsewhere.
  it('spreads a point over its eight nearest cells with trilinear weights', () => {
    const g = shapeGrid(new Float32Array([0, 0, 0]), new Float32Array([0, 0, 1]), {
      cells: 8,
      facing: false,
      signFree: false,
    });
    expect(g.length).toBe(512);
    const nonzero = [...g.keys()].filter((i) => g[i] > 0);
    expect(nonzero).toHaveLength(8);
    for (const i of nonzero) {
      expect(g[i]).toBeCloseTo(Math.sqrt(1 / 8), 6);
      const [x, y, z] = [Math.floor(i / 64), Math.floor(i / 8) % 8, i % 8];
      for (const c of [x, y, z]) expect([3, 4]).toContain(c);
    }
  });

  // Pythagoras: a unit normal (0.6, 0.8, 0) faces x by 0.36 and y by 0.64 of its mass.
  it('splits a cell by facing as the squared normal components', () => {
    const centre = -1 + (2 * 2 + 1) / 4; // centre of cell 2 of 4 on every axis: all mass in one cell
    const g = shapeGrid(new Float32Array([centre, centre, centre]), new Float32Array([0.6, 0.8, 0]), {
      cells: 4,
      facing: true,
      signFree: false,
    });
    const cell = ((2 * 4 + 2) * 4 + 2) * 3;
    expect(g[cell] ** 2).toBeCloseTo(0.36, 6);
    expect(g[cell + 1] ** 2).toBeCloseTo(0.64, 6);
    expect(g[cell + 2]).toBe(0);
  });

  it('lets a point without a normal face every way equally', () => {
    const centre = -1 + (2 * 2 + 1) / 4;
    const g = shapeGrid(new Float32Array([centre, centre, centre]), new Float32Array(3), {
      cells: 4,
      facing: true,
      signFree: false,
    });
    const cell = ((2 * 4 + 2) * 4 + 2) * 3;
    for (let ch = 0; ch < 3; ch++) expect(g[cell + ch] ** 2).toBeCloseTo(1 / 3, 6);
  });

  // Cosine of √-histograms is the Bhattacharyya coefficient Σ √(p_i q_i) (Bhattacharyya 1943), computed here
  // from the plain histograms: squaring the rows gives the distributions back.
  it('compares by the Bhattacharyya coefficient', () => {
    const o: ShapeGridOptions = { cells: 6, facing: true, signFree: false };
    const a = shapeGrid(randomCloud(1).points, randomCloud(1).normals, o),
      b = shapeGrid(randomCloud(2).points, randomCloud(2).normals, o);
    const p = a.map((v) => v * v),
      q = b.map((v) => v * v);
    expect(p.reduce((s, v) => s + v, 0)).toBeCloseTo(1, 5);
    const bc = p.reduce((s, v, i) => s + Math.sqrt(v * q[i]), 0);
    expect(dot(a, b)).toBeCloseTo(bc, 5);
  });

  for (const o of [
    { cells: 8, facing: true, planes: false },
    { cells: 7, facing: false, planes: false },
    { cells: 12, facing: true, planes: true },
    { cells: 5, facing: false, planes: true },
  ]) {
    it(`folds the sign-free histogram without changing cosines (${JSON.stringify(o)})`, () => {
      const a = randomCloud(3),
        b = randomCloud(4);
      const folded = (c: typeof a) => shapeGrid(c.points, c.normals, { ...o, signFree: true });
      // Independent route: the plain histogram of the cloud with its turned copies.
      const full = (c: typeof a) => {
        const t = withTurns(c);
        return shapeGrid(t.points, t.normals, { ...o, signFree: false });
      };
      expect(folded(a).length).toBe(shapeGridLength({ ...o, signFree: true }));
      expect(folded(a).length).toBeLessThan(full(a).length / 2);
      expect(dot(folded(a), folded(b))).toBeCloseTo(dot(full(a), full(b)), 5);
      expect(dot(folded(a), folded(a))).toBeCloseTo(1, 5);
    });
  }

  it('does not change when the part is turned by a sign choice (sign-free)', () => {
    const c = randomCloud(5);
    const o: ShapeGridOptions = { cells: 8, facing: true, signFree: true };
    const turned = withTurns(c);
    const third = {
      points: turned.points.slice(c.points.length * 2, c.points.length * 3),
      normals: turned.normals.slice(c.points.length * 2, c.points.length * 3),
    };
    const a = shapeGrid(c.points, c.normals, o),
      b = shapeGrid(third.points, third.normals, o);
    for (let i = 0; i < a.length; i++) expect(b[i]).toBeCloseTo(a[i], 6);
  });

  // The projections are marginals of the grid: summing the 3-D histogram over x gives the yz plane.
  it('projects onto planes as the grid summed over the third axis', () => {
    const c = randomCloud(6);
    const grid = shapeGrid(c.points, c.normals, { cells: 6, facing: false, signFree: false }).map((v) => v * v);
    const planes = shapeGrid(c.points, c.normals, { cells: 6, facing: false, signFree: false, planes: true }).map(
      (v) => v * v * 3,
    );
    for (let j = 0; j < 6; j++)
      for (let k = 0; k < 6; k++) {
        let s = 0;
        for (let i = 0; i < 6; i++) s += grid[(i * 6 + j) * 6 + k];
        expect(planes[j * 6 + k]).toBeCloseTo(s, 5);
      }
  });
});
