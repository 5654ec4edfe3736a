import { describe, expect, it } from 'vitest';
import { makeCloud, type PointCloud } from '../../../src/core/points/cloud';
import {
  AUGMENT_KINDS,
  augment,
  blendLocalTransforms,
  pipelineFromJson,
  pipelineToJson,
  PRESETS,
  viewPair,
  WARP_SIGMA,
  type LocalTransform,
  type Pipeline,
} from '../../../src/core/points/augment';
import { cloudDistances } from '../../../src/core/points/distance';
import { PointIndex } from '../../../src/core/points/kdtree';
import { axisAngle, randomRotation, rotationAngle, type Mat3 } from '../../../src/core/points/rotation';
import { createRng } from '../../../src/core/rng';
import { expectClose, ksCritical, ksStatistic } from '../../helpers';

function randomCloud(n: number, seed: number): PointCloud {
  const rng = createRng(seed);
  return makeCloud(Float32Array.from({ length: n * 3 }, () => rng.uniform(-1, 1)));
}

/** Points on the unit sphere with their outward normals (= positions). */
function sphereCloud(n: number, seed: number): PointCloud {
  const rng = createRng(seed);
  const p = new Float32Array(n * 3);
  for (let i = 0; i < n; i++) {
    const z = rng.uniform(-1, 1),
      a = rng.uniform(0, 2 * Math.PI),
      r = Math.sqrt(1 - z * z);
    p.set([r * Math.cos(a), r * Math.sin(a), z], i * 3);
  }
  return makeCloud(p, p.slice());
}

const only = (kind: Pipeline['steps'][number]['kind'], strength: number): Pipeline => ({
  version: 1,
  upAxis: 'z',
  steps: [{ kind, strength, probability: 1 }],
});

function det(m: Mat3): number {
  return m[0] * (m[4] * m[8] - m[5] * m[7]) - m[1] * (m[3] * m[8] - m[5] * m[6]) + m[2] * (m[3] * m[7] - m[4] * m[6]);
}

describe('rotations', () => {
  it('every rotation matrix is orthonormal with determinant +1', () => {
    const rng = createRng(1);
    for (let t = 0; t < 200; t++) {
      const m = t % 2 ? randomRotation(rng) : axisAngle([0, 0, 1], rng.uniform(-4, 4));
      const mmt: number[] = [];
      for (let r = 0; r < 3; r++)
        for (let c = 0; c < 3; c++)
          mmt.push(m[r * 3] * m[c * 3] + m[r * 3 + 1] * m[c * 3 + 1] + m[r * 3 + 2] * m[c * 3 + 2]);
      expectClose(mmt, [1, 0, 0, 0, 1, 0, 0, 0, 1], { atol: 1e-12 });
      expectClose(det(m), 1, { atol: 1e-12 });
    }
  });
  it('Haar-uniform rotations (Shoemake 1992): the angle θ has density (1 − cos θ)/π on [0, π], CDF (θ − sin θ)/π (KS, α = 0.001)', () => {
    const rng = createRng(2);
    const n = 5000;
    const angles = Array.from({ length: n }, () => rotationAngle(randomRotation(rng)));
    const cdf = (t: number) => (t - Math.sin(t)) / Math.PI;
    expect(ksStatistic(angles, cdf)).toBeLessThan(ksCritical(n));
    // The test can fail: angles uniform on [0, π] (a common mistake) are rejected.
    expect(
      ksStatistic(
        angles.map((_, i) => (Math.PI * (i + 0.5)) / n),
        cdf,
      ),
    ).toBeGreaterThan(ksCritical(n));
  });
  it('rotation about the up axis keeps the up coordinate and every pairwise distance', () => {
    const cloud = randomCloud(64, 3);
    const out = augment(cloud, only('rotate-up', 1), createRng(4));
    for (let i = 0; i < 64; i++) expect(out.positions[i * 3 + 2]).toBeCloseTo(cloud.positions[i * 3 + 2], 6);
    const d = (c: PointCloud, i: number, j: number) =>
      Math.hypot(
        c.positions[i * 3] - c.positions[j * 3],
        c.positions[i * 3 + 1] - c.positions[j * 3 + 1],
        c.positions[i * 3 + 2] - c.positions[j * 3 + 2],
      );
    expectClose(d(out, 3, 40), d(cloud, 3, 40), { atol: 1e-6 });
  });
  it('rotate-any at strength s turns by at most s·180°', () => {
    const cloud = makeCloud(Float32Array.from([1, 0, 0, 0, 1, 0, 0, 0, 1]));
    const rng = createRng(5);
    for (let t = 0; t < 100; t++) {
      const out = augment(cloud, only('rotate-any', 0.25), rng);
      const m = Float64Array.from([
        out.positions[0],
        out.positions[3],
        out.positions[6],
        out.positions[1],
        out.positions[4],
        out.positions[7],
        out.positions[2],
        out.positions[5],
        out.positions[8],
      ]);
      expect(rotationAngle(m)).toBeLessThanOrEqual(0.25 * Math.PI + 1e-5);
    }
  });
});

