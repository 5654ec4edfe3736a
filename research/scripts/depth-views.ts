// Research: a training-free descriptor of posed parts from six orthographic height images (looking along ±x, ±y,
// ±z of the pose frame), in the spirit of view-based descriptors such as the Light Field Descriptor (Chen, Tian,
// Shen & Ouhyoung 2003, "On visual similarity based 3D model retrieval"), which compares silhouettes. Here the
// frame is fixed by the pose, so the views are the frame's six faces and no rotation search is needed; each pixel
// holds how far the nearest surface stands out towards the viewer (0 where the view sees nothing), rendered from
// the part's point pool (each point lights its pixel; the highest wins). Sign-free: averaged over the four proper
// sign choices of the frame, as the surface grid is.
//   scored by research/scripts/views-fusion.ts
import { SIGN_FLIPS } from '../../src/core/points/pca';

export interface DepthViewOptions {
  /** Pixels per image side. */
  readonly pixels: number;
  /** Average over the four proper sign choices (principal axes have no preferred signs). */
  readonly signFree: boolean;
  /** Value of a lit pixel at the far end of the frame (0 would make it look unlit); the near end reads 1. */
  readonly floor: number;
  /** Fill an unlit pixel whose 4 side neighbours are all lit with their mean (sampling gaps). */
  readonly fill: boolean;
}

export const DEPTH_VIEW_DEFAULTS: DepthViewOptions = { pixels: 16, signFree: true, floor: 0.25, fill: true };

const FLIP_SIGNS = SIGN_FLIPS.map((m) => [m[0], m[4], m[8]]);

export const depthViewLength = (o: DepthViewOptions) => 6 * o.pixels * o.pixels;

/** Unit-length, non-negative: six P × P images, view (axis a, towards +a or −a), rows along axis a+1, columns a+2. */
export function depthViews(points: Float32Array, o: DepthViewOptions): Float32Array {
  const P = o.pixels,
    n = points.length / 3,
    img = P * P;
  const out = new Float64Array(6 * img);
  const one = new Float64Array(6 * img);
  const flips = o.signFree ? FLIP_SIGNS : [[1, 1, 1]];
  const pix = (c: number) => Math.min(P - 1, Math.max(0, Math.floor(((c + 1) / 2) * P)));
  for (const f of flips) {
    one.fill(0);
    for (let p = 0; p < n; p++) {
      const q = [points[3 * p] * f[0], points[3 * p + 1] * f[1], points[3 * p + 2] * f[2]];
      for (let a = 0; a < 3; a++) {
        const at = pix(q[(a + 1) % 3]) * P + pix(q[(a + 2) % 3]);
        const depth = Math.min(1, Math.max(0, (q[a] + 1) / 2));
        for (let d = 0; d < 2; d++) {
          const h = d === 0 ? depth : 1 - depth;
          const value = o.floor + (1 - o.floor) * h;
          const k = (2 * a + d) * img + at;
          if (value > one[k]) one[k] = value;
        }
      }
    }
    if (o.fill)
      for (let v = 0; v < 6; v++)
        for (let r = 1; r < P - 1; r++)
          for (let c = 1; c < P - 1; c++) {
            const k = v * img + r * P + c;
            if (one[k] > 0) continue;
            const s = [one[k - P], one[k + P], one[k - 1], one[k + 1]];
            if (s.every((x) => x > 0)) one[k] = (s[0] + s[1] + s[2] + s[3]) / 4;
          }
    for (let k = 0; k < out.length; k++) out[k] += one[k];
  }
  let norm = 0;
  for (let k = 0; k < out.length; k++) norm += out[k] * out[k];
  const inv = 1 / Math.sqrt(norm || 1);
  return Float32Array.from(out, (x) => x * inv);
}
