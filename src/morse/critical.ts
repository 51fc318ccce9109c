/**
 * Critical points from lower links. For every vertex, 1 − χ(lower link) is its contribution to
 * the Euler characteristic: +1 for a pit (empty lower link) or a peak, −k for a pass of
 * multiplicity k (k = 2 is a monkey saddle), 0 for a regular vertex.
 */
import { GridComplex, type SurfaceComplex } from '../surface/complex.js';
import { IntList } from './growable.js';

export const PIT = 1;
export const PASS = 2;
export const PEAK = 3;
export type CriticalKind = 'pit' | 'pass' | 'peak';
export const KIND_NAMES: Record<number, CriticalKind> = { 1: 'pit', 2: 'pass', 3: 'peak' };

export interface CriticalPoints {
  /** Critical vertices in increasing index order. */
  vertex: Int32Array;
  kind: Uint8Array;
  multiplicity: Int32Array;
  /** Counts with multiplicity; `pits` includes the outside vertex when there is one. */
  pits: number;
  passes: number;
  peaks: number;
  /** The outside vertex ω is a pit of the complex (open boundary). */
  outsidePit: boolean;
}

/** Call visit(i, contribution, lower link empty) for every vertex with a non-zero contribution, in index order. */
function visitCritical(cx: SurfaceComplex, visit: (i: number, c: number, lowerLinkEmpty: boolean) => void): void {
  if (cx instanceof GridComplex) {
    cx.forEachCritical(visit);
    return;
  }
  const v = cx.values;
  for (let i = 0; i < cx.n; i++) {
    if (v[i] !== v[i]) continue;
    const c = cx.contribution(i);
    if (c !== 0) visit(i, c, cx.lastLowerLinkEmpty);
  }
}

export function findCriticalPoints(cx: SurfaceComplex): CriticalPoints {
  const verts = new IntList(4096), kinds = new IntList(4096), mult = new IntList(4096);
  let pits = 0, passes = 0, peaks = 0;
  visitCritical(cx, (i, c, lowerLinkEmpty) => {
    verts.push(i);
    if (c < 0) { kinds.push(PASS); mult.push(-c); passes -= c; }
    else if (lowerLinkEmpty) { kinds.push(PIT); mult.push(c); pits += c; }
    else { kinds.push(PEAK); mult.push(c); peaks += c; }
  });
  if (cx.hasOmega) pits += 1;
  return {
    vertex: verts.toArray(),
    kind: Uint8Array.from(kinds.toArray()),
    multiplicity: mult.toArray(),
    pits, passes, peaks,
    outsidePit: cx.hasOmega,
  };
}

export type CriticalCounts = Pick<CriticalPoints, 'pits' | 'passes' | 'peaks' | 'outsidePit'>;

/** The counts of findCriticalPoints without the lists: for the Euler self-check of other commands. */
export function countCriticalPoints(cx: SurfaceComplex): CriticalCounts {
  let pits = 0, passes = 0, peaks = 0;
  visitCritical(cx, (_i, c, lowerLinkEmpty) => {
    if (c < 0) passes -= c;
    else if (lowerLinkEmpty) pits += c;
    else peaks += c;
  });
  if (cx.hasOmega) pits += 1;
  return { pits, passes, peaks, outsidePit: cx.hasOmega };
}

/** Position of vertex `x` in the sorted `vertex` array, or −1. */
export function indexOfVertex(cp: CriticalPoints, x: number): number {
  let lo = 0, hi = cp.vertex.length - 1;
  while (lo <= hi) {
    const mid = (lo + hi) >>> 1;
    const y = cp.vertex[mid];
    if (y === x) return mid;
    if (y < x) lo = mid + 1; else hi = mid - 1;
  }
  return -1;
}

