import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { blockStats, blockFactor, makeFrame, mapToPlot, plotToMap, blockCentreSample, rasterizeTriangles } from '../../src/render/figures/raster.js';
import type { GeoTransform } from '../../src/surface/grid.js';

describe('downsampling for display', () => {
  it('picks the smallest integer block that fits the longest side', () => {
    expect(blockFactor(4000, 4000, 1000)).toBe(4);
    expect(blockFactor(4001, 10, 1000)).toBe(5);
    expect(blockFactor(320, 240, 1000)).toBe(1);
    const f = makeFrame(4001, 3000, [0, 1, 0, 0, 0, 1], 1000);
    expect([f.factor, f.dw, f.dh]).toEqual([5, 801, 600]);
  });

  it('block mean, min, max and count equal a brute-force pass over each block (partial edge blocks, nodata)', () => {
    fc.assert(fc.property(fc.integer({ min: 1, max: 23 }), fc.integer({ min: 1, max: 19 }), fc.integer({ min: 1, max: 6 }), fc.integer(), (w, h, f, seed) => {
      const v = new Float32Array(w * h);
      let s = seed >>> 0;
      for (let i = 0; i < v.length; i++) { s = (s * 1664525 + 1013904223) >>> 0; v[i] = s % 7 === 0 ? NaN : (s % 1000) / 10 - 50; }
      const b = blockStats(v, w, h, f);
      for (let j = 0; j < b.dh; j++) for (let i = 0; i < b.dw; i++) {
        const cells: number[] = [];
        for (let r = j * f; r < Math.min(h, (j + 1) * f); r++) for (let c = i * f; c < Math.min(w, (i + 1) * f); c++) if (!Number.isNaN(v[r * w + c])) cells.push(v[r * w + c]);
        const k = j * b.dw + i;
        if (b.count[k] !== cells.length) return false;
        if (cells.length === 0) { if (!Number.isNaN(b.mean[k])) return false; continue; }
        const mean = cells.reduce((a, x) => a + x, 0) / cells.length;
        if (Math.abs(b.mean[k] - mean) > 1e-4 || b.min[k] !== Math.min(...cells) || b.max[k] !== Math.max(...cells)) return false;
      }
      return true;
    }));
  });

  it('category rasters sample the centre cell of each block', () => {
    const w = 7, h = 5, lab = Int32Array.from({ length: w * h }, (_, i) => i);
    const s = blockCentreSample(lab, w, h, 3);
    // block (0,0) centre cell (1,1) = 8; block (2,1) covers cols 6..6 (partial), rows 3..4 → centre (6, 4)
    expect(s[0]).toBe(1 * w + 1);
    expect(s[1 * 3 + 2]).toBe(4 * w + 6);
  });
});

describe('plot coordinates: the inverse of the affine geotransform', () => {
  it('maps a cell centre (col + 0.5, row + 0.5) to its map coordinates and back, rotated transforms included', () => {
    fc.assert(fc.property(
      fc.double({ min: -1e6, max: 1e6, noNaN: true }), fc.double({ min: 0.1, max: 100, noNaN: true }), fc.double({ min: -0.5, max: 0.5, noNaN: true }),
      fc.double({ min: -1e6, max: 1e6, noNaN: true }), fc.double({ min: -0.5, max: 0.5, noNaN: true }), fc.double({ min: -100, max: -0.1, noNaN: true }),
      fc.integer({ min: 0, max: 5000 }), fc.integer({ min: 0, max: 5000 }),
      (x0, dx, rx, y0, ry, dy, c, r) => {
        const t: GeoTransform = [x0, dx, rx, y0, ry, dy];
        // GDAL convention: X = x0 + col·dx + row·rx, Y = y0 + col·ry + row·dy (at pixel corners)
        const X = x0 + (c + 0.5) * dx + (r + 0.5) * rx, Y = y0 + (c + 0.5) * ry + (r + 0.5) * dy;
        const [u, v] = mapToPlot(t, X, Y);
        const [X2, Y2] = plotToMap(t, u, v);
        const tol = 1e-6 * (1 + Math.abs(X) + Math.abs(Y));
        return Math.abs(u - (c + 0.5)) < 1e-6 && Math.abs(v - (r + 0.5)) < 1e-6 && Math.abs(X2 - X) < tol && Math.abs(Y2 - Y) < tol;
      }));
  });
});

describe('scattered samples on a display grid', () => {
  it('reproduces a linear function exactly inside the hull and leaves the outside empty', () => {
    // a plane is reproduced exactly by linear interpolation on any triangulation (analytic)
    const x = [0, 10, 0, 10, 5], y = [0, 0, 10, 10, 5];
    const f = (a: number, b: number) => 2 * a - 3 * b + 7;
    const vals = x.map((a, i) => f(a, y[i]));
    const tri = [0, 1, 4, 1, 3, 4, 3, 2, 4, 2, 0, 4];
    const r = rasterizeTriangles(x, y, vals, tri, 20);
    expect([r.width, r.height]).toEqual([20, 20]);
    for (let row = 0; row < r.height; row++) for (let col = 0; col < r.width; col++) {
      const [X, Y] = plotToMap(r.transform, col + 0.5, row + 0.5);
      expect(r.values[row * r.width + col]).toBeCloseTo(f(X, Y), 4);
    }
    const half = rasterizeTriangles([0, 10, 0], [0, 0, 10], [1, 1, 1], [0, 1, 2], 10);
    // cell centres above the hypotenuse x + y = 10 are outside the hull
    expect(Number.isNaN(half.values[0 * 10 + 9])).toBe(true);
    expect(half.values[9 * 10 + 0]).toBe(1);
  });
});
