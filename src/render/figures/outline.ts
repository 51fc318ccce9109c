/**
 * Region outlines for display: traced by marching squares (isolines.ts) on a region's mask at
 * display resolution (the ½ level of a 0/1 mask: vertices at edge midpoints, no smoothing),
 * simplified with the Ramer–Douglas–Peucker algorithm to a tolerance of a fraction of a display
 * pixel, and written as SVG path data in plot coordinates. Rings come out in no particular order
 * (holes are not sorted into their polygons): the outlines are stroked, never filled.
 */
import { n } from './svg.js';
import { IsolineTracer } from './isolines.js';

type Pt = [number, number];

/**
 * Ramer–Douglas–Peucker on the points a … b (inclusive) of a flat x, y array: marks in `keep` the
 * points farther than tol from the chord (segment) of the part they belong to. Ends are kept.
 */
function rdpFlat(xy: ArrayLike<number>, a: number, b: number, tol: number, keep: Uint8Array, stack: Int32Array): void {
  keep[a] = 1; keep[b] = 1;
  if (b - a < 2) return;
  const t2 = tol * tol;
  let sp = 0;
  stack[sp++] = a; stack[sp++] = b;
  while (sp > 0) {
    const j = stack[--sp], i = stack[--sp];
    const ax = xy[2 * i], ay = xy[2 * i + 1], dx = xy[2 * j] - ax, dy = xy[2 * j + 1] - ay, L2 = dx * dx + dy * dy;
    let best = -1, bi = -1;
    for (let k = i + 1; k < j; k++) {
      // distance to the segment (not the infinite line), so every dropped point is within tol of what is drawn
      const px = xy[2 * k] - ax, py = xy[2 * k + 1] - ay;
      const t = L2 === 0 ? 0 : Math.max(0, Math.min(1, (px * dx + py * dy) / L2));
      const ex = px - t * dx, ey = py - t * dy;
      const d2 = ex * ex + ey * ey;
      if (d2 > best) { best = d2; bi = k; }
    }
    if (best > t2) { keep[bi] = 1; stack[sp++] = i; stack[sp++] = bi; stack[sp++] = bi; stack[sp++] = j; }
  }
}

/** Ramer–Douglas–Peucker simplification of an open polyline: keeps points farther than tol from the chord (segment). */
export function simplifyLine(pts: Pt[], tol: number): Pt[] {
  if (pts.length <= 2) return pts.slice();
  const xy = new Float64Array(2 * pts.length);
  pts.forEach(([x, y], i) => { xy[2 * i] = x; xy[2 * i + 1] = y; });
  const keep = new Uint8Array(pts.length);
  rdpFlat(xy, 0, pts.length - 1, tol, keep, new Int32Array(2 * pts.length + 4));
  return pts.filter((_, i) => keep[i] === 1);
}

/**
 * A closed ring of flat points a … b (no repeated closing point) simplified: split at its first
 * point and the point farthest from it, each half simplified; the kept points are marked in `keep`.
 * Slot b + 1 of `xy` (and of `keep`) is borrowed for the closing point and restored.
 */
function simplifyRingFlat(xy: Float64Array, a: number, b: number, tol: number, keep: Uint8Array, stack: Int32Array): void {
  if (b - a < 4) { keep.fill(1, a, b + 1); return; }
  let far = a, fd = -1;
  for (let i = a + 1; i <= b; i++) {
    const d = (xy[2 * i] - xy[2 * a]) ** 2 + (xy[2 * i + 1] - xy[2 * a + 1]) ** 2;
    if (d > fd) { fd = d; far = i; }
  }
  rdpFlat(xy, a, far, tol, keep, stack);
  // the second half runs far … b and back to a: simplify far … b + 1 with point b + 1 standing for a
  const sx = xy[2 * (b + 1)], sy = xy[2 * (b + 1) + 1];
  xy[2 * (b + 1)] = xy[2 * a]; xy[2 * (b + 1) + 1] = xy[2 * a + 1];
  rdpFlat(xy, far, b + 1, tol, keep, stack);
  xy[2 * (b + 1)] = sx; xy[2 * (b + 1) + 1] = sy;
  keep[b + 1] = 0;
}

