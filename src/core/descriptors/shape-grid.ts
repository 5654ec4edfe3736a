// A training-free shape descriptor for posed parts: the share of the part's surface in each cell of a G×G×G grid
// over the unit cube that holds the unit-sphere cloud (a "shape histogram" in the sense of Ankerst, Kastenmüller,
// Kriegel & Seidl 1999, "3D shape histograms for similarity search", with cells instead of shells/sectors), each
// point spread over its eight nearest cells (trilinear weights) so a small shift moves mass smoothly. Optional
// channels add, per cell, how much of the surface there faces along x, y and z (|n|², summing to the cell's mass).
// Compared by the cosine of the square-rooted histograms (the Bhattacharyya coefficient of two distributions).

import { SIGN_FLIPS } from '../points/pca';

export interface ShapeGridOptions {
  /** Cells per axis. */
  readonly cells: number;
  /** Split each cell's mass by the surface's facing (|nx|², |ny|², |nz|²): three channels instead of one. */
  readonly facing: boolean;
  /** Average over the four proper sign choices of the frame (principal axes have no preferred signs). */
  readonly signFree: boolean;
  /** Three G×G projections (onto the yz, xz and xy planes) instead of the G×G×G grid. */
  readonly planes?: boolean;
}

export const SHAPE_GRID_DEFAULTS: ShapeGridOptions = { cells: 8, facing: true, signFree: true };

/** Values of the full histogram (before sign-free folding). */
function fullLength(o: ShapeGridOptions): number {
  return (o.planes ? 3 * o.cells ** 2 : o.cells ** 3) * (o.facing ? 3 : 1);
}

/** The flips' diagonals: (sx, sy, sz) of each proper sign choice. */
const FLIP_SIGNS = SIGN_FLIPS.map((m) => [m[0], m[4], m[8]]);

/** Index of the histogram entry `index` seen in the sign choice (sx, sy, sz): its cell mirrored on each flipped axis. */
function imageOf(index: number, [sx, sy, sz]: readonly number[], o: ShapeGridOptions): number {
  const G = o.cells,
    C = o.facing ? 3 : 1;
  const ch = index % C,
    cell = (index - ch) / C;
  const mirror = (i: number, s: number) => (s > 0 ? i : G - 1 - i);
  if (o.planes) {
    const plane = Math.floor(cell / (G * G)),
      u = Math.floor(cell / G) % G,
      v = cell % G;
    const s = [sx, sy, sz];
    return ((plane * G + mirror(u, s[(plane + 1) % 3])) * G + mirror(v, s[(plane + 2) % 3])) * C + ch;
  }
  const i = Math.floor(cell / (G * G)),
    j = Math.floor(cell / G) % G,
    k = cell % G;
  return ((mirror(i, sx) * G + mirror(j, sy)) * G + mirror(k, sz)) * C + ch;
}

/**
 * Sign-free histograms hold the same value in every cell of an orbit of the four sign choices (a cell and its
 * mirror images), so only one cell per orbit is kept, times √(orbit size): the cosine between two folded rows is
 * exactly the cosine between the full ones, in about a quarter of the length. `images` lists, per kept entry, the
 * four entries whose sum it holds (one per sign choice, repeats included).
 */
interface Folding {
  readonly representatives: Int32Array;
  readonly weights: Float32Array;
  readonly images: Int32Array;
}
const foldings = new Map<string, Folding>();
function folding(o: ShapeGridOptions): Folding {
  const key = `${o.cells}:${o.facing}:${o.planes === true}`;
  const cached = foldings.get(key);
  if (cached) return cached;
  const reps: number[] = [],
    weights: number[] = [],
    images: number[] = [];
  const len = fullLength(o);
  for (let index = 0; index < len; index++) {
    const each = FLIP_SIGNS.map((f) => imageOf(index, f, o));
    if (Math.min(...each) !== index) continue;
    reps.push(index);
    weights.push(Math.sqrt(new Set(each).size));
    images.push(...each);
  }
  const f = {
    representatives: Int32Array.from(reps),
    weights: Float32Array.from(weights),
    images: Int32Array.from(images),
  };
  foldings.set(key, f);
  return f;
}

