// three.js helpers shared by the page's viewers and the thumbnail worker (no DOM): geometry from library data,
// a colour ramp for points, and disposal.

import {
  AmbientLight,
  BufferAttribute,
  BufferGeometry,
  Color,
  DirectionalLight,
  DoubleSide,
  Group,
  Matrix4,
  Mesh,
  type Material,
  MeshStandardMaterial,
  Points,
  PointsMaterial,
  Scene,
  type Object3D,
} from 'three';

export const PALETTE = {
  paper: 0xf4f1ea,
  ink: 0x1d2b33,
  rust: 0xc2571a,
  teal: 0x2f6f73,
  steel: 0x8a9ba5,
};

/** Height ramp for points (teal → sand → rust), so depth and shape read without lighting. */
export function rampColours(points: Float32Array, axis = 2): Float32Array {
  const n = points.length / 3;
  let lo = Infinity,
    hi = -Infinity;
  for (let i = 0; i < n; i++) {
    const v = points[i * 3 + axis];
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  const a = new Color(PALETTE.teal),
    b = new Color(0xd9b26f),
    c = new Color(PALETTE.rust);
  const out = new Float32Array(n * 3);
  const tmp = new Color();
  for (let i = 0; i < n; i++) {
    const t = hi > lo ? (points[i * 3 + axis] - lo) / (hi - lo) : 0.5;
    if (t < 0.5) tmp.copy(a).lerp(b, t * 2);
    else tmp.copy(b).lerp(c, (t - 0.5) * 2);
    out[i * 3] = tmp.r;
    out[i * 3 + 1] = tmp.g;
    out[i * 3 + 2] = tmp.b;
  }
  return out;
}

/**
 * Colours for per-point weights in [0, max]: slate for points that carry nothing, through sand to rust for
 * the points that carry the most (one hue ramp, so order reads without a legend and survives colour-vision deficiency).
 */
export function weightColours(weights: Float32Array, max: number): Float32Array {
  const zero = new Color(0x7d8b93),
    mid = new Color(0xd9b26f),
    top = new Color(PALETTE.rust);
  const out = new Float32Array(weights.length * 3);
  const tmp = new Color();
  for (let i = 0; i < weights.length; i++) {
    const t = max > 0 ? Math.sqrt(Math.max(0, weights[i]) / max) : 0; // square root: small shares stay visible
    if (t < 0.5) tmp.copy(zero).lerp(mid, t * 2);
    else tmp.copy(mid).lerp(top, (t - 0.5) * 2);
    out.set([tmp.r, tmp.g, tmp.b], i * 3);
  }
  return out;
}

/**
 * Materials shared by every object of a kind, for the life of the page (or worker). three.js compiles a shader
 * program per material set-up and frees it when the last material using it is disposed; with software WebGL a
 * compile took 100–150 ms, which every tab switch paid again while each view made and disposed its own materials
 * (measured in headless Chromium: a switch to Look-alikes had two long tasks of ~110–250 ms; with shared
 * materials the second and later switches had none).
 */
const sharedMaterials = new Map<string, Material>();
function shared<M extends Material>(key: string, make: () => M): M {
  let m = sharedMaterials.get(key) as M | undefined;
  if (!m) {
    m = make();
    m.userData.shared = true;
    m.userData.key = key;
    sharedMaterials.set(key, m);
  }
  return m;
}

/** Points of one size: one colour, or coloured by their own colour attribute (`colour` undefined). */
function pointsMaterial(size: number, colour?: number): PointsMaterial {
  return shared(
    `points:${size}:${colour ?? 'ramp'}`,
    () =>
      new PointsMaterial({
        size,
        vertexColors: colour === undefined,
        color: colour ?? 0xffffff,
        sizeAttenuation: true,
      }),
  );
}

/** A lit, flat-shaded surface of one colour, drawn from both sides. */
function meshMaterial(colour: number): MeshStandardMaterial {
  // Both sides: an open mesh (a surface export, a scan) would otherwise show holes where its back faces are culled.
  return shared(
    `mesh:${colour}`,
    () =>
      new MeshStandardMaterial({ color: colour, metalness: 0.3, roughness: 0.55, flatShading: true, side: DoubleSide }),
  );
}

/** The shared material a key names (`userData.key` of a material made here), e.g. in a worker that draws a view. */
export function materialFromKey(key: string): Material {
  const [kind, a, b] = key.split(':');
  if (kind === 'points') return pointsMaterial(Number(a), b === 'ramp' ? undefined : Number(b));
  if (kind === 'mesh') return meshMaterial(Number(a));
  throw new RangeError(`no material is named "${key}"`);
}

export function pointsObject(points: Float32Array, size = 0.025, colour?: number, colours?: Float32Array): Points {
  const g = new BufferGeometry();
  g.setAttribute('position', new BufferAttribute(points, 3));
  if (colour === undefined) g.setAttribute('color', new BufferAttribute(colours ?? rampColours(points), 3));
  return new Points(g, pointsMaterial(size, colour));
}

/**
 * The mesh in unit-sphere coordinates (same frame as the sampled cloud). It carries no vertex normals: its material
 * is flat-shaded, and three.js then takes each face's normal from the screen-space derivatives of the position
 * (shader chunk normal_fragment_begin, FLAT_SHADED), never from the attribute; working them out cost the page
 * 13 ms for one demo part in a view.
 */
export function meshObject(
  positions: Float32Array,
  indices: Uint32Array,
  centre: readonly number[],
  radius: number,
  colour: number = PALETTE.steel,
): Mesh {
  const p = new Float32Array(positions.length);
  for (let i = 0; i < positions.length; i++) p[i] = (positions[i] - centre[i % 3]) / radius;
  const g = new BufferGeometry();
  g.setAttribute('position', new BufferAttribute(p, 3));
  g.setIndex(new BufferAttribute(indices, 1));
  return new Mesh(g, meshMaterial(colour));
}

export function litScene(): Scene {
  const scene = new Scene();
  scene.background = new Color(PALETTE.paper);
  scene.add(new AmbientLight(0xffffff, 1.2));
  const key = new DirectionalLight(0xffffff, 2.2);
  key.position.set(2, 3, 4);
  scene.add(key);
  const fill = new DirectionalLight(0xffffff, 0.8);
  fill.position.set(-3, -1, -2);
  scene.add(fill);
  return scene;
}

/** Frees an object's geometry and its own materials (shared ones stay, with their compiled programs). */
export function disposeObject(obj: Object3D): void {
  const own = (m: Material) => {
    if (!m.userData.shared) m.dispose();
  };
  obj.traverse((o) => {
    const withGeometry = o as Mesh;
    withGeometry.geometry?.dispose();
    const mat = withGeometry.material;
    if (Array.isArray(mat)) mat.forEach(own);
    else if (mat) own(mat);
  });
}

/**
 * Turns an object (in the part's unit-sphere frame) into the principal frame of the part's sampled points, so two
 * parts shown side by side sit the same way whatever their files' orientation.
 */
export function alignToFrame(obj: Object3D, frame: ArrayLike<number>): Object3D {
  const r = frame;
  obj.setRotationFromMatrix(
    new Matrix4().set(r[0], r[1], r[2], 0, r[3], r[4], r[5], 0, r[6], r[7], r[8], 0, 0, 0, 0, 1),
  );
  return obj;
}

/**
 * An object as plain arrays, to hand to a worker that draws it: each mesh or point set of it with its geometry
 * (copies, so they can be transferred), its shared material's key and its placement.
 */
export interface ViewObject {
  readonly kind: 'mesh' | 'points';
  readonly material: string;
  readonly position: Float32Array;
  readonly normal: Float32Array | null;
  readonly colour: Float32Array | null;
  readonly index: Uint32Array | null;
  /** The object's world matrix, column-major (three's Matrix4.elements). */
  readonly matrix: number[];
}

export function describeObject(root: Object3D): ViewObject[] {
  root.updateMatrixWorld(true);
  const out: ViewObject[] = [];
  const copy = (g: BufferGeometry, name: string) => {
    const a = g.getAttribute(name);
    return a ? new Float32Array(a.array as ArrayLike<number>) : null; // a typed-array copy (from() iterates)
  };
  root.traverse((o) => {
    const drawn = o as Mesh | Points;
    if (!(drawn instanceof Mesh || drawn instanceof Points)) return;
    const key = (drawn.material as Material).userData.key as string | undefined;
    if (!key) return; // only objects made here are drawn elsewhere
    const g = drawn.geometry;
    out.push({
      kind: drawn instanceof Mesh ? 'mesh' : 'points',
      material: key,
      position: copy(g, 'position')!,
      normal: copy(g, 'normal'),
      colour: copy(g, 'color'),
      index: g.index ? new Uint32Array(g.index.array as ArrayLike<number>) : null,
      matrix: [...drawn.matrixWorld.elements],
    });
  });
  return out;
}

/** The object a description describes (in a worker: its materials are that worker's shared ones). */
export function buildObject(parts: readonly ViewObject[]): Object3D {
  const group = new Group();
  for (const p of parts) {
    const g = new BufferGeometry();
    g.setAttribute('position', new BufferAttribute(p.position, 3));
    if (p.normal) g.setAttribute('normal', new BufferAttribute(p.normal, 3));
    if (p.colour) g.setAttribute('color', new BufferAttribute(p.colour, 3));
    if (p.index) g.setIndex(new BufferAttribute(p.index, 1));
    const o = p.kind === 'mesh' ? new Mesh(g, materialFromKey(p.material)) : new Points(g, materialFromKey(p.material));
    o.matrixAutoUpdate = false;
    o.matrix.fromArray(p.matrix);
    group.add(o);
  }
  return group;
}

/** The buffers of a description, to transfer. */
export const viewTransfers = (parts: readonly ViewObject[]): ArrayBuffer[] =>
  parts.flatMap((p) =>
    [p.position, p.normal, p.colour, p.index].filter((a) => a !== null).map((a) => a.buffer as ArrayBuffer),
  );
