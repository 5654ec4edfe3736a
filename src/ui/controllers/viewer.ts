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

export class ViewerController implements ReactiveController {
  private renderer: WebGLRenderer | null = null;
  private camera = new PerspectiveCamera(35, 1, 0.05, 50);
  private controls: OrbitControls | null = null;
  private scene: Scene = litScene();
  private object: Object3D | null = null;
  private resize: ResizeObserver | null = null;
  private frame = 0;
  private link: CameraLink | null = null;
  webglMissing = false;

  constructor(
    private readonly host: ReactiveControllerHost & HTMLElement,
    private readonly canvasOf: () => HTMLCanvasElement | null,
  ) {
    host.addController(this);
    this.camera.up.set(0, 0, 1);
    this.camera.position.set(2.2, -2.8, 1.9);
  }

  hostConnected(): void {}

  hostUpdated(): void {
    if (this.renderer || this.webglMissing) return;
    const canvas = this.canvasOf();
    if (!canvas) return;
    try {
      this.renderer = new WebGLRenderer({ canvas, antialias: true });
    } catch {
      this.webglMissing = true;
      this.host.requestUpdate();
      return;
    }
    this.renderer.setPixelRatio(Math.min(2, window.devicePixelRatio || 1));
    this.controls = new OrbitControls(this.camera, canvas);
    this.controls.enableDamping = false;
    this.controls.addEventListener('change', () => {
      this.requestRender();
      this.link?.moved(this);
    });
    this.resize = new ResizeObserver(() => this.fit());
    this.resize.observe(canvas);
    this.fit();
  }

  hostDisconnected(): void {
    this.resize?.disconnect();
    this.controls?.dispose();
    if (this.object) disposeObject(this.object);
    this.renderer?.dispose();
    this.renderer = null;
    this.controls = null;
    this.link?.remove(this);
    cancelAnimationFrame(this.frame);
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
    const canvas = this.canvasOf();
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
