// Byte-level helpers shared by the parsers.

const decoder = new TextDecoder('utf-8');

export function decodeText(buffer: ArrayBuffer): string {
  return decoder.decode(new Uint8Array(buffer));
}

/**
 * True when the first bytes look like text: no NUL and few control bytes. Binary STL headers may
 * say "solid", so text-ness is judged on content, never on the first word.
 */
export function looksLikeText(bytes: Uint8Array, sample = 1024): boolean {
  const n = Math.min(bytes.length, sample);
  let control = 0;
  for (let i = 0; i < n; i++) {
    const b = bytes[i];
    if (b === 0) return false;
    if (b < 9 || (b > 13 && b < 32)) control++;
  }
  return control <= n * 0.01;
}

export function startsWithWord(bytes: Uint8Array, word: string): boolean {
  // Skip a UTF-8 byte order mark and leading white space.
  let i = bytes[0] === 0xef && bytes[1] === 0xbb && bytes[2] === 0xbf ? 3 : 0;
  while (i < bytes.length && (bytes[i] === 32 || bytes[i] === 9 || bytes[i] === 10 || bytes[i] === 13)) i++;
  for (let k = 0; k < word.length; k++) {
    const b = bytes[i + k];
    if (b === undefined || String.fromCharCode(b).toLowerCase() !== word[k]) return false;
  }
  return true;
}
