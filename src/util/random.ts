/**
 * Deterministic pseudo-random numbers for simulation and tests
 * (mulberry32: 32-bit state, period 2^32; plenty for synthetic captures).
 */

/** Uniform [0, 1) generator from a 32-bit seed. */
export function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Standard normal sample from a uniform generator (Box–Muller). */
export function gaussian(u: () => number): number {
  const a = Math.max(u(), 1e-300);
  return Math.sqrt(-2 * Math.log(a)) * Math.cos(2 * Math.PI * u());
}

/** Uniform sample in [lo, hi). */
export function uniform(u: () => number, lo: number, hi: number): number {
  return lo + (hi - lo) * u();
}
