/**
 * A seeded Metropolis sampler for the tests and bench/barriers-samples.mjs: frames drawn from exp(−V/kT) on a box (moves
 * leaving the box are rejected, so the chain samples the density restricted to it), Metropolis et al.,
 * J. Chem. Phys. 21, 1087 (1953). Random numbers: mulberry32 (seeded); normal steps by Box–Muller.
 */
function mulberry32(seed) {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Frames (x, y[, extra]) as one flat Float64Array, frame-major, and the acceptance rate. */
export function metropolis(o) {
  const rand = mulberry32(o.seed);
  const fields = o.extra ? 3 : 2;
  const data = new Float64Array(o.frames * fields);
  let [x, y] = o.start;
  let e = o.energy(x, y);
  let accepted = 0, steps = 0;
  for (let f = 0; f < o.frames; f++) {
    for (let s = 0; s < o.thin; s++) {
      // Box–Muller: two normal deviates per step
      const u1 = 1 - rand(), u2 = rand();
      const r = o.step * Math.sqrt(-2 * Math.log(u1));
      const nx = x + r * Math.cos(2 * Math.PI * u2), ny = y + r * Math.sin(2 * Math.PI * u2);
      steps++;
      if (nx < o.box.x[0] || nx > o.box.x[1] || ny < o.box.y[0] || ny > o.box.y[1]) continue;
      const ne = o.energy(nx, ny);
      if (ne <= e || rand() < Math.exp(e - ne)) { x = nx; y = ny; e = ne; accepted++; }
    }
    data[f * fields] = x;
    data[f * fields + 1] = y;
    if (o.extra) data[f * fields + 2] = o.extra(x, y);
  }
  return { data, fields, acceptance: accepted / steps };
}
