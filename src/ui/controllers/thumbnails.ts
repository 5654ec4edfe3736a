// The page's side of the thumbnail worker: one request per part, answered in order with a PNG data URL. Drawing
// happens in the worker (OffscreenCanvas), so the page stays responsive however many parts arrive.

import type { LibraryPart } from '../../core/library';
import type { ThumbnailReply, ThumbnailRequest } from '../../worker/thumbnail.worker';

export class ThumbnailClient {
  private worker: Worker | null = null;
  private nextId = 1;
  private readonly waiting = new Map<number, { resolve: (url: string) => void; reject: (e: Error) => void }>();

  private get w(): Worker {
    if (!this.worker) {
      this.worker = new Worker(new URL('../../worker/thumbnail.worker.ts', import.meta.url), { type: 'module' });
      this.worker.onmessage = (e: MessageEvent<ThumbnailReply>) => {
        const waiter = this.waiting.get(e.data.id);
        if (!waiter) return;
        this.waiting.delete(e.data.id);
        if ('url' in e.data) waiter.resolve(e.data.url);
        else waiter.reject(new Error(e.data.error));
      };
      this.worker.onerror = (e) => {
        for (const w of this.waiting.values()) w.reject(new Error(`thumbnail worker failed: ${e.message}`));
        this.waiting.clear();
      };
    }
    return this.worker;
  }

  /** The part's thumbnail as a PNG data URL. */
  draw(part: LibraryPart): Promise<string> {
    const id = this.nextId++;
    const request: ThumbnailRequest = {
      id,
      part: {
        meshPositions: part.meshPositions,
        meshIndices: part.meshIndices,
        centre: part.centre,
        radius: part.radius,
        points: part.points,
      },
    };
    return new Promise((resolve, reject) => {
      this.waiting.set(id, { resolve, reject });
      this.w.postMessage(request);
    });
  }

  dispose(): void {
    this.worker?.terminate();
    this.worker = null;
    for (const w of this.waiting.values()) w.reject(new Error('cancelled'));
    this.waiting.clear();
  }
}
