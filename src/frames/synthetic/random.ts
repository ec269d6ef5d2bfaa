/**
 * Seeded pseudo-random numbers for the synthetic scenes.
 *
 * - Uniform draws: mulberry32 (T. Ettinger, 2017, public domain): a 32-bit state advanced by the
 *   Weyl increment 0x6D2B79F5 and mixed by two multiply–xorshift rounds; period 2³².
 * - Normal draws: the Box–Muller transform (G. E. P. Box and M. E. Muller, "A note on the
 *   generation of random normal deviates", Ann. Math. Statist. 29(2), 1958): two uniforms u₁, u₂
 *   give the independent standard normals √(−2 ln u₁)·cos 2πu₂ and √(−2 ln u₁)·sin 2πu₂.
 * - Bulk normal draws (`normals`, for sensor noise): the ziggurat method with 128 layers
 *   (G. Marsaglia and W. W. Tsang, "The ziggurat method for generating random variables",
 *   J. Stat. Softw. 5(8), 2000), about five times faster than Box–Muller here, fed by the same
 *   mulberry32 stream.
 * - Keys: the seed and any number of integer keys (a frame index, a stream number) are mixed with
 *   the MurmurHash3 32-bit finaliser (fmix32, A. Appleby), so the generator of frame t is built
 *   directly from (seed, t) without drawing the frames before it (random access).
 *
 * Example: random(7, 50).uniform() is the same number in every run, whether or not
 * random(7, 0..49) were used before.
 */
export interface Random {
  /** Uniform in [0, 1). */
  uniform(): number;
  /** Uniform in [lo, hi). */
  between(lo: number, hi: number): number;
  /** Whole number uniform in lo..hi, both inclusive. */
  int(lo: number, hi: number): number;
  /** True with probability p (0..1 inclusive). */
  chance(p: number): boolean;
  /** One element of a non-empty list, each equally likely. */
  pick<T>(items: readonly T[]): T;
  /** Normal draw (Box–Muller) with the given mean (default 0) and standard deviation (default 1). */
  normal(mean?: number, sd?: number): number;
  /** Fills `out` with independent normal draws (ziggurat) of mean 0 and standard deviation `sd` (default 1); returns `out`. */
  normals(out: Float32Array, sd?: number): Float32Array;
}

/**
 * A generator seeded by `seed` and the optional integer `keys` (each taken modulo 2³²).
 * Throws a RangeError naming the argument when the seed or a key is not a whole number.
 */
export function random(seed: number, ...keys: number[]): Random {
  if (!Number.isInteger(seed)) throw new RangeError(`seed must be a whole number, got ${String(seed)}`);
  let h = fmix32((seed >>> 0) ^ 0x9e3779b9);
  for (let k = 0; k < keys.length; k++) {
    const key = keys[k];
    if (!Number.isInteger(key)) throw new RangeError(`keys[${k}] must be a whole number, got ${String(key)}`);
    // Order matters: (1, 2) and (2, 1) give different streams.
    h = fmix32(Math.imul(h ^ (h >>> 15), 0x2c1b3c6d) ^ fmix32((key >>> 0) + Math.imul(k + 1, 0x9e3779b9)));
  }
  let state = h | 0;
  let spare = 0;
  let hasSpare = false;

  /** One mulberry32 step: the next output as a signed 32-bit integer. */
  const next32 = (): number => {
    state = (state + 0x6d2b79f5) | 0;
    let x = Math.imul(state ^ (state >>> 15), 1 | state);
    x = (x + Math.imul(x ^ (x >>> 7), 61 | x)) ^ x;
    return x ^ (x >>> 14);
  };
  const uniform = (): number => (next32() >>> 0) / 4294967296;

  const normal = (mean = 0, sd = 1): number => {
    if (hasSpare) {
      hasSpare = false;
      return mean + sd * spare;
    }
    const u1 = 1 - uniform(); // (0, 1]: log stays finite
    const u2 = uniform();
    const r = Math.sqrt(-2 * Math.log(u1));
    spare = r * Math.sin(2 * Math.PI * u2);
    hasSpare = true;
    return mean + sd * r * Math.cos(2 * Math.PI * u2);
  };

  const normals = (out: Float32Array, sd = 1): Float32Array => {
    state = fillZiggurat(out, sd, state);
    return out;
  };

  return {
    uniform,
    between: (lo, hi) => lo + (hi - lo) * uniform(),
    int: (lo, hi) => lo + Math.floor(uniform() * (hi - lo + 1)),
    chance: (p) => uniform() < p,
    pick: (items) => {
      if (items.length === 0) throw new RangeError('pick needs a non-empty list');
      return items[Math.floor(uniform() * items.length)];
    },
    normal,
    normals,
  };
}

