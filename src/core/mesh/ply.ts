// PLY (ASCII, binary little- and big-endian; with faces or vertices only), read by hand after the format's
// description (Turk, "The PLY Polygon File Format", 1994): a header of elements and their properties, then
// the elements in order. Every count in the header is checked against the bytes (binary) or lines (ASCII)
// left before anything is allocated or looped over, so a lying header fails at once instead of hanging.

import { finishMesh } from './geometry';
import { startsWithWord } from './text';
import { MeshImportError, type ImportedMesh } from './types';

type Scalar = 'int8' | 'uint8' | 'int16' | 'uint16' | 'int32' | 'uint32' | 'float32' | 'float64';

/** Both spellings of the scalar types the format names (the old C names and the sized ones). */
const SCALARS: Record<string, Scalar> = {
  char: 'int8',
  int8: 'int8',
  uchar: 'uint8',
  uint8: 'uint8',
  short: 'int16',
  int16: 'int16',
  ushort: 'uint16',
  uint16: 'uint16',
  int: 'int32',
  int32: 'int32',
  uint: 'uint32',
  uint32: 'uint32',
  float: 'float32',
  float32: 'float32',
  double: 'float64',
  float64: 'float64',
};
const BYTES: Record<Scalar, number> = {
  int8: 1,
  uint8: 1,
  int16: 2,
  uint16: 2,
  int32: 4,
  uint32: 4,
  float32: 4,
  float64: 8,
};

interface Property {
  readonly name: string;
  readonly type: Scalar;
  /** For a list property: the type of its leading count. */
  readonly countType: Scalar | null;
}

interface Element {
  readonly name: string;
  readonly count: number;
  readonly properties: Property[];
}

type Encoding = 'ascii' | 'binary_little_endian' | 'binary_big_endian';

interface Header {
  readonly encoding: Encoding;
  readonly elements: Element[];
  /** Byte offset of the body. */
  readonly bodyStart: number;
}

/** The header ends at the first "end_header" line; beyond this many bytes a file is not taken for PLY. */
const MAX_HEADER_BYTES = 1 << 20;

function readHeader(bytes: Uint8Array, file: string): Header {
  const fail = (reason: string): never => {
    throw new MeshImportError(file, 'parse-failed', `PLY header: ${reason}`);
  };
  const limit = Math.min(bytes.length, MAX_HEADER_BYTES);
  let lineStart = 0;
  let encoding: Encoding | null = null;
  const elements: Element[] = [];
  let lineNo = 0;
  while (lineStart < limit) {
    let end = lineStart;
    while (end < limit && bytes[end] !== 10) end++;
    if (end >= limit) break;
    lineNo++;
    let line = '';
    for (let i = lineStart; i < end; i++) line += String.fromCharCode(bytes[i]);
    lineStart = end + 1;
    const words = line.trim().split(/\s+/);
    const keyword = words[0];
    if (lineNo === 1) {
      if (keyword.toLowerCase() !== 'ply') fail('the first line is not "ply"');
      continue;
    }
    switch (keyword) {
      case '':
      case 'comment':
      case 'obj_info':
        break;
      case 'format':
        if (words[1] !== 'ascii' && words[1] !== 'binary_little_endian' && words[1] !== 'binary_big_endian') {
          fail(
            `line ${lineNo}: unknown format "${(words[1] ?? '').slice(0, 30)}" (expected ascii, binary_little_endian or binary_big_endian)`,
          );
        }
        encoding = words[1] as Encoding;
        break;
      case 'element': {
        const count = Number(words[2]);
        if (words.length !== 3 || !Number.isSafeInteger(count) || count < 0) {
          fail(`line ${lineNo}: "element" needs a name and a whole count, got "${line.trim().slice(0, 60)}"`);
        }
        elements.push({ name: words[1], count, properties: [] });
        break;
      }
      case 'property': {
        const element = elements[elements.length - 1];
        if (!element) fail(`line ${lineNo}: a property comes before any element`);
        if (words[1] === 'list') {
          const countType = SCALARS[words[2]];
          const type = SCALARS[words[3]];
          if (words.length !== 5 || !countType || !type)
            fail(
              `line ${lineNo}: a list property needs "list <count type> <item type> <name>", got "${line.trim().slice(0, 60)}"`,
            );
          if (countType === 'float32' || countType === 'float64')
            fail(`line ${lineNo}: a list's count cannot be of type ${words[2]}`);
          element.properties.push({ name: words[4], type, countType });
        } else {
          const type = SCALARS[words[1]];
          if (words.length !== 3 || !type)
            fail(`line ${lineNo}: unknown property type "${(words[1] ?? '').slice(0, 30)}"`);
          element.properties.push({ name: words[2], type, countType: null });
        }
        break;
      }
      case 'end_header':
        if (!encoding) fail('no "format" line');
        for (const e of elements) {
          if (e.count > 0 && e.properties.length === 0)
            fail(`element "${e.name.slice(0, 30)}" declares ${e.count} entries but no properties`);
        }
        return { encoding: encoding!, elements, bodyStart: lineStart };
      default:
        fail(`line ${lineNo}: unknown keyword "${keyword.slice(0, 30)}"`);
    }
  }
  throw new MeshImportError(file, 'truncated', 'PLY header has no "end_header" line');
}

