/**
 * f at n deterministic uniform random points over a window (mulberry32, seeded): the scattered samples
 * the barriers tests and bench/barriers-scattered.mjs share, so the bench's worst cases are the tests' cases.
 */
export function scatteredPoints(f, n, seed, win) {
  let s = seed >>> 0;
  const rand = () => {
    s = (s + 0x6d2b79f5) >>> 0;
    let t = s;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  const x = new Float64Array(n), y = new Float64Array(n), v = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    x[i] = win.x[0] + (win.x[1] - win.x[0]) * rand();
    y[i] = win.y[0] + (win.y[1] - win.y[0]) * rand();
    v[i] = f(x[i], y[i]);
  }
  return { x, y, v };
}
