// A part's thumbnail drawn on an OffscreenCanvas, so it can be made in a worker: three.js with WebGL where the
// context exists, else the sampled points projected in 2-D. Returns PNG bytes as a Blob.

import { PerspectiveCamera, WebGLRenderer } from 'three';
import { disposeObject, litScene, meshObject, pointsObject } from './scene';

export const THUMBNAIL_SIZE = { w: 176, h: 132 };
/** Above this many triangles a thumbnail shows the part's sampled points: a 176-pixel picture gains nothing
 * from more, and a software renderer (no GPU) would take seconds. */
export const MAX_THUMBNAIL_TRIANGLES = 200_000;

/** What a thumbnail needs of a library part. */
export interface ThumbnailInput {
  readonly meshPositions: Float32Array;
  readonly meshIndices: Uint32Array;
  readonly centre: readonly number[];
  readonly radius: number;
  /** The part's unit-sphere cloud; may be empty when the mesh can be drawn (the vertices then stand in for it). */
  readonly points: Float32Array;
}

/** The points to draw: the part's cloud, else its mesh's vertices brought to the unit sphere. */
function pointsOf(part: ThumbnailInput): Float32Array {
  if (part.points.length > 0) return part.points;
  const v = part.meshPositions;
  const out = new Float32Array(v.length);
  for (let i = 0; i < v.length; i++) out[i] = (v[i] - part.centre[i % 3]) / part.radius;
  return out;
}

let renderer: { r: WebGLRenderer; canvas: OffscreenCanvas } | null | undefined;

function getRenderer(): { r: WebGLRenderer; canvas: OffscreenCanvas } | null {
  if (renderer !== undefined) return renderer;
  try {
    const canvas = new OffscreenCanvas(THUMBNAIL_SIZE.w, THUMBNAIL_SIZE.h);
    const r = new WebGLRenderer({ canvas, antialias: true, preserveDrawingBuffer: true });
    r.setSize(THUMBNAIL_SIZE.w, THUMBNAIL_SIZE.h, false);
    renderer = { r, canvas };
  } catch {
    renderer = null;
  }
  return renderer;
}

export async function renderThumbnail(part: ThumbnailInput): Promise<Blob> {
  const gl = getRenderer();
  if (!gl) return pointsThumbnail(pointsOf(part));
  const scene = litScene();
  const object =
    part.meshIndices.length > 0 && part.meshIndices.length / 3 <= MAX_THUMBNAIL_TRIANGLES
      ? meshObject(part.meshPositions, part.meshIndices, part.centre, part.radius)
      : pointsObject(pointsOf(part), 0.04);
  scene.add(object);
  const camera = new PerspectiveCamera(30, THUMBNAIL_SIZE.w / THUMBNAIL_SIZE.h, 0.1, 20);
  camera.position.set(2.4, -2.9, 2.1);
  camera.up.set(0, 0, 1);
  camera.lookAt(0, 0, 0);
  gl.r.render(scene, camera);
  disposeObject(object);
  return gl.canvas.convertToBlob({ type: 'image/png' });
}

/** 2-D fallback: an oblique projection of the points, shaded by depth. */
function pointsThumbnail(points: Float32Array): Promise<Blob> {
  const { w, h } = THUMBNAIL_SIZE;
  const canvas = new OffscreenCanvas(w, h);
  const ctx = canvas.getContext('2d')!;
  ctx.fillStyle = '#f4f1ea';
  ctx.fillRect(0, 0, w, h);
  const s = h * 0.42;
  for (let i = 0; i < points.length; i += 3) {
    const x = points[i],
      y = points[i + 1],
      z = points[i + 2];
    const u = (x - y) * 0.707,
      v = z * 0.8 - (x + y) * 0.35;
    const depth = (x + y) * 0.5 + 0.5;
    ctx.fillStyle = `rgba(47,111,115,${0.35 + 0.5 * (1 - depth / 2)})`;
    ctx.fillRect(w / 2 + u * s, h / 2 - v * s, 2, 2);
  }
  return canvas.convertToBlob({ type: 'image/png' });
}
