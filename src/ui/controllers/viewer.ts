// A live 3-D view: the page keeps the camera and its orbit controls, the view worker draws on the canvas
// (render on demand). Cameras can be linked: moving one view moves the others in the same link.

import { PerspectiveCamera, type Object3D } from 'three';
import { OrbitControls } from 'three/examples/jsm/controls/OrbitControls.js';
import type { ReactiveController, ReactiveControllerHost } from 'lit';
import { describeObject, viewTransfers } from '../../render/scene';
import type { ViewReply, ViewRequest } from '../../worker/view.worker';
import { yieldToPage } from '../pace';

export class CameraLink {
  private readonly members = new Set<ViewerController>();
  private syncing = false;
  add(v: ViewerController): void {
    this.members.add(v);
  }
  remove(v: ViewerController): void {
    this.members.delete(v);
  }
  moved(source: ViewerController): void {
    if (this.syncing) return;
    this.syncing = true;
    for (const v of this.members) if (v !== source) v.copyCamera(source);
    this.syncing = false;
  }
}

/**
 * The views are drawn in one worker (view.worker.ts) on canvases handed over to it: with software WebGL, making a
 * context took 15–30 ms, sizing its antialiased buffers 30–40 ms and compiling a shader 100–250 ms (headless
 * Chromium), each a long task when done on the page. Canvases (and their views in the worker) are kept when a
 * view goes, for the next one: a canvas can be handed over only once.
 */
let worker: Worker | null = null;
let nextView = 1;
const owners = new Map<number, ViewerController>();
const spare: { canvas: HTMLCanvasElement; view: number }[] = [];

function views(): Worker {
  if (!worker) {
    worker = new Worker(new URL('../../worker/view.worker.ts', import.meta.url), { type: 'module' });
    worker.onmessage = (e: MessageEvent<ViewReply>) => owners.get(e.data.view)?.failed();
    worker.onerror = () => owners.forEach((o) => o.failed());
  }
  return worker;
}

const send = (req: ViewRequest, transfer: Transferable[] = []) => views().postMessage(req, transfer);

export class ViewerController implements ReactiveController {
  private canvas: HTMLCanvasElement | null = null;
  private view = 0;
  private camera = new PerspectiveCamera(35, 1, 0.05, 50);
  private controls: OrbitControls | null = null;
  private object: Object3D | null = null;
  private resize: ResizeObserver | null = null;
  private link: CameraLink | null = null;
  webglMissing = false;

  /** `stageOf`: the element the view's canvas goes into (inside the host's shadow root, so its styles apply). */
  constructor(
    private readonly host: ReactiveControllerHost & HTMLElement,
    private readonly stageOf: () => HTMLElement | null,
  ) {
    host.addController(this);
    this.camera.up.set(0, 0, 1);
    this.camera.position.set(2.2, -2.8, 1.9);
  }

  hostConnected(): void {}

  private attaching = false;

  /**
   * The canvas, its orbit controls and the first object go to the view in a task after the host's render (pace.ts):
   * done inside it, they made a panel's first render with its results one long task.
   */
  hostUpdated(): void {
    if (this.canvas || this.webglMissing || this.attaching || !this.stageOf()) return;
    this.attaching = true;
    void yieldToPage().then(() => {
      this.attaching = false;
      if (this.host.isConnected) this.attach();
    });
  }

  private attach(): void {
    const stage = this.stageOf();
    if (this.canvas || this.webglMissing || !stage) return;
    let taken = spare.pop();
    if (!taken) {
      const canvas = document.createElement('canvas');
      if (typeof canvas.transferControlToOffscreen !== 'function' || typeof Worker === 'undefined') {
        this.failed();
        return;
      }
      canvas.tabIndex = 0;
      canvas.setAttribute('aria-label', '3-D view: drag to turn, scroll to zoom');
      const view = nextView++;
      const offscreen = canvas.transferControlToOffscreen();
      // Its real size follows from the resize observer once the page is laid out (reading it here would force a
      // layout inside this update).
      send(
        {
          type: 'attach',
          view,
          canvas: offscreen,
          width: 300,
          height: 240,
          pixelRatio: Math.min(2, window.devicePixelRatio || 1),
        },
        [offscreen],
      );
      taken = { canvas, view };
    }
    this.canvas = taken.canvas;
    this.view = taken.view;
    owners.set(this.view, this);
    stage.append(this.canvas);
    this.controls = new OrbitControls(this.camera, this.canvas);
    this.controls.enableDamping = false;
    this.controls.addEventListener('change', () => {
      this.sendCamera();
      this.link?.moved(this);
    });
    this.resize = new ResizeObserver((entries) => {
      const box = entries[entries.length - 1].contentRect;
      this.fit(box.width, box.height);
    });
    this.resize.observe(this.canvas); // reports the size once laid out, then on every change
    this.sendObject();
  }

  hostDisconnected(): void {
    this.resize?.disconnect();
    this.resize = null;
    this.controls?.dispose();
    this.controls = null;
    if (this.canvas) {
      send({ type: 'object', view: this.view, parts: null });
      this.canvas.remove();
      owners.delete(this.view);
      spare.push({ canvas: this.canvas, view: this.view }); // for the next view
    }
    this.canvas = null;
    this.view = 0;
    this.link?.remove(this);
  }

  /** The worker could not draw (no WebGL there, or no OffscreenCanvas here): the host shows a note instead. */
  failed(): void {
    this.webglMissing = true;
    this.host.requestUpdate();
  }

  setLink(link: CameraLink | null): void {
    if (this.link === link) return;
    this.link?.remove(this);
    this.link = link;
    link?.add(this);
  }

  setObject(object: Object3D | null): void {
    this.object = object;
    this.sendObject();
  }

  copyCamera(from: ViewerController): void {
    this.camera.position.copy(from.camera.position);
    this.camera.quaternion.copy(from.camera.quaternion);
    this.controls?.target.copy(from.controls?.target ?? this.controls.target);
    this.controls?.update();
    this.sendCamera();
  }

  private sendObject(): void {
    if (!this.canvas) return;
    const parts = this.object ? describeObject(this.object) : null;
    send({ type: 'object', view: this.view, parts }, parts ? viewTransfers(parts) : []);
  }

  private sendCamera(): void {
    if (!this.canvas) return;
    send({
      type: 'camera',
      view: this.view,
      position: this.camera.position.toArray(),
      quaternion: this.camera.quaternion.toArray(),
      fov: this.camera.fov,
    });
  }

  private fit(w: number, h: number): void {
    if (!this.canvas) return;
    const width = Math.max(1, Math.round(w)) || 300,
      height = Math.max(1, Math.round(h)) || 240;
    send({ type: 'size', view: this.view, width, height });
    this.sendCamera();
  }
}
