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

// Powers of ten that a double holds exactly (10^22 is the largest: 5^22 < 2^53).
const EXACT_TENS = Array.from({ length: 23 }, (_, i) => 10 ** i);

/**
 * The number written in `text` from `start` to `end` (one token, no spaces), exactly as `Number()` reads it.
 * Plain decimals with at most 15 significant digits and a power of ten within ±22 are read without making a
 * string: the digits form an integer a double holds exactly, and one multiplication or division by an exact power
 * of ten rounds correctly (the fast path of Clinger 1990, "How to read floating point numbers accurately"). Anything
 * else (more digits, hex, "nan", "Infinity", stray characters) goes to `Number()` itself; NaN when it is not a number.
 */
export function readNumber(text: string, start: number, end: number): number {
  let i = start;
  let negative = false;
  let c = text.charCodeAt(i);
  if (c === 45 || c === 43) {
    negative = c === 45;
    c = text.charCodeAt(++i);
  }
  let mantissa = 0;
  let digits = 0; // significant digits kept in the mantissa
  let seen = 0; // digits of any kind
  let scale = 0; // power of ten the mantissa is multiplied by
  while (i < end && c >= 48 && c <= 57) {
    if (digits > 0 || c !== 48) {
      mantissa = mantissa * 10 + (c - 48);
      digits++;
    }
    seen++;
    c = text.charCodeAt(++i);
  }
  if (i < end && c === 46) {
    c = text.charCodeAt(++i);
    while (i < end && c >= 48 && c <= 57) {
      if (digits > 0 || c !== 48) {
        mantissa = mantissa * 10 + (c - 48);
        digits++;
      }
      scale--;
      seen++;
      c = text.charCodeAt(++i);
    }
  }
  if (seen > 0 && i < end && (c === 101 || c === 69)) {
    c = text.charCodeAt(++i);
    let expNegative = false;
    if (c === 45 || c === 43) {
      expNegative = c === 45;
      c = text.charCodeAt(++i);
    }
    let exp = 0;
    let expDigits = 0;
    while (i < end && c >= 48 && c <= 57 && expDigits < 6) {
      exp = exp * 10 + (c - 48);
      expDigits++;
      c = text.charCodeAt(++i);
    }
    if (expDigits === 0) return Number(text.slice(start, end));
    scale += expNegative ? -exp : exp;
  }
  if (i !== end || seen === 0 || digits > 15 || scale > 22 || scale < -22) return Number(text.slice(start, end));
  const value = scale >= 0 ? mantissa * EXACT_TENS[scale] : mantissa / EXACT_TENS[-scale];
  return negative ? -value : value;
}

/** White space as `String.prototype.trim` and `/\s/` see it. */
export function isSpace(c: number): boolean {
  if (c === 32 || (c >= 9 && c <= 13)) return true;
  if (c < 128) return false;
  return /\s/.test(String.fromCharCode(c));
}

/** The numbers in text[from, to), split at white space (as `split(/\s+/)` and `Number()` on each would). */
export function numbersIn(text: string, from: number, to: number, into: number[]): number[] {
  into.length = 0;
  let i = from;
  while (i < to) {
    while (i < to && isSpace(text.charCodeAt(i))) i++;
    if (i >= to) break;
    let e = i;
    while (e < to && !isSpace(text.charCodeAt(e))) e++;
    into.push(readNumber(text, i, e));
    i = e;
  }
  return into;
}