describe('kd-tree wrapper (kd-tree-javascript) against brute force', () => {
  it('k nearest neighbours equal a brute-force search on random clouds', () => {
    for (const seed of [1, 2, 3]) {
      const cloud = randomCloud(500, seed);
      const index = new PointIndex(cloud.positions);
      const rng = createRng(seed + 10);
      for (let q = 0; q < 50; q++) {
        const x = rng.uniform(-1, 1),
          y = rng.uniform(-1, 1),
          z = rng.uniform(-1, 1);
        const brute = Array.from({ length: 500 }, (_, i) => ({
          i,
          d:
            (cloud.positions[i * 3] - x) ** 2 +
            (cloud.positions[i * 3 + 1] - y) ** 2 +
            (cloud.positions[i * 3 + 2] - z) ** 2,
        }))
          .sort((a, b) => a.d - b.d)
          .slice(0, 8);
        const found = index.nearest(x, y, z, 8);
        expect(found.map((f) => f.index)).toEqual(brute.map((b) => b.i));
        expectClose(
          found.map((f) => f.distanceSq),
          brute.map((b) => b.d),
          { rtol: 1e-12, atol: 1e-15 },
        );
      }
    }
  });
  it('refuses k larger than the cloud and an empty cloud', () => {
    expect(() => new PointIndex(new Float32Array(0))).toThrow(/non-empty/);
    expect(() => new PointIndex(randomCloud(5, 1).positions).nearest(0, 0, 0, 6)).toThrow(/k = 6 with 5 points/);
  });
});

describe('Chamfer and Hausdorff distances on hand-worked examples', () => {
  it('A = {(0,0,0), (1,0,0)}, B = {(0,0,0), (0,2,0)}', () => {
    // A→B: (0,0,0)→(0,0,0) d²=0; (1,0,0)→(0,0,0) d²=1.   mean = 0.5
    // B→A: (0,0,0)→(0,0,0) d²=0; (0,2,0)→(0,0,0) d²=4.   mean = 2
    // Chamfer (squared, Fan et al. 2017) = 0.5 + 2 = 2.5; Hausdorff = max(√1, √4) = 2.
    const a = makeCloud(Float32Array.from([0, 0, 0, 1, 0, 0]));
    const b = makeCloud(Float32Array.from([0, 0, 0, 0, 2, 0]));
    const d = cloudDistances(a, b);
    expectClose(d.chamfer, 2.5, { atol: 1e-12 });
    expectClose(d.hausdorff, 2, { atol: 1e-12 });
  });
  it('a translated copy: Chamfer 2t² and Hausdorff t when t is below half the spacing', () => {
    // Points 1 apart on a line, shifted by t = 0.1 along the line's normal: every nearest pair is the shifted twin.
    const a = makeCloud(Float32Array.from([0, 0, 0, 1, 0, 0, 2, 0, 0]));
    const b = makeCloud(Float32Array.from([0, 0.1, 0, 1, 0.1, 0, 2, 0.1, 0]));
    expectClose(cloudDistances(a, b).chamfer, 2 * 0.01, { rtol: 1e-6 });
    expectClose(cloudDistances(a, b).hausdorff, 0.1, { rtol: 1e-6 });
  });
  it('a cloud is at distance 0 from itself, and not from another', () => {
    const c = randomCloud(300, 9);
    expect(cloudDistances(c, c).chamfer).toBe(0);
    expect(cloudDistances(c, randomCloud(300, 10)).chamfer).toBeGreaterThan(0);
  });
});

