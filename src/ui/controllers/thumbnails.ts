// The page's side of the thumbnail worker: one request per part, answered in order with a PNG (a Blob). Drawing
// happens in the worker (OffscreenCanvas), so the page stays responsive however many parts arrive.

import type { LibraryPart } from '../../core/library';
import type { ThumbnailReply, ThumbnailRequest } from '../../worker/thumbnail.worker';
import { MAX_THUMBNAIL_TRIANGLES } from '../../render/thumbnail';
import { meshNow, meshOf, type PartMesh } from './meshes';
import { cloudNow, cloudOf } from './clouds';

const NO_POINTS = new Float32Array(0);

/**
 * Requests in the worker at a time; the rest wait on the page, uncopied. Posting a whole delivered batch at once
 * (copies of every part's mesh) held the page for 68–72 ms with 990 KiCad parts; the worker draws one at a time.
 */
const IN_FLIGHT = 4;

interface Job {
  readonly part: LibraryPart;
  readonly resolve: (png: Blob) => void;
  readonly reject: (e: Error) => void;
}

export class ThumbnailClient {
  private worker: Worker | null = null;
  private nextId = 1;
  private readonly waiting = new Map<number, Job>();
  private readonly queued: Job[] = [];

  private get w(): Worker {
    if (!this.worker) {
      this.worker = new Worker(new URL('../../worker/thumbnail.worker.ts', import.meta.url), { type: 'module' });
      this.worker.onmessage = (e: MessageEvent<ThumbnailReply>) => {
        const job = this.waiting.get(e.data.id);
        if (!job) return;
        this.waiting.delete(e.data.id);
        if ('png' in e.data) job.resolve(e.data.png);
        else job.reject(new Error(e.data.error));
        this.pump();
      };
      this.worker.onerror = (e) => {
        for (const j of [...this.waiting.values(), ...this.queued.splice(0)])
          j.reject(new Error(`thumbnail worker failed: ${e.message}`));
        this.waiting.clear();
      };
    }
    return this.worker;
  }

  /** The part's thumbnail as a PNG. */
  draw(part: LibraryPart): Promise<Blob> {
    return new Promise((resolve, reject) => {
      this.queued.push({ part, resolve, reject });
      this.pump();
    });
  }

  /**
   * Hands the next requests to the worker while fewer than IN_FLIGHT are there. A part whose mesh the page has let
   * go (meshes.ts) has it fetched from the database first; its point cloud only when the picture needs it (a part
   * without triangles, or with too many to draw), since a large import's thumbnails are drawn after its parts went.
   */
  private pump(): void {
    while (this.waiting.size < IN_FLIGHT && this.queued.length > 0) {
      const job = this.queued.shift()!;
      const id = this.nextId++;
      this.waiting.set(id, job);
      this.inputsOf(job.part).then(
        ([mesh, points]) => this.post(id, job.part, mesh, points),
        (err: Error) => {
          this.waiting.delete(id);
          job.reject(err);
          this.pump();
        },
      );
    }
  }

  /** The part's mesh (fetched back when the page let it go) and the points the picture needs (see `pump`). */
  private async inputsOf(p: LibraryPart): Promise<[PartMesh, Float32Array]> {
    const mesh = meshNow(p) ?? (await meshOf(p));
    const cloud = cloudNow(p);
    if (cloud) return [mesh, cloud.points];
    const drawable = mesh.indices.length > 0 && mesh.indices.length / 3 <= MAX_THUMBNAIL_TRIANGLES;
    return [mesh, drawable ? NO_POINTS : (await cloudOf(p)).points];
  }

  private post(id: number, p: LibraryPart, mesh: PartMesh, points: Float32Array): void {
    const request: ThumbnailRequest = {
      id,
      part: {
        // Copies handed over (a memcpy each) rather than cloned, as for the database (library-db.ts).
        meshPositions: mesh.positions.slice(),
        meshIndices: mesh.indices.slice(),
        centre: p.centre,
        radius: p.radius,
        points: points.slice(),
      },
    };
    const r = request.part;
    this.w.postMessage(request, [r.meshPositions.buffer, r.meshIndices.buffer, r.points.buffer] as ArrayBuffer[]);
  }

  dispose(): void {
    this.worker?.terminate();
    this.worker = null;
    for (const j of [...this.waiting.values(), ...this.queued.splice(0)]) j.reject(new Error('cancelled'));
    this.waiting.clear();
  }
}
