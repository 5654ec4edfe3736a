// The only source of randomness in Shapekin: a small seeded generator (sfc32 seeded through splitmix32),
// so every sampling, augmentation and training run can be replayed from its seed.

export interface Rng {
  /** Uniform in [0, 1). */
  next(): number;
  /** Uniform integer in [0, n). */
  int(n: number): number;
  /** Uniform in [lo, hi). */
  uniform(lo: number, hi: number): number;
  /** Standard normal (Box–Muller, one value per call). */
  normal(): number;
  /** An independent generator derived from this one's stream, for a sub-task. */
  fork(): Rng;
  /** The seed this generator was created from. */
  readonly seed: number;
}

function splitmix32(state: number): () => number {
  let s = state >>> 0;
  return () => {
    s = (s + 0x9e3779b9) >>> 0;
    let z = s;
    z = Math.imul(z ^ (z >>> 16), 0x85ebca6b) >>> 0;
    z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35) >>> 0;
    return (z ^ (z >>> 16)) >>> 0;
  };
}

const TWO_POW_32 = 4294967296;

/** createRng(seed): seed is any finite number; 0 is a seed like any other. */
export function createRng(seed: number): Rng {
  if (!Number.isFinite(seed)) throw new RangeError(`createRng: seed must be a finite number, got ${seed}`);
  const mix = splitmix32(Math.floor(seed) ^ Math.floor(seed / TWO_POW_32));
  let a = mix();
  let b = mix();
  let c = mix();
  let d = mix();
  const nextU32 = (): number => {
    // sfc32 (Chris Doty-Humphrey's Small Fast Counting generator, from PractRand).
    const t = (((a + b) >>> 0) + d) >>> 0;
    d = (d + 1) >>> 0;
    a = b ^ (b >>> 9);
    b = (c + (c << 3)) >>> 0;
    c = ((c << 21) | (c >>> 11)) >>> 0;
    c = (c + t) >>> 0;
    return t;
  };
  for (let i = 0; i < 12; i++) nextU32();
  const rng: Rng = {
    seed,
    next: () => nextU32() / TWO_POW_32,
    int: (n: number) => Math.floor((nextU32() / TWO_POW_32) * n),
    uniform: (lo: number, hi: number) => lo + (hi - lo) * (nextU32() / TWO_POW_32),
    normal: () => {
      // 1 - u keeps the logarithm's argument in (0, 1].
      const u = 1 - nextU32() / TWO_POW_32;
      const v = nextU32() / TWO_POW_32;
      return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
    },
    fork: () => createRng(nextU32() * TWO_POW_32 + nextU32()),
  };
  return rng;
}

/** 32-bit FNV-1a hash of a string: derives a per-part seed from a run seed and a file name. */
export function hashString(text: string, seed = 0): number {
  let h = (0x811c9dc5 ^ seed) >>> 0;
  for (let i = 0; i < text.length; i++) {
    h ^= text.charCodeAt(i);
    h = Math.imul(h, 0x01000193) >>> 0;
  }
  return h;
}
