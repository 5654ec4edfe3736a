// The checks a weights file passes before any encoder is built from it; free of tfjs, so the page can
// run them on a model the user imports.

import { crc32 } from '../checksum';

/**
 * Checks a weights file against what its manifest says of it: the CRC-32 written at save time (absent in
 * models saved before it existed) and finite values throughout. Throws RangeError naming `where`.
 */
export function checkWeightData(buffer: ArrayBuffer, metadata: unknown, where: string): void {
  const expected = (metadata as { weightsCrc32?: unknown } | undefined)?.weightsCrc32;
  if (typeof expected === 'number' && crc32(new Uint8Array(buffer)) !== expected) {
    throw new RangeError(
      `${where}: the weights file does not belong to this model.json (they come from different saves; was the run stopped while saving?)`,
    );
  }
  const values = new Float32Array(buffer, 0, Math.floor(buffer.byteLength / 4));
  for (let i = 0; i < values.length; i++) {
    if (!Number.isFinite(values[i]))
      throw new RangeError(
        `${where}: the weights hold NaN or infinite values (training diverged, or the file is damaged)`,
      );
  }
}
