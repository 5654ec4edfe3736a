// Research: the shape-distribution family of Osada, Funkhouser, Chazelle & Dobkin 2002 ("Shape distributions",
// ACM TOG 21(4)) beyond D2 — D1 (distance from the centroid to a random surface point), A3 (the angle at one of
// three random points), D3 (the square root of the area of the triangle of three random points) — and the part's
// size, each alone and fused with a saved run's encoders and the shipped surface grid (30 %), leave-one-out, by
// cosine and ordered through the library. One JSON line per configuration.
//   npx tsx research/scripts/distributions.ts <library-dir> --run <run-dir> [--cache <dir>] [--shares 0.1,0.2]
//       [--sizes 0.02,0.05] [--size-rows '[[alpha,share],…]'] [--size-only] [--rel-sizes 0.1,0.2]
// A histogram h (summing to 1) enters as √h, a unit row whose cosine with another is the Bhattacharyya coefficient
// (the Hellinger kernel), so it fuses as the grid does: [√(1−s)·shipped, √s·√h]. Size enters as a penalty on the
// fused cosine, sim − λ·|ln(diagonal_i / diagonal_j)| (file units: meaningful only where a library shares a unit).
import { fused, surfaceGrids } from '../../src/core/model/embed';
import { memberPoses } from '../../src/core/model/train-config';
import { evaluateRetrieval, cosineSimilarity } from '../../src/core/retrieval/metrics';
import { throughLibrary } from '../../src/core/retrieval/hubness';
import { DIFFUSION_DEFAULTS } from '../../src/core/retrieval/diffusion';
import { arg, cachedEncoderRows, savedRunOnLibrary } from './cached-rows';
import { createRng, hashString } from '../../src/core/rng';
import { d2Histogram } from '../../src/core/retrieval/d2';

export const SAMPLES = 16384;
export const BINS = 64;

/** D1, A3 and D3 histograms of a unit-sphere cloud (stride 3), each summing to 1 (Osada et al. 2002, §4). */
export function distributions(points: Float32Array, seed: number, samples = SAMPLES, bins = BINS) {
  const n = points.length / 3;
  let cx = 0,
    cy = 0,
    cz = 0;
  for (let i = 0; i < n; i++) {
    cx += points[i * 3];
    cy += points[i * 3 + 1];
    cz += points[i * 3 + 2];
  }
  cx /= n;
  cy /= n;
  cz /= n;
  const d1 = new Float32Array(bins),
    a3 = new Float32Array(bins),
    d3 = new Float32Array(bins);
  const rng = createRng(hashString('distributions', seed));
  const bin = (x: number, max: number) => Math.max(0, Math.min(bins - 1, Math.floor((x / max) * bins)));
  for (let k = 0; k < samples; k++) {
    const i = rng.int(n) * 3,
      j = rng.int(n) * 3,
      l = rng.int(n) * 3;
    // D1: the centroid lies within the unit sphere, so distances to it lie in [0, 2].
    d1[bin(Math.hypot(points[i] - cx, points[i + 1] - cy, points[i + 2] - cz), 2)]++;
    const ux = points[j] - points[i],
      uy = points[j + 1] - points[i + 1],
      uz = points[j + 2] - points[i + 2];
    const vx = points[l] - points[i],
      vy = points[l + 1] - points[i + 1],
      vz = points[l + 2] - points[i + 2];
    const nu = Math.hypot(ux, uy, uz),
      nv = Math.hypot(vx, vy, vz);
    // A3: the angle at point i, in [0, π] (a repeated point gives no angle: counted at 0).
    const c = nu > 0 && nv > 0 ? (ux * vx + uy * vy + uz * vz) / (nu * nv) : 1;
    a3[bin(Math.acos(Math.max(-1, Math.min(1, c))), Math.PI)]++;
    // D3: √area; a triangle inside the unit sphere has area at most 3√3/4 (equilateral, inscribed), √ ≤ 1.14.
    const area = 0.5 * Math.hypot(uy * vz - uz * vy, uz * vx - ux * vz, ux * vy - uy * vx);
    d3[bin(Math.sqrt(area), Math.sqrt((3 * Math.sqrt(3)) / 4))]++;
  }
  for (const h of [d1, a3, d3]) for (let b = 0; b < bins; b++) h[b] /= samples;
  return { d1, a3, d3 };
}

/** √h row by row: unit rows whose cosine is the Bhattacharyya coefficient. */
const hellinger = (h: Float32Array) => h.map(Math.sqrt);

