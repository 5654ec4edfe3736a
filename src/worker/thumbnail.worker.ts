// The thumbnail worker: draws each part it is sent on an OffscreenCanvas and answers with the PNG as a Blob, so the
// page never waits on a (software) WebGL draw, nor on reading the picture back out of a data URL.

import { renderThumbnail, type ThumbnailInput } from '../render/thumbnail';

export interface ThumbnailRequest {
  readonly id: number;
  readonly part: ThumbnailInput;
}
export type ThumbnailReply =
  { readonly id: number; readonly png: Blob } | { readonly id: number; readonly error: string };

self.onmessage = async (e: MessageEvent<ThumbnailRequest>) => {
  const { id, part } = e.data;
  try {
    const png = await renderThumbnail(part);
    (self as unknown as Worker).postMessage({ id, png } satisfies ThumbnailReply);
  } catch (err) {
    (self as unknown as Worker).postMessage({ id, error: (err as Error).message } satisfies ThumbnailReply);
  }
};
