// The procedural pre-training corpus: deterministic, varied, outward-wound, and readable by the importer.

import { describe, expect, it } from 'vitest';
import { BoxGeometry, CylinderGeometry, LatheGeometry, TorusGeometry } from 'three';
import { importMesh } from '../src/core/mesh/import';
import { writeStlBinary } from '../src/core/mesh/write';
import { signedVolume } from '../src/core/mesh/geometry';
import { createRng } from '../src/core/rng';
import { CORPUS_KINDS, corpusPart } from './corpus';

const draw = (seed: number, n: number) => {
  const rng = createRng(seed);
  return Array.from({ length: n }, () => corpusPart(rng));
};

describe('pre-training corpus', () => {
  it('is the same for the same seed and different for another', () => {
    const a = draw(3, 20),
      b = draw(3, 20),
      c = draw(4, 20);
    expect(a.map((p) => p.label)).toEqual(b.map((p) => p.label));
    a.forEach((p, i) =>
      expect(Buffer.from(p.mesh.positions.buffer).equals(Buffer.from(b[i].mesh.positions.buffer))).toBe(true),
    );
    expect(a.map((p) => p.mesh.positions.length)).not.toEqual(c.map((p) => p.mesh.positions.length));
  });

  it('draws every kind, with many structural classes', () => {
    const parts = draw(1, 400);
    expect(new Set(parts.map((p) => p.kind))).toEqual(new Set(CORPUS_KINDS));
    expect(new Set(parts.map((p) => p.label)).size).toBeGreaterThan(30);
    for (const p of parts) expect(p.label.startsWith(`${p.kind}/`)).toBe(true);
  });

  it('winds every piece outward: the divergence-theorem volume is positive (pieces may overlap)', () => {
    // Reference: for a closed, outward-oriented surface the signed volume Σ (a × b)·c / 6 is the enclosed volume
    // (divergence theorem); an inward piece would subtract. Checked first on three.js solids with known volumes.
    const box = new BoxGeometry(2, 3, 4),
      cyl = new CylinderGeometry(1, 1, 2, 64);
    const vol = (g: BoxGeometry | CylinderGeometry | LatheGeometry | TorusGeometry) =>
      signedVolume(Float32Array.from(g.getAttribute('position').array), Uint32Array.from(g.index!.array));
    expect(vol(box)).toBeCloseTo(24, 4);
    expect(vol(cyl)).toBeCloseTo((64 / 2) * Math.sin((2 * Math.PI) / 64) * 2, 3); // faceted: (m/2)·sin(2π/m)·r²·h
    for (const p of draw(2, 300)) expect(signedVolume(p.mesh.positions, p.mesh.indices!), p.label).toBeGreaterThan(0);
  });

  it('goes through the real importer as binary STL without failures', () => {
    for (const [i, p] of draw(5, 120).entries()) {
      const bytes = writeStlBinary({ positions: p.mesh.positions, indices: p.mesh.indices! }, `corpus ${i}`);
      const m = importMesh(bytes.buffer as ArrayBuffer, `${p.label}.stl`);
      expect(m.info.triangleCount, p.label).toBeGreaterThan(0);
      expect(m.info.area, p.label).toBeGreaterThan(0);
    }
  });
});
