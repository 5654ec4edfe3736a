// Writers of small glTF 2.0 and 3MF files, field by field after the specifications, for tests.

import { BoxGeometry } from 'three';
import { strToU8, zipSync } from 'three/examples/jsm/libs/fflate.module.js';
import { textBuffer } from './meshes';

/** A glTF of one mesh (three's unit box, 24 vertices, 36 uint16 indices) under one node, as .gltf or .glb. */
export function writeGltf(node: object, binary: boolean): ArrayBuffer {
  const box = new BoxGeometry(1, 1, 1);
  const pos = new Float32Array(box.getAttribute('position').array);
  const idx = new Uint16Array(box.index!.array);
  const bin = new Uint8Array(pos.byteLength + idx.byteLength + ((4 - (idx.byteLength % 4)) % 4));
  bin.set(new Uint8Array(pos.buffer), 0);
  bin.set(new Uint8Array(idx.buffer), pos.byteLength);
  const json = {
    asset: { version: '2.0' },
    scene: 0,
    scenes: [{ nodes: [0] }],
    nodes: [{ mesh: 0, ...node }],
    meshes: [{ primitives: [{ attributes: { POSITION: 0 }, indices: 1, mode: 4 }] }],
    buffers: [
      binary
        ? { byteLength: bin.byteLength }
        : {
            byteLength: bin.byteLength,
            uri: `data:application/octet-stream;base64,${Buffer.from(bin).toString('base64')}`,
          },
    ],
    bufferViews: [
      { buffer: 0, byteOffset: 0, byteLength: pos.byteLength },
      { buffer: 0, byteOffset: pos.byteLength, byteLength: idx.byteLength },
    ],
    accessors: [
      {
        bufferView: 0,
        componentType: 5126,
        count: pos.length / 3,
        type: 'VEC3',
        min: [-0.5, -0.5, -0.5],
        max: [0.5, 0.5, 0.5],
      },
      { bufferView: 1, componentType: 5123, count: idx.length, type: 'SCALAR' },
    ],
  };
  if (!binary) return textBuffer(JSON.stringify(json));
  let text = JSON.stringify(json);
  while (text.length % 4) text += ' ';
  const jsonBytes = new TextEncoder().encode(text);
  const out = new Uint8Array(12 + 8 + jsonBytes.length + 8 + bin.length);
  const v = new DataView(out.buffer);
  v.setUint32(0, 0x46546c67, true);
  v.setUint32(4, 2, true);
  v.setUint32(8, out.length, true);
  v.setUint32(12, jsonBytes.length, true);
  v.setUint32(16, 0x4e4f534a, true);
  out.set(jsonBytes, 20);
  const o = 20 + jsonBytes.length;
  v.setUint32(o, bin.length, true);
  v.setUint32(o + 4, 0x004e4942, true);
  out.set(bin, o + 8);
  return out.buffer;
}

/** A 3MF package per the core specification: content types, the root relationship, one model part. */
export function write3mf(model: string): ArrayBuffer {
  const zip = zipSync({
    '[Content_Types].xml': strToU8(
      '<?xml version="1.0" encoding="UTF-8"?><Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types"><Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/><Default Extension="model" ContentType="application/vnd.ms-package.3dmanufacturing-3dmodel+xml"/></Types>',
    ),
    '_rels/.rels': strToU8(
      '<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Target="/3D/3dmodel.model" Id="rel0" Type="http://schemas.microsoft.com/3dmanufacturing/2013/01/3dmodel"/></Relationships>',
    ),
    '3D/3dmodel.model': strToU8(model),
  });
  return zip.buffer.slice(zip.byteOffset, zip.byteOffset + zip.byteLength) as ArrayBuffer;
}

export function cubeObject(id: number): string {
  const g = new BoxGeometry(1, 1, 1).toNonIndexed();
  const p = g.getAttribute('position').array;
  const vertices = Array.from(
    { length: p.length / 3 },
    (_, i) => `<vertex x="${p[i * 3] + 0.5}" y="${p[i * 3 + 1] + 0.5}" z="${p[i * 3 + 2] + 0.5}"/>`,
  ).join('');
  const triangles = Array.from(
    { length: p.length / 9 },
    (_, t) => `<triangle v1="${t * 3}" v2="${t * 3 + 1}" v3="${t * 3 + 2}"/>`,
  ).join('');
  return `<object id="${id}" type="model"><mesh><vertices>${vertices}</vertices><triangles>${triangles}</triangles></mesh></object>`;
}
