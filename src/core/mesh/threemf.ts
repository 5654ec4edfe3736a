// 3MF (3MF Consortium core specification 1.x): a ZIP package whose model part (found through _rels/.rels)
// holds <object> meshes of <vertex> and <triangle> elements, objects built from <component>s, and <build>
// <item>s that place them, in the unit the <model> element names. Read by hand: three's 3MFLoader parses
// the XML with DOMParser, which neither Node nor a Web Worker has. The ZIP is opened by fflate (the copy
// three ships); the package is refused before unpacking when its entries claim more than a cap.

import { unzipSync } from 'three/examples/jsm/libs/fflate.module.js';
import { finishMesh } from './geometry';
import { MeshImportError, type ImportedMesh } from './types';

/** Millimetres per unit, for each unit the specification allows (3MF core, "model" element). */
const UNIT_MM: Record<string, number> = {
  micron: 0.001,
  millimeter: 1,
  centimeter: 10,
  inch: 25.4,
  foot: 304.8,
  meter: 1000,
};

/** Unpacked bytes allowed per package byte, against ZIP bombs (common practice: a few hundred). */
const MAX_EXPANSION = 200;

interface ObjectDef {
  mesh: { positions: number[]; triangles: number[] } | null;
  components: { id: string; transform: number[] }[];
}

/** A 4×3 affine transform as the specification writes it ("m00 m01 m02 m10 m11 m12 m20 m21 m22 m30 m31 m32",
 * points as row vectors: p' = p · M). */
type Affine = number[];
const IDENTITY: Affine = [1, 0, 0, 0, 1, 0, 0, 0, 1, 0, 0, 0];

function compose(inner: Affine, outer: Affine): Affine {
  // p · inner · outer
  const out = new Array<number>(12);
  for (let r = 0; r < 4; r++)
    for (let c = 0; c < 3; c++) {
      out[r * 3 + c] =
        inner[r * 3] * outer[c] +
        inner[r * 3 + 1] * outer[3 + c] +
        inner[r * 3 + 2] * outer[6 + c] +
        (r === 3 ? outer[9 + c] : 0);
    }
  return out;
}

