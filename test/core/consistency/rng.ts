/**
 * Seeded pseudo-random numbers for the tests, so every failure can be replayed.
 * mulberry32 (a public-domain 32-bit generator, common practice) and Box-Muller normals.
 */
import { mulberry32 } from '../../helpers/mulberry32';

/** A seeded generator of uniforms in [0, 1) and standard normals. */
export interface Rng {
  uniform(): number;
  normal(): number;
}

/** Make a seeded generator. */
export function makeRng(seed: number): Rng {
  let spare = NaN;
  const uniform = mulberry32(seed);
  const normal = (): number => {
    if (!Number.isNaN(spare)) { const s = spare; spare = NaN; return s; }
    let u = 0;
    while (u <= 0) u = uniform();
    const v = uniform();
    const r = Math.sqrt(-2 * Math.log(u));
    spare = r * Math.sin(2 * Math.PI * v);
    return r * Math.cos(2 * Math.PI * v);
  };
  return { uniform, normal };
}

/** A random symmetric positive definite n x n matrix (row-major): B B^T + n * 0.1 * I with B normal entries. */
export function randomSpd(rng: Rng, n: number): Float64Array {
  const b = new Float64Array(n * n);
  for (let i = 0; i < n * n; i++) b[i] = rng.normal();
  const a = new Float64Array(n * n);
  for (let r = 0; r < n; r++) {
    for (let c = 0; c < n; c++) {
      let s = 0;
      for (let k = 0; k < n; k++) s += b[r * n + k] * b[c * n + k];
      a[r * n + c] = s + (r === c ? 0.1 * n : 0);
    }
  }
  return a;
}
