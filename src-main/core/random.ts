// A small seeded random generator shared by every module that needs randomness (random rotations, training
// splits, farthest-point sampling starts, property tests). xoshiro128** (Blackman & Vigna, 2018) seeded through
// splitmix32, so a run is reproducible from one integer seed on every platform.

export interface Rng {
  /** Uniform in [0, 1), 53 random bits. */
  uniform(): number;
  /** Standard normal N(0, 1) (Box–Muller, the second value is kept for the next call). */
  normal(): number;
  /** Uniform integer in [0, n); n must be a positive integer ≤ 2³². */
  int(n: number): number;
  /** Raw 32-bit unsigned output. */
  nextUint32(): number;
}

function splitmix32(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (s + 0x9e3779b9) >>> 0;
    let z = s;
    z = Math.imul(z ^ (z >>> 16), 0x85ebca6b) >>> 0;
    z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35) >>> 0;
    return (z ^ (z >>> 16)) >>> 0;
  };
}

/** A seeded generator. Equal seeds give equal streams; the seed is any finite number (taken modulo 2³²). */
export function makeRng(seed: number): Rng {
  if (!Number.isFinite(seed)) throw new RangeError(`makeRng: seed must be a finite number, got ${seed}`);
  const init = splitmix32(Math.floor(seed) >>> 0);
  let a = init(), b = init(), c = init(), d = init();
  if ((a | b | c | d) === 0) a = 1; // the all-zero state is a fixed point
  let spare: number | null = null;

  const nextUint32 = (): number => {
    const result = Math.imul(rotl(Math.imul(b, 5) >>> 0, 7), 9) >>> 0;
    const t = (b << 9) >>> 0;
    c ^= a; d ^= b; b ^= c; a ^= d;
    c ^= t;
    d = rotl(d, 11);
    a >>>= 0; b >>>= 0; c >>>= 0; d >>>= 0;
    return result;
  };

  const uniform = (): number => {
    const hi = nextUint32() >>> 5; // 27 bits
    const lo = nextUint32() >>> 6; // 26 bits
    return (hi * 67108864 + lo) / 9007199254740992;
  };

  const normal = (): number => {
    if (spare !== null) {
      const v = spare;
      spare = null;
      return v;
    }
    let u = 0;
    while (u === 0) u = uniform();
    const v = uniform();
    const r = Math.sqrt(-2 * Math.log(u));
    spare = r * Math.sin(2 * Math.PI * v);
    return r * Math.cos(2 * Math.PI * v);
  };

  const int = (n: number): number => {
    if (!Number.isInteger(n) || n <= 0 || n > 4294967296) throw new RangeError(`Rng.int: n must be a positive integer ≤ 2^32, got ${n}`);
    // Rejection sampling removes the modulo bias.
    const limit = 4294967296 - (4294967296 % n);
    let x = nextUint32();
    while (x >= limit) x = nextUint32();
    return x % n;
  };

  return { uniform, normal, int, nextUint32 };
}

function rotl(x: number, k: number): number {
  return ((x << k) | (x >>> (32 - k))) >>> 0;
}
