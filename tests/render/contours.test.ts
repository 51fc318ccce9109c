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

describe('contour cap on rough surfaces', async () => {
  const { IsolineTracer } = await import('../../src/render/figures/isolines.js');
  const { surfaceDisplay, displayNotes } = await import('../../src/render/html/surface.js');
  const { Grid } = await import('../../src/surface/grid.js');
  // white noise (invented): every level crosses about half the raster edges
  const w = 120, h = 90, z = new Float32Array(w * h);
  let s = 99;
  for (let i = 0; i < z.length; i++) { s = (s * 1103515245 + 12345) >>> 0; z[i] = (s >>> 8) / 2 ** 24; }

  it('draws no line when even the coarsest levels exceed the cap, and says how many vertices they would need', () => {
    const set = contourLines(z, w, h, 1, 12, 1000);
    expect(set.lines).toEqual([]);
    expect(set.points).toBe(0);
    // the count is the exact number of crossed raster edges of the coarsest level set (no nodata: every edge is traced)
    let traced = 0;
    for (const L of set.levels.levels) traced += new IsolineTracer(w, h).trace(z, L).points;
    expect(set.omitted).toEqual({ points: traced, cap: 1000 });
    expect(traced).toBeGreaterThan(1000);
    const notes = displayNotes(surfaceDisplay(new Grid({ width: w, height: h, values: z })), new Grid({ width: w, height: h, values: z }), set, 'm');
    expect(notes.join(' ')).toMatch(new RegExp(`contours left out: .* ${traced} vertices .*cap 1000`));
  });

  it('never draws more vertices than the cap', () => {
    for (const cap of [5_000, 20_000, 1e6]) {
      const set = contourLines(z, w, h, 1, 12, cap);
      expect(set.points).toBeLessThanOrEqual(cap);
      let drawn = 0;
      for (const l of set.lines) drawn += coords(l.d).length;
      expect(drawn).toBe(set.points);
      if (cap === 1e6) expect(set.lines.length).toBeGreaterThan(0);
    }
  });
});
