/**
 * Seeded pseudo-random numbers: the demo generator, the benchmark inputs and
 * the fuzz tests draw from this one generator, so every run is reproducible.
 */

/**
 * mulberry32 (Tommy Ettinger, 2017, public domain): a 32-bit-state generator of
 * uniform numbers in [0, 1). Small and fast; not for cryptography.
 * @example const rnd = mulberry32(7); rnd() // 0 <= x < 1, the same every run
 */
export function mulberry32(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}
