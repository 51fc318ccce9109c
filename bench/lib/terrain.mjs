/**
 * Deterministic fractal test terrain for the benchmarks: midpoint displacement on a
 * (2^k + 1)-square lattice (alternating centre and edge-midpoint steps), cropped to the
 * requested size. Same size + seed ⇒ the same float32 values on every machine.
 */

/** Small fast 32-bit generator (xorshift32); returns a function giving uniform [-1, 1). */
export function makeRandom(seed) {
  let s = (seed >>> 0) || 0x9e3779b9;
  return () => {
    s ^= s << 13; s >>>= 0;
    s ^= s >>> 17;
    s ^= s << 5; s >>>= 0;
    return s / 2147483648 - 1;
  };
}

/**
 * @param {number} size   width = height of the result
 * @param {object} [opts]
 * @param {number} [opts.seed=17]        generator seed
 * @param {number} [opts.roughness=0.55] amplitude factor per halving of the step (0.5 = smooth, 0.7 = rugged)
 * @param {number} [opts.relief=1200]    amplitude of the coarsest displacement, in metres
 * @param {number} [opts.base=400]       value added everywhere
 * @param {number} [opts.quantum=0]      round values to this step (0 = keep float32 detail); >0 makes ties and flats
 * @returns {Float32Array} row-major size × size values
 */
export function fractalTerrain(size, opts = {}) {
  const { seed = 17, roughness = 0.55, relief = 1200, base = 400, quantum = 0 } = opts;
  let S = 2;
  while (S + 1 < size) S *= 2;
  const N = S + 1;
  const rnd = makeRandom(seed);
  const z = new Float32Array(N * N);
  z[0] = rnd() * relief; z[S] = rnd() * relief; z[S * N] = rnd() * relief; z[S * N + S] = rnd() * relief;
  let amp = relief;
  for (let step = S; step > 1; step >>= 1) {
    const half = step >> 1;
    amp *= roughness;
    // centres of the squares
    for (let y = half; y < N; y += step) {
      for (let x = half; x < N; x += step) {
        const a = z[(y - half) * N + x - half], b = z[(y - half) * N + x + half];
        const c = z[(y + half) * N + x - half], d = z[(y + half) * N + x + half];
        z[y * N + x] = (a + b + c + d) * 0.25 + rnd() * amp;
      }
    }
    // midpoints of the edges (the lattice points with exactly one odd coordinate)
    for (let y = 0; y < N; y += half) {
      for (let x = (y / half) % 2 === 0 ? half : 0; x < N; x += step) {
        let sum = 0, cnt = 0;
        if (y >= half) { sum += z[(y - half) * N + x]; cnt++; }
        if (y + half < N) { sum += z[(y + half) * N + x]; cnt++; }
        if (x >= half) { sum += z[y * N + x - half]; cnt++; }
        if (x + half < N) { sum += z[y * N + x + half]; cnt++; }
        z[y * N + x] = sum / cnt + rnd() * amp;
      }
    }
  }
  const out = new Float32Array(size * size);
  for (let r = 0; r < size; r++) {
    const row = z.subarray(r * N, r * N + size);
    if (quantum > 0) {
      for (let c = 0; c < size; c++) out[r * size + c] = base + Math.round(row[c] / quantum) * quantum;
    } else {
      for (let c = 0; c < size; c++) out[r * size + c] = base + row[c];
    }
  }
  return out;
}
