/**
 * Volumes of analytic bowls (Archimedes): a paraboloid z = H·(r/R)² cut by the level H holds
 * πR²H/2, a cone z = H·r/R holds πR²H/3. Below the rim, the paraboloid holds
 * V(h) = πR²h²/(2H) (stage–volume). The grid volumes converge to these as the cells shrink, at
 * second order (midpoint rule on an integrand that falls linearly to zero at the rim; the
 * lattice-point count of the disc adds an oscillating term of the same order).
 */
import { describe, it, expect } from 'vitest';
import { Grid } from '../../src/surface/grid.js';
import { ponds } from '../../src/hydro/ponds.js';
import { stageVolume } from '../../src/hydro/stage.js';

const R = 100, H = 5;

function bowl(shape: 'paraboloid' | 'cone', N: number): Grid {
  const L = 1.25 * R, h = (2 * L) / N;
  const v = new Float64Array(N * N);
  for (let r = 0; r < N; r++) {
    for (let c = 0; c < N; c++) {
      const x = -L + (c + 0.5) * h, y = L - (r + 0.5) * h;
      const q = Math.hypot(x, y) / R;
      // outside the rim a plateau at H reaches the map edge: the spill level is exactly H
      v[r * N + c] = q >= 1 ? H : shape === 'paraboloid' ? H * q * q : H * q;
    }
  }
  return new Grid({ width: N, height: N, values: v, transform: [-L, h, 0, L, 0, -h], crs: { epsg: 32633, geographic: false, linearUnit: 'metre' } });
}

function slope(xs: number[], ys: number[]): number {
  const n = xs.length, mx = xs.reduce((a, b) => a + b) / n, my = ys.reduce((a, b) => a + b) / n;
  let sxy = 0, sxx = 0;
  for (let i = 0; i < n; i++) { sxy += (xs[i] - mx) * (ys[i] - my); sxx += (xs[i] - mx) ** 2; }
  return sxy / sxx;
}

describe('volumes of analytic bowls converge to the closed forms (Archimedes)', () => {
  const sizes = [50, 100, 200, 400, 800];
  for (const [shape, exact] of [['paraboloid', (Math.PI * R * R * H) / 2], ['cone', (Math.PI * R * R * H) / 3]] as const) {
    it(`${shape}: relative error ≤ 1/N² and falls at second order`, () => {
      const errs: number[] = [];
      for (const N of sizes) {
        const r = ponds(bowl(shape, N), { euler: false });
        expect(r.hierarchy.count).toBe(1);
        expect(r.hierarchy.spillValue[1]).toBe(H);
        const e = Math.abs(r.hierarchy.volume[1] - exact) / exact;
        expect(e).toBeLessThanOrEqual(1 / (N * N));
        errs.push(e);
      }
      // observed order of convergence from a least-squares fit of log(error) on log(N)
      expect(-slope(sizes.map(Math.log), errs.map(Math.log))).toBeGreaterThanOrEqual(1.8);
    });
  }

  it('paraboloid stage–volume: V(h) = πR²h²/(2H) below the rim', () => {
    const r = ponds(bowl('paraboloid', 400), { euler: false });
    const rows = stageVolume(r, 1, H / 10);
    expect(rows).toHaveLength(11);
    for (const row of rows.slice(2)) {
      const exact = (Math.PI * R * R * row.level * row.level) / (2 * H);
      expect(Math.abs(row.volume - exact) / exact).toBeLessThan(2e-4);
      expect(Math.abs(row.area - (Math.PI * R * R * row.level) / H) / ((Math.PI * R * R * row.level) / H)).toBeLessThan(5e-3);
    }
    expect(rows[rows.length - 1].volume).toBeCloseTo(r.hierarchy.volume[1], 6);
  });
});