/** Where the geometry goes while the body is read. */
interface Sink {
  positions: Float32Array;
  indices: number[] | null;
  vertexCount: number;
}

/** Which properties of the vertex and face elements the importer keeps. */
function roles(element: Element): { x: number; y: number; z: number; faceList: number } {
  const at = (name: string) => element.properties.findIndex((p) => p.name === name && p.countType === null);
  return {
    x: at('x'),
    y: at('y'),
    z: at('z'),
    faceList: element.properties.findIndex(
      (p) => p.countType !== null && (p.name === 'vertex_indices' || p.name === 'vertex_index'),
    ),
  };
}

/** Keeps vertex e's property p if it is x, y or z. */
function storeCoordinate(sink: Sink, r: { x: number; y: number; z: number }, e: number, p: number, v: number): void {
  if (p === r.x) sink.positions[e * 3] = v;
  else if (p === r.y) sink.positions[e * 3 + 1] = v;
  else if (p === r.z) sink.positions[e * 3 + 2] = v;
}

function pushFan(sink: Sink, polygon: number[], file: string, face: number): void {
  if (polygon.length < 3)
    throw new MeshImportError(
      file,
      'parse-failed',
      `PLY face ${face} has ${polygon.length} vertices, expected at least 3`,
    );
  for (let k = 1; k < polygon.length - 1; k++) sink.indices!.push(polygon[0], polygon[k], polygon[k + 1]);
}

function readBinary(bytes: Uint8Array, header: Header, file: string, sink: Sink): void {
  const little = header.encoding === 'binary_little_endian';
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  let o = header.bodyStart;
  const read = (type: Scalar): number => {
    const v =
      type === 'int8'
        ? view.getInt8(o)
        : type === 'uint8'
          ? view.getUint8(o)
          : type === 'int16'
            ? view.getInt16(o, little)
            : type === 'uint16'
              ? view.getUint16(o, little)
              : type === 'int32'
                ? view.getInt32(o, little)
                : type === 'uint32'
                  ? view.getUint32(o, little)
                  : type === 'float32'
                    ? view.getFloat32(o, little)
                    : view.getFloat64(o, little);
    o += BYTES[type];
    return v;
  };
  for (const element of header.elements) {
    // The least an entry can take: every scalar, and each list's count with no items.
    const least = element.properties.reduce((s, p) => s + BYTES[p.countType ?? p.type], 0);
    const left = bytes.length - o;
    if (element.count * least > left) {
      throw new MeshImportError(
        file,
        'truncated',
        `PLY header declares ${element.count} "${element.name.slice(0, 30)}" entries (at least ${element.count * least} bytes) but only ${left} bytes are left: the file is truncated or its header is wrong`,
      );
    }
    const r = roles(element);
    const isVertex = element.name === 'vertex';
    const isFace = element.name === 'face' && r.faceList >= 0;
    const polygon: number[] = [];
    for (let e = 0; e < element.count; e++) {
      for (let p = 0; p < element.properties.length; p++) {
        const prop = element.properties[p];
        if (prop.countType === null) {
          if (o + BYTES[prop.type] > bytes.length) truncatedIn(file, element, e);
          const v = read(prop.type);
          if (isVertex) storeCoordinate(sink, r, e, p, v);
          continue;
        }
        if (o + BYTES[prop.countType] > bytes.length) truncatedIn(file, element, e);
        const n = read(prop.countType);
        if (o + n * BYTES[prop.type] > bytes.length) truncatedIn(file, element, e);
        if (isFace && p === r.faceList) {
          polygon.length = 0;
          for (let k = 0; k < n; k++) polygon.push(read(prop.type));
          pushFan(sink, polygon, file, e);
        } else {
          o += n * BYTES[prop.type];
        }
      }
    }
  }
  // Some writers end the body with a newline or padding; anything else left over means the counts are wrong.
  let rest = o;
  while (rest < bytes.length && (bytes[rest] === 10 || bytes[rest] === 13 || bytes[rest] === 32 || bytes[rest] === 0))
    rest++;
  if (rest !== bytes.length) {
    throw new MeshImportError(
      file,
      'parse-failed',
      `PLY body is ${bytes.length - header.bodyStart} bytes but its header accounts for ${o - header.bodyStart}: the counts do not match the data`,
    );
  }
}

function truncatedIn(file: string, element: Element, entry: number): never {
  throw new MeshImportError(
    file,
    'truncated',
    `PLY body ends inside "${element.name.slice(0, 30)}" entry ${entry} of ${element.count}: the file is truncated`,
  );
}

