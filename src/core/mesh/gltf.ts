// glTF 2.0 (Khronos), as .gltf (JSON with embedded base64 buffers) or .glb (binary container), read after the
// specification: the default scene's nodes with their transforms, each mesh primitive's POSITION accessor and
// indices, triangles, strips and fans. glTF measures in metres (specification, 3.4), so coordinates come out
// in millimetres. Every offset and count is checked against the buffer it points into before it is read.
// Written by hand rather than through three's GLTFLoader, whose texture path needs a DOM and whose parse is
// asynchronous; geometry is all a part needs.

import { finishMesh } from './geometry';
import { MeshImportError, type ImportedMesh } from './types';

interface Accessor {
  bufferView?: number;
  byteOffset?: number;
  componentType: number;
  count: number;
  type: string;
  sparse?: unknown;
}
interface BufferView {
  buffer: number;
  byteOffset?: number;
  byteLength: number;
  byteStride?: number;
}
interface Primitive {
  attributes: { POSITION?: number };
  indices?: number;
  mode?: number;
  extensions?: Record<string, unknown>;
}
interface Node {
  mesh?: number;
  children?: number[];
  matrix?: number[];
  translation?: number[];
  rotation?: number[];
  scale?: number[];
}
interface Gltf {
  asset?: { version?: string };
  buffers?: { uri?: string; byteLength: number }[];
  bufferViews?: BufferView[];
  accessors?: Accessor[];
  meshes?: { primitives: Primitive[] }[];
  nodes?: Node[];
  scenes?: { nodes?: number[] }[];
  scene?: number;
  extensionsRequired?: string[];
}

const GLB_MAGIC = 0x46546c67; // "glTF"
const CHUNK_JSON = 0x4e4f534a;
const CHUNK_BIN = 0x004e4942;
const COMPONENT_BYTES: Record<number, number> = { 5120: 1, 5121: 1, 5122: 2, 5123: 2, 5125: 4, 5126: 4 };
const METRES_TO_MM = 1000;

