/** Uniform numbers in [0, 1) from a 32-bit seed (mulberry32). */
export function mulberry32(seed: number): () => number;
