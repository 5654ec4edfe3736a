// Watertight solid builders for the procedural parts generator: prisms with holes, solids of revolution,
// swept tubes and lofts of star-shaped sections. Every builder returns outward-wound triangles.

import { ShapeUtils, Vector2 } from 'three';

export type P2 = readonly [number, number];

export interface Solid {
  positions: number[]; // x, y, z per vertex
  indices: number[]; // three per triangle, outward winding
}

export function emptySolid(): Solid {
  return { positions: [], indices: [] };
}

/** Signed area by the shoelace (Gauss) formula; positive for counter-clockwise. */
export function polygonArea(loop: readonly P2[]): number {
  let s = 0;
  for (let i = 0; i < loop.length; i++) {
    const [x0, y0] = loop[i];
    const [x1, y1] = loop[(i + 1) % loop.length];
    s += x0 * y1 - x1 * y0;
  }
  return s / 2;
}

/** Centroid of a simple polygon (the standard shoelace-weighted formula). */
export function polygonCentroid(loop: readonly P2[]): P2 {
  let cx = 0,
    cy = 0;
  for (let i = 0; i < loop.length; i++) {
    const [x0, y0] = loop[i];
    const [x1, y1] = loop[(i + 1) % loop.length];
    const cross = x0 * y1 - x1 * y0;
    cx += (x0 + x1) * cross;
    cy += (y0 + y1) * cross;
  }
  const a = polygonArea(loop);
  return [cx / (6 * a), cy / (6 * a)];
}

export function ccw(loop: readonly P2[]): P2[] {
  return polygonArea(loop) >= 0 ? [...loop] : [...loop].reverse();
}

export function cw(loop: readonly P2[]): P2[] {
  return polygonArea(loop) < 0 ? [...loop] : [...loop].reverse();
}

/** Regular polygon approximating a circle: m vertices, counter-clockwise, starting at angle phase. */
export function circle(cx: number, cy: number, r: number, m: number, phase = 0): P2[] {
  return Array.from({ length: m }, (_, i) => {
    const a = phase + (2 * Math.PI * i) / m;
    return [cx + r * Math.cos(a), cy + r * Math.sin(a)] as P2;
  });
}

/** Area of the regular m-gon inscribed in a circle of radius r: (m/2)·sin(2π/m)·r². */
export function ngonArea(r: number, m: number): number {
  return (m / 2) * Math.sin((2 * Math.PI) / m) * r * r;
}

/** Triangulate a polygon with holes in the plane (three.js ShapeUtils, earcut); indices into [outer, ...holes]. */
function triangulate(outer: P2[], holes: P2[][]): number[][] {
  const v = (p: P2) => new Vector2(p[0], p[1]);
  return ShapeUtils.triangulateShape(
    outer.map(v),
    holes.map((h) => h.map(v)),
  );
}

/**
 * Right prism of a polygon with holes between z = 0 and z = h. Outer loop counter-clockwise, holes
 * clockwise (both fixed here), so side walls face outward and into each hole.
 */
export function extrude(outerIn: readonly P2[], holesIn: readonly (readonly P2[])[], h: number): Solid {
  const outer = ccw(outerIn);
  const holes = holesIn.map(cw);
  const loops = [outer, ...holes];
  const flat = loops.flat();
  const n = flat.length;
  const s = emptySolid();
  for (const [x, y] of flat) s.positions.push(x, y, 0);
  for (const [x, y] of flat) s.positions.push(x, y, h);
  for (const [a, b, c] of triangulate(outer, holes)) {
    // Earcut's output winding is not promised: orient each cap triangle by its signed area.
    const pa = flat[a],
      pb = flat[b],
      pc = flat[c];
    const up = (pb[0] - pa[0]) * (pc[1] - pa[1]) - (pb[1] - pa[1]) * (pc[0] - pa[0]) > 0;
    if (up) {
      s.indices.push(a + n, b + n, c + n, a, c, b);
    } else {
      s.indices.push(a + n, c + n, b + n, a, b, c);
    }
  }
  let base = 0;
  for (const loop of loops) {
    const m = loop.length;
    for (let i = 0; i < m; i++) {
      const j = (i + 1) % m;
      const b0 = base + i,
        b1 = base + j,
        t0 = base + i + n,
        t1 = base + j + n;
      s.indices.push(b0, b1, t1, b0, t1, t0);
    }
    base += m;
  }
  return s;
}

/**
 * Solid of revolution about the z axis: profile is a closed (r, z) polygon, counter-clockwise in the
 * (r, z) plane, with r ≥ 0; profile vertices on the axis (r = 0) collapse to a single vertex.
 * Volume of the faceted solid: (m/2π)·sin(2π/m) × the smooth solid's volume (each wedge's cross-section is
 * a triangle of area ½·sin(2π/m)·r² against the sector's ½·(2π/m)·r²).
 */