async function main(): Promise<void> {
  const { libDir, lib, parts, n, runDir, run, pose, seed, cache } = await savedRunOnLibrary();
  const shares = (arg('--shares') ?? '0.1,0.2').split(',').map(Number);
  const sizes = (arg('--sizes') ?? '0.02,0.05').split(',').map(Number);
  const sizeRows: [number, number][] = JSON.parse(arg('--size-rows') ?? '[]');
  const sizeOnly = process.argv.includes('--size-only');
  const relSizes = (arg('--rel-sizes') ?? '').split(',').filter(Boolean).map(Number);

  const round = (m: { nn: number; first_tier: number; map: number }) => ({
    nn: +m.nn.toFixed(3),
    ft: +m.first_tier.toFixed(3),
    map: +m.map.toFixed(3),
  });
  const score = (sim: (i: number, j: number) => number) => ({
    cosine: round(evaluateRetrieval(lib.labels, sim)),
    library: round(evaluateRetrieval(lib.labels, throughLibrary(n, sim, DIFFUSION_DEFAULTS))),
  });
  const rowsScore = (v: Float32Array) => score(cosineSimilarity(v, v.length / n));

  const encoderRows = (name: 'learned' | 'untrained') => cachedEncoderRows(name, run, runDir, lib.parts, cache);

  const grid = surfaceGrids(parts, memberPoses(pose), { cells: 8, facing: true });
  const t0 = Date.now();
  const hist = {
    d1: new Float32Array(n * BINS),
    a3: new Float32Array(n * BINS),
    d3: new Float32Array(n * BINS),
    d2: new Float32Array(n * BINS),
  };
  parts.forEach((p, i) => {
    const h = distributions(p.points, i);
    hist.d1.set(hellinger(h.d1), i * BINS);
    hist.a3.set(hellinger(h.a3), i * BINS);
    hist.d3.set(hellinger(h.d3), i * BINS);
    hist.d2.set(hellinger(d2Histogram(p.points, createRng(hashString('d2', i)), SAMPLES, BINS)), i * BINS);
  });
  const ms = Date.now() - t0;
  // All four side by side, each a quarter (the row stays unit length).
  const all = new Float32Array(n * BINS * 4);
  for (let i = 0; i < n; i++)
    (['d1', 'd2', 'a3', 'd3'] as const).forEach((k, q) => {
      for (let b = 0; b < BINS; b++) all[i * BINS * 4 + q * BINS + b] = hist[k][i * BINS + b] * 0.5;
    });
  const descriptors: Record<string, Float32Array> = { ...hist, all };
  const line = (o: object) => console.log(JSON.stringify({ lib: libDir, run: runDir, seed, ...o }));
  if (!sizeOnly)
    for (const [name, rows] of Object.entries(descriptors))
      line({ descriptor: name, ms, encoder: 'none', ...rowsScore(rows) });
  for (const enc of ['learned', 'untrained'] as const) {
    const shipped = fused(encoderRows(enc), grid, n, 0.3);
    line({ descriptor: 'shipped', encoder: enc, share: 0, ...rowsScore(shipped) });
    if (!sizeOnly)
      for (const [name, rows] of Object.entries(descriptors))
        for (const s of shares)
          line({ descriptor: name, encoder: enc, share: s, ...rowsScore(fused(shipped, rows, n, s)) });
    const sim = cosineSimilarity(shipped, shipped.length / n);
    const logd = lib.parts.map((p) => Math.log(Math.max(p.diagonal, 1e-12)));
    // The same penalty in units of each pair's spread of similarities (the mean of the two rows' standard
    // deviations), so that it weighs alike whatever range an encoder's cosines span.
    const spread = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      let a = 0,
        b = 0;
      for (let j = 0; j < n; j++)
        if (j !== i) {
          const v = sim(i, j);
          a += v;
          b += v * v;
        }
      const m = a / (n - 1);
      spread[i] = Math.sqrt(Math.max(0, b / (n - 1) - m * m));
    }
    // One spread for the whole library: the standard deviation of all distinct pairs' similarities.
    let pa = 0,
      pb = 0;
    for (let i = 0; i < n; i++)
      for (let j = i + 1; j < n; j++) {
        const v = sim(i, j);
        pa += v;
        pb += v * v;
      }
    const pairs = (n * (n - 1)) / 2;
    const global = Math.sqrt(Math.max(0, pb / pairs - (pa / pairs) ** 2));
    for (const lambda of relSizes) {
      const s3 = (i: number, j: number) =>
        sim(i, j) - ((lambda * (spread[i] + spread[j])) / 2) * Math.abs(logd[i] - logd[j]);
      line({ descriptor: 'size-rel', encoder: enc, lambda, ...score(s3) });
      const s4 = (i: number, j: number) => sim(i, j) - lambda * global * Math.abs(logd[i] - logd[j]);
      line({ descriptor: 'size-rel-global', encoder: enc, lambda, spread: +global.toFixed(4), ...score(s4) });
    }
    // Size as two more values a row, [cos(α·ln d), sin(α·ln d)] at share w: the cosine gains w·cos(α·Δln d), a
    // form every cosine search takes as it is (SQL, the neighbour table).
    for (const [alpha, w] of sizeRows) {
      const rows = new Float32Array(n * 2);
      lib.parts.forEach((p, i) => {
        const t = alpha * Math.log(Math.max(p.diagonal, 1e-12));
        rows[i * 2] = Math.cos(t);
        rows[i * 2 + 1] = Math.sin(t);
      });
      line({ descriptor: 'size-rows', encoder: enc, alpha, share: w, ...rowsScore(fused(shipped, rows, n, w)) });
    }
    for (const lambda of sizes) {
      const s2 = (i: number, j: number) => sim(i, j) - lambda * Math.abs(logd[i] - logd[j]);
      line({ descriptor: 'size', encoder: enc, lambda, ...score(s2) });
    }
  }
}

if (process.argv[1]?.endsWith('distributions.ts')) await main();
