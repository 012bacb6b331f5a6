/**
 * Seeded pseudo-random numbers for the bench generators, so that every run
 * writes the same files.
 */

import { mulberry32 } from '../../workers/core/prng.js';

export { mulberry32 };

/**
 * A table of standard normal deviates (Box & Muller 1958), for per-pixel noise
 * drawn by index: 49 M calls to Math.log/Math.cos would dominate generation.
 * @param size table length
 * @param seed generator seed
 */
export function normalTable(size: number, seed: number): Float32Array {
  const rnd = mulberry32(seed);
  const out = new Float32Array(size);
  for (let i = 0; i < size; i += 2) {
    const u = 1 - rnd(); // (0, 1]: log stays finite
    const v = rnd();
    const r = Math.sqrt(-2 * Math.log(u));
    out[i] = r * Math.cos(2 * Math.PI * v);
    if (i + 1 < size) out[i + 1] = r * Math.sin(2 * Math.PI * v);
  }
  return out;
}
