import { describe, it, expect } from 'vitest';
import { contourLines } from '../../src/render/figures/contours.js';

function coords(d: string): [number, number][] {
  return [...d.matchAll(/[ML](-?[\d.]+) (-?[\d.]+)/g)].map((m) => [Number(m[1]), Number(m[2])]);
}

describe('contour lines in plot coordinates', () => {
  it('on z = column, the level-L line runs at x = L + 0.5 (between the centres of cells L and L+1 … analytic)', () => {
    // cell c has its centre at x = c + 0.5 and value c, so value L sits at x = L + 0.5
    const w = 20, h = 12, z = new Float32Array(w * h);
    for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) z[r * w + c] = c;
    const set = contourLines(z, w, h, 1, 4);
    expect(set.lines.length).toBeGreaterThan(0);
    for (const line of set.lines) {
      const pts = coords(line.d);
      expect(pts.length).toBeGreaterThan(2);
      for (const [x, y] of pts) {
        expect(x).toBeCloseTo(line.level + 0.5, 6);
        expect(y).toBeGreaterThanOrEqual(0);
        expect(y).toBeLessThanOrEqual(h);
      }
    }
  });

  it('on a 2×2-block display of the same ramp the lines stay at x = L + 0.5 in grid units', () => {
    const w = 40, h = 8, f = 2;
    // block means of z = column over 2×2 blocks: block i holds columns 2i, 2i+1 → mean 2i + 0.5
    const dw = w / f, dh = h / f, z = new Float32Array(dw * dh);
    for (let r = 0; r < dh; r++) for (let i = 0; i < dw; i++) z[r * dw + i] = 2 * i + 0.5;
    const set = contourLines(z, dw, dh, f, 4);
    for (const line of set.lines) for (const [x] of coords(line.d)) expect(x).toBeCloseTo(line.level + 0.5, 6);
  });

  it('draws no line along the raster edge or around nodata, and closes rings of a bump', () => {
    const w = 30, h = 30, z = new Float32Array(w * h);
    for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) z[r * w + c] = Math.exp(-((c - 15) ** 2 + (r - 15) ** 2) / 40);
    z[0] = NaN; z[1] = NaN;
    const set = contourLines(z, w, h, 1, 5);
    for (const line of set.lines) {
      for (const [x, y] of coords(line.d)) {
        // circles around (15.5, 15.5): nothing on the frame
        expect(x > 0.5 && x < w - 0.5 && y > 0.5 && y < h - 0.5).toBe(true);
        const rr = Math.hypot(x - 15.5, y - 15.5);
        // exp(−ρ²/40) = level ⇒ ρ = √(−40 ln level), within linear-interpolation error
        expect(Math.abs(rr - Math.sqrt(-40 * Math.log(line.level)))).toBeLessThan(0.35);
      }
    }
  });

  it('halves the number of levels when the lines would carry too many vertices', () => {
    const w = 60, h = 60, z = new Float32Array(w * h);
    for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) z[r * w + c] = Math.sin(c * 0.7) * Math.cos(r * 0.5) + c * 0.01;
    const all = contourLines(z, w, h, 1, 16);
    const capped = contourLines(z, w, h, 1, 16, Math.floor(all.points / 3));
    expect(capped.points).toBeLessThanOrEqual(Math.floor(all.points / 3));
    expect(capped.levels.step).toBeGreaterThan(all.levels.step);
  });
});
