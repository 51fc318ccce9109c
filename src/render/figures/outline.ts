/**
 * Region outlines for display: traced with d3-contour on a region's mask at display resolution
 * (marching squares, no smoothing), simplified with the Ramer–Douglas–Peucker algorithm to a
 * tolerance of a fraction of a display pixel, and written as SVG path data in plot coordinates.
 */
import { contours } from 'd3-contour';
import { n } from './svg.js';

type Pt = [number, number];

/** Ramer–Douglas–Peucker simplification of an open polyline: keeps points farther than tol from the chord (segment). */
export function simplifyLine(pts: Pt[], tol: number): Pt[] {
  if (pts.length <= 2) return pts.slice();
  const keep = new Uint8Array(pts.length);
  keep[0] = 1; keep[pts.length - 1] = 1;
  const stack: [number, number][] = [[0, pts.length - 1]];
  const t2 = tol * tol;
  while (stack.length) {
    const [a, b] = stack.pop()!;
    const [ax, ay] = pts[a], [bx, by] = pts[b];
    const dx = bx - ax, dy = by - ay, L2 = dx * dx + dy * dy;
    let best = -1, bi = -1;
    for (let i = a + 1; i < b; i++) {
      // distance to the segment (not the infinite line), so every dropped point is within tol of what is drawn
      const px = pts[i][0] - ax, py = pts[i][1] - ay;
      const t = L2 === 0 ? 0 : Math.max(0, Math.min(1, (px * dx + py * dy) / L2));
      const ex = px - t * dx, ey = py - t * dy;
      const d2 = ex * ex + ey * ey;
      if (d2 > best) { best = d2; bi = i; }
    }
    if (best > t2) { keep[bi] = 1; stack.push([a, bi], [bi, b]); }
  }
  return pts.filter((_, i) => keep[i] === 1);
}

/** A closed ring simplified: split at its first point and the point farthest from it, each half simplified. */
export function simplifyRing(ring: Pt[], tol: number): Pt[] {
  const pts = ring.length > 1 && ring[0][0] === ring[ring.length - 1][0] && ring[0][1] === ring[ring.length - 1][1] ? ring.slice(0, -1) : ring.slice();
  if (pts.length <= 4) return pts;
  let far = 0, fd = -1;
  for (let i = 1; i < pts.length; i++) {
    const d = (pts[i][0] - pts[0][0]) ** 2 + (pts[i][1] - pts[0][1]) ** 2;
    if (d > fd) { fd = d; far = i; }
  }
  const a = simplifyLine(pts.slice(0, far + 1), tol);
  const b = simplifyLine([...pts.slice(far), pts[0]], tol);
  return [...a.slice(0, -1), ...b.slice(0, -1)];
}

export interface RegionOutline {
  /** SVG path data in plot coordinates. */
  d: string;
  points: number;
}

/**
 * Outline of the display cells where `inRegion(label)` holds, inside the box [c0, c1] × [r0, r1]
 * (inclusive) of a dw-wide display label raster; coordinates are scaled by `factor` into plot
 * coordinates. Rings with fewer than 3 points after simplification are dropped. `scratch`, when
 * large enough, holds the mask (no allocation per region).
 */
export function traceRegion(
  labels: Int32Array, dw: number, box: [number, number, number, number], inRegion: (label: number) => boolean, factor: number, tol: number,
  scratch?: Uint8Array,
): RegionOutline {
  const [c0, r0, c1, r1] = box;
  // one empty cell of margin so every ring closes inside the box
  const bw = c1 - c0 + 3, bh = r1 - r0 + 3;
  const mask = scratch && scratch.length >= bw * bh ? scratch.subarray(0, bw * bh).fill(0) : new Uint8Array(bw * bh);
  for (let r = r0; r <= r1; r++) {
    for (let c = c0; c <= c1; c++) if (inRegion(labels[r * dw + c])) mask[(r - r0 + 1) * bw + (c - c0 + 1)] = 1;
  }
  const geom = contours().smooth(false).size([bw, bh]).contour(mask as unknown as number[], 0.5);
  const parts: string[] = [];
  let points = 0;
  for (const poly of geom.coordinates) {
    for (const ring of poly) {
      const pts = simplifyRing(ring.map(([x, y]) => [x - 1 + c0, y - 1 + r0] as Pt), tol);
      if (pts.length < 3) continue;
      points += pts.length;
      parts.push('M' + pts.map(([x, y]) => `${n(x * factor, 2)} ${n(y * factor, 2)}`).join('L') + 'Z');
    }
  }
  return { d: parts.join(''), points };
}
