import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { simplifyLine, simplifyRing, traceRegion } from '../../src/render/figures/outline.js';

type Pt = [number, number];
function segDist(p: Pt, a: Pt, b: Pt): number {
  const dx = b[0] - a[0], dy = b[1] - a[1], L2 = dx * dx + dy * dy;
  const t = L2 === 0 ? 0 : Math.max(0, Math.min(1, ((p[0] - a[0]) * dx + (p[1] - a[1]) * dy) / L2));
  return Math.hypot(p[0] - a[0] - t * dx, p[1] - a[1] - t * dy);
}
function shoelace(pts: Pt[]): number {
  let s = 0;
  for (let i = 0; i < pts.length; i++) { const [x0, y0] = pts[i], [x1, y1] = pts[(i + 1) % pts.length]; s += x0 * y1 - x1 * y0; }
  return Math.abs(s) / 2;
}
function rings(d: string): Pt[][] {
  return d.split('Z').filter(Boolean).map((r) => [...r.matchAll(/(-?[\d.]+) (-?[\d.]+)/g)].map((m) => [Number(m[1]), Number(m[2])] as Pt));
}

describe('Ramer–Douglas–Peucker simplification', () => {
  it('keeps the end points and every point that strays more than the tolerance', () => {
    expect(simplifyLine([[0, 0], [1, 0.1], [2, -0.1], [3, 0]], 0.2)).toEqual([[0, 0], [3, 0]]);
    expect(simplifyLine([[0, 0], [1, 1], [2, 0]], 0.5)).toEqual([[0, 0], [1, 1], [2, 0]]);
  });

  it('every dropped point lies within the tolerance of the simplified line (the defining property)', () => {
    fc.assert(fc.property(fc.array(fc.tuple(fc.double({ min: -50, max: 50, noNaN: true }), fc.double({ min: -50, max: 50, noNaN: true })), { minLength: 2, maxLength: 60 }),
      fc.double({ min: 0.01, max: 5, noNaN: true }), (raw, tol) => {
        const pts = raw.map(([x], i) => [i, x] as Pt); // x-monotone polylines
        const kept = simplifyLine(pts, tol);
        let j = 0;
        for (let i = 0; i < pts.length; i++) {
          while (j < kept.length - 2 && kept[j + 1][0] < pts[i][0]) j++;
          if (segDist(pts[i], kept[j], kept[j + 1]) > tol + 1e-9) return false;
        }
        return kept[0] === pts[0] && kept[kept.length - 1] === pts[pts.length - 1];
      }), { numRuns: 500 });
    // a point whose foot on the chord's line falls beyond the chord: its distance is to the end point
    const p: Pt[] = [[0, -1.3093787703607211], [1, 4.582575696046916], [2, 0], [3, 0]];
    expect(simplifyLine(p, 4.999999999999987)).toContainEqual([1, 4.582575696046916]);
  });

  it('closed rings keep their shape', () => {
    const sq: Pt[] = [[0, 0], [1, 0], [2, 0], [2, 1], [2, 2], [1, 2], [0, 2], [0, 1], [0, 0]];
    expect(shoelace(simplifyRing(sq, 0.1))).toBe(4);
  });
});

describe('region outlines at display resolution', () => {
  it('a block of a × b cells outlines to its box, corners cut by marching squares (area ab − ½), scaled by the block factor', () => {
    const dw = 12, dh = 9, lab = new Int32Array(dw * dh);
    for (let r = 2; r <= 4; r++) for (let c = 3; c <= 6; c++) lab[r * dw + c] = 7;
    const f = 4;
    const o = traceRegion(lab, dw, [3, 2, 6, 4], (e) => e === 7, f, 0.01);
    const rs = rings(o.d);
    expect(rs).toHaveLength(1);
    // four cut corners of ½ × ½ / 2 each: area 4·3 − 4·⅛ = 11.5 display cells, times f² in plot units
    expect(shoelace(rs[0])).toBeCloseTo(11.5 * f * f, 6);
    const xs = rs[0].map((p) => p[0]), ys = rs[0].map((p) => p[1]);
    expect([Math.min(...xs), Math.max(...xs), Math.min(...ys), Math.max(...ys)]).toEqual([3 * f, 7 * f, 2 * f, 5 * f]);
  });

  it('holes stay holes; simplification moves the outline by at most the tolerance', () => {
    const dw = 10, dh = 10, lab = new Int32Array(dw * dh);
    for (let r = 1; r <= 8; r++) for (let c = 1; c <= 8; c++) lab[r * dw + c] = (r >= 4 && r <= 5 && c >= 4 && c <= 5) ? 0 : 3;
    // below the ½-cell corner cut (√2/4 ≈ 0.35) the shape is kept exactly: 8×8 − ½ outside, 2×2 − ½ hole
    const exact = rings(traceRegion(lab, dw, [1, 1, 8, 8], (e) => e === 3, 1, 0.3).d).map(shoelace).sort((a, b) => b - a);
    expect(exact).toEqual([63.5, 3.5]);
    // coarser: each ring stays within tol of the exact one, so its area moves by at most perimeter × tol
    const tol = 0.5;
    const coarse = rings(traceRegion(lab, dw, [1, 1, 8, 8], (e) => e === 3, 1, tol).d).map(shoelace).sort((a, b) => b - a);
    expect(coarse).toHaveLength(2);
    expect(Math.abs(coarse[0] - 63.5)).toBeLessThanOrEqual(32 * tol);
    expect(Math.abs(coarse[1] - 3.5)).toBeLessThanOrEqual(8 * tol);
  });
});