function readAscii(bytes: Uint8Array, header: Header, file: string, sink: Sink): void {
  const text = new TextDecoder('utf-8').decode(bytes.subarray(header.bodyStart));
  const lines = text.split(/\r\n|\n|\r/);
  while (lines.length > 0 && lines[lines.length - 1].trim() === '') lines.pop();
  const declared = header.elements.reduce((s, e) => s + e.count, 0);
  if (declared > lines.length) {
    throw new MeshImportError(
      file,
      'truncated',
      `PLY header declares ${declared} entries (${header.elements.map((e) => `${e.count} ${e.name.slice(0, 30)}`).join(', ')}) but the body has ${lines.length} lines: the file is truncated or its header is wrong`,
    );
  }
  if (declared < lines.length) {
    throw new MeshImportError(
      file,
      'parse-failed',
      `PLY header declares ${declared} entries but the body has ${lines.length} lines: the counts do not match the data`,
    );
  }
  let line = 0;
  const polygon: number[] = [];
  for (const element of header.elements) {
    const r = roles(element);
    const isVertex = element.name === 'vertex';
    const isFace = element.name === 'face' && r.faceList >= 0;
    for (let e = 0; e < element.count; e++, line++) {
      const words = lines[line].trim().split(/\s+/);
      let w = 0;
      const next = (type: Scalar): number => {
        if (w >= words.length || words[w] === '') {
          throw new MeshImportError(
            file,
            'parse-failed',
            `PLY line ${line + 1} of the body ("${element.name.slice(0, 30)}" ${e}) has too few values`,
          );
        }
        const v = Number(words[w++]);
        if (Number.isNaN(v) && !/^[+-]?nan$/i.test(words[w - 1])) {
          throw new MeshImportError(
            file,
            'parse-failed',
            `PLY line ${line + 1} of the body: "${words[w - 1].slice(0, 20)}" is not a number`,
          );
        }
        if (type !== 'float32' && type !== 'float64' && !Number.isInteger(v)) {
          throw new MeshImportError(
            file,
            'parse-failed',
            `PLY line ${line + 1} of the body: "${words[w - 1].slice(0, 20)}" is not a whole number (${type})`,
          );
        }
        return v;
      };
      for (let p = 0; p < element.properties.length; p++) {
        const prop = element.properties[p];
        if (prop.countType === null) {
          const v = next(prop.type);
          if (isVertex) storeCoordinate(sink, r, e, p, v);
          continue;
        }
        const n = next(prop.countType);
        if (n < 0 || w + n > words.length) {
          throw new MeshImportError(
            file,
            'parse-failed',
            `PLY line ${line + 1} of the body: a list of ${n} values holds ${words.length - w}`,
          );
        }
        polygon.length = 0;
        for (let k = 0; k < n; k++) polygon.push(next(prop.type));
        if (isFace && p === r.faceList) pushFan(sink, polygon, file, e);
      }
      if (w !== words.length) {
        throw new MeshImportError(
          file,
          'parse-failed',
          `PLY line ${line + 1} of the body ("${element.name.slice(0, 30)}" ${e}) has ${words.length} values, its header accounts for ${w}`,
        );
      }
    }
  }
}

export function parsePly(buffer: ArrayBuffer, file: string): ImportedMesh {
  const bytes = new Uint8Array(buffer);
  if (!startsWithWord(bytes, 'ply'))
    throw new MeshImportError(file, 'unrecognised', 'not a PLY file: it does not begin with "ply"');
  const header = readHeader(bytes, file);
  const vertex = header.elements.find((e) => e.name === 'vertex');
  if (!vertex || vertex.count === 0)
    throw new MeshImportError(file, 'no-geometry', 'PLY has no vertices (no "element vertex" with a count)');
  const r = roles(vertex);
  if (r.x < 0 || r.y < 0 || r.z < 0)
    throw new MeshImportError(file, 'parse-failed', 'PLY vertices lack an x, y or z property');
  const face = header.elements.find((e) => e.name === 'face');
  if (face && face.count > 0 && roles(face).faceList < 0) {
    throw new MeshImportError(file, 'parse-failed', 'PLY faces have no "vertex_indices" list');
  }
  // Allocation waits until the element's bytes or lines have been checked to exist (readBinary/readAscii
  // check before reading; a vertex count larger than the file can hold is caught here first).
  const leastBody = header.encoding === 'ascii' ? 2 * vertex.count : vertex.count * 3;
  if (leastBody > bytes.length - header.bodyStart) {
    throw new MeshImportError(
      file,
      'truncated',
      `PLY header declares ${vertex.count} vertices but the body has only ${bytes.length - header.bodyStart} bytes: the file is truncated or its header is wrong`,
    );
  }
  const sink: Sink = {
    positions: new Float32Array(vertex.count * 3),
    indices: face && face.count > 0 ? [] : null,
    vertexCount: vertex.count,
  };
  if (header.encoding === 'ascii') readAscii(bytes, header, file, sink);
  else readBinary(bytes, header, file, sink);
  const indices = sink.indices && sink.indices.length > 0 ? sink.indices : null;
  return finishMesh(file, 'ply', { positions: sink.positions, indices }, buffer.byteLength);
}