export function parseGltf(buffer: ArrayBuffer, file: string): ImportedMesh {
  const fail = (
    reason: string,
    code: 'parse-failed' | 'truncated' | 'unrecognised' | 'no-geometry' = 'parse-failed',
  ): never => {
    throw new MeshImportError(file, code, reason);
  };
  /** A field that must be a whole number ≥ 0 (a mutated or hand-edited file may hold anything there). */
  const whole = (v: unknown, what: string, fallback?: number): number => {
    if (v === undefined && fallback !== undefined) return fallback;
    return typeof v === 'number' && Number.isSafeInteger(v) && v >= 0
      ? v
      : fail(`${what} is missing or not a whole number`);
  };
  const list = <T>(v: unknown, what: string): T[] =>
    v === undefined ? [] : Array.isArray(v) ? (v as T[]) : fail(`${what} is not a list`);
  const view = new DataView(buffer);
  let json: Gltf;
  let bin: Uint8Array | null = null;
  if (buffer.byteLength >= 12 && view.getUint32(0, true) === GLB_MAGIC) {
    if (view.getUint32(4, true) !== 2)
      fail(`glTF binary version ${view.getUint32(4, true)} (only 2 is read)`, 'unrecognised');
    const length = view.getUint32(8, true);
    if (length > buffer.byteLength)
      fail(`glTF binary header says ${length} bytes but the file has ${buffer.byteLength}`, 'truncated');
    let o = 12;
    let text: string | null = null;
    while (o + 8 <= length) {
      const chunkLength = view.getUint32(o, true),
        chunkType = view.getUint32(o + 4, true);
      if (o + 8 + chunkLength > length)
        fail(`a glTF binary chunk of ${chunkLength} bytes runs past the end of the file`, 'truncated');
      const data = new Uint8Array(buffer, o + 8, chunkLength);
      if (chunkType === CHUNK_JSON && text === null) text = new TextDecoder().decode(data);
      else if (chunkType === CHUNK_BIN && bin === null) bin = data;
      o += 8 + chunkLength;
    }
    if (text === null) fail('the glTF binary holds no JSON chunk');
    json = parseJson(text!, fail);
  } else {
    json = parseJson(new TextDecoder().decode(new Uint8Array(buffer)), fail);
  }
  const version = typeof json.asset === 'object' && json.asset !== null ? json.asset.version : undefined;
  if (typeof version !== 'string' || !version.startsWith('2.'))
    fail(
      `not glTF 2.0 (its asset version is ${typeof version === 'string' ? `"${version.slice(0, 10)}"` : 'missing'})`,
      'unrecognised',
    );
  const compressed = list<unknown>(json.extensionsRequired, 'extensionsRequired')
    .map(String)
    .filter((e) => /draco|meshopt|quantization/i.test(e));
  if (compressed.length) fail(`the geometry is compressed (${compressed.join(', ')}), which is not read`);

  const buffers = list<{ uri?: unknown }>(json.buffers, 'buffers').map((b, i): Uint8Array => {
    if (b === null || typeof b !== 'object') return fail(`buffer ${i} is not an object`);
    if (b.uri === undefined) return bin ?? fail(`buffer ${i} has no data (no binary chunk)`, 'truncated');
    if (typeof b.uri !== 'string') return fail(`buffer ${i} has a uri that is not text`);
    const m = /^data:[^;,]*(;base64)?,(.*)$/s.exec(b.uri);
    if (!m)
      fail(
        `buffer ${i} refers to the external file "${b.uri.slice(0, 60)}"; save the part as .glb or with embedded buffers`,
      );
    if (!m![1]) fail(`buffer ${i} is a data URI that is not base64`);
    return decodeBase64(m![2], fail);
  });

  // The bytes an accessor covers, checked to lie inside its buffer view and buffer.
  const accessor = (
    index: number,
    what: string,
  ): { data: DataView; count: number; components: number; componentType: number; stride: number } => {
    const a = list<Accessor>(json.accessors, 'accessors')[whole(index, `${what}'s accessor`)];
    if (!a || typeof a !== 'object') return fail(`${what} refers to accessor ${index}, which does not exist`);
    if (a.sparse) fail(`${what} uses a sparse accessor, which is not read`);
    const components =
      a.type === 'VEC3' ? 3 : a.type === 'SCALAR' ? 1 : fail(`${what} has a type other than VEC3 or SCALAR`);
    const size = COMPONENT_BYTES[a.componentType] ?? fail(`${what} has an unknown component type`);
    const count = whole(a.count, `${what}'s count`);
    const bv = list<BufferView>(json.bufferViews, 'bufferViews')[whole(a.bufferView, `${what}'s buffer view`)];
    if (!bv || typeof bv !== 'object') return fail(`${what} refers to a buffer view that does not exist`);
    const buf =
      buffers[whole(bv.buffer, `the buffer view of ${what}`)] ??
      fail(`the buffer view of ${what} refers to a buffer that does not exist`);
    const stride = whole(bv.byteStride, `the byte stride of ${what}`, components * size);
    const viewOffset = whole(bv.byteOffset, `the byte offset of ${what}'s view`, 0),
      ownOffset = whole(a.byteOffset, `the byte offset of ${what}`, 0);
    const viewLength = whole(bv.byteLength, `the byte length of ${what}'s view`);
    const start = viewOffset + ownOffset;
    const need = count === 0 ? 0 : (count - 1) * stride + components * size;
    if (ownOffset + need > viewLength || viewOffset + viewLength > buf.byteLength) {
      fail(
        `${what} needs ${need} bytes beyond offset ${start}, more than its buffer holds: the file is truncated or inconsistent`,
        'truncated',
      );
    }
    return {
      data: new DataView(buf.buffer, buf.byteOffset + start, need),
      count,
      components,
      componentType: a.componentType,
      stride,
    };
  };
  const read = (d: DataView, o: number, type: number): number =>
    type === 5126
      ? d.getFloat32(o, true)
      : type === 5125
        ? d.getUint32(o, true)
        : type === 5123
          ? d.getUint16(o, true)
          : type === 5121
            ? d.getUint8(o)
            : type === 5122
              ? d.getInt16(o, true)
              : d.getInt8(o);

  const positions: number[] = [];
  const indices: number[] = [];
  const addPrimitive = (p: Primitive, matrix: number[], where: string) => {
    if (!p || typeof p !== 'object') return fail(`${where} is not an object`);
    const mode = whole(p.mode, `${where}'s mode`, 4);
    if (mode < 4) return; // points and lines carry no surface
    if (mode > 6) fail(`${where} has an unknown mode`);
    const pos = accessor(whole(p.attributes?.POSITION, `${where}'s POSITION attribute`), `${where} POSITION`);
    if (pos.components !== 3 || pos.componentType !== 5126) fail(`${where} POSITION is not float VEC3`);
    const base = positions.length / 3;
    for (let i = 0; i < pos.count; i++) {
      const x = read(pos.data, i * pos.stride, 5126),
        y = read(pos.data, i * pos.stride + 4, 5126),
        z = read(pos.data, i * pos.stride + 8, 5126);
      positions.push(
        (matrix[0] * x + matrix[4] * y + matrix[8] * z + matrix[12]) * METRES_TO_MM,
        (matrix[1] * x + matrix[5] * y + matrix[9] * z + matrix[13]) * METRES_TO_MM,
        (matrix[2] * x + matrix[6] * y + matrix[10] * z + matrix[14]) * METRES_TO_MM,
      );
    }
    let idx: number[];
    if (p.indices === undefined) idx = Array.from({ length: pos.count }, (_, i) => i);
    else {
      const ia = accessor(p.indices, `${where} indices`);
      if (ia.components !== 1 || ![5121, 5123, 5125].includes(ia.componentType))
        fail(`${where} indices are not unsigned integers`);
      idx = Array.from({ length: ia.count }, (_, i) => read(ia.data, i * ia.stride, ia.componentType));
    }
    for (const k of idx) if (k >= pos.count) fail(`${where} refers to vertex ${k} of ${pos.count}`);
    if (mode === 4)
      for (let i = 0; i + 2 < idx.length; i += 3) indices.push(base + idx[i], base + idx[i + 1], base + idx[i + 2]);
    else if (mode === 5)
      for (let i = 0; i + 2 < idx.length; i++)
        indices.push(base + idx[i], base + idx[i + (i % 2 ? 2 : 1)], base + idx[i + (i % 2 ? 1 : 2)]);
    else if (mode === 6)
      for (let i = 1; i + 1 < idx.length; i++) indices.push(base + idx[0], base + idx[i], base + idx[i + 1]);
  };

  let bodies = 0;
  const visited = new Set<number>();
  const visit = (n: number, parent: number[]) => {
    if (visited.has(n)) fail(`node ${n} appears twice in the scene (a cycle or a shared child)`);
    visited.add(n);
    const node = list<Node>(json.nodes, 'nodes')[whole(n, 'a node reference')];
    if (!node || typeof node !== 'object') return fail(`the scene refers to node ${n}, which does not exist`);
    const local = localMatrix(node);
    if (!local.every(Number.isFinite)) fail(`node ${n} has a transform that is not all numbers`);
    const matrix = multiply(parent, local);
    if (node.mesh !== undefined) {
      const mesh = list<{ primitives: Primitive[] }>(json.meshes, 'meshes')[whole(node.mesh, `node ${n}'s mesh`)];
      if (!mesh || typeof mesh !== 'object') return fail(`node ${n} refers to a mesh that does not exist`);
      list<Primitive>(mesh.primitives, `mesh ${node.mesh}'s primitives`).forEach((p, i) =>
        addPrimitive(p, matrix, `mesh ${node.mesh} primitive ${i}`),
      );
      bodies++;
    }
    for (const c of list<number>(node.children, `node ${n}'s children`)) visit(c, matrix);
  };
  const scene = list<{ nodes?: unknown }>(json.scenes, 'scenes')[whole(json.scene, 'the default scene', 0)];
  const nodes = list<Node>(json.nodes, 'nodes');
  const roots =
    scene && typeof scene === 'object' && scene.nodes !== undefined
      ? list<number>(scene.nodes, "the scene's nodes")
      : nodes.map((_, i) => i).filter((i) => !nodes.some((n) => Array.isArray(n?.children) && n.children.includes(i)));
  for (const r of roots) visit(r, IDENTITY);
  if (indices.length === 0) fail('the glTF holds no triangles in its scene', 'no-geometry');
  const part = finishMesh(
    file,
    'gltf',
    { positions: Float32Array.from(positions), indices: Uint32Array.from(indices) },
    buffer.byteLength,
  );
  return { ...part, info: { ...part.info, bodies, units: 'mm' } };
}

