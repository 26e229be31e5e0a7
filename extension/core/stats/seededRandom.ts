/**
 * Seeded pseudo-random numbers: the same seed gives the same sequence on every machine. Used by the analysis itself
 * (the whiteness test's Monte Carlo permutation p, consistency/whiteness.ts: the same report on every run), by the
 * demo scene generator (demo/warehouse.ts: the same log every time), by the Allan deviation bench harness
 * (scripts/bench/allan-harness.ts) and by the tests' simulations (test/core/uwb).
 *
 * sfc32 (Chris Doty-Humphrey's public-domain 128-bit-state Small Fast Counting generator, common practice) seeded
 * through splitmix32 (a golden-ratio Weyl sequence mixed by MurmurHash3's 32-bit finalizer), with normals by the
 * Box-Muller transform (Box and Muller 1958). Hand-written because the core takes no runtime dependency for twenty
 * lines, and `Math.random` cannot be seeded.
 */

/** A seeded source of uniforms in [0, 1) and standard normals. */
export interface SeededRandom {
  /** Uniform in [0, 1). */
  uniform(): number;
  /** Standard normal N(0, 1). */
  normal(): number;
}

/** Make a seeded generator; any finite number is a valid seed (it is reduced to 32 bits). */
export function makeSeededRandom(seed: number): SeededRandom {
  let s = (Math.trunc(seed) >>> 0) ^ 0x9e3779b9;
  // splitmix32 spreads the seed over the four words of state.
  const split = (): number => {
    s = (s + 0x9e3779b9) >>> 0;
    let z = s;
    z = Math.imul(z ^ (z >>> 16), 0x85ebca6b);
    z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35);
    return (z ^ (z >>> 16)) >>> 0;
  };
  let a = split(), b = split(), c = split(), d = split();
  const next = (): number => {
    const t = (((a + b) >>> 0) + d) >>> 0;
    d = (d + 1) >>> 0;
    a = b ^ (b >>> 9);
    b = (c + (c << 3)) >>> 0;
    c = ((c << 21) | (c >>> 11)) >>> 0;
    c = (c + t) >>> 0;
    return t;
  };
  for (let i = 0; i < 12; i++) next();
  let spare = 0;
  let hasSpare = false;
  const uniform = (): number => next() / 4294967296;
  const normal = (): number => {
    if (hasSpare) {
      hasSpare = false;
      return spare;
    }
    let u = 0;
    while (u <= 0) u = uniform();
    const v = uniform();
    const r = Math.sqrt(-2 * Math.log(u));
    spare = r * Math.sin(2 * Math.PI * v);
    hasSpare = true;
    return r * Math.cos(2 * Math.PI * v);
  };
  return { uniform, normal };
}
