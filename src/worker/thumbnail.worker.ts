// The thumbnail worker: draws each part it is sent on an OffscreenCanvas and answers with a PNG data URL, so the
// page never waits on a (software) WebGL draw.

import { renderThumbnail, type ThumbnailInput } from '../render/thumbnail';

export interface ThumbnailRequest {
  readonly id: number;
  readonly part: ThumbnailInput;
}
export type ThumbnailReply =
  { readonly id: number; readonly url: string } | { readonly id: number; readonly error: string };

self.onmessage = async (e: MessageEvent<ThumbnailRequest>) => {
  const { id, part } = e.data;
  try {
    const blob = await renderThumbnail(part);
    const url = new FileReaderSync().readAsDataURL(blob);
    (self as unknown as Worker).postMessage({ id, url } satisfies ThumbnailReply);
  } catch (err) {
    (self as unknown as Worker).postMessage({ id, error: (err as Error).message } satisfies ThumbnailReply);
  }
};