/** Length of the descriptor for these options. */
export function shapeGridLength(o: ShapeGridOptions): number {
  return o.signFree ? folding(o).representatives.length : fullLength(o);
}

/**
 * The descriptor of one posed unit-sphere cloud (stride 3; normals stride 3, used when `facing`): unit length,
 * non-negative, `shapeGridLength(o)` values. The cloud is binned once; the sign-free histogram, the sum of the
 * binnings of the four turned clouds, is that binning summed over each entry's mirror images (a point at t in cell
 * units lands at G − 1 − t when its axis is flipped, so its weights move to the mirrored cells).
 */
export function shapeGrid(points: Float32Array, normals: Float32Array, o: ShapeGridOptions): Float32Array {
  const G = o.cells,
    C = o.facing ? 3 : 1,
    n = points.length / 3;
  const h = new Float64Array(fullLength(o));
  const at = new Int32Array(3),
    frac = new Float64Array(3),
    facing = new Float64Array(3);
  for (let p = 0; p < n; p++) {
    const nx = normals[3 * p],
      ny = normals[3 * p + 1],
      nz = normals[3 * p + 2];
    const squares = nx * nx + ny * ny + nz * nz;
    // A point without a normal (zero vector) faces every way equally.
    if (C === 1) facing[0] = 1;
    else if (squares > 0) {
      facing[0] = nx * nx;
      facing[1] = ny * ny;
      facing[2] = nz * nz;
    } else facing.fill(1);
    const fs = C === 1 ? 1 : squares > 0 ? squares : 3;
    for (let a = 0; a < 3; a++) {
      // Cell centres at −1 + (i + ½)·2/G; clamp to the outer centres.
      const t = Math.min(G - 1, Math.max(0, ((points[3 * p + a] + 1) / 2) * G - 0.5));
      const i = Math.min(G - 2, Math.floor(t));
      at[a] = i;
      frac[a] = t - i;
    }
    if (o.planes) {
      for (let plane = 0; plane < 3; plane++) {
        const u = at[(plane + 1) % 3],
          fu = frac[(plane + 1) % 3],
          v = at[(plane + 2) % 3],
          fv = frac[(plane + 2) % 3];
        for (let a = 0; a < 2; a++)
          for (let b = 0; b < 2; b++) {
            const w = (a ? fu : 1 - fu) * (b ? fv : 1 - fv);
            const cell = ((plane * G + u + a) * G + (v + b)) * C;
            for (let ch = 0; ch < C; ch++) h[cell + ch] += (w * facing[ch]) / fs;
          }
      }
      continue;
    }
    for (let a = 0; a < 2; a++) {
      const wa = a ? frac[0] : 1 - frac[0];
      for (let b = 0; b < 2; b++) {
        const wb = wa * (b ? frac[1] : 1 - frac[1]);
        for (let c = 0; c < 2; c++) {
          const w = wb * (c ? frac[2] : 1 - frac[2]);
          const cell = (((at[0] + a) * G + (at[1] + b)) * G + (at[2] + c)) * C;
          for (let ch = 0; ch < C; ch++) h[cell + ch] += (w * facing[ch]) / fs;
        }
      }
    }
  }
  let s = 0;
  for (let i = 0; i < h.length; i++) s += h[i];
  const fold = o.signFree ? folding(o) : null;
  const out = new Float32Array(fold ? fold.representatives.length : h.length);
  let norm = 0;
  for (let r = 0; r < out.length; r++) {
    const im = fold?.images;
    out[r] = im
      ? Math.sqrt((h[im[4 * r]] + h[im[4 * r + 1]] + h[im[4 * r + 2]] + h[im[4 * r + 3]]) / (4 * s || 1)) *
        fold!.weights[r]
      : Math.sqrt(h[r] / (s || 1));
    norm += out[r] * out[r];
  }
  // √ of a distribution that sums to 1 is already unit length; renormalise against rounding.
  const inv = 1 / Math.sqrt(norm || 1);
  for (let i = 0; i < out.length; i++) out[i] *= inv;
  return out;
}
