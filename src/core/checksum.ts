// CRC-32 (the IEEE 802.3 polynomial, reflected, as in zlib and PNG): ties a model's manifest to the exact
// weight bytes it was saved with, so a manifest paired with weights from another save is caught on load.

const TABLE = (() => {
  const t = new Uint32Array(256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
    t[n] = c >>> 0;
  }
  return t;
})();

export function crc32(bytes: Uint8Array): number {
  let c = 0xffffffff;
  for (let i = 0; i < bytes.length; i++) c = TABLE[(c ^ bytes[i]) & 0xff] ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

/** SHA-256 of some bytes, as lowercase hex (Web Crypto: the browser's and Node's own implementation). */
export async function sha256Hex(bytes: ArrayBuffer | Uint8Array): Promise<string> {
  const digest = new Uint8Array(await crypto.subtle.digest('SHA-256', bytes as Uint8Array<ArrayBuffer>));
  return Array.from(digest, (b) => b.toString(16).padStart(2, '0')).join('');
}

/**
 * A model's fingerprint: SHA-256 of its model.json text followed by its weights. The command line's run folders and
 * the workbench's stored models get theirs here, so one model has one fingerprint wherever it is kept.
 */
export function modelFingerprint(jsonText: string, weights: Uint8Array): Promise<string> {
  const text = new TextEncoder().encode(jsonText);
  const all = new Uint8Array(text.byteLength + weights.byteLength);
  all.set(text);
  all.set(weights, text.byteLength);
  return sha256Hex(all);
}
