/**
 * The survey: order, critical points, Euler check, join and split trees, persistence pairs,
 * and optional simplification by persistence. Works on a Grid or a Mesh.
 */
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import { buildComplex, GridComplex, type ComplexOptions, type SurfaceComplex, type SimplexCounts } from '../surface/complex.js';
import { sortOrder } from './order.js';
import { findCriticalPoints, indexOfVertex, PIT, PASS, PEAK, type CriticalPoints } from './critical.js';
import { buildMergeTree, simplifyMergeTree, sweepLeaves, type MergeTree } from './mergetree.js';
import { useWorker, onSharedMemory, gridTask, startSplitJob, type ThreadOptions } from './parallel.js';

export interface SurveyOptions extends ComplexOptions, ThreadOptions {
  /** Drop features whose persistence is below this value (0 = keep all). */
  minPersistence?: number;
}

export interface PersistencePairs {
  dim: Uint8Array;
  /** Vertex where the class is born (pit for dim 0, pass for dim 1). */
  birthVertex: Int32Array;
  /** Vertex where it dies (pass for dim 0, peak for dim 1). */
  deathVertex: Int32Array;
  persistence: Float64Array;
}

export interface SurveyResult {
  complex: SurfaceComplex;
  order: Uint32Array;
  /** All critical points of the complex (simulation of simplicity). */
  critical: CriticalPoints;
  /** Critical points left after simplification (same as `critical` when minPersistence is 0). */
  kept: CriticalPoints;
  simplices: SimplexCounts;
  euler: { characteristic: number; pits: number; passes: number; peaks: number; holds: boolean };
  /** Euler counts after simplification (must still hold). */
  eulerKept: { pits: number; passes: number; peaks: number; holds: boolean };
  join: MergeTree;
  split: MergeTree;
  /** All finite pairs, including zero-persistence ones. */
  pairs: PersistencePairs;
  minPersistence: number;
  removedPairs: { dim0: number; dim1: number };
  /** Threads that did the work (2: the split sweep and the simplex count ran in a worker). */
  threads: number;
}

export function survey(surface: Grid | Mesh, opts: SurveyOptions = {}): SurveyResult {
  const complex = buildComplex(surface, opts);
  const minPersistence = opts.minPersistence ?? 0;
  const parallel = complex instanceof GridComplex && useWorker(opts, complex.n);
  const { order, critical, simplices, join, split } = parallel ? sweepsOnTwoThreads(complex) : sweeps(complex);
  const chi = simplices.characteristic;
  const pairs = collectPairs(complex.values, join, split);
  const { kept, removed } = simplifyCritical(critical, pairs, minPersistence);
  return {
    complex, order, critical, kept, simplices,
    euler: {
      characteristic: chi,
      pits: critical.pits, passes: critical.passes, peaks: critical.peaks,
      holds: critical.pits - critical.passes + critical.peaks === chi,
    },
    eulerKept: {
      pits: kept.pits, passes: kept.passes, peaks: kept.peaks,
      holds: kept.pits - kept.passes + kept.peaks === chi,
    },
    join: simplifyMergeTree(join, complex.values, minPersistence),
    split: simplifyMergeTree(split, complex.values, minPersistence),
    pairs,
    minPersistence,
    removedPairs: removed,
    threads: parallel ? 2 : 1,
  };
}

/** True for the pairs a report lists: positive persistence, and at least `minPersistence`. */
export function listedPair(persistence: number, minPersistence: number): boolean {
  return persistence > 0 && !(persistence < minPersistence);
}

/** How many pairs a report lists (see listedPair). */
export function countListedPairs(pairs: PersistencePairs, minPersistence: number): number {
  const p = pairs.persistence;
  let n = 0;
  for (let k = 0; k < p.length; k++) if (listedPair(p[k], minPersistence)) n++;
  return n;
}

/**
 * The listed pairs, most persistent first; equal persistence keeps the pairs' own order (all of
 * dimension 0 before dimension 1). An index sort of the persistence column: the stable radix
 * sort of the (value, index) order run on −persistence, with the unlisted pairs as NaN (left out).
 */
export function pairsByPersistence(pairs: PersistencePairs, minPersistence: number): Uint32Array {
  const p = pairs.persistence;
  const key = new Float64Array(p.length);
  for (let k = 0; k < p.length; k++) key[k] = listedPair(p[k], minPersistence) ? -p[k] : NaN;
  return sortOrder(key);
}

/**
 * The first `count` pairs of pairsByPersistence, found by one pass with a small sorted buffer
 * (a partial selection: no sort of all pairs).
 */
export function mostPersistentPairs(pairs: PersistencePairs, minPersistence: number, count: number): Uint32Array {
  const p = pairs.persistence;
  const idx = new Uint32Array(count), key = new Float64Array(count);
  let m = 0;
  for (let k = 0; k < p.length; k++) {
    const x = p[k];
    if (!listedPair(x, minPersistence)) continue;
    // a later pair of equal persistence ranks after the ones already held
    if (m === count && !(x > key[m - 1])) continue;
    let j = m < count ? m++ : m - 1;
    while (j > 0 && key[j - 1] < x) { key[j] = key[j - 1]; idx[j] = idx[j - 1]; j--; }
    key[j] = x; idx[j] = k;
  }
  return idx.slice(0, m);
}

