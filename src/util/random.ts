/**
 * The project's one seeded random stream, shared by the tree sampler, the sampling decoder and the
 * training-data generator: the same seed gives the same stream in every stage and release.
 */

/**
 * mulberry32: a 32-bit-state PRNG (Tommy Ettinger's public-domain generator, from memory; common
 * practice for small reproducible streams, not cryptographic). Returns floats in [0, 1).
 * Hand-written because it is eight lines and the seed → stream mapping must never change.
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
