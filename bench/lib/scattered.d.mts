/** Types of bench/lib/scattered.mjs for the tests that share its samples. */
export function scatteredPoints(f: (x: number, y: number) => number, n: number, seed: number, win: { x: number[]; y: number[] }): { x: Float64Array; y: Float64Array; v: Float64Array };