/** MurmurHash3's 32-bit finaliser: an invertible mix in which every input bit affects every output bit. */
function fmix32(h: number): number {
  h ^= h >>> 16;
  h = Math.imul(h, 0x85ebca6b);
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35);
  h ^= h >>> 16;
  return h >>> 0;
}

/** Right edge of the ziggurat's base layer and the layers' common area (Marsaglia & Tsang 2000, 128 layers). */
const ZIGGURAT_R = 3.442619855899;
const ZIGGURAT_V = 9.91256303526217e-3;

/** The 128-layer tables of the ziggurat (Marsaglia & Tsang 2000, function zigset). */
const KN = new Float64Array(128);
const WN = new Float64Array(128);
const FN = new Float64Array(128);
{
  const m1 = 2147483648;
  let dn = ZIGGURAT_R;
  let tn = dn;
  const q = ZIGGURAT_V / Math.exp(-0.5 * dn * dn);
  KN[0] = Math.floor((dn / q) * m1);
  KN[1] = 0;
  WN[0] = q / m1;
  WN[127] = dn / m1;
  FN[0] = 1;
  FN[127] = Math.exp(-0.5 * dn * dn);
  for (let i = 126; i >= 1; i--) {
    dn = Math.sqrt(-2 * Math.log(ZIGGURAT_V / dn + Math.exp(-0.5 * dn * dn)));
    KN[i + 1] = Math.floor((dn / tn) * m1);
    tn = dn;
    FN[i] = Math.exp(-0.5 * dn * dn);
    WN[i] = dn / m1;
  }
}

/** mulberry32 state shared by fillZiggurat and its slow path within one call. */
let zigState = 0;

function zigNext(): number {
  const a = (zigState = (zigState + 0x6d2b79f5) | 0);
  let x = Math.imul(a ^ (a >>> 15), 1 | a);
  x = (x + Math.imul(x ^ (x >>> 7), 61 | x)) ^ x;
  return x ^ (x >>> 14);
}

function zigUniform(): number {
  return (zigNext() >>> 0) / 4294967296;
}

/**
 * Fills `out` with normal draws of standard deviation `sd` by the ziggurat, starting from the
 * mulberry32 state `state`; returns the state after the last draw. A module-level loop with the
 * generator step inlined: the hot path of every synthetic frame's sensor noise.
 */
function fillZiggurat(out: Float32Array, sd: number, state: number): number {
  let a = state;
  for (let i = 0; i < out.length; i++) {
    a = (a + 0x6d2b79f5) | 0;
    let x = Math.imul(a ^ (a >>> 15), 1 | a);
    x = (x + Math.imul(x ^ (x >>> 7), 61 | x)) ^ x;
    const hz = x ^ (x >>> 14);
    const iz = hz & 127;
    if (Math.abs(hz) < KN[iz]) {
      out[i] = sd * hz * WN[iz];
    } else {
      zigState = a;
      out[i] = sd * zigOutside(hz, iz);
      a = zigState;
    }
  }
  return a;
}

/** Marsaglia–Tsang's slow path (nfix): the tail beyond R for layer 0, else the wedge test, else a fresh draw. */
function zigOutside(hz: number, iz: number): number {
  for (;;) {
    const x = hz * WN[iz];
    if (iz === 0) {
      let xt: number;
      let yt: number;
      do {
        xt = -Math.log(1 - zigUniform()) / ZIGGURAT_R;
        yt = -Math.log(1 - zigUniform());
      } while (yt + yt < xt * xt);
      return hz > 0 ? ZIGGURAT_R + xt : -ZIGGURAT_R - xt;
    }
    if (FN[iz] + zigUniform() * (FN[iz - 1] - FN[iz]) < Math.exp(-0.5 * x * x)) return x;
    hz = zigNext();
    iz = hz & 127;
    if (Math.abs(hz) < KN[iz]) return hz * WN[iz];
  }
}
