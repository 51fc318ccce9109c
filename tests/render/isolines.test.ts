import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { contours } from 'd3-contour';
import { IsolineTracer, fillRings, paddedRaster } from '../../src/render/figures/isolines.js';

type Seg = string;
const key = (x: number, y: number) => `${x.toFixed(9)},${y.toFixed(9)}`;
const seg = (a: string, b: string): Seg => (a < b ? `${a}|${b}` : `${b}|${a}`);

/**
 * The marching cell a segment lies in (value k at k + ½): the square its midpoint falls into. With
 * levels that equal no value, a segment of a cell between four values has its ends strictly inside
 * two sides, so its midpoint is strictly inside the cell; d3-contour's segments next to nodata (ends
 * moved onto a value) can lie on a cell's side: [−1, −1], no cell.
 */
function cellOf(x0: number, y0: number, x1: number, y1: number): [number, number] {
  const mx = (x0 + x1) / 2 - 0.5, my = (y0 + y1) / 2 - 0.5;
  if (Number.isInteger(mx) || Number.isInteger(my)) return [-1, -1];
  return [Math.floor(mx), Math.floor(my)];
}

function fullCell(v: ArrayLike<number>, w: number, h: number, c: number, r: number): boolean {
  if (c < 0 || r < 0 || c + 1 >= w || r + 1 >= h) return false;
  const a = [v[r * w + c], v[r * w + c + 1], v[(r + 1) * w + c], v[(r + 1) * w + c + 1]];
  return a.every((x) => Number.isFinite(x));
}

/** d3-contour's segments at `level`, kept where they lie in a cell between four present values. */
function d3Segments(v: Float64Array, w: number, h: number, level: number): Map<Seg, number> {
  const out = new Map<Seg, number>();
  const mp = contours().size([w, h]).contour(Array.from(v, (x) => (Number.isNaN(x) ? NaN : x)), level);
  for (const poly of mp.coordinates) for (const ring of poly) {
    for (let k = 1; k < ring.length; k++) {
      const [x0, y0] = ring[k - 1], [x1, y1] = ring[k];
      const [c, r] = cellOf(x0, y0, x1, y1);
      if (!fullCell(v, w, h, c, r)) continue;
      const s = seg(key(x0, y0), key(x1, y1));
      out.set(s, (out.get(s) ?? 0) + 1);
    }
  }
  return out;
}

function oursSegments(v: Float64Array, w: number, h: number, level: number): { segs: Map<Seg, number>; points: number } {
  const iso = new IsolineTracer(w, h).trace(v, level);
  const out = new Map<Seg, number>();
  const add = (i: number, j: number) => {
    const s = seg(key(iso.xy[2 * i], iso.xy[2 * i + 1]), key(iso.xy[2 * j], iso.xy[2 * j + 1]));
    out.set(s, (out.get(s) ?? 0) + 1);
  };
  for (let k = 0; k < iso.lines; k++) {
    const a = iso.start[k], b = iso.start[k + 1];
    for (let p = a + 1; p < b; p++) add(p - 1, p);
    if (iso.closed[k]) add(b - 1, a);
  }
  return { segs: out, points: iso.points };
}

// grids of small integers (ties between values) with optional holes; levels at k + 0.37 never equal a value
const gridArb = fc.record({ w: fc.integer({ min: 2, max: 14 }), h: fc.integer({ min: 2, max: 14 }), seed: fc.integer(), holes: fc.boolean() })
  .map(({ w, h, seed, holes }) => {
    let s = seed >>> 0 || 1;
    const rnd = () => { s ^= s << 13; s >>>= 0; s ^= s >>> 17; s ^= s << 5; s >>>= 0; return s / 2 ** 32; };
    const v = new Float64Array(w * h);
    for (let i = 0; i < v.length; i++) v[i] = holes && rnd() < 0.1 ? NaN : Math.floor(rnd() * 6);
    return { w, h, v };
  });

