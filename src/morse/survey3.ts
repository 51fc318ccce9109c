/**
 * The survey of a 3-D grid: (value, index) order, critical points from the homology of lower
 * links, the Euler check against χ counted from the simplices, join and split trees, and the
 * persistence pairs of dimension 0 (join tree) and 2 (split tree, by duality). Dimension-1
 * pairs are not computed. Everything is typed columns; nothing per point is a JS object.
 *
 *   import { survey3 } from '../morse/survey3.js';   // inside sill (the package's survey3 adds the report)
 *   const s = survey3(grid, { connectivity: 14, boundary: 'closed' });
 *   s.critical.vertex / kind / index / multiplicity; s.join (node columns); s.pairs
 */
import type { Grid3 } from '../surface/grid3.js';
import { Complex3, type Complex3Options, type LowerLinkKind, type SimplexCounts3 } from '../surface/complex3.js';
import { IntList } from './growable.js';
import { sortOrder } from './order.js';
import { simplifyMergeTree, type MergeTree } from './mergetree.js';
import { buildMergeTree3 } from './mergetree3.js';

export const MINIMUM = 1;
export const SADDLE1 = 2;
export const SADDLE2 = 3;
export const MAXIMUM = 4;
export type CriticalKind3 = 'minimum' | 'saddle-1' | 'saddle-2' | 'maximum';
export const KIND3_NAMES: Record<number, CriticalKind3> = { 1: 'minimum', 2: 'saddle-1', 3: 'saddle-2', 4: 'maximum' };

export interface CriticalPoints3 {
  /**
   * One row per (point, kind), by increasing point then kind. A degenerate point can have two
   * rows (an index-1 and an index-2 saddle at once, say), each with its multiplicity.
   */
  vertex: Int32Array;
  /** MINIMUM, SADDLE1, SADDLE2 or MAXIMUM. */
  kind: Uint8Array;
  /** Morse index: 0, 1, 2 or 3. */
  index: Uint8Array;
  multiplicity: Int32Array;
  /** Counts with multiplicity; `minima` includes the outside vertex ω when there is one. */
  minima: number;
  saddles1: number;
  saddles2: number;
  maxima: number;
  outsideMinimum: boolean;
}

export interface Euler3 {
  characteristic: number;
  minima: number;
  saddles1: number;
  saddles2: number;
  maxima: number;
  /** minima − saddles1 + saddles2 − maxima = characteristic. */
  holds: boolean;
}

export interface PersistencePairs3 {
  /** 0 (minimum → index-1 saddle, from the join tree) or 2 (index-2 saddle → maximum, from the split tree). */
  dim: Uint8Array;
  birthVertex: Int32Array;
  deathVertex: Int32Array;
  /** value(death) − value(birth), ≥ 0. */
  persistence: Float64Array;
}

export interface Survey3Options extends Complex3Options {
  /** Drop features whose persistence is below this value (0 = keep all). */
  minPersistence?: number;
}

export interface Survey3Result {
  complex: Complex3;
  order: Uint32Array;
  critical: CriticalPoints3;
  /** Critical points left after simplification (same as `critical` when minPersistence is 0). */
  kept: CriticalPoints3;
  simplices: SimplexCounts3;
  euler: Euler3;
  eulerKept: Euler3;
  /** Join tree (sublevel components: leaves minima, inner nodes index-1 saddles), simplified. */
  join: MergeTree;
  /** Split tree (superlevel components: leaves maxima, inner nodes index-2 saddles), simplified. */
  split: MergeTree;
  /** All finite pairs of dimensions 0 and 2, including zero-persistence ones. */
  pairs: PersistencePairs3;
  minPersistence: number;
  removedPairs: { dim0: number; dim2: number };
}

export function survey3(grid: Grid3, opts: Survey3Options = {}): Survey3Result {
  const complex = new Complex3(grid, opts);
  const minPersistence = opts.minPersistence ?? 0;
  const order = sortOrder(complex.values);
  const critical = criticalPoints3(complex);
  const simplices = complex.countSimplices();
  const scratch = new Int32Array(complex.n + 1);
  const join = buildMergeTree3(complex, order, 'join', scratch, critical.minima);
  const split = buildMergeTree3(complex, order, 'split', scratch, critical.maxima + (complex.hasTop ? 1 : 0));
  const pairs = collectPairs3(complex.values, join, split);
  const { kept, removed } = simplify3(critical, pairs, minPersistence);
  const chi = simplices.characteristic;
  return {
    complex, order, critical, kept, simplices,
    euler: eulerOf(critical, chi),
    eulerKept: eulerOf(kept, chi),
    join: simplifyMergeTree(join, complex.values, minPersistence),
    split: simplifyMergeTree(split, complex.values, minPersistence),
    pairs, minPersistence, removedPairs: removed,
  };
}

function eulerOf(cp: CriticalPoints3, chi: number): Euler3 {
  return {
    characteristic: chi,
    minima: cp.minima, saddles1: cp.saddles1, saddles2: cp.saddles2, maxima: cp.maxima,
    holds: cp.minima - cp.saddles1 + cp.saddles2 - cp.maxima === chi,
  };
}