function attributes(tag: string): Record<string, string> {
  const out: Record<string, string> = {};
  for (const m of tag.matchAll(/([\w:.-]+)\s*=\s*("([^"]*)"|'([^']*)')/g))
    out[m[1].replace(/^\w+:/, '')] = m[3] ?? m[4];
  return out;
}

export function parse3mf(buffer: ArrayBuffer, file: string): ImportedMesh {
  const fail = (
    reason: string,
    code: 'parse-failed' | 'unrecognised' | 'no-geometry' | 'too-large' = 'parse-failed',
  ): never => {
    throw new MeshImportError(file, code, reason);
  };
  const bytes = new Uint8Array(buffer);
  if (bytes[0] !== 0x50 || bytes[1] !== 0x4b) fail('not a 3MF file: it is not a ZIP package', 'unrecognised');
  let entries: Record<string, Uint8Array>;
  let claimed = 0;
  try {
    entries = unzipSync(bytes, {
      filter: (f) => {
        claimed += f.originalSize;
        if (claimed > MAX_EXPANSION * bytes.length + (1 << 20))
          fail(`the package claims ${claimed} unpacked bytes, far more than its ${bytes.length}: refused`, 'too-large');
        return /\.rels$|\.model$/i.test(f.name);
      },
    });
  } catch (err) {
    if (err instanceof MeshImportError) throw err;
    return fail('the ZIP package is damaged or truncated');
  }
  const text = (name: string) => new TextDecoder().decode(entries[name]);
  const rels = entries['_rels/.rels'] ? text('_rels/.rels') : '';
  const target =
    /Target\s*=\s*"\/?([^"]+)"[^>]*Type\s*=\s*"[^"]*3dmodel"|Type\s*=\s*"[^"]*3dmodel"[^>]*Target\s*=\s*"\/?([^"]+)"/.exec(
      rels,
    );
  const modelName = (target && (target[1] ?? target[2])) ?? Object.keys(entries).find((n) => /\.model$/i.test(n));
  if (!modelName || !entries[modelName]) return fail('the package has no 3D model part', 'no-geometry');
  const xml = text(modelName);
  const modelTag = /<(?:\w+:)?model\b[^>]*>/.exec(xml) ?? fail('the model part has no <model> element', 'unrecognised');
  const unit = attributes(modelTag[0]).unit ?? 'millimeter';
  const mm =
    UNIT_MM[unit] ??
    fail(`unknown unit "${unit.slice(0, 20)}" (the specification allows ${Object.keys(UNIT_MM).join(', ')})`);

  const objects = new Map<string, ObjectDef>();
  for (const m of xml.matchAll(/<(?:\w+:)?object\b([^>]*)>([\s\S]*?)<\/(?:\w+:)?object>/g)) {
    const id = attributes(m[1]).id ?? fail('an <object> has no id');
    const body = m[2];
    let mesh: ObjectDef['mesh'] = null;
    if (/<(?:\w+:)?mesh\b/.test(body)) {
      const positions: number[] = [];
      for (const v of body.matchAll(/<(?:\w+:)?vertex\b([^>]*)\/?>/g)) {
        const a = attributes(v[1]);
        positions.push(Number(a.x), Number(a.y), Number(a.z));
      }
      const triangles: number[] = [];
      for (const t of body.matchAll(/<(?:\w+:)?triangle\b([^>]*)\/?>/g)) {
        const a = attributes(t[1]);
        triangles.push(Number(a.v1), Number(a.v2), Number(a.v3));
      }
      mesh = { positions, triangles };
    }
    const components = [...body.matchAll(/<(?:\w+:)?component\b([^>]*)\/?>/g)].map((c) => {
      const a = attributes(c[1]);
      return {
        id: a.objectid ?? fail(`a component of object ${id} has no objectid`),
        transform: transformOf(a.transform, fail),
      };
    });
    objects.set(id, { mesh, components });
  }
  const items = [...xml.matchAll(/<(?:\w+:)?item\b([^>]*)\/?>/g)].map((m) => attributes(m[1]));
  if (items.length === 0) fail('the model has no <build> items', 'no-geometry');

  const positions: number[] = [];
  const indices: number[] = [];
  let bodies = 0;
  const place = (id: string, transform: Affine, depth: number) => {
    if (depth > 32) fail('components nest more than 32 deep (a cycle?)');
    const obj =
      objects.get(id) ?? fail(`a build item or component refers to object ${id.slice(0, 20)}, which does not exist`);
    if (obj.mesh) {
      const base = positions.length / 3;
      const p = obj.mesh.positions,
        n = p.length / 3;
      for (let i = 0; i < n; i++) {
        const x = p[i * 3],
          y = p[i * 3 + 1],
          z = p[i * 3 + 2];
        for (let c = 0; c < 3; c++)
          positions.push((x * transform[c] + y * transform[3 + c] + z * transform[6 + c] + transform[9 + c]) * mm);
      }
      for (const k of obj.mesh.triangles) {
        if (!(Number.isInteger(k) && k >= 0 && k < n))
          fail(`object ${id.slice(0, 20)} has a triangle on vertex ${k} of ${n}`, 'parse-failed');
        indices.push(base + k);
      }
      bodies++;
    }
    for (const c of obj.components) place(c.id, compose(c.transform, transform), depth + 1);
  };
  for (const item of items)
    place(item.objectid ?? fail('a build item has no objectid'), transformOf(item.transform, fail), 0);
  if (indices.length === 0) fail('the model holds no triangles', 'no-geometry');
  const part = finishMesh(
    file,
    '3mf',
    { positions: Float32Array.from(positions), indices: Uint32Array.from(indices) },
    buffer.byteLength,
  );
  return { ...part, info: { ...part.info, bodies, units: 'mm' } };
}

function transformOf(value: string | undefined, fail: (reason: string) => never): Affine {
  if (value === undefined) return IDENTITY;
  const t = value.trim().split(/\s+/).map(Number);
  if (t.length !== 12 || t.some((v) => !Number.isFinite(v)))
    fail(`a transform "${value.slice(0, 40)}" is not 12 numbers`);
  return t;
}
