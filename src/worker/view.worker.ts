// The 3-D view worker: draws the page's live views on canvases whose control the page handed over
// (OffscreenCanvas), so creating a WebGL context, compiling shaders and drawing (all slow with software WebGL)
// never hold the page. The page keeps the cameras and their controls and sends each change.

import { PerspectiveCamera, WebGLRenderer, type Object3D, type Scene } from 'three';
import { buildObject, disposeObject, litScene, type ViewObject } from '../render/scene';

export type ViewRequest =
  | {
      readonly type: 'attach';
      readonly view: number;
      readonly canvas: OffscreenCanvas;
      readonly width: number;
      readonly height: number;
      readonly pixelRatio: number;
    }
  | { readonly type: 'size'; readonly view: number; readonly width: number; readonly height: number }
  | { readonly type: 'object'; readonly view: number; readonly parts: readonly ViewObject[] | null }
  | {
      readonly type: 'camera';
      readonly view: number;
      readonly position: readonly number[];
      readonly quaternion: readonly number[];
      readonly fov: number;
    };

/** A view whose renderer could not start (no WebGL in workers here): the page says so in place of the view. */
export type ViewReply = { readonly type: 'failed'; readonly view: number; readonly message: string };

interface View {
  readonly renderer: WebGLRenderer;
  readonly scene: Scene;
  readonly camera: PerspectiveCamera;
  object: Object3D | null;
  dirty: boolean;
}

const views = new Map<number, View>();
const frame: (draw: () => void) => void =
  typeof (self as { requestAnimationFrame?: unknown }).requestAnimationFrame === 'function'
    ? (draw) => void requestAnimationFrame(draw)
    : (draw) => void setTimeout(draw, 16);
let scheduled = false;

function redraw(view: View): void {
  view.dirty = true;
  if (scheduled) return;
  scheduled = true;
  frame(() => {
    scheduled = false;
    for (const v of views.values())
      if (v.dirty) {
        v.dirty = false;
        v.renderer.render(v.scene, v.camera);
      }
  });
}

self.onmessage = (e: MessageEvent<ViewRequest>) => {
  const req = e.data;
  if (req.type === 'attach') {
    try {
      const renderer = new WebGLRenderer({ canvas: req.canvas, antialias: true });
      renderer.setPixelRatio(req.pixelRatio);
      renderer.setSize(req.width, req.height, false);
      const camera = new PerspectiveCamera(35, req.width / req.height, 0.05, 50);
      camera.up.set(0, 0, 1);
      views.set(req.view, { renderer, scene: litScene(), camera, object: null, dirty: false });
    } catch (err) {
      (self as unknown as Worker).postMessage({
        type: 'failed',
        view: req.view,
        message: (err as Error).message,
      } satisfies ViewReply);
    }
    return;
  }
  const view = views.get(req.view);
  if (!view) return;
  if (req.type === 'size') {
    view.renderer.setSize(req.width, req.height, false);
    view.camera.aspect = req.width / req.height;
    view.camera.updateProjectionMatrix();
  } else if (req.type === 'object') {
    if (view.object) {
      view.scene.remove(view.object);
      disposeObject(view.object);
    }
    view.object = req.parts ? buildObject(req.parts) : null;
    if (view.object) view.scene.add(view.object);
  } else {
    view.camera.position.fromArray(req.position);
    view.camera.quaternion.fromArray(req.quaternion);
    if (view.camera.fov !== req.fov) {
      view.camera.fov = req.fov;
      view.camera.updateProjectionMatrix();
    }
  }
  redraw(view);
};