describe('jitter (common practice: σ = 0.01, clip 0.05 on unit-sphere clouds, at strength 0.5)', () => {
  it('offsets have standard deviation near σ, mean near 0, and none beyond the clip', () => {
    const cloud = randomCloud(20000, 11);
    const out = augment(cloud, only('jitter', 0.5), createRng(12));
    const d = Array.from(out.positions, (v, i) => v - cloud.positions[i]);
    const mean = d.reduce((s, x) => s + x, 0) / d.length;
    const sd = Math.sqrt(d.reduce((s, x) => s + (x - mean) ** 2, 0) / (d.length - 1));
    expect(Math.abs(mean)).toBeLessThan(3e-4);
    // Clipping at 5σ removes a negligible 6e-7 of the mass, so the sd stays σ within sampling error (~0.3%).
    expectClose(sd, 0.01, { rtol: 0.02 });
    expect(Math.max(...d.map(Math.abs))).toBeLessThanOrEqual(0.05 + 1e-7);
  });
});

describe('dropout, occlusion and partial view keep N points', () => {
  it('dropout keeps N points, all copies of input points', () => {
    const cloud = randomCloud(1024, 13);
    const out = augment(cloud, only('dropout', 1), createRng(14));
    expect(out.count).toBe(1024);
    const input = new Set(Array.from({ length: 1024 }, (_, i) => cloud.positions.slice(i * 3, i * 3 + 3).join(',')));
    const distinct = new Set(Array.from({ length: 1024 }, (_, i) => out.positions.slice(i * 3, i * 3 + 3).join(',')));
    for (const p of distinct) expect(input.has(p)).toBe(true);
    expect(distinct.size).toBeGreaterThan(1024 * 0.1);
    expect(distinct.size).toBeLessThan(1024 * 0.3); // about 20% survive at strength 1
  });
  it('occlusion removes exactly the k nearest neighbours of one seed point (k = 0.4·N at strength 1)', () => {
    const cloud = randomCloud(1000, 15);
    const out = augment(cloud, only('occlude', 1), createRng(16));
    const distinct = new Set(Array.from({ length: 1000 }, (_, i) => out.positions.slice(i * 3, i * 3 + 3).join(',')));
    expect(distinct.size).toBe(600);
  });
  it('partial view at strength 1 keeps only points whose normal faces one direction', () => {
    const cloud = sphereCloud(2000, 17);
    const out = augment(cloud, only('partial-view', 1), createRng(18));
    // Kept normals lie in one hemisphere, so the visible half of the sphere survives: about N/2 distinct
    // points, all within a few degrees of the hemisphere around their mean direction.
    const m = [0, 0, 0];
    for (let i = 0; i < out.count; i++) for (let k = 0; k < 3; k++) m[k] += out.normals![i * 3 + k];
    const len = Math.hypot(m[0], m[1], m[2]);
    let minDot = Infinity;
    for (let i = 0; i < out.count; i++)
      minDot = Math.min(
        minDot,
        (m[0] * out.normals![i * 3] + m[1] * out.normals![i * 3 + 1] + m[2] * out.normals![i * 3 + 2]) / len,
      );
    expect(minDot).toBeGreaterThan(-0.1);
    const distinct = new Set(
      Array.from({ length: out.count }, (_, i) => out.positions.slice(i * 3, i * 3 + 3).join(',')),
    );
    expect(distinct.size).toBeGreaterThan(900);
    expect(distinct.size).toBeLessThan(1100);
    expect(out.count).toBe(2000);
  });
  it('strength 0 leaves a cloud unchanged for every step kind, bit for bit (−0 included)', () => {
    // Each kind's rule (AUGMENT_DESCRIPTIONS) at s = 0 is the identity: no angle, factor 1, offset 0, σ 0, nothing
    // dropped or removed, probability 0. Bit for bit, so the study embeds strength 0 once for every kind.
    const sphere = sphereCloud(200, 19);
    const positions = sphere.positions.slice(),
      normals = sphere.normals!.slice();
    positions[0] = -0;
    normals[1] = -0;
    normals[5] = -0;
    const cloud = makeCloud(positions, normals);
    const bits = (a: Float32Array | null) => Array.from(new Uint32Array(a!.buffer, a!.byteOffset, a!.length));
    for (const kind of AUGMENT_KINDS) {
      const out = augment(cloud, only(kind, 0), createRng(20));
      expect({ kind, positions: bits(out.positions) }).toEqual({ kind, positions: bits(cloud.positions) });
      expect({ kind, normals: bits(out.normals) }).toEqual({ kind, normals: bits(cloud.normals) });
    }
  });
});

