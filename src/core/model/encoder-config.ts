// What an encoder is, without the encoder: its configuration, the per-point inputs in plain words, the default,
// and the checks. No tfjs here, so the workbench's page and the command line's argument checks can read it.

export type Pooling = 'max' | 'max+mean';
/**
 * Per-point inputs: position only; position and normal; or position and the normal's line without its sign —
 * the six distinct entries of n nᵀ (off-diagonals × √2, so the six values have unit length), which an open
 * mesh's unreliable winding cannot flip.
 */
export type InputFeatures = 'xyz' | 'xyz+normal' | 'xyz+unsigned-normal';
export const INPUT_FEATURES: readonly InputFeatures[] = ['xyz', 'xyz+normal', 'xyz+unsigned-normal'];
/** The inputs in plain words, for the command line and the workbench. */
export const INPUT_LABELS: Record<InputFeatures, string> = {
  xyz: 'x y z',
  'xyz+normal': 'x y z + normal',
  'xyz+unsigned-normal': 'x y z + normal line (sign ignored)',
};

export interface EncoderConfig {
  readonly inputFeatures: InputFeatures;
  /** Per-point MLP widths; the last is the embedding size (doubled with max+mean pooling). */
  readonly widths: readonly number[];
  readonly pooling: Pooling;
  /** Projection head widths (ReLU between), e.g. [256, 128]. */
  readonly projection: readonly number[];
  /**
   * What retrieval compares: the projection head's output (what the contrastive loss shapes) or the pooled
   * features under it. Absent (models saved before the choice existed): pooled. Measured in docs/log/.
   */
  readonly retrieval?: 'projection' | 'pooled';
  /**
   * A first layer over each point's k nearest neighbours in its cloud (EdgeConv of Wang et al. 2019, "Dynamic
   * Graph CNN for Learning on Point Clouds", eq. 8, on the input points only): h_i = max_j relu(W·[f_i, x_j − x_i] + b)
   * over the k neighbours j (the point itself included), then the per-point MLP. Absent or null: none.
   */
  readonly edge?: { readonly k: number; readonly width: number } | null;
  /**
   * A training-free surface grid (descriptors/shape-grid.ts) set beside the learned rows at retrieval: `share` of
   * each cosine comes from the grid of `cells`³ cells, the rest from the encoder. Absent or null (models saved
   * before it existed): the encoder alone. Not part of the network: training never sees it.
   */
  readonly surfaceGrid?: { readonly cells: number; readonly share: number } | null;
}

/** Cells per axis of the surface grid when the command line or the workbench sets one beside the encoder. */
export const SURFACE_GRID_CELLS = 8;
/**
 * Share of each retrieval cosine taken from the surface grid by default. Measured on the three real sets, three
 * seeds each (docs/log/2026-12-04-surface-grid.md): 0.3 lifted NN and mAP on every set; larger shares lifted KiCad
 * and the second set further but began to cost furniture mAP.
 */
export const SURFACE_GRID_SHARE = 0.3;

/** Width of the EdgeConv layer when the command line or the workbench switches it on. */
export const EDGE_WIDTH = 64;

/**
 * The default encoder: an EdgeConv layer over 32 neighbours (width 64), then the reference widths 64-128-256,
 * max pooling and head 256-128, on points and normals (inputs are then chosen per library). The neighbour layer
 * lifted furniture retrieval in every seed; 32 neighbours rather than 16 kept the nearest-neighbour rate with the
 * stronger stretching of the `principal-pose` augmentations. A step costs about 1.9× the one at 16 neighbours and
 * 5× a step without the layer, most of it the neighbour search and max in plain JS (docs/log/). Retrieval sets
 * the surface grid beside it with 30 % of each cosine.
 */
export const DEFAULT_ENCODER: EncoderConfig = {
  inputFeatures: 'xyz+normal',
  edge: { k: 32, width: EDGE_WIDTH },
  widths: [64, 128, 256],
  pooling: 'max',
  projection: [256, 128],
  retrieval: 'projection',
  surfaceGrid: { cells: SURFACE_GRID_CELLS, share: SURFACE_GRID_SHARE },
};

export function inputChannels(f: InputFeatures): number {
  return f === 'xyz' ? 3 : f === 'xyz+normal' ? 6 : 9;
}

export function embeddingSize(c: EncoderConfig): number {
  return c.widths[c.widths.length - 1] * (c.pooling === 'max+mean' ? 2 : 1);
}

export function validateEncoderConfig(c: EncoderConfig): void {
  if (!INPUT_FEATURES.includes(c.inputFeatures)) {
    throw new RangeError(`encoder: inputFeatures must be one of ${INPUT_FEATURES.join(', ')}, got ${c.inputFeatures}`);
  }
  if (c.retrieval !== undefined && !['projection', 'pooled'].includes(c.retrieval)) {
    throw new RangeError(`encoder: retrieval must be projection or pooled, got ${c.retrieval}`);
  }
  if (!['max', 'max+mean'].includes(c.pooling))
    throw new RangeError(`encoder: pooling must be max or max+mean, got ${c.pooling}`);
  const e = c.edge;
  if (e != null) {
    const whole = (v: unknown, hi: number) => Number.isInteger(v) && (v as number) >= 1 && (v as number) <= hi;
    const extra = Object.keys(e).filter((key) => key !== 'k' && key !== 'width');
    if (!whole(e.k, 64) || !whole(e.width, 4096) || extra.length > 0) {
      throw new RangeError(
        `encoder: edge needs whole numbers k in [1, 64] and width in [1, 4096] and nothing else, got ${JSON.stringify(e)}`,
      );
    }
  }
  const g = c.surfaceGrid;
  if (g != null) {
    const extra = Object.keys(g).filter((key) => key !== 'cells' && key !== 'share');
    if (
      !(Number.isInteger(g.cells) && g.cells >= 2 && g.cells <= 16) ||
      !(g.share >= 0 && g.share < 1) ||
      extra.length > 0
    )
      throw new RangeError(
        `encoder: surfaceGrid needs a whole number of cells in [2, 16] and a share in [0, 1) and nothing else, got ${JSON.stringify(g)}`,
      );
  }
  for (const [name, list] of [
    ['widths', c.widths],
    ['projection', c.projection],
  ] as const) {
    if (!Array.isArray(list) || list.length === 0 || list.some((w) => !Number.isInteger(w) || w < 1 || w > 4096)) {
      throw new RangeError(
        `encoder: ${name} must be a non-empty list of whole numbers in [1, 4096], got ${JSON.stringify(list)}`,
      );
    }
  }
}