interface Sweeps {
  order: Uint32Array;
  critical: CriticalPoints;
  simplices: SimplexCounts;
  join: MergeTree;
  split: MergeTree;
}

/** Order, critical points, simplex counts and both merge trees, one after the other. */
function sweeps(complex: SurfaceComplex): Sweeps {
  const order = sortOrder(complex.values);
  const critical = findCriticalPoints(complex);
  const simplices = complex.countSimplices();
  // one union-find buffer serves both sweeps
  const scratch = new Int32Array(complex.n + 1);
  const join = buildMergeTree(complex, order, 'join', scratch, sweepLeaves(complex, critical, 'join'));
  const split = buildMergeTree(complex, order, 'split', scratch, sweepLeaves(complex, critical, 'split'));
  return { order, critical, simplices, join, split };
}

/**
 * The same on two threads: the worker counts the simplices while this thread sorts, then runs
 * the split sweep while this one finds the critical points and runs the join sweep. The order is
 * written straight into shared memory; the values are shared too (copied there only when the
 * caller's array is not). The sort's index buffers become the two union-find forests, so the
 * second forest costs no more memory than the one-thread run's sort garbage. Each sweep is the
 * one-thread code on the same input, so the results are identical.
 */
function sweepsOnTwoThreads(complex: GridComplex): Sweeps {
  const values = complex.values;
  let m = 0;
  for (let i = 0; i < values.length; i++) if (values[i] === values[i]) m++;
  const n = complex.n;
  const order = new Uint32Array(new SharedArrayBuffer(4 * m));
  // the sort's index buffers, then the two union-find forests (n + 1 entries each)
  const work = new SharedArrayBuffer(8 * (n + 1));
  const job = startSplitJob(gridTask(complex, onSharedMemory(values)), order, new Int32Array(work, 4 * (n + 1), n + 1));
  try {
    sortOrder(values, order, new Uint32Array(work));
    job.orderReady();
    const critical = findCriticalPoints(complex);
    const join = buildMergeTree(complex, order, 'join', new Int32Array(work, 0, n + 1), sweepLeaves(complex, critical, 'join'));
    const { split, simplices } = job.result();
    return { order, critical, simplices, join, split };
  } finally {
    job.abandon();
  }
}

function collectPairs(values: ArrayLike<number>, join: MergeTree, split: MergeTree): PersistencePairs {
  const n0 = join.pairBirth.length, n1 = split.pairBirth.length;
  const dim = new Uint8Array(n0 + n1);
  const b = new Int32Array(n0 + n1), d = new Int32Array(n0 + n1), p = new Float64Array(n0 + n1);
  for (let k = 0; k < n0; k++) {
    b[k] = join.pairBirth[k]; d[k] = join.pairDeath[k];
    p[k] = values[d[k]] - values[b[k]];
  }
  // A superlevel component born at a peak and dying at a pass is a sublevel loop born at the
  // pass and filled at the peak (duality on the closed surface).
  for (let k = 0; k < n1; k++) {
    const q = n0 + k;
    dim[q] = 1;
    b[q] = split.pairDeath[k]; d[q] = split.pairBirth[k];
    p[q] = values[d[q]] - values[b[q]];
  }
  return { dim, birthVertex: b, deathVertex: d, persistence: p };
}

function simplifyCritical(cp: CriticalPoints, pairs: PersistencePairs, minP: number): { kept: CriticalPoints; removed: { dim0: number; dim1: number } } {
  if (!(minP > 0)) return { kept: cp, removed: { dim0: 0, dim1: 0 } };
  const mult = cp.multiplicity.slice();
  let r0 = 0, r1 = 0;
  for (let k = 0; k < pairs.dim.length; k++) {
    if (!(pairs.persistence[k] < minP)) continue;
    const a = indexOfVertex(cp, pairs.birthVertex[k]);
    const z = indexOfVertex(cp, pairs.deathVertex[k]);
    if (a < 0 || z < 0) throw new Error(`internal: pair (${pairs.birthVertex[k]}, ${pairs.deathVertex[k]}) is not on critical points`);
    mult[a]--; mult[z]--;
    if (pairs.dim[k] === 0) r0++; else r1++;
  }
  const keep: number[] = [];
  let pits = cp.outsidePit ? 1 : 0, passes = 0, peaks = 0;
  for (let i = 0; i < mult.length; i++) {
    if (mult[i] < 0) throw new Error(`internal: vertex ${cp.vertex[i]} paired more often than its multiplicity`);
    if (mult[i] === 0) continue;
    keep.push(i);
    if (cp.kind[i] === PIT) pits += mult[i];
    else if (cp.kind[i] === PASS) passes += mult[i];
    else if (cp.kind[i] === PEAK) peaks += mult[i];
  }
  const kept: CriticalPoints = {
    vertex: Int32Array.from(keep, (i) => cp.vertex[i]),
    kind: Uint8Array.from(keep, (i) => cp.kind[i]),
    multiplicity: Int32Array.from(keep, (i) => mult[i]),
    pits, passes, peaks, outsidePit: cp.outsidePit,
  };
  return { kept, removed: { dim0: r0, dim1: r1 } };
}
