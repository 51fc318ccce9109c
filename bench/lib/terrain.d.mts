/** Types of bench/lib/terrain.mjs for the tests that use the bench's terrain. */
export function makeRandom(seed: number): () => number;
export function fractalTerrain(size: number, opts?: { seed?: number; roughness?: number; relief?: number; base?: number; quantum?: number }): Float32Array;
