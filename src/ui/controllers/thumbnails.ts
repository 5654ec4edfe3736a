// One small offscreen WebGL renderer makes every part's thumbnail (a PNG data URL), so the grid holds
// images rather than dozens of live WebGL contexts. Without WebGL, thumbnails are drawn as 2-D points.

import { PerspectiveCamera, WebGLRenderer } from 'three';
import type { LibraryPart } from '../../core/library';
import { disposeObject, litScene, meshObject, pointsObject } from './scene';

const SIZE = { w: 176, h: 132 };
/** Above this many triangles a thumbnail shows the part's sampled points: a 176-pixel picture gains nothing
 * from more, and a software renderer (no GPU) would hold the page for seconds. */
const MAX_THUMBNAIL_TRIANGLES = 200_000;
let renderer: WebGLRenderer | null | undefined;

function getRenderer(): WebGLRenderer | null {
  if (renderer !== undefined) return renderer;
  try {
    renderer = new WebGLRenderer({ antialias: true, preserveDrawingBuffer: true });
    renderer.setSize(SIZE.w, SIZE.h, false);
  } catch {
    renderer = null;
  }
  return renderer;
}

export function thumbnail(part: LibraryPart): string {
  const r = getRenderer();
  if (!r) return pointsThumbnail(part.points);
  const scene = litScene();
  const object =
    part.meshIndices.length > 0 && part.meshIndices.length / 3 <= MAX_THUMBNAIL_TRIANGLES
      ? meshObject(part.meshPositions, part.meshIndices, part.centre, part.radius)
      : pointsObject(part.points, 0.04);
  scene.add(object);
  const camera = new PerspectiveCamera(30, SIZE.w / SIZE.h, 0.1, 20);
  camera.position.set(2.4, -2.9, 2.1);
  camera.up.set(0, 0, 1);
  camera.lookAt(0, 0, 0);
  r.render(scene, camera);
  const url = r.domElement.toDataURL('image/png');
  disposeObject(object);
  return url;
}

/** 2-D fallback: an oblique projection of the points, shaded by depth. */
function pointsThumbnail(points: Float32Array): string {
  const canvas = document.createElement('canvas');
  canvas.width = SIZE.w;
  canvas.height = SIZE.h;
  const ctx = canvas.getContext('2d')!;
  ctx.fillStyle = '#f4f1ea';
  ctx.fillRect(0, 0, SIZE.w, SIZE.h);
  const s = SIZE.h * 0.42;
  for (let i = 0; i < points.length; i += 3) {
    const x = points[i],
      y = points[i + 1],
      z = points[i + 2];
    const u = (x - y) * 0.707,
      v = z * 0.8 - (x + y) * 0.35;
    const depth = (x + y) * 0.5 + 0.5;
    ctx.fillStyle = `rgba(47,111,115,${0.35 + 0.5 * (1 - depth / 2)})`;
    ctx.fillRect(SIZE.w / 2 + u * s, SIZE.h / 2 - v * s, 2, 2);
  }
  return canvas.toDataURL('image/png');
}