/** Critical points of every valid point, from the homology of its lower link. */
export function criticalPoints3(cx: Complex3): CriticalPoints3 {
  const verts = new IntList(4096), kinds = new IntList(4096), mult = new IntList(4096);
  let minima = cx.hasOmega ? 1 : 0, s1 = 0, s2 = 0, maxima = 0;
  const v = cx.values;
  const k: LowerLinkKind = { minimum: false, saddles1: 0, saddles2: 0, maxima: 0 };
  const row = (i: number, kind: number, m: number): void => { verts.push(i); kinds.push(kind); mult.push(m); };
  for (let i = 0; i < cx.n; i++) {
    if (v[i] !== v[i]) continue;
    cx.classify(i, k);
    if (k.minimum) { row(i, MINIMUM, 1); minima++; continue; }
    if (k.saddles1 > 0) { row(i, SADDLE1, k.saddles1); s1 += k.saddles1; }
    if (k.saddles2 > 0) { row(i, SADDLE2, k.saddles2); s2 += k.saddles2; }
    if (k.maxima > 0) { row(i, MAXIMUM, k.maxima); maxima += k.maxima; }
  }
  const kind = Uint8Array.from(kinds.toArray());
  return {
    vertex: verts.toArray(), kind, index: kind.map((x) => x - 1), multiplicity: mult.toArray(),
    minima, saddles1: s1, saddles2: s2, maxima, outsideMinimum: cx.hasOmega,
  };
}

function collectPairs3(values: ArrayLike<number>, join: MergeTree, split: MergeTree): PersistencePairs3 {
  const n0 = join.pairBirth.length, n2 = split.pairBirth.length;
  const dim = new Uint8Array(n0 + n2);
  const b = new Int32Array(n0 + n2), d = new Int32Array(n0 + n2), p = new Float64Array(n0 + n2);
  for (let q = 0; q < n0; q++) {
    b[q] = join.pairBirth[q]; d[q] = join.pairDeath[q];
    p[q] = values[d[q]] - values[b[q]];
  }
  // A superlevel component born at a maximum and dying at an index-2 saddle is a sublevel
  // 2-cycle born at the saddle and filled at the maximum (Alexander duality in the 3-sphere that
  // ω or τ closes the box into).
  for (let k = 0; k < n2; k++) {
    const q = n0 + k;
    dim[q] = 2;
    b[q] = split.pairDeath[k]; d[q] = split.pairBirth[k];
    p[q] = values[d[q]] - values[b[q]];
  }
  return { dim, birthVertex: b, deathVertex: d, persistence: p };
}

/** Row of (vertex, kind) in the critical columns, or −1. */
export function rowOf(cp: CriticalPoints3, vertex: number, kind: number): number {
  let lo = 0, hi = cp.vertex.length - 1;
  while (lo <= hi) {
    const mid = (lo + hi) >>> 1;
    const y = cp.vertex[mid];
    if (y < vertex || (y === vertex && cp.kind[mid] < kind)) lo = mid + 1;
    else if (y > vertex || cp.kind[mid] > kind) hi = mid - 1;
    else return mid;
  }
  return -1;
}

function simplify3(cp: CriticalPoints3, pairs: PersistencePairs3, minP: number): { kept: CriticalPoints3; removed: { dim0: number; dim2: number } } {
  if (!(minP > 0)) return { kept: cp, removed: { dim0: 0, dim2: 0 } };
  const mult = cp.multiplicity.slice();
  let r0 = 0, r2 = 0;
  for (let q = 0; q < pairs.dim.length; q++) {
    if (!(pairs.persistence[q] < minP)) continue;
    const zero = pairs.dim[q] === 0;
    const a = rowOf(cp, pairs.birthVertex[q], zero ? MINIMUM : SADDLE2);
    const z = rowOf(cp, pairs.deathVertex[q], zero ? SADDLE1 : MAXIMUM);
    if (a < 0 || z < 0) throw new Error(`internal: pair (${pairs.birthVertex[q]}, ${pairs.deathVertex[q]}) of dimension ${pairs.dim[q]} is not on critical points of its kinds`);
    mult[a]--; mult[z]--;
    if (zero) r0++; else r2++;
  }
  const keep: number[] = [];
  let minima = cp.outsideMinimum ? 1 : 0, s1 = 0, s2 = 0, maxima = 0;
  for (let r = 0; r < mult.length; r++) {
    if (mult[r] < 0) throw new Error(`internal: point ${cp.vertex[r]} paired more often than its multiplicity`);
    if (mult[r] === 0) continue;
    keep.push(r);
    const kd = cp.kind[r];
    if (kd === MINIMUM) minima += mult[r];
    else if (kd === SADDLE1) s1 += mult[r];
    else if (kd === SADDLE2) s2 += mult[r];
    else maxima += mult[r];
  }
  const kind = Uint8Array.from(keep, (r) => cp.kind[r]);
  return {
    kept: {
      vertex: Int32Array.from(keep, (r) => cp.vertex[r]), kind, index: kind.map((x) => x - 1),
      multiplicity: Int32Array.from(keep, (r) => mult[r]),
      minima, saddles1: s1, saddles2: s2, maxima, outsideMinimum: cp.outsideMinimum,
    },
    removed: { dim0: r0, dim2: r2 },
  };
}