describe('local warp (PointWOLF: Kim, Lee, Hwang & Kim 2021, weighted local transformations)', () => {
  const identity = (): Mat3 => Float64Array.from([1, 0, 0, 0, 1, 0, 0, 0, 1]);
  it('local transforms that are one affine map blend to that map exactly (the Nadaraya–Watson weights sum to 1)', () => {
    // T_j(p) = L(p − c_j) + c_j + t_j equals L·p + t0 for every anchor when t_j = t0 + L·c_j − c_j.
    const L = Float64Array.from([1.3, 0.2, 0, -0.1, 0.9, 0.3, 0, 0.4, 1.1]);
    const t0 = [0.05, -0.1, 0.2];
    const transforms: LocalTransform[] = [
      [0.5, 0, 0],
      [-0.4, 0.3, 0.1],
      [0, -0.6, 0.5],
    ].map((c) => {
      const Lc = [0, 1, 2].map((r) => L[r * 3] * c[0] + L[r * 3 + 1] * c[1] + L[r * 3 + 2] * c[2]);
      return {
        centre: c as [number, number, number],
        linear: L,
        shift: [0, 1, 2].map((r) => t0[r] + Lc[r] - c[r]) as [number, number, number],
      };
    });
    const cloud = randomCloud(50, 31);
    const p = cloud.positions.slice();
    blendLocalTransforms(p, null, transforms, 7);
    const expected = Array.from({ length: 150 }, (_, e) => {
      const i = Math.floor(e / 3),
        r = e % 3,
        q = cloud.positions;
      return L[r * 3] * q[i * 3] + L[r * 3 + 1] * q[i * 3 + 1] + L[r * 3 + 2] * q[i * 3 + 2] + t0[r];
    });
    expectClose(p, expected, { atol: 1e-5 });
  });
  it('hand-worked: two anchors at x = ±0.5 shifting by (0.1, 0, 0) and (0, 0.2, 0), σ = 0.5', () => {
    expect(WARP_SIGMA).toBe(0.5); // the paper's bandwidth
    const transforms: LocalTransform[] = [
      { centre: [0.5, 0, 0], linear: identity(), shift: [0.1, 0, 0] },
      { centre: [-0.5, 0, 0], linear: identity(), shift: [0, 0.2, 0] },
    ];
    // Midway the weights are equal: the mean of the two moves. At an anchor the other's weight is
    // exp(−1² / (2·0.5²)) = e⁻² = 0.135335 against 1: a share of 0.135335 / 1.135335 = 0.119203.
    const p = Float32Array.from([0, 0, 0, 0.5, 0, 0]);
    blendLocalTransforms(p, null, transforms, 7);
    expectClose(p, [0.05, 0.1, 0, 0.5 + 0.1 * (1 - 0.119203), 0.2 * 0.119203, 0], { atol: 1e-6 });
    // With distances over y alone both anchors are at distance 0 from every point on the x axis: equal weights.
    const q = Float32Array.from([0.5, 0, 0]);
    blendLocalTransforms(q, null, transforms, 2);
    expectClose(q, [0.55, 0.1, 0], { atol: 1e-6 });
  });
  it('normals stay normal to the surface: (Au) × (Av) is parallel to cof(A)(u × v) for tangents u, v', () => {
    const A = Float64Array.from([1.8, 0.3, -0.2, 0.1, 0.7, 0.4, -0.3, 0.2, 2.5]);
    const rng = createRng(33);
    for (let t = 0; t < 20; t++) {
      const n = [rng.normal(), rng.normal(), rng.normal()];
      const len = Math.hypot(n[0], n[1], n[2]);
      const unit = n.map((v) => v / len);
      // Two tangents orthogonal to the normal, mapped by A; their cross product is the mapped surface's normal.
      const helper = Math.abs(unit[0]) < 0.9 ? [1, 0, 0] : [0, 1, 0];
      const cross = (a: number[], b: number[]) => [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
      ];
      const u = cross(unit, helper),
        v = cross(unit, u);
      const map = (w: number[]) => [0, 1, 2].map((r) => A[r * 3] * w[0] + A[r * 3 + 1] * w[1] + A[r * 3 + 2] * w[2]);
      const want = cross(map(u), map(v));
      const wl = Math.hypot(want[0], want[1], want[2]);
      const normals = Float32Array.from(unit);
      blendLocalTransforms(
        Float32Array.from([0.1, 0.2, 0.3]),
        normals,
        [{ centre: [0, 0, 0], linear: A, shift: [0, 0, 0] }],
        7,
      );
      expectClose(
        normals,
        want.map((w) => w / wl),
        { atol: 1e-5 },
      );
    }
  });
  it('at full strength the view is deformed, then back in the unit sphere about its centroid', () => {
    const cloud = sphereCloud(500, 34);
    const out = augment(cloud, only('local-warp', 1), createRng(35));
    let mx = 0,
      my = 0,
      mz = 0,
      r = 0;
    for (let i = 0; i < 500; i++) {
      mx += out.positions[i * 3] / 500;
      my += out.positions[i * 3 + 1] / 500;
      mz += out.positions[i * 3 + 2] / 500;
    }
    for (let i = 0; i < 500; i++)
      r = Math.max(
        r,
        Math.hypot(out.positions[i * 3] - mx, out.positions[i * 3 + 1] - my, out.positions[i * 3 + 2] - mz),
      );
    expectClose([mx, my, mz, r], [0, 0, 0, 1], { atol: 1e-5 });
    expect(cloudDistances(out, cloud).chamfer).toBeGreaterThan(1e-3);
  });
});