export function revolve(profileIn: readonly P2[], m: number, phase = 0): Solid {
  const profile = ccw(profileIn);
  const k = profile.length;
  const s = emptySolid();
  const ring: number[][] = [];
  for (let p = 0; p < k; p++) {
    const [r, z] = profile[p];
    if (r === 0) {
      const idx = s.positions.length / 3;
      s.positions.push(0, 0, z);
      ring.push(new Array(m).fill(idx));
      continue;
    }
    const row: number[] = [];
    for (let i = 0; i < m; i++) {
      const a = phase + (2 * Math.PI * i) / m;
      row.push(s.positions.length / 3);
      s.positions.push(r * Math.cos(a), r * Math.sin(a), z);
    }
    ring.push(row);
  }
  for (let p = 0; p < k; p++) {
    const q = (p + 1) % k;
    for (let i = 0; i < m; i++) {
      const j = (i + 1) % m;
      // Counter-clockwise profile in (r, z), revolved counter-clockwise about +z: this winding faces outward.
      const a = ring[p][i],
        b = ring[p][j],
        c = ring[q][j],
        d = ring[q][i];
      if (a !== b && b !== c && a !== c) s.indices.push(a, b, c);
      if (a !== c && c !== d && a !== d) s.indices.push(a, c, d);
    }
  }
  return s;
}

/** Smooth volume of revolution by Pappus's centroid theorem: V = 2π·A·r̄ for the profile polygon. */
export function pappusVolume(profile: readonly P2[]): number {
  return 2 * Math.PI * Math.abs(polygonArea(profile)) * polygonCentroid(profile)[0];
}

export interface Frame {
  readonly origin: readonly [number, number, number];
  readonly u: readonly [number, number, number]; // section x axis
  readonly v: readonly [number, number, number]; // section y axis (u × v = path tangent)
}

/**
 * Tube swept through a sequence of section frames: outer and inner circles of m segments, annular end caps.
 */
export function sweepTube(frames: readonly Frame[], rOuter: number, rInner: number, m: number): Solid {
  const s = emptySolid();
  const rings = (r: number) =>
    frames.map((f) =>
      Array.from({ length: m }, (_, i) => {
        const a = (2 * Math.PI * i) / m;
        const c = Math.cos(a) * r,
          d = Math.sin(a) * r;
        const idx = s.positions.length / 3;
        s.positions.push(
          f.origin[0] + c * f.u[0] + d * f.v[0],
          f.origin[1] + c * f.u[1] + d * f.v[1],
          f.origin[2] + c * f.u[2] + d * f.v[2],
        );
        return idx;
      }),
    );
  const outer = rings(rOuter);
  const inner = rings(rInner);
  for (let f = 0; f + 1 < frames.length; f++) {
    for (let i = 0; i < m; i++) {
      const j = (i + 1) % m;
      s.indices.push(outer[f][i], outer[f][j], outer[f + 1][j], outer[f][i], outer[f + 1][j], outer[f + 1][i]);
      s.indices.push(inner[f][i], inner[f + 1][j], inner[f][j], inner[f][i], inner[f + 1][i], inner[f + 1][j]);
    }
  }
  const last = frames.length - 1;
  for (let i = 0; i < m; i++) {
    const j = (i + 1) % m;
    s.indices.push(outer[0][i], inner[0][j], outer[0][j], outer[0][i], inner[0][i], inner[0][j]);
    s.indices.push(outer[last][i], outer[last][j], inner[last][j], outer[last][i], inner[last][j], inner[last][i]);
  }
  return s;
}

/**
 * Loft of star-shaped sections (each the same number of points, listed counter-clockwise around the z axis)
 * at increasing heights; consecutive sections at the same height make a flat step face. Ends are fans
 * to a centre vertex.
 */
export function loft(sections: readonly { z: number; loop: readonly P2[] }[]): Solid {
  const s = emptySolid();
  const m = sections[0].loop.length;
  const rows = sections.map(({ z, loop }) => {
    if (loop.length !== m) throw new Error('loft: every section needs the same point count');
    return loop.map(([x, y]) => {
      s.positions.push(x, y, z);
      return s.positions.length / 3 - 1;
    });
  });
  for (let k = 0; k + 1 < rows.length; k++) {
    for (let i = 0; i < m; i++) {
      const j = (i + 1) % m;
      s.indices.push(rows[k][i], rows[k][j], rows[k + 1][j], rows[k][i], rows[k + 1][j], rows[k + 1][i]);
    }
  }
  const bottom = s.positions.length / 3;
  s.positions.push(0, 0, sections[0].z);
  const top = bottom + 1;
  s.positions.push(0, 0, sections[sections.length - 1].z);
  const last = rows.length - 1;
  for (let i = 0; i < m; i++) {
    const j = (i + 1) % m;
    s.indices.push(bottom, rows[0][j], rows[0][i]);
    s.indices.push(top, rows[last][i], rows[last][j]);
  }
  return s;
}

export function signedVolumeOf(s: Solid): number {
  let sum = 0;
  const p = s.positions;
  for (let i = 0; i < s.indices.length; i += 3) {
    const a = s.indices[i] * 3,
      b = s.indices[i + 1] * 3,
      c = s.indices[i + 2] * 3;
    sum +=
      p[a] * (p[b + 1] * p[c + 2] - p[b + 2] * p[c + 1]) +
      p[a + 1] * (p[b + 2] * p[c] - p[b] * p[c + 2]) +
      p[a + 2] * (p[b] * p[c + 1] - p[b + 1] * p[c]);
  }
  return sum / 6;
}
