// A small seeded generator (mulberry32), so that invented demo and bench numbers are the same every run.
// Used by samples/demo-history.mjs, bench/generate.mjs and the tests that invent data.

/** Uniform numbers in [0, 1) from a 32-bit seed (mulberry32). */
export function mulberry32(seed) {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}
