// Writers for the formats Shapekin reads: used by the demo-library generator and by exports.
// Output is byte-for-byte deterministic for the same input.

export interface IndexedTriangles {
  readonly positions: ArrayLike<number>; // x, y, z per vertex
  readonly indices: ArrayLike<number>; // three per triangle
}

const encoder = new TextEncoder();

function faceNormal(m: IndexedTriangles, t: number): [number, number, number] {
  const p = m.positions;
  const a = m.indices[t * 3] * 3,
    b = m.indices[t * 3 + 1] * 3,
    c = m.indices[t * 3 + 2] * 3;
  const ux = p[b] - p[a],
    uy = p[b + 1] - p[a + 1],
    uz = p[b + 2] - p[a + 2];
  const vx = p[c] - p[a],
    vy = p[c + 1] - p[a + 1],
    vz = p[c + 2] - p[a + 2];
  const nx = uy * vz - uz * vy,
    ny = uz * vx - ux * vz,
    nz = ux * vy - uy * vx;
  const len = Math.hypot(nx, ny, nz) || 1;
  return [nx / len, ny / len, nz / len];
}

/** Binary STL: 80-byte header (padded with spaces), uint32 LE triangle count, 50-byte little-endian records. */
export function writeStlBinary(m: IndexedTriangles, header: string): Uint8Array {
  const count = m.indices.length / 3;
  const out = new Uint8Array(84 + 50 * count);
  const view = new DataView(out.buffer);
  out.fill(32, 0, 80);
  const head = encoder.encode(header.slice(0, 80));
  out.set(head.subarray(0, 80), 0);
  view.setUint32(80, count, true);
  for (let t = 0; t < count; t++) {
    const o = 84 + t * 50;
    const n = faceNormal(m, t);
    for (let k = 0; k < 3; k++) view.setFloat32(o + k * 4, n[k], true);
    for (let v = 0; v < 3; v++) {
      const i = m.indices[t * 3 + v] * 3;
      for (let k = 0; k < 3; k++) view.setFloat32(o + 12 + v * 12 + k * 4, m.positions[i + k], true);
    }
  }
  return out;
}

const num = (x: number, digits: number): string => {
  const s = x.toFixed(digits);
  return s === `-${(0).toFixed(digits)}` ? (0).toFixed(digits) : s;
};

export function writeStlAscii(m: IndexedTriangles, name: string, digits = 5): Uint8Array {
  const lines = [`solid ${name}`];
  for (let t = 0; t < m.indices.length / 3; t++) {
    const n = faceNormal(m, t);
    lines.push(`  facet normal ${num(n[0], 6)} ${num(n[1], 6)} ${num(n[2], 6)}`, '    outer loop');
    for (let v = 0; v < 3; v++) {
      const i = m.indices[t * 3 + v] * 3;
      lines.push(
        `      vertex ${num(m.positions[i], digits)} ${num(m.positions[i + 1], digits)} ${num(m.positions[i + 2], digits)}`,
      );
    }
    lines.push('    endloop', '  endfacet');
  }
  lines.push(`endsolid ${name}`, '');
  return encoder.encode(lines.join('\n'));
}

/** OBJ; `soup` writes three fresh vertices per face (duplicated vertices, as some exporters do). */
export function writeObj(
  m: IndexedTriangles,
  comment: string,
  options: { soup?: boolean; digits?: number } = {},
): Uint8Array {
  const digits = options.digits ?? 5;
  const lines = [`# ${comment}`, 'o part'];
  if (options.soup) {
    for (let t = 0; t < m.indices.length / 3; t++) {
      for (let v = 0; v < 3; v++) {
        const i = m.indices[t * 3 + v] * 3;
        lines.push(
          `v ${num(m.positions[i], digits)} ${num(m.positions[i + 1], digits)} ${num(m.positions[i + 2], digits)}`,
        );
      }
    }
    for (let t = 0; t < m.indices.length / 3; t++) lines.push(`f ${t * 3 + 1} ${t * 3 + 2} ${t * 3 + 3}`);
  } else {
    for (let i = 0; i < m.positions.length; i += 3) {
      lines.push(
        `v ${num(m.positions[i], digits)} ${num(m.positions[i + 1], digits)} ${num(m.positions[i + 2], digits)}`,
      );
    }
    for (let t = 0; t < m.indices.length / 3; t++) {
      lines.push(`f ${m.indices[t * 3] + 1} ${m.indices[t * 3 + 1] + 1} ${m.indices[t * 3 + 2] + 1}`);
    }
  }
  lines.push('');
  return encoder.encode(lines.join('\n'));
}

export type PlyEncoding = 'ascii' | 'binary_little_endian' | 'binary_big_endian';

export function writePly(m: IndexedTriangles, comment: string, encoding: PlyEncoding, digits = 5): Uint8Array {
  const vertexCount = m.positions.length / 3;
  const faceCount = m.indices.length / 3;
  const header = [
    'ply',
    `format ${encoding} 1.0`,
    `comment ${comment}`,
    `element vertex ${vertexCount}`,
    'property float x',
    'property float y',
    'property float z',
    `element face ${faceCount}`,
    'property list uchar int vertex_indices',
    'end_header',
    '',
  ].join('\n');
  if (encoding === 'ascii') {
    const lines: string[] = [];
    for (let i = 0; i < m.positions.length; i += 3)
      lines.push(
        `${num(m.positions[i], digits)} ${num(m.positions[i + 1], digits)} ${num(m.positions[i + 2], digits)}`,
      );
    for (let t = 0; t < faceCount; t++)
      lines.push(`3 ${m.indices[t * 3]} ${m.indices[t * 3 + 1]} ${m.indices[t * 3 + 2]}`);
    lines.push('');
    return encoder.encode(header + lines.join('\n'));
  }
  const le = encoding === 'binary_little_endian';
  const head = encoder.encode(header);
  const out = new Uint8Array(head.length + vertexCount * 12 + faceCount * 13);
  out.set(head, 0);
  const view = new DataView(out.buffer);
  let o = head.length;
  for (let i = 0; i < m.positions.length; i++) {
    view.setFloat32(o, m.positions[i], le);
    o += 4;
  }
  for (let t = 0; t < faceCount; t++) {
    view.setUint8(o, 3);
    o += 1;
    for (let v = 0; v < 3; v++) {
      view.setInt32(o, m.indices[t * 3 + v], le);
      o += 4;
    }
  }
  return out;
}

export function writeOff(m: IndexedTriangles, comment: string, digits = 5): Uint8Array {
  const vertexCount = m.positions.length / 3;
  const faceCount = m.indices.length / 3;
  const lines = ['OFF', `# ${comment}`, `${vertexCount} ${faceCount} 0`];
  for (let i = 0; i < m.positions.length; i += 3)
    lines.push(`${num(m.positions[i], digits)} ${num(m.positions[i + 1], digits)} ${num(m.positions[i + 2], digits)}`);
  for (let t = 0; t < faceCount; t++)
    lines.push(`3 ${m.indices[t * 3]} ${m.indices[t * 3 + 1]} ${m.indices[t * 3 + 2]}`);
  lines.push('');
  return encoder.encode(lines.join('\n'));
}