describe('marching squares on typed arrays (isolines.ts)', () => {
  it('gives the same segments as d3-contour in every cell between four values, saddles and holes included (reference: d3-contour 4.0.3)', () => {
    fc.assert(fc.property(gridArb, fc.integer({ min: 0, max: 5 }), ({ w, h, v }, k) => {
      const level = k + 0.37;
      const ref = d3Segments(v, w, h, level);
      const ours = oursSegments(v, w, h, level);
      expect([...ours.segs].sort()).toEqual([...ref].sort());
    }), { numRuns: 300, seed: 14 });
  });

  it('without nodata, the crossing count of a level set is the number of points traced (every raster edge lies in a marching cell)', () => {
    fc.assert(fc.property(gridArb, ({ w, h, v }) => {
      for (let i = 0; i < v.length; i++) if (Number.isNaN(v[i])) v[i] = 2;
      const levels = [0.37, 1.37, 2.37, 4.37];
      let traced = 0;
      for (const L of levels) traced += new IsolineTracer(w, h).trace(v, L).points;
      expect(IsolineTracer.crossings(v, w, h, levels)).toBe(traced);
    }), { numRuns: 200, seed: 15 });
  });

  it('a ring around a single high value is one closed loop of four edge points at the interpolated distance (analytic)', () => {
    const w = 3, h = 3, v = new Float64Array(9);
    v[4] = 4; // centre value 4, neighbours 0: level 1 crosses each edge at ¼ of the way from the centre
    const iso = new IsolineTracer(w, h).trace(v, 1);
    expect(iso.lines).toBe(1);
    expect(iso.closed[0]).toBe(1);
    const pts = Array.from({ length: iso.points }, (_, i) => [iso.xy[2 * i], iso.xy[2 * i + 1]]);
    expect(pts.map(([x, y]) => key(x, y)).sort()).toEqual([[1.5, 0.75], [2.25, 1.5], [1.5, 2.25], [0.75, 1.5]].map(([x, y]) => key(x, y)).sort());
  });

  it('a box limits the cells visited; lines through the box edge stay open', () => {
    const w = 10, h = 10, v = new Float64Array(100);
    for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) v[r * w + c] = c;
    const t = new IsolineTracer(w, h);
    const all = t.trace(v, 4.5);
    expect(all.lines).toBe(1);
    expect(all.points).toBe(10);
    const part = t.trace(v, 4.5, [2, 3, 7, 6]);
    expect(part.lines).toBe(1);
    expect(part.closed[0]).toBe(0);
    expect(part.points).toBe(4);
  });
});

/** Even-odd containment of a point in a set of rings (crossing number). */
function evenOdd(xs: number[][][], x: number, y: number): boolean {
  let inside = false;
  for (const ring of xs) for (let i = 0, j = ring.length - 1; i < ring.length; j = i++) {
    const [xi, yi] = ring[i], [xj, yj] = ring[j];
    if ((yi > y) !== (yj > y) && x < ((xj - xi) * (y - yi)) / (yj - yi) + xi) inside = !inside;
  }
  return inside;
}

describe('filled regions for an even-odd fill (fillRings)', () => {
  it('cover the same points as d3-contour\'s polygons with their holes, nodata and the raster edge included (reference: d3-contour 4.0.3)', () => {
    fc.assert(fc.property(gridArb, fc.integer({ min: 0, max: 5 }), fc.integer(), ({ w, h, v }, k, ps) => {
      const level = k + 0.37;
      const iso = fillRings(paddedRaster(v, w, h), level);
      const ours: number[][][] = [];
      for (let q = 0; q < iso.lines; q++) {
        expect(iso.closed[q]).toBe(1);
        const ring: number[][] = [];
        for (let i = iso.start[q]; i < iso.start[q + 1]; i++) ring.push([iso.xy[2 * i], iso.xy[2 * i + 1]]);
        ours.push(ring);
      }
      const mp = contours().size([w, h]).contour(Array.from(v), level);
      // probe points at irrational-ish offsets (never on a ring)
      let s = ps >>> 0 || 1;
      for (let t = 0; t < 60; t++) {
        s = (s * 1103515245 + 12345) >>> 0; const x = (s / 2 ** 32) * w * 1.001 + 0.0007;
        s = (s * 1103515245 + 12345) >>> 0; const y = (s / 2 ** 32) * h * 1.001 + 0.0011;
        const ref = mp.coordinates.some((poly) => evenOdd([poly[0]], x, y) && !poly.slice(1).some((hole) => evenOdd([hole], x, y)));
        expect(evenOdd(ours, x, y)).toBe(ref);
      }
    }), { numRuns: 200, seed: 16 });
  });
});