/** A closed ring simplified: split at its first point and the point farthest from it, each half simplified. */
export function simplifyRing(ring: Pt[], tol: number): Pt[] {
  const pts = ring.length > 1 && ring[0][0] === ring[ring.length - 1][0] && ring[0][1] === ring[ring.length - 1][1] ? ring.slice(0, -1) : ring.slice();
  if (pts.length <= 4) return pts;
  const xy = new Float64Array(2 * pts.length + 2);
  pts.forEach(([x, y], i) => { xy[2 * i] = x; xy[2 * i + 1] = y; });
  const keep = new Uint8Array(pts.length + 1);
  simplifyRingFlat(xy, 0, pts.length - 1, tol, keep, new Int32Array(2 * pts.length + 8));
  return pts.filter((_, i) => keep[i] === 1);
}

export interface RegionOutline {
  /** SVG path data in plot coordinates. */
  d: string;
  points: number;
}

/** Reusable working space for tracing many regions of one dw × dh display label raster (a mask and a tracer with a one-cell margin). */
export class RegionScratch {
  readonly mw: number;
  readonly mask: Uint8Array;
  readonly tracer: IsolineTracer;
  constructor(dw: number, dh: number) {
    this.mw = dw + 2;
    this.mask = new Uint8Array((dw + 2) * (dh + 2));
    this.tracer = new IsolineTracer(dw + 2, dh + 2);
  }
}

/**
 * Outline of the display cells where `inRegion(label)` holds, inside the box [c0, c1] × [r0, r1]
 * (inclusive) of a dw-wide display label raster; coordinates are scaled by `factor` into plot
 * coordinates. Rings with fewer than 3 points after simplification are dropped. With `scratch`
 * (made for the whole raster) nothing of the raster's size is allocated per region: the work is
 * proportional to the box.
 */
export function traceRegion(
  labels: Int32Array, dw: number, box: [number, number, number, number], inRegion: (label: number) => boolean, factor: number, tol: number,
  scratch?: RegionScratch,
): RegionOutline {
  const [c0, r0, c1, r1] = box;
  // mask column = display column − ox; one empty cell of margin around the box so every ring closes
  let mw: number, mask: Uint8Array, tracer: IsolineTracer, ox: number, oy: number;
  if (scratch) ({ mw, mask, tracer } = scratch), ox = -1, oy = -1;
  else {
    mw = c1 - c0 + 3; ox = c0 - 1; oy = r0 - 1;
    mask = new Uint8Array(mw * (r1 - r0 + 3));
    tracer = new IsolineTracer(mw, r1 - r0 + 3);
  }
  for (let r = r0 - 1; r <= r1 + 1; r++) {
    const m = (r - oy) * mw - ox;
    const inside = r >= r0 && r <= r1;
    for (let c = c0 - 1; c <= c1 + 1; c++) mask[m + c] = inside && c >= c0 && c <= c1 && inRegion(labels[r * dw + c]) ? 1 : 0;
  }
  const iso = tracer.trace(mask, 0.5, [c0 - 1 - ox, r0 - 1 - oy, c1 + 1 - ox, r1 + 1 - oy]);
  const xy = iso.xy;
  // one spare slot after the points for the ring closure the simplification uses
  const work = new Float64Array(2 * iso.points + 2);
  work.set(xy.subarray(0, 2 * iso.points));
  const keep = new Uint8Array(iso.points + 1);
  const stack = new Int32Array(2 * iso.points + 8);
  const parts: string[] = [];
  let points = 0;
  // display coordinate = mask coordinate + origin; × factor into plot coordinates
  const X = (i: number) => n((work[2 * i] + ox) * factor, 2), Y = (i: number) => n((work[2 * i + 1] + oy) * factor, 2);
  for (let k = 0; k < iso.lines; k++) {
    const a = iso.start[k], b = iso.start[k + 1] - 1;
    simplifyRingFlat(work, a, b, tol, keep, stack);
    let cnt = 0;
    for (let i = a; i <= b; i++) cnt += keep[i];
    if (cnt >= 3) {
      let s = '';
      for (let i = a; i <= b; i++) if (keep[i]) s += `${s ? 'L' : 'M'}${X(i)} ${Y(i)}`;
      parts.push(s + 'Z');
      points += cnt;
    }
    keep.fill(0, a, b + 2);
  }
  return { d: parts.join(''), points };
}