describe('pipelines, presets and view pairs', () => {
  it('presets survive a JSON round trip and are valid', () => {
    for (const [name, p] of Object.entries(PRESETS)) {
      expect(pipelineFromJson(pipelineToJson(p)), name).toEqual(p);
    }
  });
  it('view pairs are two different views, and the same seed repeats them exactly', () => {
    const cloud = sphereCloud(512, 21);
    const [a, b] = viewPair(cloud, PRESETS['scan-like'], createRng(22));
    const [c, d] = viewPair(cloud, PRESETS['scan-like'], createRng(22));
    expect(Array.from(a.positions)).toEqual(Array.from(c.positions));
    expect(Array.from(b.positions)).toEqual(Array.from(d.positions));
    expect(cloudDistances(a, b).chamfer).toBeGreaterThan(0);
  });
  it('a step with probability 0 never applies', () => {
    const cloud = sphereCloud(100, 23);
    const out = augment(
      cloud,
      { version: 1, upAxis: 'z', steps: [{ kind: 'translate', strength: 1, probability: 0 }] },
      createRng(1),
    );
    expect(Array.from(out.positions)).toEqual(Array.from(cloud.positions));
  });
});

describe('bad input gets a clear error, never a silent NaN cloud', () => {
  it('empty cloud, NaN point, strengths and probabilities outside [0, 1], unknown kinds, bad JSON', () => {
    expect(() => augment(makeCloud(new Float32Array(0)), PRESETS.gentle, createRng(1))).toThrow(/empty/);
    expect(() => augment(makeCloud(Float32Array.from([0, 0, NaN])), PRESETS.gentle, createRng(1))).toThrow(
      /point 0 has a non-finite/,
    );
    expect(() => augment(sphereCloud(10, 1), only('jitter', 1.5), createRng(1))).toThrow(
      /jitter: strength must be in \[0, 1\], got 1.5/,
    );
    expect(() =>
      augment(
        sphereCloud(10, 1),
        { version: 1, upAxis: 'z', steps: [{ kind: 'scale', strength: 0.5, probability: -1 }] },
        createRng(1),
      ),
    ).toThrow(/probability/);
    expect(() =>
      pipelineFromJson('{"version":1,"upAxis":"z","steps":[{"kind":"twist","strength":1,"probability":1}]}'),
    ).toThrow(/unknown kind "twist"/);
    expect(() => pipelineFromJson('{oops')).toThrow(/not valid JSON/);
    expect(() => cloudDistances(makeCloud(new Float32Array(0)), sphereCloud(3, 1))).toThrow(/empty/);
  });
});
