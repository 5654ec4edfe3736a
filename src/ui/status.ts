// Closed status unions that drive what the panels show.

export type ImportStatus =
  | { readonly kind: 'idle' }
  | { readonly kind: 'importing'; readonly done: number; readonly total: number; readonly file: string }
  | { readonly kind: 'ready'; readonly ms: number }
  | { readonly kind: 'failed'; readonly message: string };

export type TrainStatusView =
  | { readonly kind: 'idle' }
  | { readonly kind: 'starting' }
  | { readonly kind: 'running' }
  | { readonly kind: 'paused' }
  | { readonly kind: 'done'; readonly result: string }
  | { readonly kind: 'failed'; readonly message: string };
