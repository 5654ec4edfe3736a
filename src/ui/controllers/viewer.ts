// A live three.js view (orbit controls, render on demand) attached to a host element's canvas.
// Cameras can be linked: moving one view moves the others in the same link.

import { PerspectiveCamera, WebGLRenderer, type Object3D, type Scene } from 'three';
import { OrbitControls } from 'three/examples/jsm/controls/OrbitControls.js';
import type { ReactiveController, ReactiveControllerHost } from 'lit';
import { disposeObject, litScene } from '../../render/scene';

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
 * Renderers with their canvases, kept when a view goes (a tab switch) for the next view to take: with software
 * WebGL, creating one took 15–30 ms and sizing its antialiased buffers 30–40 ms more (measured in headless
 * Chromium), so each is made once a page, and its making is spread over separate tasks (see `hostUpdated`).
 */
const spare: { renderer: WebGLRenderer; canvas: HTMLCanvasElement }[] = [];

function makeRenderer(): { renderer: WebGLRenderer; canvas: HTMLCanvasElement } {
  const canvas = document.createElement('canvas');
  canvas.tabIndex = 0;
  canvas.setAttribute('aria-label', '3-D view: drag to turn, scroll to zoom');
  const renderer = new WebGLRenderer({ canvas, antialias: true });
  renderer.setPixelRatio(Math.min(2, window.devicePixelRatio || 1));
  return { renderer, canvas };
}

export class ViewerController implements ReactiveController {
  private renderer: WebGLRenderer | null = null;
  private canvas: HTMLCanvasElement | null = null;
  private starting = false;
  private camera = new PerspectiveCamera(35, 1, 0.05, 50);
  private controls: OrbitControls | null = null;
  private scene: Scene = litScene();
  private object: Object3D | null = null;
  private resize: ResizeObserver | null = null;
  private frame = 0;
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

  hostUpdated(): void {
    if (this.renderer || this.webglMissing || this.starting || !this.stageOf()) return;
    // A renderer (kept, or made now) in one task, its first sizing in the next, and the first frame after that:
    // two views starting together then never hold the page for long.
    this.starting = true;
    setTimeout(() => {
      const stage = this.stageOf();
      if (!stage || !this.host.isConnected) return void (this.starting = false);
      let made: { renderer: WebGLRenderer; canvas: HTMLCanvasElement };
      try {
        made = spare.pop() ?? makeRenderer();
      } catch {
        this.webglMissing = true;
        this.starting = false;
        this.host.requestUpdate();
        return;
      }
      this.renderer = made.renderer;
      this.canvas = made.canvas;
      stage.append(made.canvas);
      this.controls = new OrbitControls(this.camera, made.canvas);
      this.controls.enableDamping = false;
      this.controls.addEventListener('change', () => {
        this.requestRender();
        this.link?.moved(this);
      });
      this.starting = false;
      setTimeout(() => {
        if (this.canvas !== made.canvas) return;
        this.resize = new ResizeObserver(() => this.fit());
        this.resize.observe(made.canvas);
        this.fit();
      });
    });
  }

  hostDisconnected(): void {
    this.resize?.disconnect();
    this.resize = null;
    this.controls?.dispose();
    this.controls = null;
    if (this.object) {
      this.scene.remove(this.object);
      disposeObject(this.object);
      this.object = null;
    }
    if (this.renderer && this.canvas) {
      this.canvas.remove();
      spare.push({ renderer: this.renderer, canvas: this.canvas }); // for the next view
    }
    this.renderer = null;
    this.canvas = null;
    this.link?.remove(this);
    cancelAnimationFrame(this.frame);
    this.frame = 0;
  }

  setLink(link: CameraLink | null): void {
    if (this.link === link) return;
    this.link?.remove(this);
    this.link = link;
    link?.add(this);
  }

  setObject(object: Object3D | null): void {
    if (this.object) {
      this.scene.remove(this.object);
      disposeObject(this.object);
    }
    this.object = object;
    if (object) this.scene.add(object);
    this.requestRender();
  }

  copyCamera(from: ViewerController): void {
    this.camera.position.copy(from.camera.position);
    this.camera.quaternion.copy(from.camera.quaternion);
    this.controls?.target.copy(from.controls?.target ?? this.controls.target);
    this.controls?.update();
    this.requestRender();
  }

  private fit(): void {
    const canvas = this.canvas;
    if (!canvas || !this.renderer) return;
    const w = canvas.clientWidth || 300,
      h = canvas.clientHeight || 240;
    this.renderer.setSize(w, h, false);
    this.camera.aspect = w / h;
    this.camera.updateProjectionMatrix();
    this.requestRender();
  }

  requestRender(): void {
    if (!this.renderer || this.frame) return;
    this.frame = requestAnimationFrame(() => {
      this.frame = 0;
      this.renderer?.render(this.scene, this.camera);
    });
  }
}
