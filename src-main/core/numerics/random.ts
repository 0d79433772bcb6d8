// Seeded pseudo-random numbers shared by every module that needs randomness (sampling, shuffling, rotations,
// demo data), so a seed reproduces a run exactly on any machine. The generator is xoshiro128** 1.0 (published
// 2018 with its reference C code; 128-bit state, period 2¹²⁸ − 1), seeded through splitmix32 so that nearby
// seeds give unrelated streams. All arithmetic is 32-bit integer (Math.imul, >>> 0): identical everywhere.

export interface Rng {
  /** Uniform double in [0, 1) with 53 random bits. */
  uniform(): number;
  /** Standard normal deviate (mean 0, variance 1), by the polar rejection method (a point in the unit disc). */
  normal(): number;
  /** Uniform integer in [0, n), without modulo bias; n must be a positive integer ≤ 2⁵³. */
  int(n: number): number;
  /** The next raw 32-bit output as an unsigned integer (for tests and for deriving sub-seeds). */
  nextUint32(): number;
}

/** splitmix32 step: a 32-bit mixing function of a counter, used only to fill the state from a seed. */
function splitmix32(state: { x: number }): number {
  state.x = (state.x + 0x9e3779b9) | 0;
  let z = state.x;
  z = Math.imul(z ^ (z >>> 16), 0x85ebca6b);
  z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35);
  return (z ^ (z >>> 16)) >>> 0;
}

/**
 * A generator from a seed (any finite number; its integer part modulo 2³² and, for large seeds, the high
 * part too are mixed in). The same seed always gives the same sequence.
 */
export function makeRng(seed: number): Rng {
  if (!Number.isFinite(seed)) throw new RangeError(`makeRng: seed must be a finite number, got ${seed}`);
  const whole = Math.trunc(seed);
  const lo = whole >>> 0;
  const hi = Math.floor(whole / 4294967296) >>> 0;
  const sm = { x: (lo ^ Math.imul(hi, 0x27d4eb2d)) | 0 };
  const s = new Uint32Array(4);
  for (let k = 0; k < 4; k++) s[k] = splitmix32(sm);
  if ((s[0] | s[1] | s[2] | s[3]) === 0) s[0] = 1; // the all-zero state is the one forbidden state

  function nextUint32(): number {
    // result = rotl(s1 * 5, 7) * 9
    const m = Math.imul(s[1], 5);
    const result = Math.imul((m << 7) | (m >>> 25), 9) >>> 0;
    const t = s[1] << 9;
    s[2] ^= s[0];
    s[3] ^= s[1];
    s[1] ^= s[2];
    s[0] ^= s[3];
    s[2] ^= t;
    s[3] = (s[3] << 11) | (s[3] >>> 21);
    return result;
  }

  function uniform(): number {
    // 27 high bits and 26 high bits of two outputs → a 53-bit fraction.
    const a = nextUint32() >>> 5;
    const b = nextUint32() >>> 6;
    return (a * 67108864 + b) / 9007199254740992;
  }

  let spare = 0;
  let haveSpare = false;
  function normal(): number {
    if (haveSpare) {
      haveSpare = false;
      return spare;
    }
    let u: number, v: number, q: number;
    do {
      u = 2 * uniform() - 1;
      v = 2 * uniform() - 1;
      q = u * u + v * v;
    } while (q >= 1 || q === 0);
    const f = Math.sqrt((-2 * Math.log(q)) / q);
    spare = v * f;
    haveSpare = true;
    return u * f;
  }

  function int(n: number): number {
    if (!(Number.isInteger(n) && n >= 1 && n <= 9007199254740992)) {
      throw new RangeError(`rng.int: n must be a positive integer ≤ 2^53, got ${n}`);
    }
    if (n <= 4294967296) {
      // Rejection on the top of the 32-bit range removes the modulo bias.
      const limit = 4294967296 - (4294967296 % n);
      let x: number;
      do x = nextUint32();
      while (x >= limit);
      return x % n;
    }
    // Beyond 2³²: rejection on 53-bit uniforms.
    const limit = 9007199254740992 - (9007199254740992 % n);
    let x: number;
    do x = Math.floor(uniform() * 9007199254740992);
    while (x >= limit);
    return x % n;
  }

  return { uniform, normal, int, nextUint32 };
}

/**
 * Shuffle `a` in place (Fisher–Yates, from the end: position i swaps with a uniform j ≤ i) and return it. One
 * `rng.int` call per position, so a seed gives the same order everywhere it is used.
 */
export function shuffleInPlace<T extends { length: number; [i: number]: unknown }>(rng: Rng, a: T): T {
  for (let i = a.length - 1; i > 0; i--) {
    const j = rng.int(i + 1);
    const t = a[i];
    a[i] = a[j];
    a[j] = t;
  }
  return a;
}