function parseJson(text: string, fail: (reason: string, code?: 'unrecognised') => never): Gltf {
  try {
    const j = JSON.parse(text);
    if (j === null || typeof j !== 'object') return fail('not a glTF file: its JSON is not an object', 'unrecognised');
    return j as Gltf;
  } catch {
    return fail('not a glTF file: neither the binary container nor valid JSON', 'unrecognised');
  }
}

function decodeBase64(text: string, fail: (reason: string) => never): Uint8Array {
  const alphabet = 'ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/';
  const clean = text.replace(/[\s=]+$/g, '');
  const out = new Uint8Array(Math.floor((clean.length * 3) / 4));
  let bits = 0,
    value = 0,
    o = 0;
  for (let i = 0; i < clean.length; i++) {
    const v = alphabet.indexOf(clean[i]);
    if (v < 0) fail('a base64 buffer holds a character that is not base64');
    value = (value << 6) | v;
    bits += 6;
    if (bits >= 8) {
      bits -= 8;
      out[o++] = (value >> bits) & 0xff;
    }
  }
  return out.subarray(0, o);
}

const IDENTITY = [1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1];

/** A node's local matrix, column-major as glTF stores it: its matrix, or T · R · S. */
function localMatrix(n: Node): number[] {
  if (Array.isArray(n.matrix) && n.matrix.length === 16) return n.matrix.map(Number);
  const vec = (v: unknown, fallback: number[]) =>
    Array.isArray(v) && v.length === fallback.length ? v.map(Number) : v === undefined ? fallback : [NaN];
  const [tx, ty, tz] = vec(n.translation, [0, 0, 0]);
  const [x, y, z, w] = vec(n.rotation, [0, 0, 0, 1]);
  const [sx, sy, sz] = vec(n.scale, [1, 1, 1]);
  return [
    (1 - 2 * (y * y + z * z)) * sx,
    2 * (x * y + z * w) * sx,
    2 * (x * z - y * w) * sx,
    0,
    2 * (x * y - z * w) * sy,
    (1 - 2 * (x * x + z * z)) * sy,
    2 * (y * z + x * w) * sy,
    0,
    2 * (x * z + y * w) * sz,
    2 * (y * z - x * w) * sz,
    (1 - 2 * (x * x + y * y)) * sz,
    0,
    tx,
    ty,
    tz,
    1,
  ];
}

function multiply(a: number[], b: number[]): number[] {
  const out = new Array<number>(16);
  for (let c = 0; c < 4; c++)
    for (let r = 0; r < 4; r++) {
      out[c * 4 + r] = a[r] * b[c * 4] + a[4 + r] * b[c * 4 + 1] + a[8 + r] * b[c * 4 + 2] + a[12 + r] * b[c * 4 + 3];
    }
  return out;
}
