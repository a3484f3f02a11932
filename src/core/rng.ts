/** Seeded pseudo-random numbers for reproducible start vectors and noise realisations. */

/** mulberry32 pseudo-random generator (common practice; public-domain 32-bit generator) */
export function makeRng(start: number): () => number {
  let a = start >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}
