/**
 * Seeded pseudo-random numbers for the IMU tests, so every failure can be replayed.
 * mulberry32 (a well-known 32-bit generator; common practice for seeded test data) and Box-Muller normals.
 */
import { mulberry32 } from '../../helpers/mulberry32';

/** A uniform generator on [0, 1) from a 32-bit seed. */
export function uniformRng(seed: number): () => number {
  return mulberry32(seed);
}

/** A standard normal generator from a 32-bit seed (Box-Muller). */
export function normalRng(seed: number): () => number {
  const u = uniformRng(seed);
  let spare: number | undefined;
  return () => {
    if (spare !== undefined) { const s = spare; spare = undefined; return s; }
    let u1 = u();
    while (u1 <= 0) u1 = u();
    const r = Math.sqrt(-2 * Math.log(u1));
    const th = 2 * Math.PI * u();
    spare = r * Math.sin(th);
    return r * Math.cos(th);
  };
}
